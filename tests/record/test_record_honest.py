"""The honest paths of the record layer, and what a record must never carry.

Outside references: pdftotext (poppler) for page 1 of a report, git history for the
released checklist texts (hashed with hashlib the way a job hashes its checklist),
RFC 8259 for JSON, Python's socket/getpass for this computer's host and user names, and
a record made by the previous release (tests/data/record-v1.pdf, made by `commission
demo` with main's code before the record schema changed; its installer certificate is
tests/data/record-v1-installer.pem).
"""

from __future__ import annotations

import json
import re
import shutil
import sqlite3
import subprocess
from pathlib import Path

import pytest

from conftest import CHECKLIST, DEMO, ROOT, need_tool

DATA = ROOT / "tests" / "data"
PASS = "larch-house-demo"
VERSION = re.search(r"^version: *(\S+)", CHECKLIST.read_text(encoding="utf-8"), re.M).group(1)


def _payload(pdf: Path) -> bytes:
    from commission.report.signatures import open_pdf
    from commission.report.verify import attachments

    return attachments(open_pdf(pdf.read_bytes())[0])["commission-record.json"]


# ------------------------------------------------------------------- no local names

def test_the_record_names_no_user_host_or_local_path(demo):
    import getpass
    import socket

    payload = _payload(demo["pdf"])
    data = json.loads(payload)
    assert data["format"] == "commission-record/3"
    text = payload.decode("utf-8")
    for word in {getpass.getuser(), socket.gethostname(), "tester"}:
        assert f'"{word}"' not in text, word
    assert str(demo["folder"]) not in text and str(DEMO) not in text
    assert "/" not in "".join(m["name"] for m in data["files"])
    for e in data["entries"]:
        assert set(e) == {"uuid", "item", "action", "raw", "value", "unit_typed",
                          "instrument", "at", "device", "supersedes"}
        assert re.fullmatch(r"[0-9a-f-]{36}", e["uuid"])
        assert e["device"] is None or re.fullmatch(r"dev-[0-9a-f]{16}", e["device"])
        assert e["supersedes"] is None or re.fullmatch(r"[0-9a-f-]{36}", e["supersedes"])
        if isinstance(e["value"], dict):
            assert e["raw"] == e["value"]["name"] and "/" not in e["raw"]
    assert {e["device"] for e in data["entries"]} != {None}
    assert "created_by" not in data["job"] and "checklist" not in data["job"]
    assert data["tool"]["check_logic"] >= 1
    from commission.report.identity import fingerprint, load_certificate_bytes

    cert = load_certificate_bytes(demo["cert"].read_bytes(), "cert")
    assert data["signing"]["installer_certificate_sha256"] == fingerprint(cert)
    assert data["signing"]["created_at"] == data["generated_at"]


def test_the_device_id_is_kept_in_the_register(demo):
    db = sqlite3.connect(demo["register"])
    (device,) = db.execute("SELECT value FROM settings WHERE key = 'device_id'").fetchone()
    hosts = {r[0] for r in db.execute("SELECT host FROM entries")}
    assert hosts == {device}
    devices = {e["device"] for e in json.loads(_payload(demo["pdf"]))["entries"]}
    assert devices == {device}


# ------------------------------------------------------------------- previous release

@pytest.mark.parametrize(("name", "version"), [
    ("record-v1", "1.2.0"), pytest.param("record-v1b", "1.5.0", marks=pytest.mark.slow)])
def test_a_record_of_the_previous_release_still_verifies(cli, name, version):
    """record-v1b was made by main's code just before format 2 (after the layout work added
    next_inspection and language to format 1, and answered items without a check became
    'recorded')."""
    pdf = DATA / f"{name}.pdf"
    result = cli("verify", pdf, "--trust", DATA / f"{name}-installer.pem")
    assert result.exit_code == 0, result.output
    assert f"checklist: released diverter-1ph {version}" in result.stdout
    assert "check logic 1" in result.stdout
    assert result.stdout.strip().endswith("verified")
    assert json.loads(_payload(pdf))["format"] == "commission-record/1"


