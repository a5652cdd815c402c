"""`commission revisit`: a periodic inspection linked to its verified baseline record.

References outside the project: the record is taken out of the PDF with poppler's
pdfdetach and hashed over canonical JSON with hashlib; the PDF's own bytes with hashlib."""

from __future__ import annotations

import hashlib
import json
import shutil
import sqlite3
from pathlib import Path

import pytest
from tests.revisit.conftest import canonical_sha256, detach_record

DATA = Path(__file__).resolve().parent.parent / "data"


def _start(cli, pdf, *extra):
    return cli("revisit", pdf, "--checklist", "diverter-1ph-periodic", *extra)


def _show(cli, job):
    out = cli("show", job, "--json")
    assert out.exit_code == 0, out.output
    return json.loads(out.stdout)


def test_revisit_names_the_baseline_by_its_record_hash_and_carries_details(
        cli, baseline, tmp_path):
    pdf, cert = baseline
    made = _start(cli, pdf, "--trust", cert)
    assert made.exit_code == 0, made.output
    job = made.stdout.strip().splitlines()[-1]
    payload = detach_record(pdf, tmp_path)
    record = json.loads(payload)
    want = canonical_sha256(payload)
    assert want != hashlib.sha256(pdf.read_bytes()).hexdigest()
    snap = _show(cli, job)
    assert snap["baseline"]["record_sha256"] == want
    assert snap["baseline"]["verified"] is True
    assert snap["baseline"]["job"] == record["job"]["id"]
    assert snap["job"]["site"] == record["job"]["site"]
    # every carried answer is the baseline's latest answer, at the baseline's time
    latest = {}
    for e in record["entries"]:
        if e["action"] != "detail":
            latest[e["item"]] = e
    carried = {i["id"]: i for i in snap["items"] if i["carried_from_baseline"]}
    assert {"install.diverter.settings", "install.diverter.firmware", "supply.earthing",
            "protection.cable.length", "element.rated_power"} <= set(carried)
    for item_id, item in carried.items():
        base = latest[item_id]
        assert item["raw"] == base["raw"] and item["value"] == base["value"]
        assert item["time"] == base["at"]
        assert item["history"][-1]["carried_from_baseline"] == want
    # repeated readings are never carried: they are measured again
    assert not {"insulation.resistance", "earth.zs", "protection.rcd.t1"} & set(carried)
    pending = {i["id"] for i in snap["items"] if i["verdict"] == "pending"}
    assert {"insulation.resistance", "earth.zs", "condition.damage"} <= pending


@pytest.mark.slow
def test_confirming_a_carried_answer_adds_an_entry_of_today(cli, baseline, tmp_path):
    pdf, cert = baseline
    job = _start(cli, pdf, "--trust", cert).stdout.strip().splitlines()[-1]
    before = {i["id"]: i for i in _show(cli, job)["items"]}["install.inverter"]
    answers = tmp_path / "a.yaml"
    answers.write_text(f"install.inverter: {json.dumps(before['raw'])}\n", encoding="utf-8")
    walked = cli("walk", job, "--answers", answers)
    assert walked.exit_code == 0, walked.output
    after = {i["id"]: i for i in _show(cli, job)["items"]}["install.inverter"]
    assert len(after["history"]) == 2
    assert after["carried_from_baseline"] is False
    assert after["time"] > before["time"]  # today's entry, after the baseline's


@pytest.mark.slow
def test_untrusted_baseline_is_refused_unless_unverified(cli, baseline, register_path):
    pdf, _ = baseline  # the installer's certificate is not trusted here
    refused = _start(cli, pdf)
    assert refused.exit_code == 1
    assert "not started" in refused.stderr and "--unverified" in refused.stderr
    assert not register_path.exists()  # nothing written
    made = _start(cli, pdf, "--unverified")
    assert made.exit_code == 0, made.output
    assert "UNVERIFIED baseline" in made.stdout
    job = made.stdout.strip().splitlines()[-1]
    assert _show(cli, job)["baseline"]["verified"] is False
    assert "UNVERIFIED baseline" in cli("show", job).stdout
    assert "UNVERIFIED baseline" in cli("jobs").stdout


