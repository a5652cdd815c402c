"""Hostile records caught by the record layer (schema, checklist, raw text, verdicts).

Every attack starts from a fresh record of the demo job, changes the embedded record,
and is then signed again with the same trusted installer identity, so the signature,
the trust store and the printed record hash all hold: only the record layer can catch
it. Each test asserts `verify` exits 1 with its own reason in the one line it prints on
stderr, and that `import` refuses and writes nothing (the register file does not even
exist afterwards). The control file is built by the same code without the attack step
and verifies.

Outside references: RFC 8259 (JSON: §4 names should be unique, §6 no NaN/Infinity),
ISO/IEC 6429 / ECMA-48 (C0 and C1 control characters), the YAML 1.1 spec's anchors and
aliases (the "billion laughs" expansion), pdfsig (poppler) for the re-signed file's
signature, and the shipped checklist file's SHA-256 computed by hashlib.
"""

from __future__ import annotations

import copy
import hashlib
import json
import re
import subprocess
from pathlib import Path

import pytest

from conftest import CHECKLIST, need_tool

PASS = "larch-house-demo"
VERSION = re.search(r"^version: *(\S+)", CHECKLIST.read_text(encoding="utf-8"), re.M).group(1)
GENERATED = "2026-12-01T12:00:00Z"

BOMB = "".join(
    ['lol0: &l0 ["lol","lol","lol","lol","lol","lol","lol","lol","lol"]\n']
    + [f"lol{n}: &l{n} [{','.join([f'*l{n - 1}'] * 9)}]\n" for n in range(1, 10)])


class Forge:
    """Build a record of the demo job, let a test change it, sign it with the demo's
    own (trusted) installer key, exactly as `report --sign` does."""

    def __init__(self, demo, tmp_path, monkeypatch):
        monkeypatch.setenv("COMMISSION_HOME", str(demo["folder"]))
        monkeypatch.setenv("COMMISSION_PASSPHRASE", PASS)  # countersign is tried too
        self.demo, self.tmp = demo, tmp_path

    def pdf(self, change=None, payload_change=None, name="attacked.pdf",
            results_change=None) -> Path:
        from commission import record as rec
        from commission.register import Register
        from commission.report import build, pdf
        from commission.report.identity import load_identity
        from commission.report.signing import sign_pdf
        from commission.resources import resolve
        from commission.walk.state import JobState

        with Register(self.demo["register"], create=False) as reg:
            state = JobState(reg, reg.find_job(self.demo["job"]))
            results = state.results()
            signing = rec.SigningInfo(created_at=GENERATED,
                                      installer_certificate_sha256=load_identity().fingerprint)
            built = rec.build(state, results, GENERATED, signing)
            data = copy.deepcopy(built.data)
            attachments = list(built.attachments)
            if change is not None:
                change(data)
            payload = json.dumps(data, sort_keys=True, ensure_ascii=False,
                                 separators=(",", ":")).encode("utf-8")
            if payload_change is not None:
                payload = payload_change(payload)
            sha = rec.record_hash(payload)
            if results_change is not None:  # the pages as that record's maker drew them
                results = results_change(results)
            doc = pdf.render(state, results, sha, pdf.load_form(resolve("forms", "handover")),
                             GENERATED)
            doc = build.embed_files(doc, payload, attachments, state)
            doc = sign_pdf(doc, passphrase=PASS, reason="Commissioning record",
                           location=None, field_name="InstallerSignature")
            state.files.close()
        path = self.tmp / name
        path.write_bytes(doc)
        return path


@pytest.fixture
def forge(demo, tmp_path, monkeypatch):
    return Forge(demo, tmp_path, monkeypatch)


def _entry(data: dict, item: str) -> dict:
    return [e for e in data["entries"] if e["item"] == item][-1]


def _refused(cli, path: Path, reason: str, tmp_path: Path) -> None:
    """verify: exit 1, one line naming the reason; import: refused, nothing written."""
    result = cli("verify", path)
    assert result.exit_code == 1, result.output
    lines = result.stderr.splitlines()
    assert len(lines) == 1, result.stderr
    assert re.search(reason, lines[0]), lines[0]
    assert "\x1b" not in result.stdout + result.stderr
    out = tmp_path / "countersigned-attack.pdf"
    countersigned = cli("countersign", path, "--out", out)
    assert countersigned.exit_code == 2 and len(countersigned.stderr.splitlines()) == 1
    assert re.search(reason, countersigned.stderr), countersigned.stderr
    assert "refusing to countersign" in countersigned.stderr and not out.exists()
    target = tmp_path / "import-target.sqlite3"
    imported = cli("import", path, "--register", target)
    assert imported.exit_code == 1, imported.output
    assert len(imported.stderr.splitlines()) == 1 and "not imported" in imported.stderr
    assert re.search(reason, imported.stderr), imported.stderr
    assert not target.exists()
    assert not Path(str(target) + "-wal").exists()


