"""Three-phase supplies: symmetrical components, phase sequence, per-phase figures, clamps.

Pure numbers: phasors and sample arrays in, numbers and dataclasses out. No file is read and
no verdict word is produced here; ``checks/threephase.py`` judges and phrases.

Phasors are complex RMS values of the fundamental. Angles are in degrees, positive when a
quantity leads, measured from the fundamental of the L1 voltage (so ``V_L1`` is at 0 deg).
Sign of power: positive = import, energy flowing from the grid into the premises, for a
clamp on the incoming line conductor with its arrow pointing into the premises; the same
convention holds on every phase and for their sum.

Public names:

* :func:`sequence_components` -- zero, positive and negative sequence of three phasors.
* :func:`voltage_unbalance` -- u2 = |V2|/|V1| (IEC 61000-4-30).
* :func:`unbalance_from_line_voltages` -- the same from three line-to-line magnitudes.
* :func:`phase_sequence` -- ``'L1-L2-L3'`` or ``'L1-L3-L2'`` from three voltage phasors.
* :func:`assumed_voltage_phasors` -- L2 and L3 inferred at -+120 deg from one reference.
* :func:`neutral_current` -- the neutral phasor from the phase currents.
* :func:`analyse_three_phase` -- per-clamp RMS, P, Q1, PF, cos phi1, THD and harmonics
  (reusing :func:`commission.physics.waveform.analyse`), voltage phasors, line-to-line
  voltages, unbalance, sequence, neutral current and the net total.
* :func:`place_clamps` -- which phase each clamp is on and whether it is reversed, from
  the angle of its current against each phase voltage.

References
----------
.. [1] C. L. Fortescue, "Method of symmetrical co-ordinates applied to the solution of
   polyphase networks", AIEE Transactions 37 (1918): the symmetrical components with the
   operator a = exp(j*2*pi/3).
.. [2] IEC 61000-4-30:2015, Power quality measurement methods, clause 5.7 (supply voltage
   unbalance u2 = negative / positive sequence of the fundamental; from memory).
.. [3] EN 50160:2010, Voltage characteristics of electricity supplied by public networks,
   4.2.5 (95 % of the 10-minute values of u2 within 2 %; from memory).
.. [4] IEEE Std 1459-2010 (per-phase P, S, PF; fundamental reactive power Q1).
"""

from __future__ import annotations

import cmath
import math
from collections.abc import Sequence
from dataclasses import dataclass

A = cmath.exp(2j * math.pi / 3.0)
"""The symmetrical-components operator a = e^(j 2 pi / 3) [1]."""

PHASES = ("L1", "L2", "L3")
POSITIVE = "L1-L2-L3"
NEGATIVE = "L1-L3-L2"

# A current below this share of the largest clamp current carries no load worth placing
# (our default; a parameter of place_clamps).
_MIN_CURRENT_FRACTION = 0.1
# Largest distance from the nearest of the six angle classes for a placement to be decided
# (the classes are 60 deg apart, so 30 deg would accept anything; our default).
_TOLERANCE_DEG = 20.0


def _wrap_deg(x: float) -> float:
    """Angle folded into -180...180 [deg]."""
    return (x + 180.0) % 360.0 - 180.0


def phasor(rms: float, angle_deg: float) -> complex:
    """Complex RMS phasor from magnitude [unit of the quantity] and angle [deg]."""
    return cmath.rect(float(rms), math.radians(float(angle_deg)))


def angle_deg(z: complex) -> float:
    """Angle of a phasor, -180...180, positive leading [deg]."""
    return math.degrees(cmath.phase(z))


def sequence_components(va: complex, vb: complex, vc: complex) -> tuple[complex, complex, complex]:
    """Zero, positive and negative sequence of three phasors [1]_.

    V0 = (Va + Vb + Vc)/3, V1 = (Va + a Vb + a^2 Vc)/3, V2 = (Va + a^2 Vb + a Vc)/3, with
    a = exp(j 2 pi/3).

    Parameters
    ----------
    va, vb, vc : complex
        Phasors of L1, L2, L3 (any unit, e.g. [V] or [A]).

    Returns
    -------
    tuple of complex
        ``(v0, v1, v2)`` in the unit of the input.

    References
    ----------
    .. [1] Fortescue (1918).
    """
    a, a2 = A, A * A
    v0 = (va + vb + vc) / 3.0
    v1 = (va + a * vb + a2 * vc) / 3.0
    v2 = (va + a2 * vb + a * vc) / 3.0
    return v0, v1, v2


