"""Waveform analysis against synthetic captures whose figures are known in closed form.

References used by the tests: the IEEE 1459-2010 definitions (RMS, P, S, PF, displacement
factor) evaluated analytically for sums of sinusoids; for the phase-cut current, direct
numerical integration of the ideal waveform with scipy.integrate.quad.

Tolerances (issue 3 acceptance): RMS and P 0.5 %, power factors 0.005, phase 1 deg, THD 2 %
relative or 0.1 percentage point, frequency 0.05 Hz.
"""

import math

import numpy as np
import pytest
from scipy import integrate

from commission.physics.waveform import (
    analyse,
    fit_mains_sine,
    power_direction,
    sample_rate_from_times,
)

SQ2 = math.sqrt(2.0)


def _phase(rate, duration_s, f, phase0=0.0, drift_hz_per_s=0.0, start_s=0.0):
    t = start_s + np.arange(int(round(rate * duration_s))) / rate
    return t, 2 * np.pi * (f * t + 0.5 * drift_hz_per_s * t * t) + phase0


def _sum_of_harmonics(theta, rms_fundamental, parts):
    """sqrt(2)*X1*sin(theta) + sum sqrt(2)*X1*k*sin(h*theta + phi) for (h, k, phi) in parts."""
    x = SQ2 * rms_fundamental * np.sin(theta)
    for h, k, phi in parts:
        x = x + SQ2 * rms_fundamental * k * np.sin(h * theta + phi)
    return x


def _close_thd(got, want):
    assert abs(got - want) <= max(0.02 * want, 0.1), (got, want)


CASES = [
    # rate, f, phase0, label
    (10000.0, 50.0, 0.0, "50 Hz locked"),
    (10000.0, 60.0, 0.4, "60 Hz"),
    (9876.5, 49.73, 1.234, "not locked, mid-cycle start"),
    (7321.0, 50.21, 2.5, "not locked, off nominal"),
    (20000.0, 59.61, 4.0, "60 Hz system off nominal"),
]


@pytest.mark.parametrize(("rate", "f", "phase0", "label"), CASES, ids=[c[3] for c in CASES])
def test_sinusoids_rms_power_and_factors(rate, f, phase0, label):
    """IEEE 1459: V = 230 V, I = 10 A lagging by 25 deg: P = V*I*cos(phi), PF = cos(phi)."""
    _, theta = _phase(rate, 1.37, f, phase0)
    lag = math.radians(25.0)
    v = SQ2 * 230.0 * np.sin(theta)
    i = SQ2 * 10.0 * np.sin(theta - lag)
    r = analyse(rate, v, i)
    assert r.frequency_hz == pytest.approx(f, abs=0.05)
    assert r.v_rms == pytest.approx(230.0, rel=5e-3)
    assert r.i_rms == pytest.approx(10.0, rel=5e-3)
    assert r.p_w == pytest.approx(2300.0 * math.cos(lag), rel=5e-3)
    assert r.s_va == pytest.approx(2300.0, rel=5e-3)
    assert r.power_factor == pytest.approx(math.cos(lag), abs=5e-3)
    assert r.displacement_pf == pytest.approx(math.cos(lag), abs=5e-3)
    assert r.phase_deg == pytest.approx(-25.0, abs=1.0)
    assert r.thd_v_pct <= 0.1 and r.thd_i_pct <= 0.1
    assert r.direction == "import"
    assert r.window_cycles == (12 if f > 55 else 10)


def test_leading_current_has_positive_angle():
    """Sign convention of the issue: positive angle when the current leads (capacitive)."""
    _, theta = _phase(10000.0, 1.0, 50.0, 0.3)
    r = analyse(10000.0, SQ2 * 230 * np.sin(theta), SQ2 * 2 * np.sin(theta + math.radians(40)))
    assert r.phase_deg == pytest.approx(40.0, abs=1.0)