# -------------------------------------------------------------------------- control

def test_control_built_the_same_way_verifies_and_imports(cli, forge, tmp_path):
    need_tool("pdfsig")
    path = forge.pdf()
    out = subprocess.run(["pdfsig", str(path)], capture_output=True, text=True).stdout
    assert "Signature is Valid." in out
    result = cli("verify", path)
    assert result.exit_code == 0, result.output
    assert f"checklist: released diverter-1ph {VERSION}" in result.stdout
    assert result.stdout.strip().endswith("verified")
    target = tmp_path / "control.sqlite3"
    imported = cli("import", path, "--register", target)
    assert imported.exit_code == 0, imported.output
    assert target.exists()


# -------------------------------------------------------------------------- numbers

def test_nan_reading(cli, forge, tmp_path):
    """A critical RCD trip time of NaN (RFC 8259 §6: not JSON)."""
    def nan(payload: bytes) -> bytes:
        return payload.replace(b'"value":0.024', b'"value":NaN', 1)

    path = forge.pdf(payload_change=nan)
    _refused(cli, path, r"NaN", tmp_path)


@pytest.mark.slow
def test_infinite_reading(cli, forge, tmp_path):
    def inf(payload: bytes) -> bytes:
        return payload.replace(b'"value":0.024', b'"value":1e999', 1)

    path = forge.pdf(payload_change=inf)
    _refused(cli, path, r"infinity", tmp_path)


@pytest.mark.slow
def test_the_nan_payload_is_really_in_the_file(forge):
    """The attack step above changes the bytes it claims to (the reading is there)."""
    from commission.report.signatures import open_pdf
    from commission.report.verify import attachments

    path = forge.pdf(payload_change=lambda p: p.replace(b'"value":0.024', b'"value":NaN', 1))
    payload = attachments(open_pdf(path.read_bytes())[0])["commission-record.json"]
    assert b'"value":NaN' in payload


# -------------------------------------------------------------------------- shape

@pytest.mark.slow
def test_unknown_item(cli, forge, tmp_path):
    def change(data):
        e = dict(_entry(data, "protection.rcd.t1"))
        e.update(uuid="0e0e0e0e-0000-4000-8000-000000000001", item="protection.rcd.t9")
        data["entries"].append(e)

    _refused(cli, forge.pdf(change), r"entries\[\d+\] \(protection\.rcd\.t9\): unknown item",
             tmp_path)


@pytest.mark.slow
def test_wrong_type_for_a_reading(cli, forge, tmp_path):
    def change(data):
        _entry(data, "protection.rcd.t1")["value"] = "0.024"

    _refused(cli, forge.pdf(change), r"protection\.rcd\.t1.*not a reading answer", tmp_path)


@pytest.mark.slow
def test_wrong_type_for_a_confirm(cli, forge, tmp_path):
    def change(data):
        _entry(data, "protection.rcd.button")["value"] = "yes"

    _refused(cli, forge.pdf(change), r"protection\.rcd\.button.*not a confirm answer",
             tmp_path)


@pytest.mark.slow
def test_deep_nesting(cli, forge, tmp_path):
    def change(data):
        value = 1.0
        for _ in range(40):
            value = [value]
        _entry(data, "install.inverter")["value"] = value

    _refused(cli, forge.pdf(change), r"nested more than 16 levels", tmp_path)


@pytest.mark.slow
def test_duplicate_keys(cli, forge, tmp_path):
    """RFC 8259 §4: with duplicate names readers differ; here the second status would
    win in Python's reader."""
    def dup(payload: bytes) -> bytes:
        return payload.replace(b'"status":"ready"', b'"status":"ready","status":"ready"', 1)

    _refused(cli, forge.pdf(payload_change=dup), r"field 'status': duplicate key", tmp_path)


@pytest.mark.slow
def test_unknown_field(cli, forge, tmp_path):
    def change(data):
        data["job"]["note"] = "trust me"

    _refused(cli, forge.pdf(change), r"field job\.note: unknown field", tmp_path)