@pytest.mark.slow
def test_a_format_2_record_still_verifies(cli):
    """record-v2 was made by `commission demo` with main's code just before format 3
    (its installer certificate: record-v2-installer.pem)."""
    from commission import record as rec

    pdf = DATA / "record-v2.pdf"
    payload = _payload(pdf)
    data = json.loads(payload)
    assert data["format"] == "commission-record/2"
    parsed = rec.parse(data)
    # format 2 declared the fingerprint under its old name; it reads as the same fact
    from commission.report.identity import fingerprint, load_certificate_bytes

    cert = load_certificate_bytes((DATA / "record-v2-installer.pem").read_bytes(), "cert")
    assert parsed.installer_certificate_sha256 == fingerprint(cert)
    assert parsed.reviewer_stamp is None
    result = cli("verify", pdf, "--trust", DATA / "record-v2-installer.pem")
    assert result.exit_code == 0, result.output
    assert result.stdout.strip().endswith("verified")


@pytest.mark.slow
def test_a_record_of_the_previous_release_imports(cli, tmp_path):
    target = tmp_path / "v1.sqlite3"
    result = cli("import", DATA / "record-v1.pdf", "--trust", DATA / "record-v1-installer.pem",
                 "--register", target)
    assert result.exit_code == 0, result.output
    job = result.stdout.strip().splitlines()[-1]
    shown = json.loads(cli("show", job, "--json", "--register", target).stdout)
    assert shown["status"] == "ready" and shown["unverified"] is False


# ------------------------------------------------------------------- custom checklist

@pytest.mark.slow
def test_custom_checklist_verifies_listing_its_differences(cli, demo, tmp_path, monkeypatch):
    """A site's own checklist (own version): the 1×IΔn trip time made non-critical with its
    trip-time check taken off, one item added. verify passes and lists exactly these
    differences from the shipped checklist."""
    monkeypatch.setenv("COMMISSION_HOME", str(demo["folder"]))
    text = CHECKLIST.read_text(encoding="utf-8").replace(f"version: {VERSION}",
                                                         f"version: {VERSION}-site", 1)
    start = text.index("      - id: protection.rcd.t1")
    end = text.index("      - id: protection.rcd.t5")
    block = re.sub(r"        check:\n          name: rcd_trip_time\n(          .*\n)+", "",
                   text[start:end]).replace("critical: true", "critical: false")
    extra = ("      - id: protection.rcd.label\n        kind: confirm\n"
             "        prompt: RCD test label fixed beside the device\n")
    text = text[:start] + block + extra + text[end:]
    custom = tmp_path / "site-checklist.yaml"
    custom.write_text(text, encoding="utf-8")
    register = tmp_path / "reg.sqlite3"
    shutil.copy(demo["register"], register)
    made = cli("new", "--checklist", custom, "--site", "Hazel Barn", "--register", register)
    assert made.exit_code == 0, made.output
    job = made.stdout.strip().splitlines()[-1]
    answers = tmp_path / "answers.yaml"
    answers.write_text((DEMO / "answers.yaml").read_text(encoding="utf-8").replace(
        "files/", str(DEMO / "files") + "/") + "protection.rcd.label: yes\n", encoding="utf-8")
    walked = cli("walk", job, "--answers", answers, "--register", register)
    assert walked.exit_code == 0, walked.output
    out = tmp_path / "custom.pdf"
    pf = demo["folder"] / "demo-passphrase.txt"
    report = cli("report", job, "--out", out, "--sign", "--passphrase-file", pf,
                 "--register", register)
    assert report.exit_code == 0, report.output
    result = cli("verify", out)
    assert result.exit_code == 0, result.output
    assert f"checklist: custom checklist diverter-1ph {VERSION}-site" in result.stdout
    differs = [line.strip() for line in result.stdout.splitlines()
               if line.strip().startswith("differs:")]
    assert differs == ["differs: protection.rcd.t1: critical True → False",
                       "differs: protection.rcd.t1: check removed",
                       "differs: protection.rcd.label: item added"]
    data = json.loads(cli("verify", out, "--json").stdout)
    assert data["checklist"]["kind"] == "custom"


