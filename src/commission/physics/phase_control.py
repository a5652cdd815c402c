"""Phase-angle (triac) and burst-fire control of a resistive heating element.

Closed-form results for a single-phase AC voltage controller feeding a resistance: the
triac fires at angle ``alpha`` after each voltage zero crossing and conducts to the next
zero, so with ``I_pk = sqrt(2)*U/R`` the current is ``I_pk*sin(theta)`` for
``alpha < theta < pi`` and ``pi + alpha < theta < 2*pi``, zero otherwise. The waveform has
half-wave symmetry, so only odd harmonics appear.

Angles are in radians unless the name says ``_deg``. Phase angles of the current are those
of a component ``c*sin(n*theta + phi)`` relative to the voltage ``U_pk*sin(theta)``:
positive when the current leads.

References
----------
.. [1] M. H. Rashid, *Power Electronics: Circuits, Devices and Applications*, chapter on AC
   voltage controllers (single-phase controller with resistive load; from memory).
.. [2] IEEE Std 1459-2010 (true and displacement power factor).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np


def power_fraction(firing_angle_rad):
    """Share of full power delivered at a firing angle.

    ``P(alpha)/P(0) = 1 - alpha/pi + sin(2*alpha)/(2*pi)`` [1]_.

    Parameters
    ----------
    firing_angle_rad : numeric
        Firing angle after each voltage zero crossing, 0...pi [rad].

    Returns
    -------
    numeric
        Power fraction, 1 at alpha = 0 down to 0 at alpha = pi [1].

    References
    ----------
    .. [1] M. H. Rashid, *Power Electronics*, AC voltage controllers (from memory).
    """
    a = np.asarray(firing_angle_rad, dtype=float)
    if np.any((a < 0) | (a > math.pi)) or not np.all(np.isfinite(a)):
        raise ValueError("firing angle must lie between 0 and pi radians")
    # the same closed form written as (x - sin x)/(2 pi) with x = 2 (pi - alpha), which keeps
    # its relative accuracy near alpha = pi where the power is tiny
    out = _x_minus_sin(2.0 * (math.pi - a)) / (2.0 * math.pi)
    return float(out) if out.ndim == 0 else out


def _x_minus_sin(x):
    """x - sin(x) without cancellation for small x (Taylor series below 0.5)."""
    x = np.asarray(x, dtype=float)
    x2 = x * x
    series = x * x2 / 6.0 * (1.0 - x2 / 20.0 * (1.0 - x2 / 42.0 * (1.0 - x2 / 72.0 * (
        1.0 - x2 / 110.0 * (1.0 - x2 / 156.0)))))
    return np.where(x < 0.5, series, x - np.sin(x))


def firing_angle_for_fraction(fraction):
    """Firing angle that delivers a given share of full power (inverse of
    :func:`power_fraction`), by bisection on the monotonic closed form.

    Parameters
    ----------
    fraction : numeric
        Wanted power fraction, 0...1 [1].

    Returns
    -------
    numeric
        Firing angle [rad], to within 1e-12 rad.

    References
    ----------
    .. [1] M. H. Rashid, *Power Electronics*, AC voltage controllers (from memory).
    """
    k = np.asarray(fraction, dtype=float)
    if np.any((k < 0) | (k > 1)) or not np.all(np.isfinite(k)):
        raise ValueError("power fraction must lie between 0 and 1")
    lo = np.zeros_like(k)
    hi = np.full_like(k, math.pi)
    # power_fraction falls monotonically from 1 to 0 on [0, pi]: derivative -2 sin^2(a)/pi
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        too_much = power_fraction(mid) > k
        lo = np.where(too_much, mid, lo)
        hi = np.where(too_much, hi, mid)
    out = 0.5 * (lo + hi)
    return float(out) if out.ndim == 0 else out


def load_voltage_rms_v(supply_v_rms, firing_angle_rad):
    """RMS voltage across the element: ``U*sqrt(P(alpha)/P(0))`` [1]_.

    Parameters
    ----------
    supply_v_rms : numeric
        RMS supply voltage [V].
    firing_angle_rad : numeric
        Firing angle [rad].

    Returns
    -------
    numeric
        RMS voltage across the element [V].

    References
    ----------
    .. [1] M. H. Rashid, *Power Electronics*, AC voltage controllers (from memory).
    """
    return supply_v_rms * np.sqrt(power_fraction(firing_angle_rad))


def power_w(supply_v_rms, resistance_ohm, firing_angle_rad):
    """Power into a resistive element under phase-angle control: ``U^2/R * P(alpha)/P(0)``.

    Parameters
    ----------
    supply_v_rms : numeric
        RMS supply voltage [V].
    resistance_ohm : numeric
        Element resistance [ohm].
    firing_angle_rad : numeric
        Firing angle [rad].

    Returns
    -------
    numeric
        Mean power [W].

    References
    ----------
    .. [1] M. H. Rashid, *Power Electronics*, AC voltage controllers (from memory).
    """
    return supply_v_rms**2 / resistance_ohm * power_fraction(firing_angle_rad)


def current_fourier_coefficients(order, firing_angle_rad, peak_current_a):
    """Fourier coefficients ``a_n``, ``b_n`` of the phase-cut current.

    ``i(theta) = sum_n a_n*cos(n*theta) + b_n*sin(n*theta)``. Our derivation from the
    waveform above (integrate over the two conducting intervals, half-wave symmetry):

    * n = 1: ``a_1 = I_pk/(2*pi)*(cos(2*alpha) - 1)``,
      ``b_1 = I_pk/(2*pi)*(2*(pi - alpha) + sin(2*alpha))`` (as in [1]_);
    * odd n >= 3: ``a_n = I_pk/pi*[(cos((n+1)alpha) - 1)/(n+1) - (cos((n-1)alpha) - 1)/(n-1)]``,
      ``b_n = I_pk/pi*[sin((n+1)alpha)/(n+1) - sin((n-1)alpha)/(n-1)]``;
    * even n: zero.

    Parameters
    ----------
    order : int
        Harmonic order n >= 1 [1].
    firing_angle_rad : float
        Firing angle [rad].
    peak_current_a : float
        Peak current at full conduction, ``sqrt(2)*U/R`` [A].

    Returns
    -------
    tuple of float
        ``(a_n, b_n)`` [A].

    References
    ----------
    .. [1] M. H. Rashid, *Power Electronics*, AC voltage controllers (from memory);
       the n >= 3 forms are ours, checked against numerical integration in the tests.
    """
    n = int(order)
    if n != order or n < 1:
        raise ValueError(f"harmonic order must be a positive integer, got {order!r}")
    a = float(firing_angle_rad)
    if not 0.0 <= a <= math.pi:
        raise ValueError("firing angle must lie between 0 and pi radians")
    ipk = float(peak_current_a)
    if n % 2 == 0:
        return 0.0, 0.0
    if n == 1:
        return (ipk / (2 * math.pi) * (math.cos(2 * a) - 1.0),
                ipk / (2 * math.pi) * (2 * (math.pi - a) + math.sin(2 * a)))
    an = ipk / math.pi * ((math.cos((n + 1) * a) - 1.0) / (n + 1)
                          - (math.cos((n - 1) * a) - 1.0) / (n - 1))
    bn = ipk / math.pi * (math.sin((n + 1) * a) / (n + 1) - math.sin((n - 1) * a) / (n - 1))
    return an, bn


@dataclass(frozen=True)
class PhaseCutCurrent:
    """Current of a resistive element under phase-angle control.

    Attributes
    ----------
    firing_angle_rad : float
        Firing angle [rad].
    power_fraction : float
        P(alpha)/P(0) [1].
    power_w : float
        Mean power [W].
    i_rms_a : float
        True RMS current [A].
    orders : tuple of int
        Odd orders 1, 3, 5, ... up to the requested maximum.
    harmonic_rms_a : tuple of float
        RMS current of each order in ``orders`` [A].
    harmonic_phase_deg : tuple of float
        Angle of each component relative to the voltage fundamental [deg].
    i1_rms_a : float
        RMS of the fundamental [A].
    phase_deg : float
        Signed angle of the fundamental, atan2(a1, b1); negative = lagging [deg].
    displacement_pf : float
        cos(phi1) [1].
    power_factor : float
        True power factor sqrt(P(alpha)/P(0)) [1].
    thd_pct : float
        THD of the current over orders 2...``max_order`` [%].
    """

    firing_angle_rad: float
    power_fraction: float
    power_w: float
    i_rms_a: float
    orders: tuple[int, ...]
    harmonic_rms_a: tuple[float, ...]
    harmonic_phase_deg: tuple[float, ...]
    i1_rms_a: float
    phase_deg: float
    displacement_pf: float
    power_factor: float
    thd_pct: float


def current_spectrum(supply_v_rms, resistance_ohm, firing_angle_rad, *, max_order=40):
    """Harmonic spectrum and power factors of the phase-cut current of a resistance.

    Parameters
    ----------
    supply_v_rms : float
        RMS supply voltage [V].
    resistance_ohm : float
        Element resistance [ohm].
    firing_angle_rad : float
        Firing angle, 0...pi [rad].
    max_order : int, default 40
        Highest order reported and used for THD (IEC 61000-4-7 limit of 40, from memory).

    Returns
    -------
    PhaseCutCurrent

    References
    ----------
    .. [1] M. H. Rashid, *Power Electronics*, AC voltage controllers (from memory).
    .. [2] IEEE Std 1459-2010 (power factor P/S, displacement factor cos(phi1)).
    """
    if not resistance_ohm > 0:
        raise ValueError("resistance must be positive")
    alpha = float(firing_angle_rad)
    frac = power_fraction(alpha)
    ipk = math.sqrt(2.0) * supply_v_rms / resistance_ohm
    orders = tuple(range(1, int(max_order) + 1, 2))
    rms, ang = [], []
    for n in orders:
        an, bn = current_fourier_coefficients(n, alpha, ipk)
        rms.append(math.hypot(an, bn) / math.sqrt(2.0))
        ang.append(math.degrees(math.atan2(an, bn)))
    i1 = rms[0]
    thd = 100.0 * math.sqrt(sum(r * r for r in rms[1:])) / i1 if i1 > 0 else math.nan
    return PhaseCutCurrent(
        firing_angle_rad=alpha,
        power_fraction=frac,
        power_w=supply_v_rms**2 / resistance_ohm * frac,
        i_rms_a=supply_v_rms / resistance_ohm * math.sqrt(frac),
        orders=orders,
        harmonic_rms_a=tuple(rms),
        harmonic_phase_deg=tuple(ang),
        i1_rms_a=i1,
        phase_deg=ang[0],
        displacement_pf=math.cos(math.radians(ang[0])),
        power_factor=math.sqrt(frac),
        thd_pct=thd,
    )


def fundamental_phase_deg(firing_angle_rad):
    """Signed angle of the current fundamental, ``atan2(a1, b1)``; it lags, so it is
    negative (-32.5 deg at alpha = 90 deg) [1]_.

    Parameters
    ----------
    firing_angle_rad : float
        Firing angle [rad].

    Returns
    -------
    float
        Angle of the current fundamental relative to the voltage [deg].

    References
    ----------
    .. [1] M. H. Rashid, *Power Electronics*, AC voltage controllers (from memory).
    """
    a1, b1 = current_fourier_coefficients(1, firing_angle_rad, 1.0)
    return math.degrees(math.atan2(a1, b1))


def displacement_power_factor(firing_angle_rad):
    """cos(phi1) of the phase-cut current (0.8436 at alpha = 90 deg) [1]_.

    Parameters
    ----------
    firing_angle_rad : float
        Firing angle [rad].

    Returns
    -------
    float
        Displacement power factor [1].

    References
    ----------
    .. [1] M. H. Rashid, *Power Electronics*, AC voltage controllers (from memory).
    """
    return math.cos(math.radians(fundamental_phase_deg(firing_angle_rad)))


def true_power_factor(firing_angle_rad):
    """True power factor P/S of a phase-controlled resistance, ``sqrt(P(alpha)/P(0))``
    (0.7071 at alpha = 90 deg) [1]_.

    Parameters
    ----------
    firing_angle_rad : numeric
        Firing angle [rad].

    Returns
    -------
    numeric
        Power factor [1].

    References
    ----------
    .. [1] M. H. Rashid, *Power Electronics*, AC voltage controllers (from memory).
    """
    return np.sqrt(power_fraction(firing_angle_rad))


def burst_fire_power_w(full_power_w, cycles_on, cycles_total):
    """Mean power under burst-fire (whole-cycle) control:
    ``P = cycles_on/cycles_total * P_full`` [1]_.

    Burst firing has no integer harmonics but produces subharmonics and interharmonics at
    multiples of f/N and on/off steps that matter for flicker (IEC 61000-3-3, indicative).

    Parameters
    ----------
    full_power_w : numeric
        Power at full conduction [W].
    cycles_on : int
        Conducting cycles in each period [1].
    cycles_total : int
        Cycles in each period [1].

    Returns
    -------
    float
        Mean power [W].

    References
    ----------
    .. [1] M. H. Rashid, *Power Electronics*, AC voltage controllers, on-off (integral
       cycle) control (from memory).
    """
    if int(cycles_total) != cycles_total or cycles_total < 1:
        raise ValueError("cycles_total must be a positive integer")
    if int(cycles_on) != cycles_on or not 0 <= cycles_on <= cycles_total:
        raise ValueError("cycles_on must be an integer between 0 and cycles_total")
    return full_power_w * cycles_on / cycles_total


def conduction_power_fraction(conducting_share):
    """Power of a phase-cut resistive element against the conducting share of each half-cycle.

    With ``x = 1 - alpha/pi``: ``P/P0 = x - sin(2*pi*x)/(2*pi)`` (the closed form of
    :func:`power_fraction` rewritten; CHECKS.md, "The clamp from a phase-cut current"). A
    forced "20 %" that means 20 % of the half-cycle delivers 4.9 % of full power.

    Parameters
    ----------
    conducting_share : numeric
        Share of each half-cycle that conducts, 0...1 [1].

    Returns
    -------
    numeric
        Power fraction [1].
    """
    x = np.asarray(conducting_share, dtype=float)
    if np.any((x < 0) | (x > 1)) or not np.all(np.isfinite(x)):
        raise ValueError("the conducting share must lie between 0 and 1")
    return power_fraction(math.pi * (1.0 - x))


@dataclass(frozen=True)
class ForcedModeFit:
    """How far forced-mode readings sit from each law, in shares of full power."""

    settings: tuple[float, ...]  # the diverter's percentages as fractions, 0...1
    measured_fraction: tuple[float, ...]  # element power over full power
    power_linear_max_dev: float  # max |measured - setting|
    time_linear_max_dev: float  # max |measured - conduction_power_fraction(setting)|


def forced_mode_deviations(settings, power_w, full_power_w) -> ForcedModeFit:
    """Readings of element power at forced settings against the two laws a diverter may follow.

    *Power-linear*: the setting is the share of power (burst fire, or phase control with the
    angle from :func:`firing_angle_for_fraction`); *time-linear*: it is the conducting share of
    each half-cycle, so power follows :func:`conduction_power_fraction`.

    Parameters
    ----------
    settings : array_like
        Forced settings as fractions, e.g. 0.2, 0.5, 1.0 [1].
    power_w : array_like
        Element power read at each setting [W].
    full_power_w : float
        Element power at full output (the 100 % reading, or the rated power) [W].

    Returns
    -------
    ForcedModeFit
        The largest deviation from each law [share of full power].
    """
    s = np.asarray(settings, dtype=float)
    p = np.asarray(power_w, dtype=float)
    if s.shape != p.shape or s.ndim != 1 or len(s) < 1:
        raise ValueError("one power reading per setting")
    if not (np.all(np.isfinite(p)) and math.isfinite(full_power_w)) or full_power_w <= 0:
        raise ValueError("powers must be finite and full power positive")
    y = p / full_power_w
    power_dev = float(np.max(np.abs(y - s)))
    time_dev = float(np.max(np.abs(y - conduction_power_fraction(s))))
    return ForcedModeFit(tuple(float(v) for v in s), tuple(float(v) for v in y),
                         power_dev, time_dev)


def conduction_fraction(firing_angle_rad, threshold=0.05):
    """Share of the time a phase-cut current spends above ``threshold`` of its own peak.

    The current of a resistive load fired at ``alpha`` is ``Ipk*sin(theta)`` for
    ``alpha < theta < pi`` in each half cycle; its peak is ``Ipk`` when alpha <= 90 deg and
    ``Ipk*sin(alpha)`` (the step at firing) beyond. It is above ``threshold * peak`` from
    ``max(alpha, asin(threshold*s))`` to ``pi - asin(threshold*s)``, with ``s`` the peak
    over ``Ipk``.

    Parameters
    ----------
    firing_angle_rad : float
        Firing angle [rad].
    threshold : float, default 0.05
        Fraction of the peak counted as conducting [1].

    Returns
    -------
    float
        Conducting share of the cycle [1].

    References
    ----------
    .. [1] The phase-cut waveform of an AC voltage controller with a resistive load
       (Rashid, *Power Electronics*, from memory).
    """
    alpha = float(firing_angle_rad)
    s = 1.0 if alpha <= math.pi / 2 else math.sin(alpha)
    edge = math.asin(min(1.0, threshold * s))
    return max(0.0, (math.pi - edge - max(alpha, edge)) / math.pi)


def firing_angle_from_current(current_a, threshold=0.05):
    """Firing angle read from a phase-cut current itself, without the voltage.

    The share of samples whose magnitude exceeds ``threshold`` of the largest is inverted
    through :func:`conduction_fraction` (bisection). A current that never stops (full
    conduction, or other loads in the premises) gives 0. The voltage is not used, so a
    clamp on another phase than the voltage reference still gives its own load's angle.

    Parameters
    ----------
    current_a : array_like
        Current samples over whole cycles, many per cycle [A].
    threshold : float, default 0.05
        Fraction of the peak counted as conducting (our default) [1].

    Returns
    -------
    float
        Firing angle, 0 ... pi [rad].

    References
    ----------
    .. [1] As :func:`conduction_fraction`; CHECKS.md, "The clamp from a phase-cut current".
    """
    raw = np.asarray(current_a, dtype=float)
    i = np.abs(raw - raw.mean()) if raw.size else raw  # a DC offset would read as conduction
    peak = float(i.max()) if i.size else 0.0
    if peak <= 0.0:
        return 0.0
    share = float(np.count_nonzero(i > threshold * peak)) / i.size
    if share >= conduction_fraction(0.0, threshold):
        return 0.0
    lo, hi = 0.0, math.pi * 0.999
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        if conduction_fraction(mid, threshold) > share:
            lo = mid
        else:
            hi = mid
    return 0.5 * (lo + hi)