@pytest.mark.slow
def test_oversized_text_answer(cli, forge, tmp_path):
    def change(data):
        e = _entry(data, "install.inverter")
        e["raw"] = e["value"] = "x" * 5000

    _refused(cli, forge.pdf(change), r"entries\[\d+\]\.raw: .*at most 4000", tmp_path)


@pytest.mark.slow
def test_terminal_escape_in_a_text_answer(cli, forge, tmp_path):
    """ECMA-48 CSI 'clear screen' and an OSC title in a text answer: refused, and the
    refusal prints the character escaped, never raw."""
    def change(data):
        e = _entry(data, "install.inverter")
        e["raw"] = e["value"] = "Brightwell\x1b[2J\x1b]0;pwned\x07"

    _refused(cli, forge.pdf(change), r"entries\[\d+\]\.raw: holds the control character "
             r"\\x1b", tmp_path)


@pytest.mark.slow
def test_c1_control_in_a_detail(cli, forge, tmp_path):
    def change(data):
        data["job"]["site"] = "Larch\u009bHouse"  # C1 CSI

    _refused(cli, forge.pdf(change), r"field job\.site: holds the control character \\x9b",
             tmp_path)


@pytest.mark.slow
def test_a_folder_in_a_file_name(cli, forge, tmp_path):
    def change(data):
        data["files"][0]["name"] = "/home/someone/captures/clamp.csv"

    _refused(cli, forge.pdf(change), r"files\[0\]\.name: .*without folders", tmp_path)


# -------------------------------------------------------------------------- checklist

def _weaken(text: str) -> str:
    """Take the trip-time check off the 1×IΔn RCD test (a real weakening)."""
    start = text.index("      - id: protection.rcd.t1")
    end = text.index("      - id: protection.rcd.t5")
    block = text[start:end]
    block = re.sub(r"        check:\n          name: rcd_trip_time\n(          .*\n)+", "",
                   block)
    assert "rcd_trip_time" not in block
    return text[:start] + block + text[end:]


@pytest.mark.slow
def test_weakened_checklist_claiming_the_shipped_hash(cli, forge, tmp_path):
    def change(data):
        data["checklist"]["text"] = _weaken(data["checklist"]["text"])  # sha256 kept

    _refused(cli, forge.pdf(change), r"checklist: the embedded text hashes to", tmp_path)


@pytest.mark.slow
def test_weakened_checklist_claiming_the_shipped_version(cli, forge, tmp_path):
    def change(data):
        text = _weaken(data["checklist"]["text"])
        data["checklist"]["text"] = text
        data["checklist"]["sha256"] = hashlib.sha256(text.encode()).hexdigest()

    _refused(cli, forge.pdf(change), r"claims a released version but its text differs",
             tmp_path)


@pytest.mark.slow
def test_alias_bomb_in_the_embedded_checklist(cli, forge, tmp_path):
    def change(data):
        text = data["checklist"]["text"] + BOMB
        data["checklist"]["text"] = text
        data["checklist"]["sha256"] = hashlib.sha256(text.encode()).hexdigest()

    _refused(cli, forge.pdf(change), r"YAML nodes through aliases", tmp_path)


@pytest.mark.slow
def test_alias_bomb_in_a_local_checklist(cli, forge, tmp_path):
    """A billion-laughs file named with --checklist, and validated: refused (exit 2,
    bad input) without being expanded."""
    bomb = tmp_path / "bomb.yaml"
    bomb.write_text(BOMB, encoding="utf-8")
    for args in (["verify", forge.pdf(), "--checklist", bomb],
                 ["checklists", "validate", bomb]):
        result = cli(*args)
        assert result.exit_code == 2, result.output
        assert "YAML nodes through aliases" in result.stderr
        assert len(result.stderr.splitlines()) == 1


@pytest.mark.slow
def test_named_checklist_must_be_the_one_used(cli, forge, tmp_path):
    """--checklist FILE: the shipped file passes; any other checklist fails."""
    path = forge.pdf()
    ok = cli("verify", path, "--checklist", CHECKLIST)
    assert ok.exit_code == 0, ok.output
    assert "the checklist you named" in ok.stdout
    other = tmp_path / "other.yaml"
    other.write_text(CHECKLIST.read_text(encoding="utf-8").replace(
        f"version: {VERSION}", f"version: {VERSION}-site", 1), encoding="utf-8")
    bad = cli("verify", path, "--checklist", other)
    assert bad.exit_code == 1
    assert "not the named" in bad.stderr and len(bad.stderr.splitlines()) == 1


