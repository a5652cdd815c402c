"""Grid-power statistics against closed-form integrals of synthetic logs, and the default
verdict rule (common practice: |mean| <= D and p95 |grid| <= 3 D)."""

import math

import numpy as np
import pytest

from commission.physics.regulation import grid_statistics


def test_energies_of_a_sine_against_the_integral():
    """grid = A sin(2 pi t / T) over whole periods: imported = exported = A*T/pi per period
    (integral of a half sine), mean zero; p95 of |A sin| = A*sin(0.95*pi/2) for a uniform
    phase."""
    a, period = 400.0, 600.0
    t = np.arange(0.0, 3 * period + 0.01, 0.5)
    g = a * np.sin(2 * np.pi * t / period)
    s = grid_statistics(t, g)
    want_wh = 3 * a * period / math.pi / 3600.0
    assert s.imported_wh == pytest.approx(want_wh, rel=1e-4)
    assert s.exported_wh == pytest.approx(want_wh, rel=1e-4)
    assert abs(s.mean_grid_w) < 1e-6 * a
    assert s.p95_abs_grid_w == pytest.approx(a * math.sin(0.95 * math.pi / 2), rel=5e-3)
    assert s.duration_s == pytest.approx(3 * period)


def test_zero_crossing_between_two_readings_is_split():
    """+100 W to -100 W over 2 s, linear: 50 J imported and 50 J exported."""
    s = grid_statistics([0.0, 2.0], [100.0, -100.0])
    assert s.imported_wh == pytest.approx(50 / 3600)
    assert s.exported_wh == pytest.approx(50 / 3600)


def test_settling_after_a_load_step():
    """A 1500 W step decaying exponentially (tau 5 s) back to zero enters the 50 W band
    after 5*ln(1500/50) s and stays."""
    t = np.arange(0.0, 200.0, 0.1)
    g = np.where(t < 100.0, -20.0, 1500.0 * np.exp(-(t - 100.0) / 5.0))
    s = grid_statistics(t, g, settling_band_w=50.0, settling_hold_s=10.0)
    assert s.step_time_s == pytest.approx(100.0, abs=0.11)
    assert s.largest_step_w == pytest.approx(1520.0, rel=1e-3)
    assert s.settling_s == pytest.approx(5 * math.log(1500 / 50), abs=0.15)


def test_no_settling_within_the_log():
    """A step that never returns to the band has no settling time (docstring definition)."""
    t = np.arange(0.0, 60.0, 1.0)
    g = np.where(t < 30, 0.0, 800.0)
    assert grid_statistics(t, g).settling_s is None


def test_diverter_energy():
    """Constant 1200 W for one hour is 1200 Wh."""
    t = np.arange(0.0, 3600.0 + 1, 10.0)
    s = grid_statistics(t, np.zeros(t.size), diverter_w=np.full(t.size, 1200.0))
    assert s.diverted_wh == pytest.approx(1200.0)
    assert s.mean_diverter_w == pytest.approx(1200.0)


def test_refuses_bad_logs():
    """Too few readings, repeated times and NaN are refused."""
    with pytest.raises(ValueError):
        grid_statistics([0.0], [1.0])
    with pytest.raises(ValueError):
        grid_statistics([0.0, 1.0, 1.0], [1.0, 2.0, 3.0])
    with pytest.raises(ValueError):
        grid_statistics([0.0, 1.0], [1.0, math.nan])