def voltage_unbalance(va: complex, vb: complex, vc: complex) -> float:
    """Voltage unbalance u2 = |V2| / |V1| of the fundamentals [1]_, as a fraction.

    Taken from line-to-neutral phasors; the zero sequence drops out, so it equals the same
    ratio of the line-to-line voltages.

    Parameters
    ----------
    va, vb, vc : complex
        Fundamental phasors of the L1, L2, L3 voltages [V].

    Returns
    -------
    float
        u2 [1] (multiply by 100 for per cent).

    Raises
    ------
    ValueError
        The positive sequence is zero (no three-phase voltage).

    References
    ----------
    .. [1] IEC 61000-4-30:2015, 5.7.1 (from memory).
    """
    _, v1, v2 = sequence_components(va, vb, vc)
    if abs(v1) == 0.0:
        raise ValueError("the positive-sequence voltage is zero: no three-phase voltage")
    return abs(v2) / abs(v1)


def unbalance_from_line_voltages(u12: float, u23: float, u31: float) -> float:
    """Voltage unbalance u2 from the magnitudes of the three line-to-line voltages.

    The three magnitudes fix the triangle of line voltages, and so |V2|/|V1| [1]_:
    u2 = sqrt((1 - sqrt(3 - 6 beta)) / (1 + sqrt(3 - 6 beta))) with
    beta = (U12^4 + U23^4 + U31^4) / (U12^2 + U23^2 + U31^2)^2. Lets a spot reading of
    three line-to-line voltages with a multimeter be judged without phase angles.

    Parameters
    ----------
    u12, u23, u31 : float
        RMS line-to-line voltages (fundamental, or true RMS on a clean supply) [V].

    Returns
    -------
    float
        u2 [1].

    Raises
    ------
    ValueError
        The three values cannot be the sides of a triangle (not the line voltages of one
        three-phase supply: a typing slip, or a phase missing).

    References
    ----------
    .. [1] IEC 61000-4-30:2015, 5.7.1, the formula for u2 from line-to-line values (from
       memory).
    """
    sides = sorted(float(x) for x in (u12, u23, u31))
    if sides[0] <= 0 or sides[0] + sides[1] <= sides[2]:
        raise ValueError(f"{u12:g}, {u23:g} and {u31:g} V cannot be the three line-to-line "
                         "voltages of one supply (they do not form a triangle)")
    sq = [x * x for x in sides]
    beta = sum(x * x for x in sq) / sum(sq) ** 2
    root = math.sqrt(max(0.0, 3.0 - 6.0 * beta))
    return math.sqrt(max(0.0, 1.0 - root) / (1.0 + root))


def phase_sequence(va: complex, vb: complex, vc: complex) -> str:
    """Phase sequence of three voltage phasors labelled L1, L2, L3.

    ``'L1-L2-L3'`` (positive: L2 lags L1 by 120 deg, L3 by 240 deg) when the positive
    sequence outweighs the negative, else ``'L1-L3-L2'``. How clear the answer is shows in
    :func:`voltage_unbalance` (near 1 when two channels see the same phase).

    Parameters
    ----------
    va, vb, vc : complex
        Fundamental phasors of the voltages labelled L1, L2, L3 [V].

    Returns
    -------
    str

    References
    ----------
    .. [1] Fortescue (1918); CHECKS.md "Three-phase supplies".
    """
    _, v1, v2 = sequence_components(va, vb, vc)
    return POSITIVE if abs(v1) >= abs(v2) else NEGATIVE


def assumed_voltage_phasors(v_l1: complex, sequence: str = POSITIVE) -> tuple[complex, ...]:
    """L1, L2, L3 voltage phasors inferred from one reference on L1.

    Balanced supply assumed: L2 lags L1 by 120 deg and L3 by 240 deg for ``'L1-L2-L3'``
    (the other way round for ``'L1-L3-L2'``), all of the magnitude of L1.

    Parameters
    ----------
    v_l1 : complex
        Fundamental phasor of the L1 voltage [V].
    sequence : {'L1-L2-L3', 'L1-L3-L2'}

    Returns
    -------
    tuple of complex
        ``(V_L1, V_L2, V_L3)`` [V].
    """
    if sequence == POSITIVE:
        return v_l1, v_l1 * A * A, v_l1 * A
    if sequence == NEGATIVE:
        return v_l1, v_l1 * A, v_l1 * A * A
    raise ValueError(f"sequence must be {POSITIVE!r} or {NEGATIVE!r}, got {sequence!r}")