# ------------------------------------------------------------------- released list

def test_every_shipped_checklist_is_in_the_released_list():
    import hashlib

    from commission.checklist import load
    from commission.checks import CHECKS
    from commission.record.released import RELEASED
    from commission.resources import shipped

    for path in shipped("checklists").values():
        loaded = load(path, checks=CHECKS)
        digest = hashlib.sha256(loaded.text.encode("utf-8")).hexdigest()
        assert loaded.sha256 == digest  # the text a job stores (resolved when it includes)
        assert digest in RELEASED[loaded.checklist.id][loaded.checklist.version], path


def test_the_released_list_matches_git_history():
    """Every version the shipped checklist ever had in git is listed with its text's hash."""
    if not (ROOT / ".git").exists() or shutil.which("git") is None:
        pytest.skip("no git history here")
    import hashlib

    from commission.record.released import RELEASED

    rel = "checklists/diverter-1ph.yaml"
    commits = subprocess.run(["git", "-C", str(ROOT), "log", "--format=%H", "--", rel],
                             capture_output=True, text=True).stdout.split()
    if not commits:
        pytest.skip("shallow clone without the checklist's history")
    seen = set()
    for commit in commits:
        blob = subprocess.run(["git", "-C", str(ROOT), "show", f"{commit}:{rel}"],
                              capture_output=True).stdout
        version = re.search(rb"^version: *(\S+)", blob, re.M).group(1).decode()
        assert hashlib.sha256(blob).hexdigest() in RELEASED["diverter-1ph"][version], commit
        seen.add(version)
    assert {"1.0.0", "1.1.0", "1.2.0", "1.3.0", "1.5.0"} <= seen


def test_differences_name_params_inputs_and_fields():
    from commission.checklist import parse
    from commission.checks import CHECKS
    from commission.record.released import differences

    text = CHECKLIST.read_text(encoding="utf-8")
    base = parse(text, "shipped", checks=CHECKS).checklist
    changed = text.replace("      - id: protection.rcd.t5", "      - id: protection.rcd.t5x", 1)
    changed = changed.replace("inputs: {multiple: 1, delay_class: protection.rcd.delay}",
                              "inputs: {multiple: 2, delay_class: protection.rcd.delay}", 1)
    got = differences(base, parse(changed, "custom", checks=CHECKS).checklist)
    assert "protection.rcd.t5: item removed" in got
    assert "protection.rcd.t5x: item added" in got
    assert "protection.rcd.t1: input multiple 1 → 2" in got


# ------------------------------------------------------------------- unverified import

@pytest.mark.slow
def test_unverified_import_is_marked_everywhere(cli, demo, tmp_path):
    """Without the installer's certificate the record does not verify: import refuses;
    --unverified imports it, and jobs, show, report page 1 and the new record say so."""
    need_tool("pdftotext")
    target = tmp_path / "u.sqlite3"
    refused = cli("import", demo["pdf"], "--register", target)
    assert refused.exit_code == 1 and not target.exists()
    assert "not in your trust store" in refused.stderr
    done = cli("import", demo["pdf"], "--unverified", "--register", target)
    assert done.exit_code == 0, done.output
    assert "imported UNVERIFIED" in done.stdout
    job = done.stdout.strip().splitlines()[-1]
    assert "UNVERIFIED import" in cli("jobs", "--register", target).stdout
    assert json.loads(cli("jobs", "--json", "--register", target).stdout)[0]["unverified"]
    assert "UNVERIFIED import" in cli("show", job, "--register", target).stdout
    out = tmp_path / "again.pdf"
    assert cli("report", job, "--out", out, "--register", target).exit_code == 0
    page1 = subprocess.run(["pdftotext", "-f", "1", "-l", "1", str(out), "-"],
                           capture_output=True, text=True).stdout
    assert "UNVERIFIED IMPORT: this job was imported" in " ".join(page1.split())
    assert json.loads(_payload(out))["job"]["unverified"] is True


# ------------------------------------------------------------------- register

