"""The record is laid out from the checklist's own declarations: a checklist written here,
with none of the shipped item ids, gets its summary, homeowner lines, findings and a chart.
Read back with pdftotext and pdfplumber (independent PDF readers)."""

from __future__ import annotations

import datetime as dt
import re
import subprocess

import pytest

from conftest import DEMO, need_tool

CHECKLIST = """\
format: commission-checklist/1
id: loft-heater-test
title: Loft heater hookup (test checklist)
version: '0.1'
rules: {name: test rules}
inspection_interval: {months: 24, source: test interval from the checklist}
sections:
  - id: origin
    title: At the origin
    items:
      - id: origin.mains
        kind: reading
        quantity: voltage
        unit: V
        prompt: Mains voltage at the board
        check: {name: supply_voltage}
        report: {summary: Mains at the board}
      - id: origin.board
        kind: text
        prompt: Where the heater controller hangs
        report: {homeowner: location}
  - id: heater
    title: Heater
    items:
      - id: heater.make
        kind: text
        prompt: Controller brand
        report: {summary: Controller, homeowner: device}
      - id: heater.amb
        kind: reading
        quantity: temperature
        unit: °C
        prompt: Air temperature now
      - id: heater.hot
        kind: reading
        quantity: temperature
        unit: °C
        prompt: Hottest air expected there
      - id: heater.max
        kind: reading
        quantity: temperature
        unit: °C
        prompt: Heatsink limit
      - id: heater.trace
        kind: file
        prompt: Heatsink temperature trace
        check:
          name: heatsink_soak
          inputs: {ambient: heater.amb, worst_ambient: heater.hot, limit: heater.max}
        report: {chart: true}
  - id: closing
    title: Closing
    items:
      - id: closing.switch
        kind: text
        prompt: Off switch location
        report: {homeowner: isolator}
      - id: closing.notes
        kind: text
        prompt: What could not be inspected
        report: {limitations: true}
"""


@pytest.fixture
def own_record(cli, tmp_path):
    path = tmp_path / "own.yaml"
    path.write_text(CHECKLIST, encoding="utf-8")
    made = cli("new", "--checklist", path, "--site", "Quillon Barn", "--installer", "T. Varga",
               "--installer-address", "2 Kiln Lane, Harrowby", "--installer-contact",
               "07700 900 123")
    assert made.exit_code == 0, made.stderr
    job = made.stdout.strip().splitlines()[-1]
    soak = DEMO / "files" / "heatsink-soak.csv"
    answers = tmp_path / "a.yaml"
    answers.write_text(
        "origin.mains: 262 V\n"
        "origin.board: On the loft hatch frame\n"
        "heater.make: Caldera PX-9\n"
        "heater.amb: 21 °C\nheater.hot: 35 °C\nheater.max: 90 °C\n"
        f"heater.trace: {{file: {soak}}}\n"
        "closing.switch: Red rotary switch by the loft ladder\n"
        "closing.notes: Eaves void not reachable\n", encoding="utf-8")
    walked = cli("walk", job, "--answers", answers)
    assert walked.exit_code == 0, walked.stderr
    out = tmp_path / "own.pdf"
    result = cli("report", job, "--out", out)
    assert result.exit_code == 0, result.stderr
    return out


def _text(pdf, first=None, last=None) -> str:
    need_tool("pdftotext")
    args = ["pdftotext"] + (["-f", str(first), "-l", str(last)] if first else []) + \
        [str(pdf), "-"]
    return subprocess.run(args, capture_output=True, text=True, timeout=60).stdout


def _flat(text: str) -> str:
    return re.sub(r"\s+", " ", text)


@pytest.mark.slow
def test_own_checklist_renders_summary_homeowner_findings_and_chart(own_record):
    """pdftotext of a record made from a checklist with none of the shipped ids."""
    import pdfplumber

    text = _flat(_text(own_record))
    assert "Mains at the board 262 V" in text
    assert "Controller Caldera PX-9" in text
    assert "What was fitted: a solar diverter (Caldera PX-9)" in text
    assert "Where it is: On the loft hatch frame" in text
    assert "How to switch it off: Red rotary switch by the loft ladder" in text
    assert "Whom to call: T. Varga, 2 Kiln Lane, Harrowby, 07700 900 123" in text
    assert "Heatsink temperature trace" in text
    assert "fitted to the rise over ambient" in text  # the soak analysis's chart caption
    page1 = _flat(_text(own_record, 1, 1))
    # Findings on page 1: the failing voltage (262 V is above 253 V), the limitation and
    # the departure (not a shipped checklist), in that order of weight.
    fails = page1.index("Fails Mains voltage at the board")
    limit = page1.index("Eaves void not reachable")
    departs = page1.index("not a shipped checklist")
    assert fails < departs < limit
    due = dt.date.today()
    due = due.replace(year=due.year + 2, day=min(due.day, 28)) if due.month == 2 else \
        due.replace(year=due.year + 2)
    assert f"Next inspection or service due: {due.isoformat()}" in page1
    assert "test interval from the checklist" in page1
    with pdfplumber.open(own_record) as pdf:
        frames = [r for p in pdf.pages for r in p.rects
                  if r.get("stroking_color") and len(r["stroking_color"]) == 3
                  and abs(r["stroking_color"][0] - 0x8a / 255) < 0.01]
    assert frames, "no chart frame drawn"