@pytest.mark.slow
def test_tampered_baseline_is_refused_unless_unverified(cli, baseline, tmp_path,
                                                        register_path):
    pdf, cert = baseline
    data = bytearray(pdf.read_bytes())
    at = data.index(b"Larch House")
    data[at:at + 5] = b"Birch"  # a changed byte inside the signed range
    bad = tmp_path / "tampered.pdf"
    bad.write_bytes(bytes(data))
    refused = _start(cli, bad, "--trust", cert)
    assert refused.exit_code == 1, refused.output
    assert not register_path.exists()
    made = _start(cli, bad, "--trust", cert, "--unverified")
    assert made.exit_code == 0, made.output
    job = made.stdout.strip().splitlines()[-1]
    assert _show(cli, job)["baseline"]["verified"] is False


@pytest.mark.slow
def test_revisit_of_an_imported_job(cli, baseline):
    pdf, cert = baseline
    imported = cli("import", pdf, "--trust", cert)
    assert imported.exit_code == 0, imported.output
    base_job = imported.stdout.strip().splitlines()[-1]
    made = _start(cli, base_job)
    assert made.exit_code == 0, made.output
    job = made.stdout.strip().splitlines()[-1]
    from_pdf = _start(cli, pdf, "--trust", cert).stdout.strip().splitlines()[-1]
    a, b = _show(cli, job)["baseline"], _show(cli, from_pdf)["baseline"]
    assert a == b


def test_not_a_periodic_checklist_is_one_line(cli, baseline):
    pdf, cert = baseline
    out = cli("revisit", pdf, "--checklist", "diverter-1ph", "--trust", cert)
    assert out.exit_code == 2
    assert out.stderr.count("\n") == 1 and "not a periodic checklist" in out.stderr


def test_carry_names_a_section_or_item():
    from commission.checklist import ChecklistError, parse
    from commission.checks import CHECKS

    text = (Path(__file__).resolve().parents[2] / "checklists" / "diverter-1ph.yaml"
            ).read_text(encoding="utf-8")
    good = text + "revisit:\n  carry: [install, supply.earthing]\n"
    loaded = parse(good, "x", checks=CHECKS)
    assert loaded.checklist.carried_ids()[:2] == ["install.pv.size", "install.inverter"]
    assert "supply.earthing" in loaded.checklist.carried_ids()
    with pytest.raises(ChecklistError, match="no.such"):
        parse(text + "revisit:\n  carry: [no.such]\n", "x", checks=CHECKS)
    with pytest.raises(ChecklistError, match="temperature"):
        parse(text + "revisit:\n  temperature: supply.voltage\n", "x", checks=CHECKS)


def test_register_from_schema_9_migrates_on_first_use(cli, tmp_path):
    """tests/data/register-v9.sqlite3 was made by main's code at schema 9 (one job with a
    next inspection date and two answers)."""
    copy = tmp_path / "v9.sqlite3"
    shutil.copy(DATA / "register-v9.sqlite3", copy)
    assert sqlite3.connect(copy).execute("PRAGMA user_version").fetchone()[0] == 9
    listed = cli("jobs", "--json", "--register", copy)
    assert listed.exit_code == 0, listed.output
    (job,) = json.loads(listed.stdout)
    assert job["site"] == "Fixture Site v9" and job["next_inspection"] == "2027-03-01"
    assert job["baseline_record_sha256"] is None
    db = sqlite3.connect(copy)
    assert db.execute("PRAGMA user_version").fetchone()[0] == 10
    assert db.execute("SELECT count(*) FROM entries WHERE carried IS NULL").fetchone()[0] == 2
    shown = cli("show", job["id"], "--json", "--register", copy)
    items = {i["id"]: i for i in json.loads(shown.stdout)["items"]}
    assert items["supply.voltage"]["raw"] == "231 V"
    assert json.loads(shown.stdout)["baseline"] is None
