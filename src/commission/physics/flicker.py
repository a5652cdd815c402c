"""A digital flickermeter after the IEC 61000-4-15 lamp–eye–brain model, and the flicker a
burst-fire diverter would cause.

Blocks of the model [1]_ (our own implementation of the published structure):

1. *Input adapter*: the voltage scaled to its mean RMS, so the result is relative.
2. *Squaring demodulator*: ``u**2`` turns an amplitude modulation of the mains into a
   baseband signal at the modulating frequency.
3. *Weighting*: a first-order high-pass at 0.05 Hz and a sixth-order Butterworth low-pass at
   35 Hz (42 Hz on 60 Hz mains) keep the fluctuation; the lamp–eye filter
   ``K*w1*s/(s**2 + 2*lam*s + w1**2) * (1 + s/w2)/((1 + s/w3)*(1 + s/w4))`` weights it
   (constants for a 230 V 60 W lamp on 50 Hz and a 120 V lamp on 60 Hz, from memory; they
   agree with published open flickermeters). Analog filters are mapped by the bilinear
   transform.
4. *Squaring and smoothing*: a first-order low-pass with a 300 ms time constant; the scale
   is set so that a sinusoidal 8.8 Hz fluctuation of ΔU/U = 0.25 % (peak to peak) gives an
   instantaneous flicker sensation ``Pinst`` of 1 — computed here from the filters' own
   response at 8.8 Hz rather than a remembered constant.
5. *Statistics*: over each 10-minute window,
   ``Pst = sqrt(0.0314 P0.1 + 0.0525 P1s + 0.0657 P3s + 0.28 P10s + 0.08 P50s)`` with
   ``Px`` the level exceeded for x % of the time and the smoothed
   ``P50s = mean(P30, P50, P80)``, ``P10s = mean(P6, P8, P10, P13, P17)``,
   ``P3s = mean(P2.2, P3, P4)``, ``P1s = mean(P0.7, P1, P1.5)``.

The meter is verified against the rectangular-change points of IEC 61000-4-15 Ed.2 (2010)
listed in CHECKS.md (tests/physics/test_flicker.py).

Burst fire: whole mains cycles on or off. With the element's resistance ``R = U**2/P`` and a
loop impedance ``Z``, the supply terminal voltage is ``U*R/(R+Z)`` while it conducts and
``U`` otherwise (CHECKS.md, "Flicker": d ≈ P*R_loop/U**2, 2.3 % for 3 kW on the reference
impedance 0.40 + j0.25 Ω of IEC TR 60725). The synthesised waveform runs through the same
meter: the analytical method of IEC 61000-3-3 holds only for changes about a second or more
apart [2]_.

References
----------
.. [1] IEC 61000-4-15:2010, Flickermeter — functional and design specifications (structure
   and test table as quoted in CHECKS.md; filter constants from memory).
.. [2] IEC 61000-3-3, Annex B / 6.4 and IEC TR 60725 reference impedance (from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

WINDOW_S = 600.0  # Pst is a 10-minute figure
PST_LIMIT = 1.0  # IEC 61000-3-3 (from memory)
REFERENCE_IMPEDANCE_OHM = complex(0.40, 0.25)  # IEC TR 60725 single-phase loop

# Lamp-eye model constants (from memory; agree with published open flickermeters):
# K, lambda/2pi, w1/2pi, w2/2pi, w3/2pi, w4/2pi  [1, Hz...]
_LAMP = {
    50: (1.74802, 4.05981, 9.15494, 2.27979, 1.22535, 21.9),
    60: (1.6357, 4.167375, 9.077169, 2.939902, 1.394468, 17.31512),
}
_LOWPASS_HZ = {50: 35.0, 60: 42.0}
_SMOOTH_TAU_S = 0.3
_REF_HZ, _REF_DU = 8.8, 0.0025  # sinusoidal reference: Pinst = 1
_WARM_UP_S = 5.0

_PERCENTILES = {
    "p0_1": (0.1,),
    "p1s": (0.7, 1.0, 1.5),
    "p3s": (2.2, 3.0, 4.0),
    "p10s": (6.0, 8.0, 10.0, 13.0, 17.0),
    "p50s": (30.0, 50.0, 80.0),
}
_WEIGHTS = {"p0_1": 0.0314, "p1s": 0.0525, "p3s": 0.0657, "p10s": 0.28, "p50s": 0.08}


def _filters(fs_hz: float, mains_hz: int):
    """Second-order sections of block 3 and block 4's smoothing, and block 4's scale."""
    from scipy import signal

    if mains_hz not in _LAMP:
        raise ValueError("mains frequency must be 50 or 60 Hz")
    if fs_hz < 8 * mains_hz:
        raise ValueError(f"a sample rate of {fs_hz:g} Hz is too low: at least "
                         f"{8 * mains_hz} Hz is needed")
    hp = signal.butter(1, 0.05, "highpass", fs=fs_hz, output="sos")
    lp = signal.butter(6, _LOWPASS_HZ[mains_hz], "lowpass", fs=fs_hz, output="sos")
    k, lam, w1, w2, w3, w4 = _LAMP[mains_hz]
    lam, w1, w2, w3, w4 = (2 * math.pi * x for x in (lam, w1, w2, w3, w4))
    num = np.polymul([k * w1, 0.0], [1.0 / w2, 1.0])
    den = np.polymul([1.0, 2.0 * lam, w1 * w1], [1.0 / (w3 * w4), 1.0 / w3 + 1.0 / w4, 1.0])
    bz, az = signal.bilinear(num, den, fs=fs_hz)
    weight = signal.tf2sos(bz, az)
    band = np.vstack([hp, lp, weight])
    smooth = signal.butter(1, 1.0 / (2 * math.pi * _SMOOTH_TAU_S), "lowpass", fs=fs_hz,
                           output="sos")
    # Scale: a relative sinusoidal fluctuation m*sin(2 pi f t) of the RMS (m = dU/U / 2)
    # becomes m*sin(...) in the demodulated signal; block 3 multiplies it by |H(f)| and
    # block 4 averages its square to (m*|H|)**2/2. That average must read 1 at 8.8 Hz.
    _, h = signal.sosfreqz(band, worN=[_REF_HZ], fs=fs_hz)
    m = _REF_DU / 2.0
    scale = 2.0 / (m * abs(h[0])) ** 2
    return band, smooth, scale


def instantaneous_flicker(voltage_v, fs_hz: float, mains_hz: int = 50) -> np.ndarray:
    """Instantaneous flicker sensation ``Pinst`` (blocks 1–4) at every sample.

    Parameters
    ----------
    voltage_v : array_like
        Sampled voltage waveform [V] (any scale: the meter is relative).
    fs_hz : float
        Sample rate [Hz], at least 8 times the mains frequency.
    mains_hz : {50, 60}
        Mains frequency [Hz].

    Returns
    -------
    numpy.ndarray
        ``Pinst`` [1] (1 = the reference fluctuation's perceptibility).
    """
    from scipy import signal

    v = np.asarray(voltage_v, dtype=float)
    if v.ndim != 1 or not np.all(np.isfinite(v)):
        raise ValueError("the voltage must be a finite 1-D series")
    cycle = int(round(fs_hz / mains_hz))
    if len(v) < 4 * cycle:
        raise ValueError("too few samples for a flicker measurement")
    band, smooth, scale = _filters(fs_hz, mains_hz)
    v = v - np.mean(v)
    rms = math.sqrt(float(np.mean(v * v)))
    if rms <= 0:
        raise ValueError("the voltage is zero throughout")
    u0 = (v / (math.sqrt(2.0) * rms)) ** 2
    # Start-up: the filters begin in the steady state of the mean level, and run first over
    # a mirror image of the opening seconds (continuous with the start of the capture), so
    # switching the 100 Hz ripple on at sample 0 does not ring through as a fluctuation.
    warm = min(len(u0) - 1, int(_WARM_UP_S * fs_hz))
    primed = np.concatenate([u0[warm:0:-1], u0])
    zi = signal.sosfilt_zi(band) * float(np.mean(u0[:cycle]))
    weighted, _ = signal.sosfilt(band, primed, zi=zi)
    sq = weighted * weighted
    out, _ = signal.sosfilt(smooth, sq, zi=signal.sosfilt_zi(smooth) * 0.0)
    out = out[warm:]
    return scale * out


def pst_from_pinst(pinst) -> tuple[float, dict[str, float]]:
    """Short-term flicker severity from ``Pinst`` over one observation period (block 5).

    Returns
    -------
    (float, dict)
        ``Pst`` [1] and the smoothed percentiles it was formed from [1].
    """
    p = np.asarray(pinst, dtype=float)
    if p.size < 100:
        raise ValueError("too few values for the flicker statistics")
    levels = {}
    for name, xs in _PERCENTILES.items():
        # level exceeded for x % of the time = the (100 - x)th percentile
        levels[name] = float(np.mean(np.percentile(p, [100.0 - x for x in xs])))
    pst = math.sqrt(max(0.0, sum(_WEIGHTS[k] * levels[k] for k in _WEIGHTS)))
    return pst, levels


@dataclass(frozen=True)
class FlickerResult:
    pst: tuple[float, ...]  # one per complete 10-minute window
    pinst_max: float
    duration_s: float
    window_s: float
    mains_hz: int

    @property
    def pst_max(self) -> float:
        return max(self.pst)


def flicker_severity(voltage_v, fs_hz: float, mains_hz: int = 50, *,
                     window_s: float = WINDOW_S) -> FlickerResult:
    """``Pst`` of every complete 10-minute window of a voltage capture.

    Raises ValueError for a capture shorter than one window.
    """
    v = np.asarray(voltage_v, dtype=float)
    duration = len(v) / fs_hz
    n_win = int(duration // window_s + 1e-9)
    if n_win < 1:
        raise ValueError(f"{duration / 60:.1f} min of voltage: Pst needs at least "
                         f"{window_s / 60:g} min")
    pinst = instantaneous_flicker(v, fs_hz, mains_hz)
    per = int(round(window_s * fs_hz))
    values = tuple(pst_from_pinst(pinst[i * per:(i + 1) * per])[0] for i in range(n_win))
    return FlickerResult(values, float(np.max(pinst)), duration, window_s, mains_hz)


def burst_fire_pattern(fraction: float, cycles: int, period_cycles: int | None = None):
    """Which whole cycles conduct for a burst-fire output ``fraction``.

    ``period_cycles`` None: cycles spread as evenly as possible (each cycle conducts when the
    accumulated demand reaches one cycle, as many diverters do); otherwise the first
    ``round(fraction*N)`` cycles of every N conduct.

    Returns
    -------
    numpy.ndarray of bool, one per mains cycle.
    """
    if not 0.0 <= fraction <= 1.0:
        raise ValueError("output fraction must lie between 0 and 1")
    if period_cycles is None:
        k = np.arange(1, cycles + 1)
        return np.floor(k * fraction + 1e-12) > np.floor((k - 1) * fraction + 1e-12)
    if period_cycles < 1:
        raise ValueError("the burst period must be at least one cycle")
    on = int(round(fraction * period_cycles))
    return (np.arange(cycles) % period_cycles) < on


def burst_fire_voltage(power_w: float, loop_impedance_ohm: complex, pattern, *,
                       supply_v: float = 230.0, mains_hz: int = 50, fs_hz: float = 2000.0):
    """Supply-terminal voltage while an element of ``power_w`` (at ``supply_v``) switches
    whole cycles by ``pattern`` on a loop of ``loop_impedance_ohm``.

    Returns
    -------
    numpy.ndarray
        Voltage samples [V] at ``fs_hz``.
    """
    if power_w <= 0 or supply_v <= 0:
        raise ValueError("element power and supply voltage must be positive")
    z = complex(loop_impedance_ohm)
    if z.real < 0:
        raise ValueError("loop resistance cannot be negative")
    r_el = supply_v**2 / power_w
    ratio = r_el / (r_el + z)
    on = np.asarray(pattern, dtype=bool)
    per = fs_hz / mains_hz
    n = int(round(len(on) * per))
    t = np.arange(n) / fs_hz
    cyc = np.minimum((np.arange(n) / per).astype(int), len(on) - 1)
    amp = np.where(on[cyc], abs(ratio), 1.0)
    ph = np.where(on[cyc], np.angle(ratio), 0.0)
    return math.sqrt(2.0) * supply_v * amp * np.sin(2 * math.pi * mains_hz * t + ph)


def predict_burst_fire_pst(power_w: float, loop_impedance_ohm: complex, fraction: float, *,
                           period_cycles: int | None = None, supply_v: float = 230.0,
                           mains_hz: int = 50, fs_hz: float = 1000.0) -> float:
    """Pst of a burst-fire element held at ``fraction`` for 10 minutes, by running the
    flickermeter on the synthesised supply voltage [1]_ [2]_."""
    cycles = int(WINDOW_S * mains_hz)
    pattern = burst_fire_pattern(fraction, cycles, period_cycles)
    v = burst_fire_voltage(power_w, loop_impedance_ohm, pattern, supply_v=supply_v,
                           mains_hz=mains_hz, fs_hz=fs_hz)
    return flicker_severity(v, fs_hz, mains_hz).pst_max


def relative_voltage_change(power_w: float, loop_impedance_ohm: complex,
                            supply_v: float = 230.0) -> float:
    """Relative step ``d`` of the supply voltage when the element switches on [1]:
    ``1 - |R/(R+Z)|`` with ``R = U**2/P`` (≈ P*R_loop/U**2 for a small loop)."""
    r_el = supply_v**2 / power_w
    return 1.0 - abs(r_el / (r_el + complex(loop_impedance_ohm)))
