"""Phase-angle control closed forms against numerical integration (scipy.integrate.quad) of
the ideal waveform, and against the values quoted in CHECKS.md (Rashid, Power Electronics,
AC voltage controllers, from memory)."""

import math

import numpy as np
import pytest
from scipy import integrate, optimize

from commission.physics import phase_control as pc

SQ2 = math.sqrt(2.0)
ALPHAS = [0.0, 0.3, math.pi / 6, 1.0, math.pi / 2, 2.0, 2.5, 3.0, math.pi]


def _current(alpha, ipk=1.0):
    def cur(th):
        return ipk * math.sin(th) if (th % math.pi) >= alpha else 0.0

    return cur


def _points(alpha):
    return [alpha, math.pi, math.pi + alpha]


@pytest.mark.parametrize("alpha", ALPHAS)
def test_power_fraction_against_quad(alpha):
    """P(alpha)/P(0) = mean(i^2)/mean(sin^2) for a resistance."""
    cur = _current(alpha)
    mean_sq = integrate.quad(lambda th: cur(th) ** 2, 0, 2 * math.pi,
                             points=_points(alpha))[0] / (2 * math.pi)
    assert pc.power_fraction(alpha) == pytest.approx(mean_sq / 0.5, abs=1e-9)
    assert pc.true_power_factor(alpha) == pytest.approx(math.sqrt(mean_sq / 0.5), abs=1e-9)
    assert pc.load_voltage_rms_v(230.0, alpha) == pytest.approx(230 * math.sqrt(mean_sq / 0.5),
                                                                abs=1e-6)


@pytest.mark.parametrize("fraction", [0.0, 1e-6, 0.1, 0.25, 0.5, 0.75, 0.999, 1.0])
def test_firing_angle_for_fraction_against_brentq(fraction):
    """Inverse against scipy.optimize.brentq on the closed form written out here."""

    def excess(a):
        return 1 - a / math.pi + math.sin(2 * a) / (2 * math.pi) - fraction

    if fraction in (0.0, 1.0):
        want = math.pi if fraction == 0.0 else 0.0
    else:
        want = optimize.brentq(excess, 0.0, math.pi, xtol=1e-14)
    assert pc.firing_angle_for_fraction(fraction) == pytest.approx(want, abs=1e-9)


def test_firing_angle_for_fraction_is_vectorised():
    """Array input; P(pi/2) = 1/2 by the symmetry of sin^2 about pi/2."""
    fr = np.array([0.2, 0.5, 0.8])
    got = pc.firing_angle_for_fraction(fr)
    assert got.shape == (3,)
    assert got[1] == pytest.approx(math.pi / 2, abs=1e-9)  # P(pi/2) = 1/2 by symmetry


@pytest.mark.parametrize("alpha", [0.2, math.pi / 3, math.pi / 2, 2.2, 2.9])
@pytest.mark.parametrize("order", [1, 2, 3, 4, 5, 7, 9, 15, 21, 39])
def test_fourier_coefficients_against_quad(alpha, order):
    """a_n = (1/pi) int i cos(n th), b_n = (1/pi) int i sin(n th) over a cycle."""
    cur = _current(alpha, ipk=7.0)
    a = integrate.quad(lambda th: cur(th) * math.cos(order * th), 0, 2 * math.pi,
                       points=_points(alpha), limit=200)[0] / math.pi
    b = integrate.quad(lambda th: cur(th) * math.sin(order * th), 0, 2 * math.pi,
                       points=_points(alpha), limit=200)[0] / math.pi
    an, bn = pc.current_fourier_coefficients(order, alpha, 7.0)
    assert an == pytest.approx(a, abs=1e-8)
    assert bn == pytest.approx(b, abs=1e-8)


def test_values_quoted_at_ninety_degrees():
    """CHECKS.md (Rashid, from memory): at alpha = 90 deg, phi1 = -32.5 deg,
    cos phi1 = 0.8436, PF = 0.7071; and h3 ~ 4.15 A on a 3 kW element at 230 V."""
    r_ohm = 230.0**2 / 3000.0
    s = pc.current_spectrum(230.0, r_ohm, math.pi / 2)
    assert s.phase_deg == pytest.approx(-32.5, abs=0.05)
    assert s.displacement_pf == pytest.approx(0.8436, abs=1e-4)
    assert s.power_factor == pytest.approx(0.7071, abs=1e-4)
    assert s.harmonic_rms_a[s.orders.index(3)] == pytest.approx(4.15, abs=0.01)
    assert s.power_w == pytest.approx(1500.0, rel=1e-12)
    assert pc.fundamental_phase_deg(math.pi / 2) == pytest.approx(-32.5, abs=0.05)
    assert pc.displacement_power_factor(math.pi / 2) == pytest.approx(0.8436, abs=1e-4)


@pytest.mark.parametrize(("alpha_deg", "phi"),
                         [(30, -4.7), (60, -16.5), (90, -32.5), (120, -50.7), (150, -70.1)])