def test_distorted_voltage_and_current():
    """Sum of sinusoids: THD = sqrt(sum k_h^2), RMS = X1*sqrt(1 + sum k_h^2),
    P = sum over h of V_h*I_h*cos(angle between them) (orthogonality of harmonics)."""
    rate, f = 12345.0, 50.07
    _, theta = _phase(rate, 2.0, f, 0.9)
    v_parts = [(3, 0.03, 0.2), (5, 0.04, -1.0), (11, 0.01, 0.5)]
    i_parts = [(3, 0.20, 0.9), (5, 0.10, 2.0), (7, 0.05, -0.3), (39, 0.02, 1.1)]
    lag = math.radians(12.0)
    v = _sum_of_harmonics(theta, 230.0, v_parts)
    i = _sum_of_harmonics(theta - lag, 8.0, [(h, k, phi + h * lag) for h, k, phi in i_parts])
    # the current harmonic h has phase phi (relative to sin(h*theta)) after the shift above
    r = analyse(rate, v, i)
    thd_v = 100 * math.sqrt(sum(k * k for _, k, _ in v_parts))
    thd_i = 100 * math.sqrt(sum(k * k for _, k, _ in i_parts))
    _close_thd(r.thd_v_pct, thd_v)
    _close_thd(r.thd_i_pct, thd_i)
    assert r.v_rms == pytest.approx(230 * math.sqrt(1 + (thd_v / 100) ** 2), rel=5e-3)
    assert r.i_rms == pytest.approx(8 * math.sqrt(1 + (thd_i / 100) ** 2), rel=5e-3)
    p = 230 * 8 * math.cos(lag)
    v_by_order = {h: (k, phi) for h, k, phi in v_parts}
    for h, k, phi in i_parts:
        if h in v_by_order:
            kv, phv = v_by_order[h]
            p += 230 * kv * 8 * k * math.cos(phv - phi)
    assert r.p_w == pytest.approx(p, rel=5e-3)
    assert r.phase_deg == pytest.approx(-12.0, abs=1.0)
    assert r.displacement_pf == pytest.approx(math.cos(lag), abs=5e-3)
    assert r.power_factor == pytest.approx(p / (r.v_rms * r.i_rms), abs=5e-3)
    orders = dict(zip(r.harmonic_orders, r.i_harmonics_a, strict=True))
    for h, k, _ in i_parts:
        assert orders[h] == pytest.approx(8 * k, rel=5e-3)
    assert orders[2] < 1e-3 and orders[9] < 1e-3


def test_dc_offset_and_noise():
    """A DC offset belongs to the true RMS (IEEE 1459: RMS of the whole signal) but not to
    the harmonics; independent noise adds sigma^2 to the mean square and nothing to P."""
    rate, f = 10000.0, 50.13
    _, theta = _phase(rate, 4.0, f, 0.5)
    rng = np.random.default_rng(7)
    sv, si, dc = 0.5, 0.02, 4.0
    v = dc + SQ2 * 230 * np.sin(theta) + rng.normal(0, sv, theta.size)
    i = SQ2 * 10 * np.sin(theta - 0.3) + rng.normal(0, si, theta.size)
    r = analyse(rate, v, i)
    assert r.v_rms == pytest.approx(math.sqrt(230**2 + dc**2 + sv**2), rel=5e-3)
    assert r.i_rms == pytest.approx(math.sqrt(100 + si**2), rel=5e-3)
    assert r.p_w == pytest.approx(2300 * math.cos(0.3), rel=5e-3)
    assert r.phase_deg == pytest.approx(-math.degrees(0.3), abs=1.0)
    assert r.v1_rms == pytest.approx(230.0, rel=5e-3)
    assert r.thd_v_pct <= 0.1 and r.thd_i_pct <= 0.1
    assert r.frequency_hz == pytest.approx(f, abs=0.05)


def test_drifting_frequency():
    """Frequency ramping 49.8 -> 50.2 Hz over 10 s: the mean over the capture is 50.0 Hz
    (the average of a linear ramp), and RMS/P are those of the sinusoids."""
    rate = 10000.0
    _, theta = _phase(rate, 10.0, 49.8, 0.3, drift_hz_per_s=0.04)
    v = SQ2 * 230 * np.sin(theta)
    i = SQ2 * 5 * np.sin(theta - 0.5) + SQ2 * 1.0 * np.sin(3 * theta)
    r = analyse(rate, v, i)
    assert r.frequency_hz == pytest.approx(50.0, abs=0.05)
    assert r.irregular_cycles == 0
    assert r.v_rms == pytest.approx(230, rel=5e-3)
    assert r.i_rms == pytest.approx(math.sqrt(26), rel=5e-3)
    assert r.p_w == pytest.approx(1150 * math.cos(0.5), rel=5e-3)
    _close_thd(r.thd_i_pct, 20.0)
    assert r.phase_deg == pytest.approx(-math.degrees(0.5), abs=1.0)


def _phase_cut_reference(alpha, u=230.0, r_ohm=230.0**2 / 3000):
    """RMS, P, fundamental and harmonics of the ideal phase-cut current by scipy quad."""
    ipk = SQ2 * u / r_ohm

    def cur(th):
        return ipk * math.sin(th) if (th % math.pi) >= alpha else 0.0

    pts = [alpha, math.pi, math.pi + alpha]
    mean_sq = integrate.quad(lambda th: cur(th) ** 2, 0, 2 * math.pi, points=pts)[0] / (2 * math.pi)
    p = integrate.quad(lambda th: SQ2 * u * math.sin(th) * cur(th), 0, 2 * math.pi,
                       points=pts)[0] / (2 * math.pi)
    harm = {}
    for n in range(1, 41):
        a = integrate.quad(lambda th, n=n: cur(th) * math.cos(n * th), 0, 2 * math.pi,
                           points=pts, limit=200)[0] / math.pi
        b = integrate.quad(lambda th, n=n: cur(th) * math.sin(n * th), 0, 2 * math.pi,
                           points=pts, limit=200)[0] / math.pi
        harm[n] = (a, b)
    return math.sqrt(mean_sq), p, harm


