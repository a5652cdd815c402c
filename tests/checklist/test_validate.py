"""`commission checklists validate|show|schema` on the shipped and on broken checklists."""

from __future__ import annotations

import json
import re

import pytest

from conftest import CHECKLIST

TEXT = CHECKLIST.read_text(encoding="utf-8")


def _line_of(text: str, needle: str, nth: int = 1) -> int:
    pos = -1
    for _ in range(nth):
        pos = text.index(needle, pos + 1)
    return text[:pos].count("\n") + 1


def test_shipped_checklist_validates(cli):
    result = cli("checklists", "validate", str(CHECKLIST))
    assert result.exit_code == 0, result.stderr
    assert "ok" in result.stdout


def test_shipped_name_resolves(cli):
    assert cli("checklists", "validate", "diverter-1ph").exit_code == 0


BROKEN = [
    # (label, old, new, expected item id, needle in the message, anchor for the line)
    ("unknown kind", "      - id: install.inverter\n        kind: text",
     "      - id: install.inverter\n        kind: txet", "install.inverter", "unknown kind",
     "kind: txet"),
    ("unknown check", "check: {name: supply_voltage}", "check: {name: supply_volts}",
     "supply.voltage", "unknown check 'supply_volts'", "check: {name: supply_volts}"),
    ("input names a missing item", "            rating: protection.breaker.rating\n",
     "            rating: protection.breaker.ratin\n", "earth.zs",
     "missing item 'protection.breaker.ratin'", "rating: protection.breaker.ratin\n"),
    ("critical measured reading without a check",
     "        check:\n          name: r1r2_continuity\n", "        chek_removed:\n"
     "          name: r1r2_continuity\n", "continuity.r1r2", None, None),
    ("alias naming no option", "aliases: {TN-C-S: [PME]}", "aliases: {TNCS: [PME]}",
     "supply.earthing", "'TNCS' is not one of the options", "aliases: {TNCS: [PME]}"),
    ("alias read two ways", "aliases: {TN-C-S: [PME]}", "aliases: {TN-C-S: [TT]}",
     "supply.earthing", "would read as both", "aliases: {TN-C-S: [TT]}"),
    ("measured on a choice", "        aliases: {TN-C-S: [PME]}\n",
     "        aliases: {TN-C-S: [PME]}\n        measured: true\n", "supply.earthing",
     "'measured' belongs to reading items only", "measured: true"),
    ("condition on a missing item", "when: {item: supply.earthing, is: TT}",
     "when: {item: supply.earthin, is: TT}", "earth.ra", "condition on missing item",
     "when: {item: supply.earthin, is: TT}"),
    ("unit does not fit quantity", "        quantity: time\n        unit: ms",
     "        quantity: time\n        unit: kV", "protection.rcd.t1", "not a unit of time",
     "unit: kV"),
    ("unknown key", "        prompt: Supply frequency", "        promt: Supply frequency",
     "supply.frequency", "unknown key 'promt'", "promt: Supply frequency"),
]


@pytest.mark.parametrize(("label", "old", "new", "item", "needle", "anchor"), BROKEN,
                         ids=[b[0] for b in BROKEN])
def test_broken_checklists_name_file_line_and_item(tmp_path, cli, label, old, new, item, needle,
                                                   anchor):
    assert old in TEXT, label
    broken = TEXT.replace(old, new, 1)
    if needle is None:  # a whole key removed: drop its block instead
        broken = _without_check(TEXT, item)
        needle, anchor = "a critical measured reading needs a check", f"- id: {item}\n"
    path = tmp_path / "broken.yaml"
    path.write_text(broken, encoding="utf-8")
    result = cli("checklists", "validate", str(path))
    assert result.exit_code == 2
    assert "Traceback" not in result.output
    lines = result.stderr.strip().splitlines()
    hit = [line for line in lines if needle in line]
    assert hit, result.stderr
    m = re.match(r"^(.*):(\d+): ([^:]+): (.*)$", hit[0])
    assert m, hit[0]
    assert m.group(1) == str(path)
    assert m.group(3) == item
    # The line points at the offending key, or at most a few lines above it (the item).
    expected = _line_of(broken, anchor)
    if label.startswith("critical measured"):  # points at the item's 'critical' line
        assert expected <= int(m.group(2)) <= expected + 3
    else:
        assert expected - 3 <= int(m.group(2)) <= expected


def _without_check(text: str, item_id: str) -> str:
    """The checklist with the `check:` block of one item removed."""
    lines = text.split("\n")
    start = next(n for n, line in enumerate(lines) if line.endswith(f"- id: {item_id}"))
    out, n, skipping = lines[:start], start, False
    while n < len(lines):
        line = lines[n]
        if n > start and line.lstrip().startswith("- id:"):
            out += lines[n:]
            break
        if line.startswith("        check:"):
            skipping = True
        elif skipping and not line.startswith("          "):
            skipping = False
        if not skipping:
            out.append(line)
        n += 1
    return "\n".join(out)


def test_shipped_checklist_has_a_check_on_every_critical_measured_reading():
    """The rule of the format, checked here independently of the loader: every critical
    reading not marked `measured: false` in the YAML (read with PyYAML) names a check."""
    import yaml

    data = yaml.safe_load(TEXT)
    missing = [i["id"] for s in data["sections"] for i in s["items"]
               if i["kind"] == "reading" and i.get("critical") and i.get("measured", True)
               and "check" not in i]
    assert missing == []
    readings = [i for s in data["sections"] for i in s["items"] if i["kind"] == "reading"]
    assert any(i.get("measured") is False for i in readings)  # declared values exist


