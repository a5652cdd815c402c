"""The ILAC-G8:09/2019 decision rules (§4.2.1 simple acceptance, §4.2.3 non-binary with guard
band w = U) on hand-computed intervals around the limits of CHECKS.md (B16: Zs,max =
230 × 0.95 / 80 = 2.73 Ω)."""

import pytest

from commission.checks.decision import NO_UNCERTAINTY, decide_lower, decide_upper
from commission.checks.registry import FAIL, PASS, REVIEW

ZMAX = 230 * 0.95 / 80  # 2.73125 Ω


@pytest.mark.parametrize("zs,u,want", [
    (1.50, 0.10, PASS),      # 1.60 ≤ 0.8 × 2.73 = 2.185
    (2.10, 0.10, REVIEW),    # 2.20 > 2.185: inside the guard band of the cold margin
    (2.17, 0.07, REVIEW),    # the case: a reading just under the margin
    (2.60, 0.10, REVIEW),    # 2.50..2.70: under Zs,max but above the margin
    (2.70, 0.10, REVIEW),    # straddles Zs,max: conditional
    (2.90, 0.10, FAIL),      # 2.80 > 2.73: outside by more than U
])
def test_upper_limit_with_margin(zs, u, want):
    d = decide_upper(zs, u, "Ω", accept=0.8 * ZMAX, reject=ZMAX)
    assert d.verdict == want
    assert f"± {u:.2f} Ω" in d.note or f"± {u:.3f} Ω" in d.note  # GUM 7.2.6: 2 digits


def test_without_uncertainty_the_verdict_is_as_before_and_says_so():
    """No stated accuracy: the reading is compared as if exact, and the note says so."""
    assert decide_upper(2.17, None, "Ω", accept=0.8 * ZMAX, reject=ZMAX).verdict == PASS
    d = decide_upper(2.30, None, "Ω", accept=0.8 * ZMAX, reject=ZMAX)
    assert d.verdict == REVIEW and d.note == NO_UNCERTAINTY


def test_simple_acceptance_ignores_the_guard_band():
    """ILAC-G8 §4.2.1: the reading itself against the limit."""
    d = decide_upper(295.0, 10.0, "ms", accept=300.0, rule="simple")
    assert d.verdict == PASS and "simple acceptance" in d.note
    assert decide_upper(301.0, 10.0, "ms", accept=300.0, rule="simple").verdict == FAIL


@pytest.mark.parametrize("mohm,u,want", [(5.0, 0.3, PASS), (1.1, 0.2, REVIEW),
                                          (0.95, 0.1, REVIEW), (0.7, 0.1, FAIL)])
def test_lower_limit(mohm, u, want):
    """Insulation ≥ 1.0 MΩ: pass when reading − U ≥ 1, fail when reading + U < 1."""
    assert decide_lower(mohm, u, "MΩ", accept=1.0).verdict == want


@pytest.mark.parametrize("u,text", [(0.084755, "0.085"), (3.74123, "3.7"), (13.8564, "14"),
                                    (138.6, "140"), (0.001234, "0.0012")])
def test_uncertainty_shown_to_two_significant_digits(u, text):
    """GUM 7.2.6: an uncertainty is given to at most two significant digits."""
    from commission.checks.decision import two_significant

    assert two_significant(u) == text
