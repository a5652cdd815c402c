"""Property-based: the reading parser never fails with anything but a one-line ValueError.

Each property runs EXAMPLES (1500) examples; both are slow tests (CI runs them)."""

from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from commission.units import QUANTITIES, parse_reading

UNITS = {"voltage": "V", "resistance": "Ω", "time": "ms", "temperature": "°C", "power": "kW"}
EXAMPLES = 1500


@pytest.mark.slow
@settings(max_examples=EXAMPLES, deadline=None)
@given(text=st.text(max_size=40), quantity=st.sampled_from(sorted(UNITS)))
def test_any_text_parses_or_gives_one_line(text, quantity):
    try:
        parsed = parse_reading(text, quantity, UNITS[quantity])
    except ValueError as exc:
        assert "\n" not in str(exc)
        return
    assert math.isfinite(parsed.value) or parsed.bound == "open"
    q = QUANTITIES[quantity]
    assert q.minimum is None or parsed.value >= q.minimum


@pytest.mark.slow
@settings(max_examples=EXAMPLES, deadline=None)
@given(x=st.floats(min_value=0, max_value=1e6, allow_nan=False), comma=st.booleans())
def test_numbers_round_trip(x, comma):
    text = f"{x:.4f}"
    if comma:
        text = text.replace(".", ",")
    parsed = parse_reading(text + " V", "voltage", "V")
    assert parsed.value == float(f"{x:.4f}")

