"""Three-phase analysis against closed forms.

References: the textbook phasors of a balanced three-phase system (L2 at -120 deg, L3 at
+120 deg for the sequence L1-L2-L3); P = U^2/R per resistive phase (IEEE 1459); the
IEC 61000-4-30 unbalance formula from the three line-to-line magnitudes, written out below
(a different route from the implementation's symmetrical components).
"""

import cmath
import itertools
import math

import numpy as np
import pytest

from commission.checks.threephase import ASSUMED_SEQUENCE_NOTE, clamp_instruction
from commission.physics.threephase import (
    analyse_three_phase,
    assumed_voltage_phasors,
    neutral_current,
    phase_sequence,
    place_clamps,
    sequence_components,
    unbalance_from_line_voltages,
    voltage_unbalance,
)

SQ2 = math.sqrt(2.0)
RATE = 10000.0
F = 50.0


def _t(duration_s=0.4, rate=RATE):
    return np.arange(int(round(duration_s * rate))) / rate


def _wave(t, rms, deg, f=F):
    return SQ2 * rms * np.cos(2 * np.pi * f * t + math.radians(deg))


def _iec_unbalance_from_line_voltages(u12, u23, u31):
    """IEC 61000-4-30, 5.7.1: u2 = sqrt((1 - sqrt(3 - 6 beta)) / (1 + sqrt(3 - 6 beta))),
    beta = (U12^4 + U23^4 + U31^4) / (U12^2 + U23^2 + U31^2)^2."""
    beta = (u12**4 + u23**4 + u31**4) / (u12**2 + u23**2 + u31**2) ** 2
    root = math.sqrt(3 - 6 * beta)
    return math.sqrt(max(0.0, 1 - root) / (1 + root))  # 0 when balanced (rounding)


PERMUTATIONS = list(itertools.permutations(range(3)))
ORIENTATIONS = list(itertools.product((False, True), repeat=3))
COMBINATIONS = [(perm, orient) for perm in PERMUTATIONS for orient in ORIENTATIONS]


def _expected_instruction(clamp, on_phase, rev, assumed):
    own = f"L{clamp}"
    on = f"L{on_phase}"
    tail = f" ({ASSUMED_SEQUENCE_NOTE})" if assumed and on != "L1" else ""
    if on == own:
        return f"clamp {clamp} is on {own} and " + (
            f"reversed: turn it round{tail}" if rev else f"the right way round{tail}")
    if rev:
        return f"clamp {clamp} is on {on} and reversed: move it to {own} and turn it round{tail}"
    return f"clamp {clamp} is on {on}: move it to {own}{tail}"


def _capture(perm, orient, loads_w=(3000.0, 2000.0, 1000.0), u=(230.0, 230.0, 230.0),
             angles=(0.0, -120.0, 120.0), duration_s=0.4):
    """Clamp c sits on phase perm[c], reversed when orient[c]; resistive load per phase."""
    t = _t(duration_s)
    v = [_wave(t, u[k], angles[k]) for k in range(3)]
    i_phase = [v[k] * loads_w[k] / u[k] ** 2 for k in range(3)]  # i = v / R, R = U^2/P
    i_clamp = [(-1.0 if orient[c] else 1.0) * i_phase[perm[c]] for c in range(3)]
    return t, v, i_clamp


@pytest.mark.slow
@pytest.mark.parametrize(("perm", "orient"), COMBINATIONS,
                         ids=[f"{p}-{o}" for p, o in COMBINATIONS])
@pytest.mark.parametrize("voltages", [3, 1], ids=["3V3I", "1V3I"])
def test_all_48_clamp_combinations_are_told_apart(perm, orient, voltages):
    """Textbook phasors: a resistive load's current is in phase with its own phase voltage
    (L1 0 deg, L2 -120 deg, L3 +120 deg), and 180 deg away when the clamp is reversed;
    with the diverter at full output on every phase the 48 orders/orientations differ."""
    t, v, i = _capture(perm, orient, duration_s=0.2)
    r = analyse_three_phase(RATE, v if voltages == 3 else v[:1], i)
    assert r.sequence == "L1-L2-L3"
    assert r.sequence_measured is (voltages == 3)
    placed = place_clamps([c.current_phasor for c in r.clamps], r.voltage_phasors,
                          load="all")
    for c in range(3):
        p = placed[c]
        assert p.state == "placed", p
        assert p.phase == f"L{perm[c] + 1}"
        assert p.reversed is orient[c]
        assert p.residual_deg < 1.0
        assert clamp_instruction(p, sequence_assumed=voltages == 1) == _expected_instruction(
            c + 1, perm[c] + 1, orient[c], voltages == 1)