def test_register_from_schema_6_migrates_on_first_use(cli, tmp_path):
    """tests/data/register-v6.sqlite3 was made by main's code at schema 6 (one job, one
    reading typed on a host named in the old `host` column)."""
    copy = tmp_path / "v6.sqlite3"
    shutil.copy(DATA / "register-v6.sqlite3", copy)
    assert sqlite3.connect(copy).execute("PRAGMA user_version").fetchone()[0] == 6
    listed = cli("jobs", "--json", "--register", copy)
    assert listed.exit_code == 0, listed.output
    (job,) = json.loads(listed.stdout)
    assert job["unverified"] is False and job["site"] == "Fixture Site"
    from commission.register.schema import SCHEMA_VERSION

    assert sqlite3.connect(copy).execute("PRAGMA user_version").fetchone()[0] == SCHEMA_VERSION
    out = tmp_path / "r.pdf"
    made = cli("report", job["id"], "--out", out, "--register", copy)
    assert made.exit_code == 0, made.output
    record = json.loads(_payload(out))
    (entry,) = record["entries"]
    assert entry["device"] is None  # the old host name is not carried into the record


# ------------------------------------------------------------------- strict JSON

@pytest.mark.parametrize(("payload", "reason"), [
    (b'{"a":1,"a":2}', "duplicate key"),
    (b'{"a":NaN}', "NaN"),
    (b'{"a":-Infinity}', "NaN and infinities"),
    (b'{"a":1e400}', "overflows to infinity"),
    (b"[" * 17 + b"]" * 17, "nested more than 16"),
    (b'{"a":"' + b"[" * 100 + b'"}', None),  # brackets inside a string are not nesting
    (b"\xff\xfe", "not UTF-8"),
])
def test_strict_json_reader(payload, reason):
    """RFC 8259 §4 (unique names), §6 (no NaN or Infinity)."""
    from commission.record import RecordError, loads

    if reason is None:
        assert loads(payload) == {"a": "[" * 100}
        return
    with pytest.raises(RecordError, match=reason):
        loads(payload)


def test_safe_escapes_c0_c1_and_bidi():
    """ECMA-48 C0/C1 controls and Unicode TR #9 bidi overrides never reach a terminal."""
    from commission.record import safe

    assert safe("a\x1b[2Jb") == "a\\x1b[2Jb"
    assert safe("x\u009by") == "x\\x9by"
    assert safe("evil\u202etxt.exe") == "evil\\u202etxt.exe"
    assert safe("line\nnext") == "line\\x0anext"
    assert safe("Zoë Łukasiewicz-Núñez · 50 Hz") == "Zoë Łukasiewicz-Núñez · 50 Hz"


def test_a_typed_answer_with_a_control_character_is_refused_when_typed():
    """What a record would refuse (ECMA-48 escapes) is refused at the walk already."""
    from commission.checklist import load
    from commission.checks import CHECKS
    from commission.walk.values import BadAnswer, parse_answer

    item = load(CHECKLIST, checks=CHECKS).checklist.item("install.inverter")
    with pytest.raises(BadAnswer, match=r"control character \\x1b"):
        parse_answer(item, "Brightwell\x1b[2J")
    assert parse_answer(item, "Brightwell SL-3600").value == "Brightwell SL-3600"


def test_the_record_declares_the_reviewer_stamp_box_the_pages_draw(demo):
    """The stamp box declared inside the signed record is where the page draws the dashed
    box (read back with pdfplumber, independent of reportlab)."""
    import pdfplumber

    data = json.loads(_payload(demo["pdf"]))
    box = data["signing"]["reviewer_stamp"]
    assert box["field"] == "Reviewer"
    x1, y1, x2, y2 = box["rect"]
    assert x2 - x1 > 100 and y2 - y1 > 20
    with pdfplumber.open(demo["pdf"]) as doc:
        page = doc.pages[box["page"]]
        height = float(page.height)
        found = [r for r in page.rects
                 if abs(r["x0"] - x1) < 0.5 and abs(r["x1"] - x2) < 0.5
                 and abs((height - r["top"]) - y2) < 0.5 and abs((height - r["bottom"]) - y1) < 0.5]
    assert len(found) == 1, (box, len(found))
