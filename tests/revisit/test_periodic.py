"""A periodic revisit of the demo's signed record, walked from an answers file: every
change is judged with its baseline value and date (the values and times read from the
record itself, taken out of the PDF with poppler's pdfdetach), and a revisit with the
same readings reports no change. The soak log is the demo's with its rise over ambient
scaled so that the predicted maximum (38 °C + 1.2 × rise, as the demo record states it)
is 9 K higher: factor (rise + 9/1.2) / rise."""

from __future__ import annotations

import json

import pytest
from tests.revisit.answers import periodic_answers, soak_scaled
from tests.revisit.conftest import canonical_sha256, detach_record

CHANGED = ["insulation.resistance", "earth.zs", "protection.rcd.t1", "water.heat.end",
           "heatsink.soak_log", "install.diverter.firmware"]


def _baseline_facts(pdf, tmp_path):
    payload = detach_record(pdf, tmp_path)
    record = json.loads(payload)
    verdicts = {v["id"]: v for v in record["verdicts"]}
    latest = {}
    for e in record["entries"]:
        if e["action"] != "detail":
            latest[e["item"]] = e
    return record, verdicts, latest, canonical_sha256(payload)


def _walk(cli, pdf, cert, answers):
    made = cli("revisit", pdf, "--checklist", "diverter-1ph-periodic", "--trust", cert)
    assert made.exit_code == 0, made.output
    job = made.stdout.strip().splitlines()[-1]
    walked = cli("walk", job, "--answers", answers)
    assert walked.exit_code == 0, walked.output
    assert "0 rejected" in walked.stdout, walked.output
    shown = cli("show", job, "--json")
    return job, json.loads(shown.stdout)


@pytest.mark.slow
def test_deteriorations_are_judged_against_the_baseline(cli, baseline, tmp_path):
    pdf, cert = baseline
    record, verdicts, latest, sha = _baseline_facts(pdf, tmp_path)
    zs0 = verdicts["earth.zs"]["measured"]["value"]
    start = float(latest["water.heat.start"]["value"])
    end = float(latest["water.heat.end"]["value"])
    sink0 = verdicts["heatsink.soak_log"]["measured"]["value"]
    rise = (sink0 - 38.0) / 1.2  # the demo record's worst ambient and rise factor
    soak = soak_scaled(tmp_path, 24.0, (rise + 9 / 1.2) / rise)
    answers = periodic_answers(tmp_path, {
        "insulation.resistance": "4 MΩ",
        "earth.zs": f"{zs0 * 1.4:.4f} Ω",
        "protection.rcd.t1": "190 ms",
        "water.heat.end": f"{start + 0.8 * (end - start):.3f} °C",  # same minutes: −20 %
        "heatsink.soak_log": {"file": str(soak)},
        "install.diverter.firmware": "2.6.0",
    })
    job, snap = _walk(cli, pdf, cert, answers)
    assert snap["baseline"]["record_sha256"] == sha
    items = {i["id"]: i for i in snap["items"]}
    assert verdicts["insulation.resistance"]["measured"]["value"] == 180
    assert verdicts["protection.rcd.t1"]["measured"]["value"] == 24
    for item_id in CHANGED:
        change = items[item_id]["change"]
        assert change is not None, item_id
        assert change["verdict"] == "review", (item_id, change)
        assert change["state"] in ("deteriorated", "changed"), (item_id, change)
        assert change["baseline_at"] == latest[item_id]["at"], item_id
        assert change["baseline_at"][:10] in change["reason"], item_id
        if item_id in verdicts and verdicts[item_id]["measured"] is not None \
                and item_id != "install.diverter.firmware":
            assert change["baseline_value"] == pytest.approx(
                verdicts[item_id]["measured"]["value"]), item_id
        assert items[item_id]["verdict"] in ("review", "fail"), item_id
    assert "factor of 45" in items["insulation.resistance"]["change"]["reason"]
    assert "40 %" in items["earth.zs"]["change"]["reason"]
    assert "assumed equal" in items["earth.zs"]["change"]["reason"]
    assert "20 %" in items["water.heat.end"]["change"]["reason"]
    assert "9 K" in items["heatsink.soak_log"]["change"]["reason"]
    # the status lists every one of them
    reasons = " ".join(snap["status_reasons"])
    for item_id in CHANGED:
        assert item_id in reasons, item_id
    text = cli("show", job).stdout
    assert "changed since the baseline" in text and "factor of 45" in " ".join(text.split())


@pytest.mark.slow
def test_unchanged_readings_report_no_change(cli, baseline, tmp_path):
    pdf, cert = baseline
    answers = periodic_answers(tmp_path, {"visit.temperature": {"skip": "no thermometer"}})
    job, snap = _walk(cli, pdf, cert, answers)
    changes = [i["change"] for i in snap["items"] if i["change"] is not None]
    judged = {c["item_id"] for c in changes}
    assert {"insulation.resistance", "earth.zs", "protection.rcd.t1", "water.heat.end",
            "heatsink.soak_log", "continuity.r1r2"} <= judged
    assert all(c["verdict"] == "pass" for c in changes), [c for c in changes
                                                         if c["verdict"] != "pass"]
    assert not any("changed since the baseline" in r for r in snap["status_reasons"])
    assert snap["status"] == "ready", snap["status_reasons"]