def test_instruction_wording_of_the_issue_example():
    """The wording asked for: clamp 2 on L3 and reversed."""
    t, v, i = _capture((0, 2, 1), (False, True, False))
    r = analyse_three_phase(RATE, v, i)
    placed = place_clamps([c.current_phasor for c in r.clamps], r.voltage_phasors)
    assert clamp_instruction(placed[1]) == (
        "clamp 2 is on L3 and reversed: move it to L2 and turn it round")


def test_negative_sequence_is_detected_from_three_voltages():
    """L1-L3-L2: L3 lags L1 by 120 deg and L2 by 240 deg; the positive sequence vanishes."""
    t = _t()
    v = [_wave(t, 230, 0), _wave(t, 230, 120), _wave(t, 230, -120)]
    r = analyse_three_phase(RATE, v, [v[0] / 20, v[1] / 20, v[2] / 20])
    assert r.sequence == "L1-L3-L2"
    assert r.sequence_measured
    assert phase_sequence(*r.voltage_phasors) == "L1-L3-L2"
    # clamps on their own phases are still placed right, from the measured voltages
    placed = place_clamps([c.current_phasor for c in r.clamps], r.voltage_phasors)
    assert [(p.phase, p.reversed) for p in placed] == [("L1", False), ("L2", False),
                                                        ("L3", False)]


def test_one_voltage_assumes_positive_sequence():
    """With one voltage the sequence is assumed, and said to be (flag False)."""
    t, v, i = _capture((0, 1, 2), (False, False, False))
    r = analyse_three_phase(RATE, v[:1], i)
    assert (r.sequence, r.sequence_measured, r.unbalance) == ("L1-L2-L3", False, None)
    assert math.degrees(cmath.phase(r.voltage_phasors[1])) == pytest.approx(-120, abs=1e-9)


UNBALANCED = [
    # (rms L1, L2, L3), (angles deg)
    ((230.0, 225.0, 236.0), (0.0, -118.0, 121.5)),
    ((240.0, 210.0, 228.0), (0.0, -125.0, 117.0)),
    ((231.0, 231.0, 231.0), (0.0, -120.0, 120.0)),
]


@pytest.mark.parametrize(("rms", "angles"), UNBALANCED)
def test_unbalance_matches_iec_line_to_line_formula(rms, angles):
    """IEC 61000-4-30 5.7.1 from the line-to-line magnitudes (closed form of the test's own
    phasors) against u2 = |V2|/|V1| from symmetrical components: within 1e-6, both from the
    phasors and from the sampled capture."""
    ph = [cmath.rect(r, math.radians(a)) for r, a in zip(rms, angles, strict=True)]
    u12, u23, u31 = abs(ph[0] - ph[1]), abs(ph[1] - ph[2]), abs(ph[2] - ph[0])
    want = _iec_unbalance_from_line_voltages(u12, u23, u31)
    assert voltage_unbalance(*ph) == pytest.approx(want, abs=1e-9)
    t = _t(1.0)
    v = [_wave(t, rms[k], angles[k]) for k in range(3)]
    r = analyse_three_phase(RATE, v, [v[0] / 23.0])
    assert r.unbalance == pytest.approx(want, abs=1e-6)
    # the line-to-line RMS of the samples is the magnitude of the phasor difference
    for got, exp in zip(r.line_voltage_rms, (u12, u23, u31), strict=True):
        assert got == pytest.approx(exp, rel=1e-4)


def test_sequence_components_of_a_pure_negative_sequence():
    """Fortescue: Va=1, Vb=a, Vc=a^2 is pure negative sequence (V1 = V0 = 0, V2 = 1)."""
    a = cmath.exp(2j * math.pi / 3)
    v0, v1, v2 = sequence_components(1, a, a * a)
    assert abs(v0) < 1e-12 and abs(v1) < 1e-12 and abs(v2 - 1) < 1e-12


@pytest.mark.parametrize("rate", [10000.0, 7919.0])
def test_per_phase_power_and_net_sum_match_closed_forms(rate):
    """P = U^2/R on each resistive phase, an export on L3 (-U I cos phi) and the net sum,
    within 0.1 % (IEEE 1459 definitions evaluated analytically)."""
    t = np.arange(int(round(0.6 * rate))) / rate
    u = (229.0, 233.0, 226.0)
    ang = (0.0, -120.0, 120.0)
    v = [_wave(t, u[k], ang[k], f=49.9) for k in range(3)]
    r1, r2 = 17.6, 26.45                      # ohm, resistive loads on L1 and L2
    i3_rms, lag3 = 8.0, 150.0                 # L3 exporting: current 150 deg behind V3
    i = [v[0] / r1, v[1] / r2, _wave(t, i3_rms, ang[2] - lag3, f=49.9)]
    want = [u[0] ** 2 / r1, u[1] ** 2 / r2, u[2] * i3_rms * math.cos(math.radians(lag3))]
    r = analyse_three_phase(t, v, i)
    for c, w in zip(r.clamps, want, strict=True):
        assert c.p_w == pytest.approx(w, rel=1e-3)
    assert r.p_total_w == pytest.approx(sum(want), rel=1e-3)
    assert r.clamps[2].q1_var == pytest.approx(
        u[2] * i3_rms * math.sin(math.radians(lag3)), rel=1e-3)
    assert r.clamps[0].power_factor == pytest.approx(1.0, abs=1e-4)
    assert r.clamps[2].displacement_pf == pytest.approx(math.cos(math.radians(lag3)), abs=1e-4)


