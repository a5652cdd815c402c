"""Uncertainty from a maker's accuracy figure against closed forms: the standard deviation of
a uniform distribution (scipy.stats.uniform, JCGM 100 GUM 4.3.7) and hand arithmetic of
±(a % of reading + n digits)."""

import math

import pytest
from scipy import stats

from commission.accuracy import parse_accuracy
from commission.physics import uncertainty as unc


def test_bound_read_as_rectangular_matches_uniform_std():
    """u of a bound a = std of U(-a, a) (scipy.stats.uniform); U = 2u at k = 2."""
    a = 0.07
    want = stats.uniform(loc=-a, scale=2 * a).std()
    assert unc.standard_uncertainty(a, "bound") == pytest.approx(want, rel=1e-12)
    assert unc.expanded_uncertainty(a, "bound") == pytest.approx(2 * want, rel=1e-12)


def test_figure_read_as_k2_is_the_expanded_uncertainty():
    """IEC 61557-1 reading: the stated figure is U at k = 2, so u = figure/2."""
    assert unc.standard_uncertainty(0.1, "k2") == pytest.approx(0.05)
    assert unc.expanded_uncertainty(0.1, "k2") == pytest.approx(0.1)


def test_reading_of_figure_is_never_guessed():
    with pytest.raises(ValueError):
        unc.standard_uncertainty(0.1, "")


def test_accuracy_bound_hand_arithmetic():
    """±(2 % + 3 digits) at 2.17 Ω on a 0.01 Ω range: 0.0434 + 0.03 = 0.0734 Ω."""
    got = unc.accuracy_bound(2.17, pct_of_reading=2, digits=3, resolution=0.01)
    assert got == pytest.approx(0.0734)


@pytest.mark.parametrize("typed,res", [("2.17", 0.01), ("231", 1.0), ("0,43 Ω", 0.01),
                                       (">299", 1.0), ("27.5ms", 0.1)])
def test_resolution_of_typed_number(typed, res):
    """The last typed decimal: 10^-decimals (plain arithmetic)."""
    assert unc.resolution_of_typed_number(typed) == pytest.approx(res)


def test_combined_is_root_sum_of_squares():
    """GUM 5.1.2 for uncorrelated inputs: 3-4-5 triangle."""
    assert unc.combined_standard_uncertainty(3.0, 4.0) == pytest.approx(5.0)


def test_parse_and_apply_a_ranged_statement():
    """Range chosen by value; digits from the range's resolution; hand arithmetic."""
    acc = parse_accuracy("≤ 20 Ω: ±(3 % + 4 digits), resolution 0.01 Ω; "
                         "≤ 200 Ω: ±(3 % + 4 digits), resolution 0.1 Ω", "bound")
    u_small = acc.expanded(2.0, "resistance")
    assert u_small == pytest.approx(2 * (0.06 + 0.04) / math.sqrt(3))
    u_big = acc.expanded(50.0, "resistance")
    assert u_big == pytest.approx(2 * (1.5 + 0.4) / math.sqrt(3))
    assert acc.expanded(500.0, "resistance") is None  # over every stated range
    assert acc.expanded(0.02, "time") is None  # no part for a time


def test_digits_from_the_reading_as_typed_in_its_unit():
    """±(1 % + 3 digits) on "27.5 ms": 0.275 + 0.3 = 0.575 ms bound, read as k = 2."""
    acc = parse_accuracy("time: ±(1 % + 3 digits)", "k2")
    got = acc.expanded(0.0275, "time", typed="27.5", typed_unit="ms")
    assert got == pytest.approx(0.000575, rel=1e-9)


def test_megohm_and_absolute_terms():
    """±(5 % + 3 digits) on 1.25 MΩ typed with 2 decimals; ±(2 % + 0.02 Ω) form."""
    acc = parse_accuracy("≤ 1000 MΩ: ±(5 % + 3 digits)", "k2")
    assert acc.expanded(1.25e6, "resistance", typed="1.25", typed_unit="MΩ") == pytest.approx(
        0.0625e6 + 0.03e6)
    acc2 = parse_accuracy("±(2 % + 0.02 Ω)", "bound")
    assert acc2.expanded(1.0, "resistance") == pytest.approx(2 * 0.04 / math.sqrt(3))


def test_class_and_plain_percent():
    acc = parse_accuracy("class 1", "k2")
    assert acc.expanded(1000.0, "power") == pytest.approx(10.0)
    assert parse_accuracy("±0,5 %", "k2").expanded(200.0, "voltage") == pytest.approx(1.0)


@pytest.mark.parametrize("bad", ["", "±(x % + 2 digits)", "about 2 %", "≤ 20 zorks: ±1 %",
                                 "±(500 % + 1 digits)", "colour: ±1 %", "±(2 % + 3 digits) + 4"])
def test_bad_statements_are_refused_with_one_line(bad):
    with pytest.raises(ValueError) as exc:
        parse_accuracy(bad, "bound")
    assert "\n" not in str(exc.value)