@pytest.mark.parametrize("alpha_deg", [30.0, 90.0, 120.0, 150.0])
def test_phase_cut_current_against_quad(alpha_deg):
    """Triac-fired resistive element (3 kW at 230 V), sampling not locked to the mains;
    reference figures by scipy.integrate.quad of the ideal waveform."""
    alpha = math.radians(alpha_deg)
    rate, f = 20000.0, 49.93
    _, theta = _phase(rate, 4.0, f, 0.7)
    r_ohm = 230.0**2 / 3000
    v = SQ2 * 230 * np.sin(theta)
    i = np.where(np.mod(theta, np.pi) >= alpha, v / r_ohm, 0.0)
    got = analyse(rate, v, i)
    i_rms, p, harm = _phase_cut_reference(alpha)
    a1, b1 = harm[1]
    phi1 = math.degrees(math.atan2(a1, b1))
    i1 = math.hypot(a1, b1) / SQ2
    hrms = {n: math.hypot(*harm[n]) / SQ2 for n in harm}
    thd = 100 * math.sqrt(sum(hrms[n] ** 2 for n in range(2, 41))) / i1
    assert got.i_rms == pytest.approx(i_rms, rel=5e-3)
    assert got.p_w == pytest.approx(p, rel=5e-3)
    assert got.power_factor == pytest.approx(p / (230 * i_rms), abs=5e-3)
    assert got.phase_deg == pytest.approx(phi1, abs=1.0)
    assert got.displacement_pf == pytest.approx(math.cos(math.radians(phi1)), abs=5e-3)
    _close_thd(got.thd_i_pct, thd)
    orders = dict(zip(got.harmonic_orders, got.i_harmonics_a, strict=True))
    assert orders[3] == pytest.approx(hrms[3], rel=5e-3, abs=1e-3)
    assert orders[2] < 0.01 * i1  # half-wave symmetry: no even harmonics
    assert got.power_factor < got.displacement_pf  # CHECKS.md: a phase-cut load has PF < cos phi1


def test_sixty_hz_windows_are_twelve_cycles_about_200_ms():
    """IEC 61000-4-7: 12-cycle windows at 60 Hz, i.e. 200 ms each."""
    rate = 10000.0
    _, theta = _phase(rate, 2.0, 60.0, 1.0)
    r = analyse(rate, SQ2 * 120 * np.sin(theta), SQ2 * 3 * np.sin(theta))
    assert r.window_cycles == 12
    assert r.windows == len(r.window_v_rms) == len(r.window_start_s)
    gaps = np.diff(r.window_start_s)
    assert np.allclose(gaps, 0.2, atol=1e-3)
    assert np.allclose(r.window_v_rms, 120, rtol=5e-3)


def test_window_series_follow_a_load_step():
    """Per-window P follows a step of the current from 2 A to 10 A half-way through."""
    rate = 10000.0
    t, theta = _phase(rate, 4.0, 50.0, 0.2)
    amp = np.where(t < 2.0, 2.0, 10.0)
    r = analyse(rate, SQ2 * 230 * np.sin(theta), SQ2 * amp * np.sin(theta))
    starts = np.asarray(r.window_start_s)
    p = np.asarray(r.window_p_w)
    early = p[starts + 0.2 < 2.0]
    late = p[starts > 2.0]
    assert np.allclose(early, 460, rtol=5e-3)
    assert np.allclose(late, 2300, rtol=5e-3)


@pytest.mark.parametrize(("duration_s", "cycles"), [(0.04, 2), (0.047, 2), (0.11, 5)])
def test_short_capture_is_one_window_of_its_whole_cycles(duration_s, cycles):
    """A capture shorter than one window is one window of all its whole cycles; exactly two
    cycles' worth of samples is enough (issue 3)."""
    rate = 10000.0
    _, theta = _phase(rate, duration_s, 50.0, 1.1)
    r = analyse(rate, SQ2 * 230 * np.sin(theta), SQ2 * 4 * np.sin(theta - 0.2))
    assert r.windows == 1 and r.cycles == cycles and r.window_cycles == cycles
    assert r.v_rms == pytest.approx(230, rel=5e-3)
    assert r.p_w == pytest.approx(920 * math.cos(0.2), rel=5e-3)
    assert r.frequency_hz == pytest.approx(50.0, abs=0.05)