@pytest.mark.slow
def test_demo_page_one_tells_the_truth(demo_record):
    """Page 1 of the demo (pdftotext) names every review item, the next inspection date and
    the installer's certificate fingerprint (computed here with cryptography from the
    demo's certificate file); the attachments appear by file name."""
    from cryptography import x509
    from cryptography.hazmat.primitives import hashes

    from commission.checklist import load
    from commission.checks import CHECKS
    from commission.resources import resolve

    page1 = _flat(_text(demo_record, 1, 1))
    cert = x509.load_pem_x509_certificate(
        (demo_record.parent / "identity" / "cert.pem").read_bytes())
    assert cert.fingerprint(hashes.SHA256()).hex().upper() in page1.replace(" ", "")
    assert re.search(r"Next inspection or service due: \d{4}-\d\d-\d\d", page1)
    checklist = load(resolve("checklists", "diverter-1ph"), checks=CHECKS).checklist
    show = subprocess.run(["pdftotext", str(demo_record), "-"], capture_output=True, text=True)
    assert show.returncode == 0
    import json
    import os
    import sys

    env = {k: v for k, v in os.environ.items() if not k.startswith("COMMISSION_")}
    env["COMMISSION_HOME"] = str(demo_record.parent)
    job = demo_record.stem.removeprefix("record-")
    data = json.loads(subprocess.run(
        [sys.executable, "-m", "commission.cli.app", "show", job, "--json", "--register",
         str(demo_record.parent / "register.sqlite3")], capture_output=True, text=True,
        env=env).stdout)
    reviews = [i["id"] for i in data["items"] if i["verdict"] == "review"]
    assert reviews, "the demo has items under review"
    for item_id in reviews:
        assert _flat(checklist.item(item_id).prompt) in page1, item_id
    everything = _flat(_text(demo_record))
    for name in ("clamp-capture.csv", "heating-run.csv", "heatsink-soak.csv", "labels.png"):
        assert name in everything, name


@pytest.mark.slow
def test_no_item_id_leads_a_row(demo_record):
    """pdfplumber words: every item id printed in the results sits under its prompt (some
    other words directly above it in the same cell), never first in its row."""
    import pdfplumber

    from commission.checklist import load
    from commission.checks import CHECKS
    from commission.resources import resolve

    loaded = load(resolve("checklists", "diverter-1ph"), checks=CHECKS)
    ids = {i.id for _, i in loaded.checklist.items()}
    seen = 0
    with pdfplumber.open(demo_record) as pdf:
        for page in pdf.pages:
            words = page.extract_words()
            for w in words:
                if w["text"] not in ids:
                    continue
                seen += 1
                above = [o for o in words if 0 < w["top"] - o["top"] < 14
                         and o["x0"] < w["x1"] and o["x1"] > w["x0"] and o["text"] not in ids]
                assert above, f"{w['text']} leads its row on page {page.page_number}"
    assert seen >= len(ids) - 5


def test_forms_validate_show_schema(cli, tmp_path):
    """The shipped form validates; a wrong section is one line naming file, line and the
    accepted sections (exit 2); the schema is JSON Schema (checked with jsonschema when
    present, else by its keys)."""
    import json

    ok = cli("forms", "validate", "handover")
    assert ok.exit_code == 0 and "ok" in ok.stdout
    shown = cli("forms", "show", "handover")
    assert "homeowner" in shown.stdout and "For the homeowner" in shown.stdout
    bad = tmp_path / "bad.yaml"
    bad.write_text("format: commission-form/1\nid: x\ntitle: X\nsections: [status, gallery]\n",
                   encoding="utf-8")
    result = cli("forms", "validate", bad)
    assert result.exit_code == 2
    line = result.stderr.strip()
    assert len(line.splitlines()) == 1 and f"{bad}:4:" in line and "accepted:" in line
    report = cli("report", "NOJOB", "--out", tmp_path / "x.pdf", "--form", bad)
    assert report.exit_code == 2 and "Traceback" not in report.stderr
    schema = json.loads(cli("forms", "schema").stdout)
    assert schema["$schema"].startswith("https://json-schema.org/")
    assert "homeowner" in json.dumps(schema["properties"]["sections"])


@pytest.mark.slow
def test_no_text_below_8_pt(demo_record, cli, tmp_path):
    """pdfplumber's character sizes on every page of the demo record and the paper form."""
    import pdfplumber

    blank = tmp_path / "blank.pdf"
    assert cli("blank", "diverter-1ph", "--out", blank).exit_code == 0
    for path in (demo_record, blank):
        with pdfplumber.open(path) as pdf:
            sizes = [(round(ch["size"], 2), page.page_number, ch["text"])
                     for page in pdf.pages for ch in page.chars]
        assert sizes
        small = [s for s in sizes if s[0] < 7.95]
        assert small == [], f"{path.name}: {small[:5]}"
