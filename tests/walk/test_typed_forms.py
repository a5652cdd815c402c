"""Answers as people type them and instruments show them: choice spellings and prefixes,
pasted paths, over-range bounds and OL; and what an overdue instrument may judge."""

from __future__ import annotations

import json
from datetime import date, timedelta

import pytest

from commission.checklist.model import Item
from commission.walk.values import BadAnswer, parse_answer

EARTHING = Item.model_validate({
    "id": "s.earthing", "kind": "choice", "prompt": "p", "options": ["TN-S", "TN-C-S", "TT"],
    "aliases": {"TN-C-S": ["PME"]}})


@pytest.mark.parametrize(("typed", "option"), [
    ("TN-C-S", "TN-C-S"), ("tncs", "TN-C-S"), ("tn c s", "TN-C-S"), ("Tn-C-s", "TN-C-S"),
    ("pme", "TN-C-S"), ("tns", "TN-S"), ("tt", "TT"), ("2", "TN-C-S"), ("tnc", "TN-C-S"),
])
def test_choice_spellings(typed, option):
    assert parse_answer(EARTHING, typed).value == option


@pytest.mark.parametrize(("typed", "says"), [
    ("t", "could be TN-S or TN-C-S or TT"),
    ("tn", "could be TN-S or TN-C-S"),
    ("it", "is not one of the options"),
])
def test_ambiguous_or_unknown_choice_is_one_line(typed, says):
    with pytest.raises(BadAnswer) as err:
        parse_answer(EARTHING, typed)
    assert says in str(err.value) and "\n" not in str(err.value)


PHOTO = Item.model_validate({"id": "p.photo", "kind": "photo", "prompt": "p"})


@pytest.mark.parametrize("form", ["'{p}'", '"{p}"', "file://{q}", "  '{p}'  "])
def test_pasted_paths(tmp_path, form):
    """A terminal or file manager pastes paths quoted or as file:// addresses (RFC 8089);
    the address is percent-decoded with urllib, independently of our own code."""
    from urllib.parse import quote

    photo = tmp_path / "clamp arrow #1.png"
    photo.write_bytes(b"\x89PNG\r\n\x1a\n" + b"\0" * 32)
    typed = form.format(p=photo, q=quote(str(photo)))
    answer = parse_answer(PHOTO, typed)
    assert answer.path == photo


def test_backslash_escaped_spaces(tmp_path):
    photo = tmp_path / "label photo.png"
    photo.write_bytes(b"\x89PNG\r\n\x1a\n" + b"\0" * 32)
    assert parse_answer(PHOTO, str(photo).replace(" ", "\\ ")).path == photo


INSULATION = Item.model_validate({
    "id": "i.r", "kind": "reading", "prompt": "p", "quantity": "resistance", "unit": "MΩ",
    "accept": {"min": 0, "max": 10000}})


@pytest.mark.parametrize(("typed", "stored"), [
    (">299 MΩ", {"over": 299e6}), ("> 1999 MΩ", {"over": 1999e6}), (">2GΩ", {"over": 2e9}),
    ("OL", {"open": True}), ("open", {"open": True}), ("180", 180e6),
])
def test_instrument_forms(typed, stored):
    assert parse_answer(INSULATION, typed).value == stored


def test_ol_on_a_voltage_is_refused():
    volts = Item.model_validate({"id": "v", "kind": "reading", "prompt": "p",
                                 "quantity": "voltage", "unit": "V"})
    with pytest.raises(BadAnswer) as err:
        parse_answer(volts, "OL")
    assert "only a resistance reading" in str(err.value)


def test_overdue_clamp_meter_judges_only_its_own_readings(cli, new_job, tmp_path):
    """The acceptance case: a clamp meter past its calibration date is in use; declared
    values (minutes, sizes, settings) keep pass or recorded, its own reading turns review.
    Reference: the verdicts read back with `show --json`."""
    job = new_job()
    past = (date.today() - timedelta(days=30)).isoformat()
    added = cli("instruments", "add", "--serial", "CLAMP-88", "--make", "Kestrel", "--model",
                "CM-2", "--calibration-due", past)
    assert added.exit_code == 0
    assert f"warning: instrument CLAMP-88: calibration was due {past}" in added.stderr
    answers = tmp_path / "a.yaml"
    answers.write_text(
        "water.heat.minutes: 90 min\nprotection.cable.size: 2.5 mm²\n"
        "thermostat.set_point: 60 °C\nprotection.breaker.rating: 16 A\n"
        "element.rated_voltage: 230 V\nthermostat.open_current: 0.02 A\n", encoding="utf-8")
    walked = cli("walk", job, "--answers", answers, "--instrument", "CLAMP-88")
    assert walked.exit_code == 0, walked.output
    assert "calibration was due" in walked.stderr  # said again when selected
    items = {i["id"]: i for i in json.loads(cli("show", job, "--json").stdout)["items"]}
    for declared in ("water.heat.minutes", "protection.cable.size", "thermostat.set_point",
                     "protection.breaker.rating"):
        assert items[declared]["verdict"] == "recorded", declared
        assert items[declared]["instrument"] is None
    assert items["element.rated_voltage"]["verdict"] == "pass"
    own = items["thermostat.open_current"]
    assert own["instrument"] == "CLAMP-88" and own["verdict"] == "review"
    assert "past its calibration due date" in own["reason"]
