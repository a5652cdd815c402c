"""Property tests of the waveform analysis (hypothesis).

References: the IEEE 1459-2010 definitions are bilinear (P = mean(v*i)) and taken over
whole cycles, so (1) scaling the voltage by k scales P by k and leaves the power factor
alone, (2) where in the waveform the capture starts cannot matter, and (3) reversing the
current reverses P and turns the current fundamental by 180 deg.
"""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from commission.physics.waveform import analyse

pytestmark = pytest.mark.slow  # hypothesis properties over many captures; CI runs them

SQ2 = math.sqrt(2.0)
_SETTINGS = settings(max_examples=25, deadline=None)


def _capture(rate, f, phase0, lag, third, samples):
    t = np.arange(samples) / rate
    theta = 2 * np.pi * f * t + phase0
    v = SQ2 * 230 * np.sin(theta) + SQ2 * 6 * np.sin(3 * theta + 0.4)
    i = SQ2 * 8 * np.sin(theta - lag) + SQ2 * 8 * third * np.sin(3 * theta - 1.0)
    return v, i


captures = st.tuples(
    st.sampled_from([4000.0, 6400.0, 9999.0, 12000.0]),
    st.floats(48.5, 61.5),
    st.floats(0.0, 2 * math.pi),
    st.floats(-1.2, 1.2),
    st.floats(0.0, 0.4),
)


@_SETTINGS
@given(captures, st.floats(0.01, 100.0))
def test_scaling_voltage_scales_power(params, k):
    """P = mean(v*i) is linear in v: k*v gives k*P, k*V_rms, the same PF and THD."""
    rate, f, phase0, lag, third = params
    v, i = _capture(rate, f, phase0, lag, third, int(0.6 * rate))
    a = analyse(rate, v, i)
    b = analyse(rate, k * v, i)
    assert math.isclose(b.p_w, k * a.p_w, rel_tol=1e-9)
    assert math.isclose(b.v_rms, k * a.v_rms, rel_tol=1e-9)
    assert math.isclose(b.power_factor, a.power_factor, rel_tol=1e-9)
    assert math.isclose(b.thd_v_pct, a.thd_v_pct, rel_tol=1e-6)


@_SETTINGS
@given(captures, st.floats(0.0, 1.0), st.floats(-5000.0, 5000.0))
def test_shifting_the_capture_in_time_changes_nothing(params, skip_cycles, t_offset):
    """Starting the capture later (by up to a cycle) or on another clock gives the same
    figures within the acceptance tolerances; the clock offset alone changes nothing."""
    rate, f, phase0, lag, third = params
    n = int(0.8 * rate)
    v, i = _capture(rate, f, phase0, lag, third, n + int(rate / f) + 2)
    skip = int(skip_cycles * rate / f)
    a = analyse(rate, v[:n], i[:n])
    b = analyse(rate, v[skip:skip + n], i[skip:skip + n])
    assert math.isclose(b.p_w, a.p_w, rel_tol=5e-3)
    assert math.isclose(b.i_rms, a.i_rms, rel_tol=5e-3)
    assert abs(b.phase_deg - a.phase_deg) < 1.0
    assert abs(b.power_factor - a.power_factor) < 5e-3
    t = t_offset + np.arange(n) / rate
    c = analyse(t, v[:n], i[:n])
    assert math.isclose(c.p_w, a.p_w, rel_tol=1e-6)
    assert abs(c.phase_deg - a.phase_deg) < 1e-6


@_SETTINGS
@given(captures)
def test_reversing_the_current_flips_the_direction(params):
    """-i gives -P, the opposite direction and the fundamental turned by 180 deg."""
    rate, f, phase0, lag, third = params
    v, i = _capture(rate, f, phase0, lag, third, int(0.6 * rate))
    a = analyse(rate, v, i)
    b = analyse(rate, v, -i)
    flipped = {"import": "export", "export": "import", "none": "none"}
    assert b.direction == flipped[a.direction]
    assert math.isclose(b.p_w, -a.p_w, rel_tol=1e-9, abs_tol=1e-9)
    turn = (b.phase_deg - a.phase_deg) % 360.0
    assert abs(turn - 180.0) < 1e-6
