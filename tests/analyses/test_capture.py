"""Clamp verdict of the capture analysis against closed forms and scipy quadrature.

References: the phase-cut current of a resistive load (Rashid, closed form) and its
fundamental computed here independently by scipy.integrate.quad; IEEE 1459-2010 power of
sinusoids (P = V I cos φ); a reversed clamp negates the current, another phase shifts its
voltage by 120° (three-phase phasors).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import quad

from commission.analyses import CaptureSettings, analyse_capture

RATE = 10000.0
F = 50.0
U = 230.0
R = 18.0


def _phase_cut(theta, alpha):
    """Current of a resistive load fired at alpha after each zero of its own voltage."""
    ipk = math.sqrt(2) * U / R
    half = np.mod(theta, np.pi)
    return np.where(half >= alpha, ipk * np.sin(theta), 0.0)


def _write(path, t, v, i):
    with open(path, "w", newline="") as fh:
        fh.write("time_s,voltage_v,current_a\n")
        np.savetxt(fh, np.column_stack([t, v, i]), fmt=("%.6f", "%.3f", "%.5f"), delimiter=",")
    return path


def _capture(tmp_path, alpha_deg, *, sign=1.0, shift_deg=0.0, seconds=0.4, name="c.csv",
             extra=None):
    t = np.arange(int(seconds * RATE)) / RATE
    theta = 2 * np.pi * F * t + 0.4
    v = math.sqrt(2) * U * np.sin(theta)
    own = theta - math.radians(shift_deg)  # the clamp's conductor is fed from this phase
    i = sign * _phase_cut(own, math.radians(alpha_deg))
    if extra is not None:
        i = i + extra(theta)
    return _write(tmp_path / name, t, v, i)


def _quad_phase_deg(alpha):
    """Angle of the fundamental of the phase-cut current, by quadrature over one cycle."""
    def f(th):
        return float(_phase_cut(np.array([th]), alpha)[0])

    pts = [alpha, np.pi, np.pi + alpha]
    a1 = quad(lambda th: f(th) * math.cos(th), 0, 2 * np.pi, points=pts, limit=200)[0] / np.pi
    b1 = quad(lambda th: f(th) * math.sin(th), 0, 2 * np.pi, points=pts, limit=200)[0] / np.pi
    return math.degrees(math.atan2(a1, b1))


@pytest.mark.parametrize("alpha_deg", [0, 30, 60, 90, 120, 144])
def test_correct_clamp_passes_at_every_firing_angle(tmp_path, alpha_deg):
    """Correct clamp, diverter forced to a part output (or full at 0°), PV at zero: pass at
    firing angles 0-144° (down to 5 % output); the expected angle equals the fundamental's
    angle from scipy quadrature, and the firing angle read from the current is within 3°."""
    state = "full" if alpha_deg == 0 else "part"
    a = analyse_capture(_capture(tmp_path, alpha_deg), CaptureSettings(state=state))
    assert a.verdict == "pass", a.reason
    assert a.figures["firing_angle_deg"] == pytest.approx(alpha_deg, abs=3.0)
    assert a.figures["phase_deg"] == pytest.approx(_quad_phase_deg(math.radians(alpha_deg)),
                                                   abs=0.5)
    assert abs(a.figures["phase_residual_deg"]) < 3.0
    assert a.figures["p_w"] > a.figures["p_uncertainty_w"]


def test_pf_08_lagging_passes(tmp_path):
    """A sinusoidal load at PF 0.8 lagging with the diverter off: P = V I cos φ (IEEE
    1459-2010 on sinusoids); the clamp passes."""
    t = np.arange(4000) / RATE
    theta = 2 * np.pi * F * t
    phi = math.acos(0.8)
    path = _write(tmp_path / "pf.csv", t, math.sqrt(2) * U * np.sin(theta),
                  math.sqrt(2) * 10.0 * np.sin(theta - phi))
    a = analyse_capture(path, CaptureSettings(state="off-load"))
    assert a.figures["p_w"] == pytest.approx(U * 10.0 * 0.8, rel=2e-3)
    assert a.figures["phase_deg"] == pytest.approx(-math.degrees(phi), abs=0.2)
    assert a.verdict == "pass", a.reason


@pytest.mark.parametrize("alpha_deg,state", [(0, "full"), (90, "part")])
def test_reversed_clamp_fails(tmp_path, alpha_deg, state):
    """A reversed clamp negates the current: residual 180°, fail at full output and 50 %."""
    a = analyse_capture(_capture(tmp_path, alpha_deg, sign=-1.0), CaptureSettings(state=state))
    assert a.verdict == "fail"
    assert a.figures["clamp"]["likely_cause"] == "reversed"
    assert "reversed" in a.reason


@pytest.mark.parametrize("alpha_deg,state", [(0, "full"), (90, "part")])
@pytest.mark.parametrize("shift_deg", [120.0, -120.0])
def test_clamp_on_another_phase_fails(tmp_path, alpha_deg, state, shift_deg):
    """The clamp's conductor is fed from a phase 120° away from the voltage reference: the
    residual is ±120°, fail naming another phase, at full output and at 50 %."""
    a = analyse_capture(_capture(tmp_path, alpha_deg, shift_deg=shift_deg),
                        CaptureSettings(state=state))
    assert a.verdict == "fail", a.reason
    assert a.figures["clamp"]["likely_cause"] == "another phase"
    assert abs(abs(a.figures["phase_residual_deg"]) - 120.0) < 10.0


@pytest.mark.parametrize("expect", [None, "import", "export"])
def test_regulating_capture_is_review(tmp_path, expect):
    """While the diverter regulates, neither sign nor angle means anything: review, never
    fail, whatever is expected."""
    for sign in (1.0, -1.0):  # a correct and a reversed clamp alike
        path = _capture(tmp_path, 100, sign=sign, name=f"r{sign}.csv")
        a = analyse_capture(path, CaptureSettings(state="regulating", expect=expect))
        assert a.verdict == "review"
        assert "repeat with the diverter off or at full output" in a.reason


def test_power_within_its_uncertainty_is_review(tmp_path):
    """Net power hunting around zero (the element switched in and out cycle by cycle while
    a 1 kW export stands): |P| within its k = 2 uncertainty from the cycle-to-cycle spread
    (GUM) is review, never fail."""
    t = np.arange(int(0.6 * RATE)) / RATE
    theta = 2 * np.pi * F * t
    v = math.sqrt(2) * U * np.sin(theta)
    rng = np.random.default_rng(4)
    on = rng.random(int(0.6 * F) + 1) < 0.5
    cycle = np.floor(theta / (2 * np.pi)).astype(int)
    amp = np.where(on[cycle], 1000.0, -1000.0) / U
    path = _write(tmp_path / "hunt.csv", t, v, math.sqrt(2) * amp * np.sin(theta))
    a = analyse_capture(path, CaptureSettings(state="full"))
    assert abs(a.figures["p_w"]) < a.figures["p_uncertainty_w"]
    assert a.verdict == "review" and "within its uncertainty" in a.reason


def test_capture_clipped_at_90_percent_is_review_naming_clipping(tmp_path):
    """A current clipped at 90 % of its peak: the correct clamp would pass, but the finding
    turns it into review, named in the reason and in --json's findings."""
    t = np.arange(4000) / RATE
    theta = 2 * np.pi * F * t
    i = np.clip(math.sqrt(2) * 12.0 * np.sin(theta), -0.9 * math.sqrt(2) * 12.0,
                0.9 * math.sqrt(2) * 12.0)
    path = _write(tmp_path / "clip.csv", t, math.sqrt(2) * U * np.sin(theta), i)
    a = analyse_capture(path, CaptureSettings(state="full"))
    assert a.verdict == "review"
    assert "clipping" in a.reason
    assert any(f["code"] == "clipping" for f in a.as_json()["findings"])


def test_dc_offset_is_a_finding_with_both_power_factors(tmp_path):
    """A clamp with a DC offset of 1 A on a 10 A resistive load: the finding names it and
    the power factor is given as measured (P/S with the offset in I_rms) and without it
    (1.0, closed form for in-phase sines)."""
    t = np.arange(4000) / RATE
    theta = 2 * np.pi * F * t
    path = _write(tmp_path / "dc.csv", t, math.sqrt(2) * U * np.sin(theta),
                  math.sqrt(2) * 10.0 * np.sin(theta) + 1.0)
    a = analyse_capture(path, CaptureSettings(state="full"))
    assert a.figures["dc_offset_a"] == pytest.approx(1.0, abs=0.01)
    assert a.figures["power_factor_dc_removed"] == pytest.approx(1.0, abs=1e-4)
    assert a.figures["power_factor"] == pytest.approx(10.0 / math.sqrt(101.0), rel=2e-3)
    assert any(f.code == "dc_offset" for f in a.findings)