def test_fewer_than_two_cycles_is_refused():
    """Issue 3: fewer than two whole cycles is an error with a clear message."""
    rate = 10000.0
    _, theta = _phase(rate, 0.035, 50.0)
    with pytest.raises(ValueError, match="two whole cycles"):
        analyse(rate, SQ2 * 230 * np.sin(theta), np.sin(theta))


def test_zero_current_is_refused():
    """Issue 3: no current is an error, not a result."""
    _, theta = _phase(5000.0, 1.0, 50.0)
    with pytest.raises(ValueError, match="current is zero"):
        analyse(5000.0, SQ2 * 230 * np.sin(theta), np.zeros(theta.size))


def test_harmonics_above_nyquist_are_none():
    """Sampling theorem: at 2 kS/s nothing above 1 kHz (order 20 at 50 Hz) can be seen."""
    rate = 2000.0
    _, theta = _phase(rate, 2.0, 50.0, 0.1)
    r = analyse(rate, SQ2 * 230 * np.sin(theta), SQ2 * 5 * np.sin(theta))
    for h, val in zip(r.harmonic_orders, r.i_harmonics_a, strict=True):
        if h * 50.0 < 0.95 * rate / 2:
            assert val is not None
        if h * 50.0 >= rate / 2:
            assert val is None
    assert r.thd_max_order < 20


def test_time_array_input_matches_rate_input():
    """The same capture given as evenly spaced times or as a rate gives the same figures;
    the start time only moves the window times."""
    rate = 8000.0
    t, theta = _phase(rate, 1.0, 50.0, 0.5, start_s=1234.5)
    v = SQ2 * 230 * np.sin(theta)
    i = SQ2 * 3 * np.sin(theta - 0.1)
    a = analyse(t, v, i)
    b = analyse(rate, v, i)
    assert a.p_w == pytest.approx(b.p_w, rel=1e-9)
    assert a.window_start_s[0] == pytest.approx(b.window_start_s[0] + 1234.5, abs=1e-6)


def test_sample_rate_from_times_rejects_uneven_spacing():
    """1 kHz grid gives 1000 Hz; a sample 0.6 intervals off the grid is refused."""
    t = np.arange(100) / 1000.0
    assert sample_rate_from_times(t)[0] == pytest.approx(1000.0)
    t[50] += 0.0006
    with pytest.raises(ValueError, match="evenly spaced"):
        sample_rate_from_times(t)


def test_fit_mains_sine_finds_frequency_of_short_record():
    """IEEE 1057-style sine fit: frequency of three cycles of 57.3 Hz with a DC offset."""
    rate = 5000.0
    _, theta = _phase(rate, 3 / 57.3, 57.3, 0.4)
    fit = fit_mains_sine(rate, 12.0 + 100 * np.sin(theta))
    assert fit.frequency_hz == pytest.approx(57.3, abs=0.01)
    assert fit.amplitude == pytest.approx(100, rel=1e-3)
    assert fit.offset == pytest.approx(12.0, abs=0.1)


def test_direction_threshold():
    """Issue 3: 'none' when |P| < max(5 W, 2 % of S); positive = import."""
    assert power_direction(100.0, 1000.0) == "import"
    assert power_direction(-100.0, 1000.0) == "export"
    assert power_direction(19.0, 1000.0) == "none"
    assert power_direction(4.0, 10.0) == "none"
    assert power_direction(6.0, 10.0) == "import"


def test_direction_none_for_quadrature_current():
    """A current 89.5 deg out of phase carries P = V*I*cos(89.5 deg) ~ 0.9 % of S."""
    _, theta = _phase(10000.0, 1.0, 50.0, 0.0)
    r = analyse(10000.0, SQ2 * 230 * np.sin(theta),
                SQ2 * 10 * np.sin(theta - math.radians(89.5)))
    assert r.p_w == pytest.approx(2300 * math.cos(math.radians(89.5)), abs=5.0)
    assert r.direction == "none"


def test_voltage_dropout_is_left_out():
    """A 100 ms dropout of the voltage: the windows touching it are dropped and counted, the
    rest give the figures of the undisturbed sinusoids."""
    rate = 10000.0
    _, theta = _phase(rate, 5.0, 50.05, 0.3)
    v = SQ2 * 230 * np.sin(theta)
    v[20000:21000] = 0.0
    r = analyse(rate, v, SQ2 * 10 * np.sin(theta - 0.2))
    assert r.irregular_cycles >= 1
    assert r.frequency_hz == pytest.approx(50.05, abs=0.05)
    assert r.v_rms == pytest.approx(230.0, rel=5e-3)
    assert r.p_w == pytest.approx(2300 * math.cos(0.2), rel=5e-3)