# -------------------------------------------------------------------------- raw text

@pytest.mark.slow
def test_raw_text_that_does_not_match_the_stored_value(cli, forge, tmp_path):
    """The typed text says 350 ms; the stored value says 24 ms (and so does the verdict)."""
    def change(data):
        _entry(data, "protection.rcd.t1")["raw"] = "350 ms"

    _refused(cli, forge.pdf(change), r"protection\.rcd\.t1\): raw text '350 ms' reads as 0\.35",
             tmp_path)


@pytest.mark.slow
def test_raw_choice_that_does_not_match(cli, forge, tmp_path):
    def change(data):
        _entry(data, "supply.earthing")["raw"] = "TT"

    _refused(cli, forge.pdf(change), r"supply\.earthing\): raw text 'TT' reads as 'TT'",
             tmp_path)


@pytest.mark.slow
def test_altered_attachment(cli, forge, tmp_path):
    """A file whose declared size is changed (its bytes and SHA-256 left alone)."""
    def change(data):
        data["files"][0]["bytes"] += 1
        for e in data["entries"]:
            if isinstance(e["value"], dict) and e["value"].get("sha256") == \
                    data["files"][0]["sha256"]:
                e["value"]["bytes"] += 1

    _refused(cli, forge.pdf(change), r"declared \d+ bytes, attached \d+", tmp_path)


# -------------------------------------------------------------------------- verdicts

def _flip_t1(data):
    for v in data["verdicts"]:
        if v["id"] == "protection.rcd.t1":
            assert v["verdict"] == "pass"
            v["verdict"] = "fail"
            v["reason"] = "too slow"


@pytest.mark.slow
def test_verdict_changed_under_the_same_check_logic_version(cli, forge, tmp_path):
    _refused(cli, forge.pdf(_flip_t1), r"differ from the readings under the same check-logic "
             r"version \d+, first protection\.rcd\.t1: recorded fail, recomputed pass",
             tmp_path)


@pytest.mark.slow
def test_ready_while_a_critical_item_fails_is_refused_whatever_the_version(cli, forge,
                                                                          tmp_path):
    """Safety: another check-logic version may judge differently, but a record that says
    ready while its own snapshot fails a critical item is never accepted."""
    def change(data):
        _flip_t1(data)
        data["tool"]["check_logic"] = 99

    _refused(cli, forge.pdf(change), r"recorded ready while the critical item "
             r"protection\.rcd\.t1 is fail", tmp_path)


@pytest.mark.slow
def test_other_check_logic_version_is_a_notice_and_strict_fails(cli, forge, tmp_path):
    """A record judged by another check-logic version, where an item differs: a notice
    with both verdicts and both versions (exit 0); --strict makes it a failure."""
    def change(data):
        for v in data["verdicts"]:
            if v["id"] == "install.inverter":
                v["verdict"] = "review"
                v["reason"] = "model not on the approved list"
        data["tool"]["check_logic"] = 0

    from commission.checks.registry import CHECK_LOGIC_VERSION as NOW

    def drawn(results):
        import dataclasses

        return [dataclasses.replace(r, verdict="review") if r.item.id == "install.inverter"
                else r for r in results]

    path = forge.pdf(change, results_change=drawn)
    result = cli("verify", path)
    assert result.exit_code == 0, result.output
    assert ("notice: judged differently by this version: install.inverter: recorded review "
            f"(check logic 0), now recorded (check logic {NOW})") in result.stdout
    strict = cli("verify", path, "--strict")
    assert strict.exit_code == 1
    assert "judged differently by this version (--strict)" in strict.stderr
    target = tmp_path / "reg.sqlite3"
    imported = cli("import", path, "--register", target)
    assert imported.exit_code == 0, imported.output
    job = imported.stdout.strip().splitlines()[-1]
    shown = cli("show", job, "--register", target)
    assert ("record's own verdict: install.inverter: review (check logic 0, commission "
            f"0.1.0); today recorded (check logic {NOW})") in " ".join(shown.stdout.split())
    data = json.loads(cli("show", job, "--json", "--register", target).stdout)
    assert [d["id"] for d in data["judged_differently"]] == ["install.inverter"]
