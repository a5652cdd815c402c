"""IEC 61000-3-2 Class A, Table 1 (from memory, as written in CHECKS.md).

This test only guards against typing errors: the table below is typed again, separately,
from CHECKS.md; it cannot prove the values of the standard itself."""

import math

import pytest

from commission.physics.harmonic_limits import class_a_limit_a, class_a_limits
from commission.physics.phase_control import current_spectrum

TYPED_FROM_CHECKS = {3: 2.30, 5: 1.14, 7: 0.77, 9: 0.40, 11: 0.33, 13: 0.21,
                     2: 1.08, 4: 0.43, 6: 0.30}


def test_fixed_entries():
    """Fixed entries of Table 1 against the separate transcription above."""
    for h, limit in TYPED_FROM_CHECKS.items():
        assert class_a_limit_a(h) == pytest.approx(limit)


@pytest.mark.parametrize("h", range(15, 40, 2))
def test_odd_orders_15_to_39(h):
    """Table 1: odd 15 <= h <= 39 -> 0.15*15/h A."""
    assert class_a_limit_a(h) == pytest.approx(0.15 * 15 / h)


@pytest.mark.parametrize("h", range(8, 41, 2))
def test_even_orders_8_to_40(h):
    """Table 1: even 8 <= h <= 40 -> 0.23*8/h A."""
    assert class_a_limit_a(h) == pytest.approx(0.23 * 8 / h)


def test_spot_values_and_range():
    """Worked values of the formulas and the 2...40 range of the table."""
    assert class_a_limit_a(15) == pytest.approx(0.15)
    assert class_a_limit_a(39) == pytest.approx(0.0577, abs=1e-4)
    assert class_a_limit_a(40) == pytest.approx(0.046)
    assert sorted(class_a_limits()) == list(range(2, 41))
    for bad in (0, 1, 41, 2.5):
        with pytest.raises(ValueError):
            class_a_limit_a(bad)


def test_phase_control_at_90_degrees_exceeds_class_a():
    """CHECKS.md: phase-angle control of 3 kW at alpha = 90 deg gives h3 ~ 4.15 A against
    the 2.30 A limit; the spectrum model and the table together report that finding."""
    spectrum = current_spectrum(230.0, 230.0**2 / 3000.0, math.pi / 2)
    over = [h for h, i in zip(spectrum.orders, spectrum.harmonic_rms_a, strict=True)
            if h >= 2 and i > class_a_limit_a(h)]
    assert 3 in over and 5 in over