def test_old_jobs_checklist_text_still_opens():
    """A job started on an older checklist (no measured marks, a critical reading without a
    check) keeps opening: the strict rule applies to checklists given to `new`/`validate`.
    Reference: the rule's own statement in DEVELOPERS.md."""
    from commission.checklist import ChecklistError, parse
    from commission.checks import CHECKS

    old = _without_check(TEXT, "continuity.r1r2")
    parse(old, "job checklist", checks=CHECKS)  # lenient: no error
    with pytest.raises(ChecklistError) as err:
        parse(old, "new.yaml", checks=CHECKS, strict=True)
    assert "continuity.r1r2: a critical measured reading needs a check" in str(err.value)


def test_checklist_package_knows_checks_only_through_the_registry_given():
    """The checklist package imports nothing from checks/ (checked in a fresh interpreter);
    a registry without a name makes that name unknown."""
    import subprocess
    import sys

    code = ("import sys, commission.checklist as c; "
            "print(any(m.startswith('commission.checks') for m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert out.stdout.strip() == "False", out.stderr
    from commission.checklist import ChecklistError, parse
    from commission.checks import CHECKS

    fewer = {k: v for k, v in CHECKS.items() if k != "supply_voltage"}
    with pytest.raises(ChecklistError) as err:
        parse(TEXT, "x.yaml", checks=fewer)
    assert "unknown check 'supply_voltage'" in str(err.value)


def test_duplicate_ids(tmp_path, cli):
    broken = TEXT.replace("- id: install.diverter.firmware", "- id: install.inverter", 1)
    path = tmp_path / "dup.yaml"
    path.write_text(broken, encoding="utf-8")
    result = cli("checklists", "validate", str(path))
    assert result.exit_code == 2
    line = _line_of(broken, "- id: install.inverter", 2)
    assert f"{path}:{line}: install.inverter: duplicate id" in result.stderr


def test_yaml_syntax_error(tmp_path, cli):
    broken = TEXT.replace("        prompt: Inverter make and model",
                          "        prompt: [Inverter make and model", 1)
    path = tmp_path / "syntax.yaml"
    path.write_text(broken, encoding="utf-8")
    result = cli("checklists", "validate", str(path))
    assert result.exit_code == 2
    assert re.match(rf"^{re.escape(str(path))}:\d+: -: YAML syntax", result.stderr)


@pytest.mark.parametrize("content", [b"", b"\xff\xfe\x00junk", b"- just\n- a list\n",
                                     b"id: x\n"])
def test_empty_binary_and_wrong_shape(tmp_path, cli, content):
    path = tmp_path / "odd name ü.yaml"
    path.write_bytes(content)
    result = cli("checklists", "validate", str(path))
    assert result.exit_code == 2
    assert result.stderr.startswith(f"{path}:")
    assert "Traceback" not in result.output


def test_every_problem_is_reported(tmp_path, cli):
    broken = TEXT.replace("check: {name: supply_voltage}", "check: {name: nope_one}", 1)
    broken = broken.replace("check: {name: supply_frequency}", "check: {name: nope_two}", 1)
    path = tmp_path / "two.yaml"
    path.write_text(broken, encoding="utf-8")
    result = cli("checklists", "validate", str(path))
    assert "nope_one" in result.stderr and "nope_two" in result.stderr


def test_missing_file(cli, tmp_path):
    result = cli("checklists", "validate", str(tmp_path / "absent.yaml"))
    assert result.exit_code == 2
    assert "no such file" in result.stderr


def test_show_json_is_flat_walk_order(cli):
    result = cli("checklists", "show", "diverter-1ph", "--json")
    assert result.exit_code == 0
    data = json.loads(result.stdout)
    assert data["checklist"]["id"] == "diverter-1ph"
    items = data["items"]
    ids = [i["id"] for i in items]
    assert ids.index("isolation.dead") < ids.index("supply.voltage") < ids.index("earth.zs")
    for key in ("id", "section", "kind", "quantity", "unit", "critical", "check", "options"):
        assert key in items[0]
    rcd = next(i for i in items if i["id"] == "protection.rcd.t1")
    assert rcd["kind"] == "reading" and rcd["unit"] == "ms" and rcd["critical"] is True
    assert rcd["check"] == "rcd_trip_time"


def test_schema_is_json_schema(cli):
    result = cli("checklists", "schema")
    schema = json.loads(result.stdout)
    assert schema["$schema"].startswith("https://json-schema.org/")
    assert "sections" in schema["properties"]
    assert "Item" in schema["$defs"]


def test_shipped_checklist_covers_the_job():
    """The items the foundation issue lists, with safety-critical ones marked critical."""
    from commission.checklist import load
    from commission.checks import CHECKS

    c = load(CHECKLIST, checks=CHECKS).checklist
    items = {i.id: i for _, i in c.items()}
    for must in ["isolation.dead", "isolation.locked", "supply.polarity", "protection.rcd.t1",
                 "protection.rcd.t5", "protection.rcd.half", "insulation.resistance",
                 "continuity.r1r2", "earth.zs", "earth.ra", "thermostat.in_series",
                 "thermostat.open_current", "element.cold_resistance", "heatsink.soak_log"]:
        assert items[must].critical, must
    assert items["earth.ra"].when.accepts() == ["TT"]
    kinds = {i.kind for i in items.values()}
    assert kinds == {"confirm", "reading", "choice", "text", "file", "photo"}