def neutral_current(currents: Sequence[complex]) -> complex:
    """Phasor of the current returning through the neutral, sum of the phase currents.

    Kirchhoff's current law at the point of supply with no other return path; zero for a
    balanced load. Harmonics of order 3k add up instead of cancelling, so the true RMS of the
    neutral comes from the samples (see :func:`analyse_three_phase`).

    Parameters
    ----------
    currents : sequence of complex
        Fundamental phasors of the line currents, positive into the premises [A].

    Returns
    -------
    complex
        Neutral current, positive out of the premises towards the supply [A].
    """
    return complex(sum(currents, 0j))


@dataclass(frozen=True)
class ClampFigures:
    """Figures of one clamp, judged against the voltage of the phase it is meant to be on.

    Attributes
    ----------
    clamp : int
        Clamp number, 1...3 [1]; clamp k is meant to sit on Lk.
    phase : str
        The phase whose voltage the figures use (``'L1'``...).
    voltage_measured : bool
        False when that phase voltage was not captured and was inferred at -+120 deg from
        L1; P, S, Q1 and the factors then come from the fundamentals.
    v_rms, v1_rms : float
        True RMS and fundamental of the phase voltage [V] (L1's when inferred).
    thd_v_pct : float
        THD of the phase voltage [%] (L1's when inferred).
    i_rms, i1_rms : float
        True RMS and fundamental of the clamp current [A].
    thd_i_pct : float
        THD of the current [%]; NaN without a fundamental.
    i_harmonics_a : tuple of float or None
        RMS of orders 2...40 [A].
    p_w : float
        Active power, positive = import [W].
    s_va : float
        Apparent power V_rms * I_rms [VA].
    q1_var : float
        Fundamental reactive power V1 I1 sin(phi_v - phi_i), positive for a lagging
        (inductive) current [var].
    power_factor : float
        P/S [1]; NaN with no current.
    displacement_pf : float
        cos phi1 [1]; NaN with no current fundamental.
    phase_deg : float
        Angle of the current fundamental against its phase voltage, positive leading [deg].
    current_phasor : complex
        Fundamental current phasor against the L1 voltage [A].
    """

    clamp: int
    phase: str
    voltage_measured: bool
    v_rms: float
    v1_rms: float
    thd_v_pct: float
    i_rms: float
    i1_rms: float
    thd_i_pct: float
    i_harmonics_a: tuple[float | None, ...]
    p_w: float
    s_va: float
    q1_var: float
    power_factor: float
    displacement_pf: float
    phase_deg: float
    current_phasor: complex


@dataclass(frozen=True)
class ThreePhaseAnalysis:
    """Figures of one capture of one or three voltages and one to three currents.

    Attributes
    ----------
    sample_rate_hz, frequency_hz : float
        Sampling rate and mean mains frequency of L1 [Hz].
    cycles : int
        Whole cycles analysed [1].
    voltages_measured : int
        1 or 3.
    voltage_rms : tuple of float
        True RMS of the L1, L2, L3 voltages [V]; inferred ones are L1's.
    voltage_phasors : tuple of complex
        Fundamental phasors of L1, L2, L3, L1 at 0 deg [V] (inferred at -+120 deg when only
        L1 was captured).
    sequence : str
        ``'L1-L2-L3'`` or ``'L1-L3-L2'``.
    sequence_measured : bool
        False when only one voltage was captured: the sequence is then assumed positive.
    line_voltage_rms : tuple of float or None
        True RMS of L1-L2, L2-L3, L3-L1 [V]; None with one voltage.
    unbalance : float or None
        u2 = |V2|/|V1| [1]; None with one voltage.
    zero_sequence_ratio : float or None
        |V0|/|V1| [1]; None with one voltage.
    clamps : tuple of ClampFigures
    neutral_phasor : complex
        Sum of the clamp current phasors (fundamental) [A].
    neutral_rms_computed : float or None
        True RMS of the sum of the clamp current samples [A]; None unless three clamps.
    neutral_rms_measured : float or None
        True RMS of a captured neutral current [A].
    p_total_w : float
        Sum of the clamps' P, positive = net import [W].
    """

    sample_rate_hz: float
    frequency_hz: float
    cycles: int
    voltages_measured: int
    voltage_rms: tuple[float, ...]
    voltage_phasors: tuple[complex, ...]
    sequence: str
    sequence_measured: bool
    line_voltage_rms: tuple[float, ...] | None
    unbalance: float | None
    zero_sequence_ratio: float | None
    clamps: tuple[ClampFigures, ...]
    neutral_phasor: complex
    neutral_rms_computed: float | None
    neutral_rms_measured: float | None
    p_total_w: float


