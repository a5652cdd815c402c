"""The periodic record: page 1 names and fingerprints the baseline record and lists every
deterioration; three visits give a trend whose limit crossing matches ordinary least
squares worked out here (normal equations for a line in ln R against years). Pages are
read with poppler's pdftotext and drawn with pdftoppm."""

from __future__ import annotations

import datetime as dt
import json
import math
import subprocess
from pathlib import Path

import pytest
from tests.conftest import need_tool
from tests.revisit.answers import periodic_answers, soak_scaled
from tests.revisit.conftest import detach_record

ROOT = Path(__file__).resolve().parents[2]


def _text(pdf: Path, first: int = 1, last: int | None = None) -> str:
    need_tool("pdftotext")
    args = ["pdftotext", "-f", str(first)] + (["-l", str(last)] if last else []) + \
        [str(pdf), "-"]
    return " ".join(subprocess.run(args, capture_output=True, text=True).stdout.split())


@pytest.mark.slow
def test_page_one_names_the_baseline_and_lists_the_deteriorations(cli, baseline, tmp_path):
    pdf, cert = baseline
    made = cli("revisit", pdf, "--checklist", "diverter-1ph-periodic", "--trust", cert)
    job = made.stdout.strip().splitlines()[-1]
    sha = json.loads(cli("show", job, "--json").stdout)["baseline"]["record_sha256"]
    payload = json.loads(detach_record(pdf, tmp_path))
    verdicts = {v["id"]: v for v in payload["verdicts"]}
    latest = {e["item"]: e for e in payload["entries"] if e["action"] != "detail"}
    start, end = float(latest["water.heat.start"]["value"]), float(latest["water.heat.end"][
        "value"])
    rise = (verdicts["heatsink.soak_log"]["measured"]["value"] - 38.0) / 1.2
    soak = soak_scaled(tmp_path, 24.0, (rise + 9 / 1.2) / rise)
    answers = periodic_answers(tmp_path, {
        "insulation.resistance": "4 MΩ", "protection.rcd.t1": "190 ms",
        "earth.zs": f"{verdicts['earth.zs']['measured']['value'] * 1.4:.4f} Ω",
        "water.heat.end": f"{start + 0.8 * (end - start):.3f} °C",
        "heatsink.soak_log": {"file": str(soak)}, "install.diverter.firmware": "2.6.0",
        "done.actions": "Cleaned the heatsink fins; RCD to be replaced"})
    assert cli("walk", job, "--answers", answers).exit_code == 0
    out = tmp_path / "periodic.pdf"
    made = cli("report", job, "--out", out)
    assert made.exit_code == 0, made.output
    page1 = _text(out, 1, 1)
    assert f"Baseline record SHA-256: {sha}" in page1
    # the soak's predicted maximum, 9 K up, is past its 85 °C limit: a critical fail
    assert "Overall condition: unsatisfactory: a critical item fails" in page1
    assert "6 change(s) since the baseline" in page1
    for words in ("RCD trip time has risen", "insulation resistance has fallen",
                  "Zs has risen", "heating rate has fallen",
                  "predicted heatsink maximum has risen", "changed since the baseline",
                  "2.6.0"):
        assert words in page1, words
    date = latest["earth.zs"]["at"][:10]
    assert page1.count(date) >= 6  # each change with its baseline date
    # by weight: the RCD's +692 % is further past its limit (50 %) than insulation's fall
    # by 45 (a factor of 10 is the limit: log 45 / log 10 = 1.65)
    assert page1.index("RCD trip time has risen") < page1.index("insulation resistance has")
    assert "What was done: Cleaned the heatsink fins; RCD to be replaced" in page1
    assert "periodic inspection" in page1
    from commission.report.verify import verify

    checked = verify(out, read_anyway=True)  # unsigned: its content read on request
    assert checked.content is not None and checked.content.record is not None
    assert checked.verdicts_match is True, checked.mismatches  # change verdicts re-derived
    record = json.loads(detach_record(out, tmp_path))
    assert record["baseline"]["record_sha256"] == sha
    assert any(e.get("carried") == sha for e in record["entries"])
    need_tool("pdftoppm")
    png = tmp_path / "p1"
    subprocess.run(["pdftoppm", "-r", "40", "-png", "-f", "1", "-l", "1", str(out), str(png)],
                   check=True)
    assert any(tmp_path.glob("p1*.png"))


@pytest.mark.slow
def test_three_visits_give_a_trend_that_crosses_where_least_squares_says(cli, tmp_path):
    from commission.checklist import load
    from commission.checks import CHECKS
    from commission.register import open_register

    now = dt.datetime.now(dt.UTC)
    t0 = now - dt.timedelta(days=730)
    t1 = now - dt.timedelta(days=365)

    def iso(t: dt.datetime) -> str:
        return t.isoformat(timespec="milliseconds").replace("+00:00", "Z")

    visits = [{"record_sha256": c * 64, "made_at": iso(t), "temperature_c": None,
               "readings": {"insulation.resistance": {"value": v, "unit": "MΩ", "at": iso(t)}}}
              for c, t, v in (("a", t0, 200.0), ("b", t1, 90.0))]
    loaded = load(ROOT / "checklists" / "diverter-1ph-periodic.yaml", checks=CHECKS)
    with open_register(tmp_path / "reg.sqlite3") as reg:
        job = reg.create_job(loaded, {"site": "Trend Site"}, baseline={
            "record_sha256": "b" * 64, "job": "BASE1", "uuid": "0" * 8 + "-0000-4000-8000-"
            + "0" * 12, "site": "Trend Site", "made_at": iso(t1), "status": "ready",
            "verified": True, "checklist": "diverter-1ph-periodic 1.0.0", "visits": visits})
    answers = tmp_path / "a.yaml"
    answers.write_text("insulation.resistance: 30 MΩ\ninsulation.test_voltage: 500 V\n",
                       encoding="utf-8")
    assert cli("walk", job.short_id, "--answers", answers).exit_code == 0
    items = {i["id"]: i for i in json.loads(cli("show", job.short_id, "--json").stdout)["items"]}
    ir = items["insulation.resistance"]
    trend = ir["change"]["trend"]
    # ordinary least squares of y = ln R on x = years since the first visit
    pts = [(t0, 200.0), (t1, 90.0), (dt.datetime.fromisoformat(ir["time"]), 30.0)]
    xs = [(t - t0).total_seconds() / (365.25 * 86400) for t, _ in pts]
    ys = [math.log(v) for _, v in pts]
    n = 3
    slope = (n * sum(x * y for x, y in zip(xs, ys, strict=True)) - sum(xs) * sum(ys)) / \
        (n * sum(x * x for x in xs) - sum(xs) ** 2)
    intercept = (sum(ys) - slope * sum(xs)) / n
    years = (math.log(1.0) - intercept) / slope  # the 1 MΩ limit at 500 V
    want = (t0 + dt.timedelta(days=years * 365.25)).date()
    got = dt.date.fromisoformat(trend["crossing"])
    assert abs((got - want).days) <= 1, (got, want)
    assert trend["limit"] == 1.0 and trend["scale"] == "log"
    assert want.isoformat() in ir["reason"]
    out = tmp_path / "trend.pdf"
    assert cli("report", job.short_id, "--out", out).exit_code == 0
    text = _text(out)
    assert "Trend: Insulation resistance" in text
    assert f"would reach its limit 1 MΩ about {want.isoformat()}" in text
