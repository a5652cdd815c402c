"""Checklist composition: sections included from another checklist by reference.

References: the shipped single-phase checklist file itself (its bytes and SHA-256 computed
here with hashlib, its section text read with PyYAML), and the line numbers found by
searching the files written in each test.
"""

from __future__ import annotations

import hashlib
import json

import pytest
import yaml

from commission.checklist.loader import ChecklistError, load, parse
from commission.checks import CHECKS
from conftest import CHECKLIST, ROOT

THREE = ROOT / "checklists" / "diverter-3ph.yaml"

MINI = """format: commission-checklist/1
id: mini-compose
title: Mini
version: 1.0.0
rules: {name: test}
sections:
  - id: own
    title: Own
    items:
      - id: own.note
        kind: text
        prompt: A note
%s
"""


def _line(text: str, needle: str) -> int:
    return text[: text.index(needle)].count("\n") + 1


def test_single_phase_text_and_hash_are_the_file_bytes():
    """A checklist that includes nothing keeps its text and its SHA-256 of the file bytes,
    so released versions keep verifying by their recorded hashes."""
    loaded = load(CHECKLIST, checks=CHECKS)
    raw = CHECKLIST.read_bytes()
    assert loaded.text.encode("utf-8") == raw
    assert loaded.sha256 == hashlib.sha256(raw).hexdigest()


def test_three_phase_checklist_resolves_its_included_sections():
    """The resolved text holds the single-phase sections verbatim (same items as PyYAML reads
    from the single-phase file), no include is left, and it validates on its own."""
    loaded = load(THREE, checks=CHECKS)
    assert "include:" not in loaded.text
    one = yaml.safe_load(CHECKLIST.read_text(encoding="utf-8"))
    resolved = yaml.safe_load(loaded.text)
    by_id = {s["id"]: s for s in resolved["sections"]}
    for section in one["sections"]:
        if section["id"] in ("isolation", "insulation", "heatsink", "thermostat",
                             "handover"):
            assert by_id[section["id"]] == section
    assert parse(loaded.text, "stored", checks=CHECKS).sha256 == loaded.sha256
    assert loaded.sha256 == hashlib.sha256(loaded.text.encode("utf-8")).hexdigest()


def test_job_stores_and_shows_the_resolved_checklist(cli, new_job):
    """`new` stores the resolved text: its hash is the one `show --json` reports."""
    job = new_job(checklist="diverter-3ph")
    data = json.loads(cli("show", job, "--json").stdout)
    text = json.dumps(data)
    assert load(THREE, checks=CHECKS).sha256 in text
    assert "isolation.dead" in text


def _write(tmp_path, body: str, name: str = "mini.yaml"):
    path = tmp_path / name
    path.write_text(MINI % body, encoding="utf-8")
    return path


@pytest.mark.parametrize(("body", "needle"), [
    ("  - include: {checklist: diverter-1ph, section: nowhere}",
     "has no section 'nowhere' (sections: install, isolation"),
    ("  - include: {checklist: no-such-list, section: isolation}",
     "included checklist 'no-such-list' not found"),
    ("  - include: {checklist: diverter-1ph}",
     "include needs exactly 'checklist'"),
    ("  - include: {checklist: diverter-1ph, section: isolation}\n    title: extra",
     "an include entry holds only"),
    ("  - include: diverter-1ph",
     "include needs a mapping"),
])
def test_bad_includes_name_file_and_line(tmp_path, cli, body, needle):
    """Every bad include is one line naming the file and the line of the entry; exit 2."""
    path = _write(tmp_path, body)
    result = cli("checklists", "validate", str(path))
    assert result.exit_code == 2
    text = path.read_text(encoding="utf-8")
    assert f"{path}:{_line(text, '- include')}: -: " in result.stderr
    assert needle in result.stderr
    assert "Traceback" not in result.stderr


def test_include_cycle_is_refused(tmp_path, cli):
    """a includes b, b includes a: one line naming the cycle."""
    (tmp_path / "b.yaml").write_text(
        (MINI % "  - include: {checklist: a, section: own}").replace("mini-compose", "b"),
        encoding="utf-8")
    a = tmp_path / "a.yaml"
    a.write_text((MINI % "  - include: {checklist: b, section: own}").replace(
        "mini-compose", "a"), encoding="utf-8")
    result = cli("checklists", "validate", str(a))
    assert result.exit_code == 2
    assert "include cycle: a.yaml → b.yaml → a.yaml" in result.stderr


def test_problem_in_included_lines_names_the_included_file(tmp_path):
    """An id that clashes with an included item is reported at the included file's line."""
    body = ("  - id: more\n    title: More\n    items:\n      - id: isolation.dead\n"
            "        kind: confirm\n        prompt: again\n"
            "  - include: {checklist: diverter-1ph, section: isolation}")
    path = _write(tmp_path, body)
    with pytest.raises(ChecklistError) as err:
        load(path, checks=CHECKS)
    (problem,) = err.value.problems
    one = CHECKLIST.read_text(encoding="utf-8")
    assert problem.file.endswith("diverter-1ph.yaml")
    assert problem.line == _line(one, "- id: isolation.dead") and problem.item == "isolation.dead"
    assert "duplicate id" in problem.message


def test_include_beside_the_file_and_reindented(tmp_path):
    """A sibling checklist indented differently is re-indented into place."""
    other = tmp_path / "other.yaml"
    other.write_text("format: commission-checklist/1\nid: other\ntitle: O\nversion: 2\n"
                     "rules: {name: t}\nsections:\n- id: extra\n  title: Extra\n  items:\n"
                     "  - id: extra.a\n    kind: confirm\n    prompt: |\n      two\n"
                     "      lines\n", encoding="utf-8")
    path = _write(tmp_path, "  - include: {checklist: other, section: extra}")
    loaded = load(path, checks=CHECKS)
    assert [s.id for s in loaded.checklist.sections] == ["own", "extra"]
    assert loaded.checklist.item("extra.a").prompt == "two\nlines\n"
    assert "# included: section 'extra' of other 2 (sha256 " in loaded.text


def test_stored_text_with_an_include_is_refused():
    """An embedded/stored checklist must be self-contained: parse() never resolves."""
    with pytest.raises(ChecklistError, match="must hold them itself"):
        parse(MINI % "  - include: {checklist: diverter-1ph, section: isolation}", "stored",
              checks=CHECKS)


# The resolved text of each released version of diverter-3ph. An included section that
# changes in diverter-1ph changes this text: bump diverter-3ph's version and add its hash.
RELEASED_3PH = {"1.0.0": "1f8209b95d88076ba32ab8fd8cd6227aebdd27b492012c0e021566bc3ec6b8ae",
                # 1.1.0: the included heatsink section of diverter-1ph 1.6.0 (soak help, rise
                # factor stated)
                "1.1.0": "8521ceafa6774608d5cdfc10a54044f7fd37b423c79a9012272c00428d26ec70",
                "1.2.0": "c37be6a6a1b5ce500f2a6f86f844a326092176eb5a35dfd2895bc6cd83c6d3d3"}


def test_three_phase_version_pins_its_resolved_text():
    """SHA-256 (hashlib) of the resolved text against the hash released for its version."""
    loaded = load(THREE, checks=CHECKS)
    assert RELEASED_3PH.get(loaded.checklist.version) == loaded.sha256, (
        "diverter-3ph resolved to a new text (an included section changed?): bump its "
        "version and add the new hash to RELEASED_3PH")