def test_neutral_current_of_unbalanced_resistive_loads():
    """Kirchhoff: the neutral carries Ia + Ib + Ic; for 13, 8.7, 4.35 A resistive loads at
    0/-120/+120 deg that is the closed-form phasor sum."""
    t, v, i = _capture((0, 1, 2), (False, False, False))
    r = analyse_three_phase(RATE, v, i)
    amps = [3000 / 230, 2000 / 230, 1000 / 230]
    want = sum(cmath.rect(a, math.radians(d)) for a, d in zip(amps, (0, -120, 120),
                                                              strict=True))
    assert abs(r.neutral_phasor - want) < 1e-3 * abs(want)
    assert r.neutral_rms_computed == pytest.approx(abs(want), rel=1e-3)
    assert abs(neutral_current([1, cmath.rect(1, -2.0944), cmath.rect(1, 2.0944)])) < 1e-4
    r_n = analyse_three_phase(RATE, v, i, neutral_a=-(i[0] + i[1] + i[2]))
    assert r_n.neutral_rms_measured == pytest.approx(abs(want), rel=1e-3)


def test_load_on_one_phase_places_only_the_loaded_clamp():
    """A single-phase diverter on L2 at full output: clamp 2 placed, the others carry no
    load and are left to the per-phase known-load tests."""
    t, v, i = _capture((0, 1, 2), (False, False, False), loads_w=(0.0, 3000.0, 0.0))
    r = analyse_three_phase(RATE, v, i)
    placed = place_clamps([c.current_phasor for c in r.clamps], r.voltage_phasors, load="one")
    assert [p.state for p in placed] == ["no-load", "placed", "no-load"]
    assert placed[1].phase == "L2" and placed[1].reversed is False
    assert "known load on L1" in clamp_instruction(placed[0])


def test_unknown_mix_tells_the_axis_but_not_the_orientation():
    """Unknown load mix: a clamp on L3 reversed sits on the L3 axis (-60 deg); only the axis
    is decided. A current at 30 deg from every class stays undecided."""
    v = assumed_voltage_phasors(230 + 0j)
    z_rev_l3 = cmath.rect(5, math.radians(120 + 180))
    z_between = cmath.rect(5, math.radians(30))
    placed = place_clamps([z_rev_l3, z_between], v, load="unknown")
    assert (placed[0].state, placed[0].phase, placed[0].reversed) == ("phase-only", "L3", None)
    assert placed[1].state == "undecided"
    assert "cannot be told" in clamp_instruction(placed[1])


def test_bad_arguments_are_refused():
    """Two voltages is neither a single-phase reference nor a three-phase capture."""
    t = _t(0.1)
    with pytest.raises(ValueError, match="one voltage"):
        analyse_three_phase(RATE, [_wave(t, 230, 0)] * 2, [_wave(t, 1, 0)])
    with pytest.raises(ValueError, match="load must be"):
        place_clamps([1 + 0j], assumed_voltage_phasors(230 + 0j), load="some")


@pytest.mark.parametrize(("rms", "angles"), UNBALANCED[:2])
def test_unbalance_from_line_magnitudes_matches_symmetrical_components(rms, angles):
    """The line-to-line route (used on spot readings) against Fortescue's |V2|/|V1| of the
    test's phasors, computed here directly with a = exp(j 2 pi/3)."""
    ph = [cmath.rect(r, math.radians(a)) for r, a in zip(rms, angles, strict=True)]
    a = cmath.exp(2j * math.pi / 3)
    want = abs(ph[0] + a * a * ph[1] + a * ph[2]) / abs(ph[0] + a * ph[1] + a * a * ph[2])
    got = unbalance_from_line_voltages(abs(ph[0] - ph[1]), abs(ph[1] - ph[2]),
                                       abs(ph[2] - ph[0]))
    assert got == pytest.approx(want, abs=1e-9)
    with pytest.raises(ValueError, match="triangle"):
        unbalance_from_line_voltages(400, 40, 40)