def _relative(rate, ref, x):
    """waveform.analyse with ``x`` in the current's place: its RMS, fundamental and angle
    against ``ref``; None when ``x`` is zero throughout."""
    import numpy as np

    from .waveform import analyse

    if not np.any(np.asarray(x, dtype=float)):
        return None
    return analyse(rate, ref, x)


def analyse_three_phase(time_s_or_rate_hz, voltages_v, currents_a, *, neutral_a=None):
    """Per-phase and total figures of a three-phase capture.

    Each clamp k (meant for Lk) is analysed with :func:`commission.physics.waveform.analyse`
    against the voltage of Lk (IEEE 1459 [4]_: RMS, P, S, PF, cos phi1, THD, harmonics), and
    every voltage and current is placed as a phasor against the L1 voltage. With three
    voltages: the phase sequence, the unbalance u2 = |V2|/|V1| [2]_ and the line-to-line
    voltages are measured. With one voltage (on L1) the sequence is assumed positive, L2
    and L3 are inferred at -120 and +120 deg, and the power of clamps 2 and 3 is the
    fundamental power V1 I1 cos(phi).

    Parameters
    ----------
    time_s_or_rate_hz : float or array_like
        Sampling rate [Hz] or evenly spaced sample times [s].
    voltages_v : sequence of array_like
        One (L1) or three (L1, L2, L3) line-to-neutral voltages [V].
    currents_a : sequence of array_like
        One to three clamp currents, clamp 1 first, positive into the premises [A].
    neutral_a : array_like, optional
        A captured neutral current [A].

    Returns
    -------
    ThreePhaseAnalysis

    Raises
    ------
    ValueError
        Not 1 or 3 voltages, not 1...3 currents, arrays of different lengths, or anything
        :func:`commission.physics.waveform.analyse` refuses (too short, no mains voltage).

    References
    ----------
    .. [2] IEC 61000-4-30:2015, 5.7 (from memory).
    .. [4] IEEE Std 1459-2010.
    """
    import numpy as np

    from .waveform import analyse, sample_rate_from_times

    vs = [np.asarray(v, dtype=float).ravel() for v in voltages_v]
    cs = [np.asarray(i, dtype=float).ravel() for i in currents_a]
    if len(vs) not in (1, 3):
        raise ValueError(f"give one voltage (L1) or three (L1, L2, L3), not {len(vs)}")
    if not 1 <= len(cs) <= 3:
        raise ValueError(f"give one to three clamp currents, not {len(cs)}")
    n = vs[0].size
    extra = [] if neutral_a is None else [np.asarray(neutral_a, dtype=float).ravel()]
    if any(x.size != n for x in vs + cs + extra):
        raise ValueError("every voltage and current must hold the same number of samples")
    if np.ndim(time_s_or_rate_hz) == 0:
        rate = float(time_s_or_rate_hz)
    else:
        rate, _ = sample_rate_from_times(time_s_or_rate_hz)

    # L1 against itself: frequency, cycles, RMS and fundamental of the reference.
    ref = analyse(rate, vs[0], vs[0])
    v_phasors = [phasor(ref.v1_rms, 0.0)]
    v_rms = [ref.v_rms]
    v_thd = [ref.thd_v_pct]
    if len(vs) == 3:
        for v in vs[1:]:
            r = _relative(rate, vs[0], v)
            if r is None:
                raise ValueError("a voltage is zero throughout the capture")
            v_phasors.append(phasor(r.i1_rms, r.phase_deg))
            v_rms.append(r.i_rms)
            v_thd.append(r.thd_i_pct)
        sequence = phase_sequence(*v_phasors)
        v0, v1, v2 = sequence_components(*v_phasors)
        unbalance = abs(v2) / abs(v1)
        zero_ratio = abs(v0) / abs(v1)
        line = []
        for a, b in ((0, 1), (1, 2), (2, 0)):
            r = _relative(rate, vs[0], vs[a] - vs[b])
            line.append(0.0 if r is None else r.i_rms)
        line_rms: tuple[float, ...] | None = tuple(line)
    else:
        sequence = POSITIVE
        v_phasors = list(assumed_voltage_phasors(v_phasors[0], POSITIVE))
        v_rms = v_rms * 3
        v_thd = v_thd * 3
        unbalance = zero_ratio = None
        line_rms = None

    clamps = []
    for k, i in enumerate(cs):
        name = PHASES[k]
        measured = len(vs) == 3
        against = _relative(rate, vs[0], i)  # current against L1
        if against is None:
            clamps.append(ClampFigures(
                clamp=k + 1, phase=name, voltage_measured=measured or k == 0,
                v_rms=v_rms[k], v1_rms=abs(v_phasors[k]), thd_v_pct=v_thd[k],
                i_rms=0.0, i1_rms=0.0, thd_i_pct=math.nan,
                i_harmonics_a=tuple(0.0 for _ in range(2, 41)), p_w=0.0, s_va=0.0,
                q1_var=0.0, power_factor=math.nan, displacement_pf=math.nan,
                phase_deg=math.nan, current_phasor=0j))
            continue
        i_ph = phasor(against.i1_rms, against.phase_deg)
        vk = v_phasors[k]
        phi = _wrap_deg(angle_deg(i_ph) - angle_deg(vk))
        q1 = abs(vk) * abs(i_ph) * math.sin(math.radians(-phi))
        if measured or k == 0:
            own = against if k == 0 else analyse(rate, vs[k], i)
            p, s, pf = own.p_w, own.s_va, own.power_factor
        else:
            p = abs(vk) * abs(i_ph) * math.cos(math.radians(phi))
            s = v_rms[k] * against.i_rms
            pf = p / s if s > 0 else math.nan
        clamps.append(ClampFigures(
            clamp=k + 1, phase=name, voltage_measured=measured or k == 0,
            v_rms=v_rms[k], v1_rms=abs(vk), thd_v_pct=v_thd[k],
            i_rms=against.i_rms, i1_rms=against.i1_rms, thd_i_pct=against.thd_i_pct,
            i_harmonics_a=against.i_harmonics_a, p_w=p, s_va=s, q1_var=q1,
            power_factor=pf, displacement_pf=math.cos(math.radians(phi)),
            phase_deg=phi, current_phasor=i_ph))

    computed = None
    if len(cs) == 3:
        r = _relative(rate, vs[0], cs[0] + cs[1] + cs[2])
        computed = 0.0 if r is None else r.i_rms
    measured_n = None
    if extra:
        r = _relative(rate, vs[0], extra[0])
        measured_n = 0.0 if r is None else r.i_rms
    return ThreePhaseAnalysis(
        sample_rate_hz=rate,
        frequency_hz=ref.frequency_hz,
        cycles=ref.cycles,
        voltages_measured=len(vs),
        voltage_rms=tuple(v_rms),
        voltage_phasors=tuple(v_phasors),
        sequence=sequence,
        sequence_measured=len(vs) == 3,
        line_voltage_rms=line_rms,
        unbalance=unbalance,
        zero_sequence_ratio=zero_ratio,
        clamps=tuple(clamps),
        neutral_phasor=neutral_current([c.current_phasor for c in clamps]),
        neutral_rms_computed=computed,
        neutral_rms_measured=measured_n,
        p_total_w=float(sum(c.p_w for c in clamps)),
    )


