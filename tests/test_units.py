"""The reading parser: units typed by people, read with pint."""

from __future__ import annotations

import pytest

from commission.units import parse_reading


@pytest.mark.parametrize(
    ("text", "quantity", "unit", "si", "typed"),
    [
        ("2.85kW", "power", "kW", 2850.0, "kW"),
        ("2850 W", "power", "kW", 2850.0, "W"),
        ("0,43 Ω", "resistance", "Ω", 0.43, "Ω"),
        ("0.43 \u2126", "resistance", "Ω", 0.43, "Ω"),  # OHM SIGN normalised
        ("22ms", "time", "ms", 0.022, "ms"),
        ("63 °C", "temperature", "°C", 63.0, "°C"),
        ("63 C", "temperature", "°C", 63.0, "C"),  # C on a temperature item means °C
        ("336.15 K", "temperature", "°C", 63.0, "K"),
        ("1.2 MΩ", "resistance", "MΩ", 1.2e6, "MΩ"),
        ("231", "voltage", "V", 231.0, None),  # bare number in the item's unit
        ("30", "current", "mA", 0.030, None),
        ("\u22121.2 kW", "power", "W", -1200.0, "kW"),  # unicode minus, export
        ("150 L", "volume", "L", 0.15, "L"),
        ("4.2 kWp", "power", "kW", 4200.0, "kWp"),
        ("2.5 mm²", "area", "mm²", 2.5e-6, "mm²"),
        ("45 min", "time", "min", 2700.0, "min"),
        ("1,5", "voltage", "V", 1.5, None),
        ("10 \u00b5A", "current", "mA", 1e-5, "\u03bcA"),
    ],
)
def test_accepted_forms(text, quantity, unit, si, typed):
    parsed = parse_reading(text, quantity, unit)
    assert parsed.value == pytest.approx(si, rel=1e-9)
    assert parsed.unit_typed == typed


def test_bare_number_is_echoed_in_item_unit():
    assert parse_reading("231", "voltage", "V").shown == "231 V"
    assert parse_reading("0.35 s", "time", "ms").shown == "350 ms"


@pytest.mark.parametrize(
    ("text", "quantity", "unit", "needle"),
    [
        ("1,200", "voltage", "V", "write 1200 or 1.2"),
        ("2 A", "voltage", "V", "not a voltage"),
        ("abc", "voltage", "V", "not a number"),
        ("-3 Ω", "resistance", "Ω", "impossible"),
        ("-300 °C", "temperature", "°C", "impossible"),
        ("nan", "voltage", "V", "not a finite number"),
        ("1e999", "voltage", "V", "finite"),
        ("12 zorks", "voltage", "V", "unknown unit"),
        ("12 parsecs", "voltage", "V", "a length"),
        ("", "voltage", "V", "not a number"),
    ],
)
def test_refused_with_one_line_that_says_what_is_accepted(text, quantity, unit, needle):
    with pytest.raises(ValueError) as err:
        parse_reading(text, quantity, unit)
    message = str(err.value)
    assert needle in message
    assert "\n" not in message


def test_item_range_refuses_typing_slips():
    with pytest.raises(ValueError, match="outside what this reading can be"):
        parse_reading("2310", "voltage", "V", accept_min=50, accept_max=500)
    assert parse_reading("231", "voltage", "V", accept_min=50, accept_max=500).value == 231