def test_lag_of_the_fundamental_quoted_in_checks(alpha_deg, phi):
    """CHECKS.md lists the lag of the phase-cut fundamental at 30...150 deg."""
    assert pc.fundamental_phase_deg(math.radians(alpha_deg)) == pytest.approx(phi, abs=0.06)


@pytest.mark.parametrize("alpha", [0.5, math.pi / 2, 2.4])
def test_spectrum_totals_against_quad(alpha):
    """RMS, P, PF and THD(2..40) of the spectrum against quad of the waveform; the THD up to
    order 40 is below the all-order value sqrt(I^2 - I1^2)/I1."""
    u, r_ohm = 230.0, 17.6
    ipk = SQ2 * u / r_ohm
    cur = _current(alpha, ipk)
    mean_sq = integrate.quad(lambda th: cur(th) ** 2, 0, 2 * math.pi,
                             points=_points(alpha))[0] / (2 * math.pi)
    s = pc.current_spectrum(u, r_ohm, alpha)
    assert s.i_rms_a == pytest.approx(math.sqrt(mean_sq), rel=1e-9)
    assert s.power_w == pytest.approx(mean_sq * r_ohm, rel=1e-9)
    assert s.power_factor == pytest.approx(mean_sq * r_ohm / (u * math.sqrt(mean_sq)), rel=1e-9)
    hs = []
    for n in range(2, 41):
        a = integrate.quad(lambda th, n=n: cur(th) * math.cos(n * th), 0, 2 * math.pi,
                           points=_points(alpha), limit=200)[0] / math.pi
        b = integrate.quad(lambda th, n=n: cur(th) * math.sin(n * th), 0, 2 * math.pi,
                           points=_points(alpha), limit=200)[0] / math.pi
        hs.append((a * a + b * b) / 2)
    thd = 100 * math.sqrt(sum(hs)) / s.i1_rms_a
    assert s.thd_pct == pytest.approx(thd, rel=1e-6)
    assert s.thd_pct <= 100 * math.sqrt(mean_sq - s.i1_rms_a**2) / s.i1_rms_a + 1e-9


def test_burst_fire_average_power_against_a_sampled_waveform():
    """Integral-cycle control: 3 of 8 cycles on; mean of v*i over the sampled pattern."""
    u, r_ohm = 230.0, 17.6
    th = np.linspace(0, 8 * 2 * np.pi, 8 * 4000, endpoint=False)
    v = SQ2 * u * np.sin(th)
    on = (th // (2 * np.pi)) < 3
    p = float(np.mean(v * np.where(on, v / r_ohm, 0.0)))
    assert pc.burst_fire_power_w(u**2 / r_ohm, 3, 8) == pytest.approx(p, rel=1e-9)
    with pytest.raises(ValueError):
        pc.burst_fire_power_w(3000.0, 9, 8)


def test_out_of_range_inputs():
    """Angles outside 0...pi, fractions outside 0...1 and order 0 are refused."""
    with pytest.raises(ValueError):
        pc.power_fraction(-0.1)
    with pytest.raises(ValueError):
        pc.firing_angle_for_fraction(1.2)
    with pytest.raises(ValueError):
        pc.current_fourier_coefficients(0, 1.0, 1.0)


def test_conduction_power_fraction_against_quad_and_checks_md():
    """x − sin(2πx)/(2π) against scipy.integrate.quad of sin² over the conducting part, and
    CHECKS.md's figures: 20 % of the time → 4.9 %, 80 % → 95.1 %."""
    for x in (0.0, 0.2, 0.37, 0.5, 0.8, 1.0):
        alpha = math.pi * (1 - x)
        want = integrate.quad(lambda t: math.sin(t) ** 2, alpha, math.pi)[0] / (math.pi / 2)
        assert pc.conduction_power_fraction(x) == pytest.approx(want, abs=1e-9)
    assert pc.conduction_power_fraction(0.2) == pytest.approx(0.049, abs=5e-4)
    assert pc.conduction_power_fraction(0.8) == pytest.approx(0.951, abs=5e-4)


def test_forced_mode_deviations_identify_each_law():
    """Readings generated from each law (with 1 % noise) sit within 3 % of full power of
    their own law and far from the other; random readings fit neither."""
    rng = np.random.default_rng(13)
    settings = np.array([0.2, 0.5, 1.0])
    full = 3000.0
    for law in ("power", "time"):
        frac = settings if law == "power" else pc.conduction_power_fraction(settings)
        p = full * frac * (1 + rng.normal(0, 0.01, 3))
        fit = pc.forced_mode_deviations(settings, p, p[-1])
        own, other = ((fit.power_linear_max_dev, fit.time_linear_max_dev) if law == "power"
                      else (fit.time_linear_max_dev, fit.power_linear_max_dev))
        assert own <= 0.03 < other
    misses = 0
    for seed in range(50):
        r = np.random.default_rng(seed)
        p = np.append(r.uniform(0, full, 2), full)
        fit = pc.forced_mode_deviations(settings, p, full)
        misses += min(fit.power_linear_max_dev, fit.time_linear_max_dev) > 0.03
    assert misses >= 45