@dataclass(frozen=True)
class ClampPlacement:
    """Where one clamp is, as far as its current's angle tells.

    Attributes
    ----------
    clamp : int
        Clamp number 1...3; clamp k is meant for Lk with its arrow into the premises.
    state : str
        ``'placed'`` (phase and orientation decided), ``'phase-only'`` (the phase is likely,
        the orientation cannot be told with an unknown load mix), ``'no-load'`` (too little
        current to place it) or ``'undecided'`` (the angle sits between the classes).
    phase : str or None
        ``'L1'``, ``'L2'`` or ``'L3'`` where decided.
    reversed : bool or None
        True when the clamp reads the current the wrong way round; None when not decided.
    angle_deg : float
        Angle of the current fundamental against the L1 voltage [deg]; NaN with no current.
    residual_deg : float
        Distance from the nearest class (the expected angle on that phase and orientation)
        [deg]; NaN with no current.
    current_share : float
        Fundamental current over the largest clamp's [1].
    """

    clamp: int
    state: str
    phase: str | None
    reversed: bool | None
    angle_deg: float
    residual_deg: float
    current_share: float


def place_clamps(current_phasors: Sequence[complex], voltage_phasors: Sequence[complex], *,
                 expect: str = "import", load: str = "all",
                 tolerance_deg: float = _TOLERANCE_DEG,
                 min_current_fraction: float = _MIN_CURRENT_FRACTION
                 ) -> tuple[ClampPlacement, ...]:
    """Which phase each clamp is on and whether it is reversed.

    With a resistive load (a known load per phase, or the diverter at full output) a
    correct clamp's current fundamental is in phase with its own phase voltage when power is
    imported (in anti-phase when exported). Against the three phase voltages (measured, or
    inferred at -+120 deg from L1 with :func:`assumed_voltage_phasors`) that gives six
    classes 60 deg apart -- Lk forward or reversed for k = 1, 2, 3 -- so each of the
    3! * 2^3 = 48 orders and orientations of three clamps is told apart when every phase
    carries load (CHECKS.md "Three-phase supplies"). A clamp is placed in the nearest class
    when within ``tolerance_deg`` of it.

    ``load`` says what was switched on during the capture:

    * ``'all'`` -- resistive load on every phase: every clamp is placed.
    * ``'one'`` -- resistive load on one phase only (a single-phase diverter on a three-phase
      house): only clamps carrying at least ``min_current_fraction`` of the largest current
      are placed; the others are ``'no-load'``.
    * ``'unknown'`` -- an unknown mix (other loads, maybe PV export): the direction of flow
      is not known, so only the axis of the current (Lk, either way round) is taken, as
      ``'phase-only'``, and only when within the tolerance; reactive loads may still
      mislead it.

    Parameters
    ----------
    current_phasors : sequence of complex
        Fundamental phasors of clamps 1...n (n <= 3), positive into the premises [A].
    voltage_phasors : sequence of complex
        Fundamental phasors of L1, L2, L3 [V].
    expect : {'import', 'export'}
        Direction of flow on the loaded phases during the capture.
    load : {'all', 'one', 'unknown'}
    tolerance_deg : float
        Largest residual for a decision [deg], below 30.
    min_current_fraction : float
        Share of the largest current below which a clamp carries no load [1].

    Returns
    -------
    tuple of ClampPlacement
    """
    if expect not in ("import", "export"):
        raise ValueError(f"expect must be 'import' or 'export', got {expect!r}")
    if load not in ("all", "one", "unknown"):
        raise ValueError(f"load must be 'all', 'one' or 'unknown', got {load!r}")
    if not 0.0 < tolerance_deg < 30.0:
        raise ValueError(f"tolerance_deg must be between 0 and 30, got {tolerance_deg!r}")
    if len(voltage_phasors) != 3:
        raise ValueError("give the three phase voltage phasors L1, L2, L3")
    largest = max((abs(z) for z in current_phasors), default=0.0)
    v_angles = [angle_deg(v) for v in voltage_phasors]
    base = 0.0 if expect == "import" else 180.0
    out = []
    for k, z in enumerate(current_phasors):
        share = abs(z) / largest if largest > 0 else 0.0
        if largest == 0.0 or share < min_current_fraction:
            out.append(ClampPlacement(k + 1, "no-load", None, None,
                                      angle_deg(z) if abs(z) > 0 else math.nan,
                                      math.nan, share))
            continue
        a = angle_deg(z)
        best = None
        for p, va in enumerate(v_angles):
            for rev in (False, True):
                if load == "unknown":
                    # the axis only: distance modulo 180 deg
                    d = abs(_wrap_deg(2.0 * (a - va)) / 2.0)
                else:
                    d = abs(_wrap_deg(a - va - base - (180.0 if rev else 0.0)))
                if best is None or d < best[0]:
                    best = (d, p, rev)
                if load == "unknown":
                    break
        assert best is not None
        d, p, rev = best
        if d > tolerance_deg:
            out.append(ClampPlacement(k + 1, "undecided", None, None, a, d, share))
        elif load == "unknown":
            out.append(ClampPlacement(k + 1, "phase-only", PHASES[p], None, a, d, share))
        else:
            out.append(ClampPlacement(k + 1, "placed", PHASES[p], rev, a, d, share))
    return tuple(out)
