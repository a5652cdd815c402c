"""Analysis of a captured mains voltage and current waveform.

Everything here works on samples taken at a constant rate; nothing reads files. The capture
is cut into windows of whole mains cycles found from the rising zero crossings of the
voltage, so the sampling need not be locked to the mains, the frequency may be off nominal or
drift slowly, and the capture may start and end anywhere in a cycle. Each window is
integrated over exactly its own cycles and its harmonics are found by projecting the samples
onto sin/cos of h times the window's own frequency (a DFT at non-integer bin positions).

Public names:

* :func:`analyse` -- whole arrays in, :class:`CaptureAnalysis` out.
* :class:`CaptureAccumulator` and :func:`analyse_chunks` -- the same analysis fed in chunks
  of any size, in bounded memory, giving the same figures as :func:`analyse`.
* :func:`fit_mains_sine` -- frequency and amplitude of a short stretch of voltage.
* :func:`sample_rate_from_times` -- sample rate and start of an evenly spaced time column.
* :func:`power_direction` -- the direction of power flow from the sign of P.
* :func:`cycle_powers`, :func:`dc_removed_power_factor` -- P per cycle (its spread) and the
  power factor without DC offsets. The clamp verdict is the capture analysis's
  (:mod:`commission.analyses.capture`): physics returns numbers only.

Sign of power: positive = import, energy flowing from the grid into the premises, for a
clamp on the incoming supply conductor with its arrow pointing into the premises.

References
----------
.. [1] IEEE Std 1459-2010, Definitions for the Measurement of Electric Power Quantities Under
   Sinusoidal, Nonsinusoidal, Balanced, or Unbalanced Conditions (RMS, P, S = V*I,
   PF = P/S, displacement power factor, THD).
.. [2] IEC 61000-4-7:2002+A1:2008, Testing and measurement techniques -- General guide on
   harmonics and interharmonics measurements and instrumentation (10-cycle windows at 50 Hz,
   12 at 60 Hz, orders up to 40; from memory).
.. [3] IEC 61000-2-2:2002, Compatibility levels for low-frequency conducted disturbances
   (THD taken up to order 40; from memory).
.. [4] IEEE Std 1057-2017, Standard for Digitizing Waveform Recorders (sine-wave fit used to
   estimate the frequency of a record; from memory).
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np

MAX_ORDER = 40
"""Highest harmonic order analysed (IEC 61000-4-7 / IEC 61000-2-2, from memory)."""

# Search band for the mains frequency: 50 Hz and 60 Hz systems with a wide margin for
# generator-fed or islanded supplies (our choice).
_F_MIN_HZ = 40.0
_F_MAX_HZ = 70.0
# Below this rate a mains cycle has fewer than ~6 samples and nothing useful can be said.
_MIN_RATE_HZ = 400.0
# Length of the stretch used to find the frequency before the zero-crossing tracker starts.
_TUNE_S = 0.25
# Decimate the sine fit to at most this many points: its only job is the frequency.
_FIT_MAX_POINTS = 8000
# A cycle is irregular (a glitch or dropout in the voltage) when its length is outside
# this range of the expected period, or differs from the previous cycle's by more than
# _CYCLE_STEP; real supplies drift far more slowly (our choice).
_CYCLE_MIN_RATIO = 0.8
_CYCLE_MAX_RATIO = 1.25
_CYCLE_STEP = 0.05
# Hysteresis of the zero-crossing detector, as a fraction of the fundamental amplitude.
_HYSTERESIS = 0.2
# Window length: about 200 ms, i.e. 10 cycles at 50 Hz and 12 at 60 Hz (IEC 61000-4-7,
# from memory); the two systems are told apart at 55 Hz.
_WINDOW_SPLIT_HZ = 55.0
# "No significant power flow" below max(5 W, 2 % of S): our default for the direction field.
_DIRECTION_MIN_W = 5.0
_DIRECTION_MIN_FRACTION = 0.02
# Windows are integrated together in batches of about this many samples (bounded memory).
_BATCH_SAMPLES = 1 << 17


@dataclass(frozen=True)
class MainsSineFit:
    """Result of :func:`fit_mains_sine`.

    Attributes
    ----------
    frequency_hz : float
        Frequency of the fitted sine [Hz].
    amplitude : float
        Peak amplitude of the fitted sine, in the unit of the samples.
    offset : float
        Constant (DC) part of the fit, in the unit of the samples.
    explained_fraction : float
        Share of the AC energy of the samples that the sine explains [1].
    """

    frequency_hz: float
    amplitude: float
    offset: float
    explained_fraction: float


def fit_mains_sine(sample_rate_hz, samples, *, max_duration_s=0.5):
    """Fit ``offset + A*cos(2*pi*f*t + phi)`` to a short stretch of mains voltage.

    A coarse search over 40...70 Hz followed by a golden-section refinement of the
    frequency; amplitude, phase and offset come from linear least squares at each trial
    frequency (the three-parameter fit inside the four-parameter fit of IEEE 1057 [1]_).
    Only the first ``max_duration_s`` of the samples are used.

    Parameters
    ----------
    sample_rate_hz : float
        Sampling rate [Hz].
    samples : array_like
        Voltage samples, any unit (usually [V]).
    max_duration_s : float, default 0.5
        Longest stretch used, from the start [s].

    Returns
    -------
    MainsSineFit

    Raises
    ------
    ValueError
        Too few samples, a constant signal, or no mains-frequency sine in the samples.

    References
    ----------
    .. [1] IEEE Std 1057-2017, Standard for Digitizing Waveform Recorders, sine-wave fitting
       (from memory).
    """
    rate = float(sample_rate_hz)
    if not (math.isfinite(rate) and rate > 0):
        raise ValueError(f"sample rate must be a positive number of hertz, got {sample_rate_hz!r}")
    x = np.asarray(samples, dtype=float).ravel()
    x = x[: max(8, int(round(max_duration_s * rate)))]
    if x.size < 8:
        raise ValueError(f"only {x.size} samples: too few to find the mains frequency")
    if not np.all(np.isfinite(x)):
        raise ValueError("the samples contain NaN or infinite values")
    duration_s = x.size / rate
    step = max(1, math.ceil(x.size / _FIT_MAX_POINTS))
    m = x.size // step
    xs = x[: m * step].reshape(m, step).mean(axis=1)
    t = (np.arange(m) * step + (step - 1) / 2.0) / rate
    t -= t.mean()
    xc = xs - xs.mean()
    total = float(xc @ xc)
    if total <= 0.0:
        raise ValueError("the voltage is constant: no alternating voltage to analyse")

    grid_step = min(0.25, 1.0 / (8.0 * duration_s))
    grid = np.arange(_F_MIN_HZ, _F_MAX_HZ + grid_step / 2, grid_step)
    explained = np.concatenate(
        [_grid_explained(t, xc, grid[k : k + 64], grid_step) for k in range(0, grid.size, 64)]
    )
    best = int(np.argmax(explained))
    lo = max(_F_MIN_HZ, grid[best] - grid_step)
    hi = min(_F_MAX_HZ, grid[best] + grid_step)
    f = _golden_max(lambda fr: float(_sine_explained(t, xc, np.array([fr]))[0][0]), lo, hi)
    if f - _F_MIN_HZ < 1e-3 or _F_MAX_HZ - f < 1e-3:
        raise ValueError(
            f"no mains-frequency sine found: the best fit sits at the edge of the "
            f"{_F_MIN_HZ:.0f}-{_F_MAX_HZ:.0f} Hz search band"
        )
    expl, beta = _sine_explained(t, xc, np.array([f]))
    fraction = float(expl[0]) / total
    if fraction < 0.5:
        raise ValueError(
            f"the voltage does not look like a mains sine wave (a {f:.1f} Hz sine explains "
            f"only {100 * fraction:.0f} % of it); check which channel is the voltage"
        )
    a, b, c = beta[0]
    return MainsSineFit(
        frequency_hz=float(f),
        amplitude=float(math.hypot(a, b)),
        offset=float(c + xs.mean()),
        explained_fraction=fraction,
    )


def _sine_explained(t, x, freqs):
    """Energy of ``x`` explained by [cos, sin, 1] at each frequency, and the coefficients."""
    w = (2.0 * math.pi) * freqs[:, None] * t[None, :]
    return _explained_cs(np.cos(w), np.sin(w), x)


def _grid_explained(t, x, freqs, step):
    """:func:`_sine_explained` energies at evenly spaced ``freqs`` (``step`` apart): the
    sines of the first frequency times powers of the sine of ``step``, by block doubling,
    instead of a cosine and a sine of every frequency and time."""
    rows = np.empty((freqs.size, t.size), dtype=complex)
    rows[0] = np.exp((2j * math.pi * freqs[0]) * t)
    power = np.exp((2j * math.pi * step) * t)  # e^(i*2*pi*step*t) ** k, k = 1, 2, 4, ...
    k = 1
    while k < freqs.size:
        m = min(k, freqs.size - k)
        np.multiply(rows[:m], power, out=rows[k : k + m])
        power = power * power
        k += m
    return _explained_cs(np.ascontiguousarray(rows.real), np.ascontiguousarray(rows.imag),
                         x)[0]


def _explained_cs(c, s, x):
    """Energy of ``x`` explained by [c, s, 1] for each row of ``c`` and ``s``, and the
    coefficients."""
    n = float(c.shape[1])
    cc = np.einsum("ij,ij->i", c, c)
    ss = np.einsum("ij,ij->i", s, s)
    cs = np.einsum("ij,ij->i", c, s)
    c1 = c.sum(axis=1)
    s1 = s.sum(axis=1)
    mat = np.empty((c.shape[0], 3, 3))
    mat[:, 0, 0] = cc
    mat[:, 0, 1] = mat[:, 1, 0] = cs
    mat[:, 0, 2] = mat[:, 2, 0] = c1
    mat[:, 1, 1] = ss
    mat[:, 1, 2] = mat[:, 2, 1] = s1
    mat[:, 2, 2] = n
    rhs = np.stack((c @ x, s @ x, np.full(c.shape[0], x.sum())), axis=1)
    beta = np.linalg.solve(mat, rhs[:, :, None])[:, :, 0]
    return np.einsum("ij,ij->i", rhs, beta), beta


def _golden_max(func, lo, hi, iterations=60):
    """Maximise a unimodal function of one variable on [lo, hi] by golden-section search."""
    g = (math.sqrt(5.0) - 1.0) / 2.0
    a, b = lo, hi
    x1 = b - g * (b - a)
    x2 = a + g * (b - a)
    f1, f2 = func(x1), func(x2)
    for _ in range(iterations):
        if f1 < f2:
            a, x1, f1 = x1, x2, f2
            x2 = a + g * (b - a)
            f2 = func(x2)
        else:
            b, x2, f2 = x2, x1, f1
            x1 = b - g * (b - a)
            f1 = func(x1)
    return 0.5 * (a + b)


def sample_rate_from_times(time_s):
    """Sample rate and start time of an evenly spaced column of sample times.

    Parameters
    ----------
    time_s : array_like
        Sample times, strictly increasing and evenly spaced to within a quarter of a
        sample interval [s].

    Returns
    -------
    tuple of float
        ``(sample_rate_hz, start_time_s)`` [Hz], [s].

    Raises
    ------
    ValueError
        Fewer than two times, non-finite or non-increasing times, or uneven spacing.
    """
    t = np.asarray(time_s, dtype=float).ravel()
    if t.size < 2:
        raise ValueError("need at least two sample times")
    if not np.all(np.isfinite(t)):
        raise ValueError("the sample times contain NaN or infinite values")
    not_later = t[1:] <= t[:-1]
    if np.any(not_later):
        k = int(np.flatnonzero(not_later)[0]) + 1
        raise ValueError(f"sample times must increase: sample {k + 1} is not later than {k}")
    return even_rate_from_times(t)


def even_rate_from_times(time_s):
    """:func:`sample_rate_from_times` for times already known to be finite and increasing
    (a reader that has checked them itself, naming the line); same result, same errors for
    uneven spacing."""
    t = np.asarray(time_s, dtype=float)
    if t.ndim != 1:
        t = t.ravel()
    if t.size < 2:
        raise ValueError("need at least two sample times")
    rate = (t.size - 1) / (t[-1] - t[0])
    # the largest distance from the even grid t[0] + k/rate, in sample intervals; worked
    # out in slices that stay in the processor's cache (max(|x|)*rate is max(|x|*rate))
    worst = 0.0
    step = 1 << 16
    for lo in range(0, t.size, step):
        grid = np.arange(lo, min(lo + step, t.size), dtype=float)
        grid /= rate
        grid += t[0]
        np.subtract(t[lo : lo + step], grid, out=grid)
        worst = max(worst, float(np.max(np.abs(grid, out=grid))))
    worst *= rate
    if worst > 0.25:
        raise ValueError(
            f"sample times are not evenly spaced (one is {worst:.2f} sample intervals off an "
            "even grid); give the sample rate instead or resample the capture"
        )
    return float(rate), float(t[0])


@dataclass(frozen=True)
class CaptureAnalysis:
    """Figures of one capture, from :func:`analyse` or :class:`CaptureAccumulator`.

    Aggregate values are over all analysed windows, which together hold ``cycles`` whole
    mains cycles.

    Attributes
    ----------
    sample_rate_hz : float
        Sampling rate [Hz].
    frequency_hz : float
        Mean mains frequency over the analysed cycles [Hz].
    cycles : int
        Whole mains cycles analysed [1].
    windows : int
        Number of analysis windows [1].
    window_cycles : int
        Cycles per window (10 at 50 Hz, 12 at 60 Hz, or all cycles of a short capture) [1].
    v_rms, i_rms : float
        True RMS voltage [V] and current [A].
    p_w : float
        Active power, mean of v*i, positive = import [W].
    s_va : float
        Apparent power V_rms*I_rms [VA].
    power_factor : float
        True power factor P/S [1].
    displacement_pf : float
        cos(phi1) between the voltage and current fundamentals [1]; NaN if the current has
        no fundamental.
    phase_deg : float
        Signed angle of the current fundamental relative to the voltage fundamental,
        -180...180, positive when the current leads [deg]; NaN if there is no fundamental.
    v1_rms, i1_rms : float
        RMS of the fundamentals, RMS-averaged over windows [V], [A].
    thd_v_pct, thd_i_pct : float
        Total harmonic distortion over orders 2...``thd_max_order`` relative to the
        fundamental [%].
    thd_max_order : int
        Highest order included in THD (40, or less when the sampling rate cannot resolve 40).
    direction : str
        ``'import'``, ``'export'`` or ``'none'`` (|P| below max(5 W, 2 % of S)).
    harmonic_orders : tuple of int
        Orders 2...40.
    i_harmonics_a, v_harmonics_v : tuple of float or None
        RMS value of each order, RMS-averaged over windows [A], [V]; None above the Nyquist
        limit.
    window_start_s : tuple of float
        Start of each window, on the time axis of the input [s].
    window_v_rms, window_i_rms, window_p_w : tuple of float
        Per-window V_rms [V], I_rms [A] and P [W].
    irregular_cycles : int
        Cycles rejected because their length was far from the expected period (glitches in
        the voltage); the windows around them were dropped [1].
    """

    sample_rate_hz: float
    frequency_hz: float
    cycles: int
    windows: int
    window_cycles: int
    v_rms: float
    i_rms: float
    p_w: float
    s_va: float
    power_factor: float
    displacement_pf: float
    phase_deg: float
    v1_rms: float
    i1_rms: float
    thd_v_pct: float
    thd_i_pct: float
    thd_max_order: int
    direction: str
    harmonic_orders: tuple[int, ...]
    i_harmonics_a: tuple[float | None, ...]
    v_harmonics_v: tuple[float | None, ...]
    window_start_s: tuple[float, ...]
    window_v_rms: tuple[float, ...]
    window_i_rms: tuple[float, ...]
    window_p_w: tuple[float, ...]
    irregular_cycles: int


class CaptureAccumulator:
    """Analyse a capture fed in chunks of any size, in bounded memory.

    Feed ``(voltage, current)`` chunks with :meth:`add`, then call :meth:`result`. Samples
    are processed internally in fixed blocks counted from the first sample, so the figures
    do not depend on how the data was chunked: :func:`analyse` is this class fed one chunk.

    Memory stays at a few blocks of samples plus four numbers per window, so an hour at
    10 kS/s is fine.

    Parameters
    ----------
    sample_rate_hz : float
        Sampling rate, at least 400 Hz [Hz].
    start_time_s : float, default 0
        Time of the first sample, only used for ``window_start_s`` [s].
    window_cycles : int, optional
        Cycles per window; default 10 below 55 Hz and 12 above (IEC 61000-4-7, from memory).
    max_order : int, default 40
        Highest harmonic order [1].

    References
    ----------
    See the module docstring: IEEE 1459-2010, IEC 61000-4-7, IEEE 1057.
    """

    def __init__(self, sample_rate_hz, *, start_time_s=0.0, window_cycles=None,
                 max_order=MAX_ORDER):
        rate = float(sample_rate_hz)
        if not (math.isfinite(rate) and rate >= _MIN_RATE_HZ):
            raise ValueError(
                f"sample rate {sample_rate_hz!r} Hz is too low: at least "
                f"{_MIN_RATE_HZ:.0f} samples per second are needed"
            )
        if window_cycles is not None and (int(window_cycles) != window_cycles
                                          or window_cycles < 1):
            raise ValueError(f"window_cycles must be a positive integer, got {window_cycles!r}")
        if int(max_order) != max_order or not 1 <= max_order <= MAX_ORDER:
            raise ValueError(f"max_order must be an integer 1...{MAX_ORDER}, got {max_order!r}")
        self._rate = rate
        self._t0 = float(start_time_s)
        self._window_cycles_opt = None if window_cycles is None else int(window_cycles)
        self._max_order = int(max_order)
        self._tune_n = max(8, int(round(_TUNE_S * rate)))
        self._block = max(1 << 16, 2 * self._tune_n)
        self._pending: list[tuple[np.ndarray, np.ndarray]] = []
        self._pending_n = 0
        self._received = 0
        self._processed = 0
        self._buf_v = np.empty(0)
        self._buf_i = np.empty(0)
        self._buf0 = 0
        self._tuned = False
        self._result: CaptureAnalysis | None = None
        # totals over windows
        self._sum_v2 = 0.0
        self._sum_i2 = 0.0
        self._sum_vi = 0.0
        self._sum_len = 0.0
        self._cycles = 0
        self._windows = 0
        self._cross = 0j
        self._series: list[tuple[float, float, float, float]] = []
        self._irregular = 0
        self._open: list[float] = []
        self._due: list[tuple[float, float, int]] = []

    def add(self, voltage_v, current_a):
        """Append a chunk of samples.

        Parameters
        ----------
        voltage_v : array_like
            Voltage samples [V].
        current_a : array_like
            Current samples, same length [A].
        """
        if self._result is not None:
            raise RuntimeError("result() was already called; start a new accumulator")
        v = np.asarray(voltage_v, dtype=float).ravel()
        i = np.asarray(current_a, dtype=float).ravel()
        if v.shape != i.shape:
            raise ValueError(
                f"voltage and current chunks differ in length ({v.size} and {i.size})"
            )
        if not (np.all(np.isfinite(v)) and np.all(np.isfinite(i))):
            raise ValueError(
                f"the samples contain NaN or infinite values (near sample {self._received + 1})"
            )
        if v.size == 0:
            return
        self._pending.append((v, i))
        self._pending_n += v.size
        self._received += v.size
        while self._received >= self._processed + self._block:
            self._advance(self._processed + self._block, final=False)

    def result(self):
        """Finish the analysis and return it.

        Returns
        -------
        CaptureAnalysis

        Raises
        ------
        ValueError
            Fewer than two whole mains cycles, no recognisable mains voltage, no regular run
            of cycles, or a current that is zero throughout.
        """
        if self._result is None:
            if self._received == 0:
                raise ValueError("no samples were given")
            self._advance(self._received, final=True)
            self._result = self._summary()
        return self._result

    # -- internal pipeline -------------------------------------------------------------

    def _advance(self, end, final):
        """Move samples up to absolute index ``end`` into the buffer and process them."""
        self._take_pending(end - self._processed)
        self._processed = end
        if not self._tuned:
            self._tune()
        if end - self._half > self._y_next:
            self._scan(end)
        if final and self._windows == 0:
            if self._received > self._fallback_limit:
                raise ValueError(
                    f"no run of {self._window_cycles} regular mains cycles found: the voltage "
                    f"zero crossings are irregular ({self._irregular} irregular cycles)"
                )
            self._short_capture_window()
        self._trim()

    def _take_pending(self, count):
        vs, is_ = [], []
        need = count
        while need > 0:
            v, i = self._pending[0]
            if v.size <= need:
                self._pending.pop(0)
                vs.append(v)
                is_.append(i)
                need -= v.size
            else:
                vs.append(v[:need])
                is_.append(i[:need])
                self._pending[0] = (v[need:], i[need:])
                need = 0
        self._pending_n -= count
        self._buf_v = np.concatenate([self._buf_v, *vs])
        self._buf_i = np.concatenate([self._buf_i, *is_])

    def _tune(self):
        """Find the frequency and amplitude from the first stretch; set up the tracker."""
        n = min(self._tune_n, self._buf_v.size)
        fit = fit_mains_sine(self._rate, self._buf_v[:n], max_duration_s=_TUNE_S)
        f = fit.frequency_hz
        self._period = self._rate / f  # samples per cycle
        if self._window_cycles_opt is not None:
            self._window_cycles = self._window_cycles_opt
        else:
            self._window_cycles = 10 if f < _WINDOW_SPLIT_HZ else 12
        # DC removal by a centred moving mean over about one cycle, then a light low-pass
        # over about 1/16 cycle; both kernels are symmetric, so the crossings are not delayed.
        self._len_dc = 2 * int(self._period / 2) + 1
        self._len_lp = 2 * int(self._period / 32) + 1
        self._half = (self._len_dc - 1) // 2 + (self._len_lp - 1) // 2
        self._hyst = _HYSTERESIS * fit.amplitude
        # orders the sampling can resolve, with 2 % margin for frequency drift
        nyquist = self._rate / 2.0
        self._orders = max(1, min(self._max_order, int(nyquist / (1.02 * f))))
        self._vh2 = np.zeros(self._orders)
        self._ih2 = np.zeros(self._orders)
        self._y_next = self._half
        self._state = 0
        self._last_y = None
        self._last_zero = None
        self._last_gap = None
        self._fallback_limit = int(math.ceil((self._window_cycles + 4) * self._period))
        self._tuned = True

    def _scan(self, end):
        """Find rising zero crossings of the filtered voltage for samples up to ``end``."""
        a = self._y_next
        b = end - self._half
        seg0 = a - self._half
        x = self._buf_v[seg0 - self._buf0 : end - self._buf0]
        x = x - x.mean()
        k = (self._len_dc - 1) // 2
        d = x[k : x.size - k] - _centred_mean(x, self._len_dc)
        y = _centred_mean(d, self._len_lp)
        h = self._hyst
        # Hysteresis: the state is +1 above h, -1 below -h and otherwise the last of those;
        # a crossing is counted where it turns from -1 to +1, that is at an entry above h
        # whose latest earlier entry (above h or below -h) was below -h.
        above = y > h
        below = y < -h
        rises = _entries(above)
        falls = _entries(below)
        fall_at = np.full(rises.size, -1, dtype=np.intp)  # latest fall before each rise
        if falls.size:
            last_fall = np.searchsorted(falls, rises) - 1
            fall_at[last_fall >= 0] = falls[last_fall[last_fall >= 0]]
        rise_before = np.empty_like(rises)
        rise_before[:1] = -1
        rise_before[1:] = rises[:-1]
        after_fall = fall_at > rise_before
        if rises.size and fall_at[0] < 0 and self._state == -1:
            after_fall[0] = True  # the state carried from the last block was -1
        events = rises[after_fall]
        if rises.size or falls.size:
            self._state = 1 if (rises[-1] if rises.size else -1) > (
                falls[-1] if falls.size else -1) else -1
        # rising zero crossings of y, interpolated between the samples either side
        negative = y < 0
        up = np.flatnonzero(negative[:-1] & ~negative[1:]) + 1
        prev = y[up - 1]
        if self._last_y is not None and self._last_y < 0 and y[0] >= 0:
            up = np.concatenate(([0], up))
            prev = np.concatenate(([self._last_y], prev))
        up_pos = a + up - 1 + prev / (prev - y[up])
        # each counted crossing is at the latest zero crossing of y up to it (from an
        # earlier block when there is none yet in this one)
        last_up = np.searchsorted(up, events, side="right") - 1
        positions = up_pos[np.maximum(last_up, 0)] if up.size else np.zeros(events.size)
        earlier = last_up < 0
        if earlier.any():
            if self._last_zero is None:
                positions = positions[~earlier]
            else:
                positions[earlier] = self._last_zero
        self._crossings(positions)
        self._last_y = float(y[-1])
        if up.size:
            self._last_zero = float(up_pos[-1])
        self._y_next = b
        self._flush()

    def _crossings(self, positions):
        """Take rising zero crossings, in order: all at once when every cycle is regular."""
        if not positions.size:
            return
        if not self._open:  # the very first crossing
            self._crossing(float(positions[0]))
            positions = positions[1:]
        if self._open and positions.size:
            chain = np.concatenate(([self._open[-1]], positions))
            gaps = np.diff(chain)
            jumps = np.abs(np.diff(gaps))
            if self._last_gap:
                jumps = np.concatenate(([abs(gaps[0] - self._last_gap)], jumps))
            period = self._period
            if (gaps.min() >= _CYCLE_MIN_RATIO * period
                    and gaps.max() <= _CYCLE_MAX_RATIO * period
                    and not (jumps.size and jumps.max() > _CYCLE_STEP * period)):
                self._last_gap = float(gaps[-1])
                open_ = self._open + positions.tolist()
                wc = self._window_cycles
                done = (len(open_) - 1) // wc
                for k in range(done):
                    self._window(open_[k * wc], open_[(k + 1) * wc], wc)
                self._open = open_[done * wc :]
                return
        for pos in positions.tolist():
            self._crossing(pos)

    def _crossing(self, pos):
        if self._open:
            gap = pos - self._open[-1]
            jump = abs(gap - self._last_gap) if self._last_gap else 0.0
            self._last_gap = gap
            if (not _CYCLE_MIN_RATIO * self._period <= gap <= _CYCLE_MAX_RATIO * self._period
                    or jump > _CYCLE_STEP * self._period):
                self._irregular += 1
                self._last_gap = None
                self._open = [pos]
                return
        self._open.append(pos)
        if len(self._open) == self._window_cycles + 1:
            self._window(self._open[0], self._open[-1], self._window_cycles)
            self._open = [pos]

    def _short_capture_window(self):
        """One window of all the whole cycles of a capture too short for a full window."""
        n = self._received
        fit = fit_mains_sine(self._rate, self._buf_v, max_duration_s=n / self._rate + 1.0)
        f = fit.frequency_hz
        held = n * f / self._rate
        cycles = int(math.floor(held + 1e-3))
        if cycles < 2:
            raise ValueError(
                f"the capture holds {held:.2f} mains cycles ({1000 * n / self._rate:.1f} ms "
                f"at {f:.2f} Hz); at least two whole cycles are needed"
            )
        length = min(cycles * self._rate / f, float(n))
        start = -0.5 + (n - length) / 2.0
        self._window_cycles = cycles
        self._window(start, start + length, cycles)
        self._flush()

    def _window(self, pa, pb, cycles):
        """Queue one window from sample position ``pa`` to ``pb`` (``cycles`` cycles); the
        queued windows are integrated together by :meth:`_flush`."""
        self._due.append((pa, pb, cycles))

    def _flush(self):
        """Integrate the queued windows, in batches of bounded size, in their order.

        Each sample stands for the interval of half a sample either side of it; the window
        weights are the overlaps of those intervals with [pa, pb].
        """
        due, self._due = self._due, []
        k = 0
        while k < len(due):
            span = max(1.0, due[k][1] - due[k][0] + 2.0)
            batch = due[k : k + max(1, int(_BATCH_SAMPLES // span))]
            k += len(batch)
            pa, pb, cycles = (np.array(col, dtype=float) for col in zip(*batch, strict=True))
            sv2, si2, svi, vh, ih = _window_sums(self._buf_v, self._buf_i, self._buf0, pa,
                                                 pb, cycles, self._orders)
            length = pb - pa
            self._vh2 += 0.5 * np.sum(np.abs(vh) ** 2, axis=0)
            self._ih2 += 0.5 * np.sum(np.abs(ih) ** 2, axis=0)
            self._cross += complex(np.sum(ih[:, 0] * np.conj(vh[:, 0])))
            starts = (self._t0 + pa / self._rate).tolist()
            v_rms = np.sqrt(sv2 / length).tolist()
            i_rms = np.sqrt(si2 / length).tolist()
            p = (svi / length).tolist()
            for j, (_, _, c) in enumerate(batch):
                self._sum_v2 += float(sv2[j])
                self._sum_i2 += float(si2[j])
                self._sum_vi += float(svi[j])
                self._sum_len += float(length[j])
                self._cycles += c
                self._windows += 1
                self._series.append((starts[j], v_rms[j], i_rms[j], p[j]))

    def _trim(self):
        if not self._tuned or (self._windows == 0 and self._processed <= self._fallback_limit):
            return
        keep = self._y_next - self._half
        if self._open:
            keep = min(keep, int(math.floor(self._open[0] + 0.5)))
        drop = keep - self._buf0
        if drop > 0:
            self._buf_v = self._buf_v[drop:].copy()
            self._buf_i = self._buf_i[drop:].copy()
            self._buf0 = keep

    def _summary(self):
        length = self._sum_len
        v_rms = math.sqrt(self._sum_v2 / length)
        i_rms = math.sqrt(self._sum_i2 / length)
        if i_rms == 0.0:
            raise ValueError("the current is zero throughout the capture: no current to analyse")
        p = self._sum_vi / length
        s = v_rms * i_rms
        v1 = math.sqrt(self._vh2[0] / self._windows)
        i1 = math.sqrt(self._ih2[0] / self._windows)
        if i1 > 1e-9 * i_rms:
            phase = math.degrees(math.atan2(self._cross.imag, self._cross.real))
            dpf = math.cos(math.radians(phase))
        else:
            phase = dpf = math.nan
        thd_v = 100.0 * math.sqrt(float(self._vh2[1:].sum()) / self._vh2[0])
        thd_i = 100.0 * math.sqrt(float(self._ih2[1:].sum()) / self._ih2[0]) if i1 > 0 else math.nan
        orders = tuple(range(2, MAX_ORDER + 1))
        i_h = tuple(math.sqrt(self._ih2[h - 1] / self._windows) if h <= self._orders else None
                    for h in orders)
        v_h = tuple(math.sqrt(self._vh2[h - 1] / self._windows) if h <= self._orders else None
                    for h in orders)
        starts, wv, wi, wp = (tuple(col) for col in zip(*self._series, strict=True))
        return CaptureAnalysis(
            sample_rate_hz=self._rate,
            frequency_hz=self._cycles * self._rate / length,
            cycles=self._cycles,
            windows=self._windows,
            window_cycles=self._window_cycles,
            v_rms=v_rms,
            i_rms=i_rms,
            p_w=p,
            s_va=s,
            power_factor=p / s,
            displacement_pf=dpf,
            phase_deg=phase,
            v1_rms=v1,
            i1_rms=i1,
            thd_v_pct=thd_v,
            thd_i_pct=thd_i,
            thd_max_order=self._orders,
            direction=power_direction(p, s),
            harmonic_orders=orders,
            i_harmonics_a=i_h,
            v_harmonics_v=v_h,
            window_start_s=starts,
            window_v_rms=wv,
            window_i_rms=wi,
            window_p_w=wp,
            irregular_cycles=self._irregular,
        )


def _window_sums(v, i, first, pa, pb, cycles, orders):
    """Weighted sums of a batch of windows of the samples ``v``, ``i``.

    ``v[0]`` is sample number ``first``; window k runs from sample position ``pa[k]`` to
    ``pb[k]`` and holds ``cycles[k]`` cycles. Each sample stands for half a sample either
    side of it, weighted by its overlap with [pa, pb] (1 inside, a fraction at the ends).

    Returns ``(sv2, si2, svi, vh, ih)``: per window the sums of w*v*v, w*i*i and w*v*i, and
    the peak phasors ``(2/length) * sum w*x*exp(-1j*h*theta*(n - pa))`` of orders
    h = 1...``orders`` with ``theta = 2*pi*cycles/length``, as (windows, orders) arrays.

    The harmonic sums are evaluated by splitting the sample index m = a*B + b: for each
    order, ``sum_b exp(-1j*h*theta*b) * sum_a exp(-1j*h*theta*B*a) * y[a*B + b]``. The inner
    sums of all orders are one real matrix product per window and signal, and only about
    2*sqrt(length) powers per order are needed instead of ``length``.
    """
    count = pa.size
    n_lo = np.floor(pa + 0.5).astype(np.intp)
    n_hi = np.ceil(pb - 0.5).astype(np.intp)
    size = n_hi - n_lo + 1
    span = int(size.max())
    step = int(math.ceil(math.sqrt(span)))
    blocks = -(-span // step)
    # y[k, 0] and y[k, 1]: the samples of window k, zero after its last one
    y = np.zeros((count, 2, blocks * step))
    for k, (lo, n) in enumerate(zip((n_lo - first).tolist(), size.tolist(), strict=True)):
        y[k, 0, :n] = v[lo : lo + n]
        y[k, 1, :n] = i[lo : lo + n]
    # the sums over the whole samples, less the parts of the two end samples outside the
    # window (weights 1 inside, the overlaps at the ends)
    rows = np.arange(count)
    w_first = _overlap(n_lo.astype(float), pa, pb)
    w_last = _overlap(n_hi.astype(float), pa, pb)
    first_xy = y[:, :, 0].copy()  # (count, 2)
    last_xy = y[rows, :, size - 1]
    sv2, si2, svi = (
        np.einsum("ij,ij->i", y[:, a], y[:, b])
        - (1.0 - w_first) * first_xy[:, a] * first_xy[:, b]
        - (1.0 - w_last) * last_xy[:, a] * last_xy[:, b]
        for a, b in ((0, 0), (1, 1), (0, 1)))
    y[:, :, 0] *= w_first[:, None]
    y[rows, :, size - 1] *= w_last[:, None]

    length = pb - pa
    theta = (2.0 * math.pi) * cycles / length
    h = np.arange(1, orders + 1, dtype=float)
    small = _powers(np.exp(-1j * (theta[:, None] * h)), step)  # (count, step, orders)
    big = _powers(np.exp(-1j * (theta[:, None] * (h * step))), blocks)  # (count, blocks, orders)
    # inner[k, s, b, h] = sum_a y[k, s, a*step + b] * big[k, a, h]
    y_t = y.reshape(count, 2, blocks, step).transpose(0, 1, 3, 2)
    inner = np.matmul(y_t, big.view(float)[:, None]).view(complex)
    sums = np.einsum("ksbh,kbh->ksh", inner, small)
    # the sums above count from sample n_lo; the phase from pa, and the scale to peak values
    shift = _powers(np.exp(-1j * theta * (n_lo - pa))[:, None], orders + 1)[:, 1:, 0]
    sums *= (shift * (2.0 / length)[:, None])[:, None, :]
    return sv2, si2, svi, sums[:, 0], sums[:, 1]


def _overlap(n, pa, pb):
    """Weight of sample ``n``: overlap of [n - 1/2, n + 1/2] with [pa, pb], 0...1."""
    return np.clip(np.minimum(pb, n + 0.5) - np.maximum(pa, n - 0.5), 0.0, 1.0)


def _powers(base, count):
    """``out[:, k, :] = base**k`` for k = 0...count-1, by block doubling (few, large
    multiplications instead of one per power)."""
    out = np.empty((base.shape[0], count, base.shape[1]), dtype=complex)
    out[:, 0] = 1.0
    k = 1
    while k < count:
        m = min(k, count - k)
        top = out[:, k - 1] * base  # base**k
        np.multiply(out[:, :m], top[:, None, :], out=out[:, k : k + m])
        k += m
    return out


def _entries(mask):
    """Indices where ``mask`` turns true (index 0 included when it starts true)."""
    starts = np.flatnonzero(mask[1:] & ~mask[:-1]) + 1
    if mask.size and mask[0]:
        starts = np.concatenate(([0], starts))
    return starts


def _centred_mean(x, length):
    """Moving mean over ``length`` (odd) samples, only where the window is complete."""
    c = np.empty(x.size + 1)
    c[0] = 0.0
    np.cumsum(x, out=c[1:])
    out = np.subtract(c[length:], c[:-length])
    out /= length
    return out


def analyse(time_s_or_rate_hz, voltage_v, current_a, *, window_cycles=None,
            max_order=MAX_ORDER):
    """Analyse a capture of mains voltage and current.

    RMS values, active and apparent power and the power factor over whole cycles [1]_;
    fundamentals and harmonics by DFT over windows of 10 cycles at 50 Hz or 12 at 60 Hz
    [2]_; THD over orders 2...40 [3]_. The frequency is tracked from the voltage zero
    crossings, so neither the sampling nor the mains need be steady or locked together.

    Parameters
    ----------
    time_s_or_rate_hz : float or array_like
        Either the sampling rate [Hz] or the sample times, evenly spaced [s].
    voltage_v : array_like
        Voltage samples [V].
    current_a : array_like
        Current samples, positive into the premises [A].
    window_cycles : int, optional
        Cycles per window; default 10 at 50 Hz and 12 at 60 Hz [1].
    max_order : int, default 40
        Highest harmonic order [1].

    Returns
    -------
    CaptureAnalysis

    Raises
    ------
    ValueError
        Fewer than two whole cycles, arrays of different lengths, NaN, uneven sample times,
        no recognisable mains voltage, or a current that is zero throughout.

    References
    ----------
    .. [1] IEEE Std 1459-2010, clauses on single-phase RMS, active, apparent power and
       power factor.
    .. [2] IEC 61000-4-7:2002+A1:2008, window of 10/12 cycles (from memory).
    .. [3] IEC 61000-2-2:2002, THD up to order 40 (from memory).
    """
    v = np.asarray(voltage_v, dtype=float)
    i = np.asarray(current_a, dtype=float)
    if v.ndim != 1 or i.ndim != 1 or v.size != i.size:
        raise ValueError(
            f"voltage and current must be 1-D arrays of equal length, got shapes "
            f"{v.shape} and {i.shape}"
        )
    if np.ndim(time_s_or_rate_hz) == 0:
        rate, start = float(time_s_or_rate_hz), 0.0
    else:
        t = np.asarray(time_s_or_rate_hz, dtype=float)
        if t.shape != v.shape:
            raise ValueError(f"time has {t.size} samples but voltage has {v.size}")
        rate, start = sample_rate_from_times(t)
    acc = CaptureAccumulator(rate, start_time_s=start, window_cycles=window_cycles,
                             max_order=max_order)
    acc.add(v, i)
    return acc.result()


def analyse_chunks(sample_rate_hz, chunks: Iterable, *, start_time_s=0.0, window_cycles=None,
                   max_order=MAX_ORDER):
    """Analyse a capture given as an iterable of ``(voltage_v, current_a)`` chunks.

    Same figures as :func:`analyse` on the concatenated samples, in bounded memory.

    Parameters
    ----------
    sample_rate_hz : float
        Sampling rate [Hz].
    chunks : iterable of (array_like, array_like)
        Voltage [V] and current [A] chunks, in order.
    start_time_s : float, default 0
        Time of the first sample [s].
    window_cycles : int, optional
        Cycles per window [1].
    max_order : int, default 40
        Highest harmonic order [1].

    Returns
    -------
    CaptureAnalysis

    References
    ----------
    As for :func:`analyse`.
    """
    acc = CaptureAccumulator(sample_rate_hz, start_time_s=start_time_s,
                             window_cycles=window_cycles, max_order=max_order)
    for v, i in chunks:
        acc.add(v, i)
    return acc.result()


def power_direction(p_w, s_va):
    """Direction of power flow from the sign of P.

    Parameters
    ----------
    p_w : float
        Active power, positive = import [W].
    s_va : float
        Apparent power [VA].

    Returns
    -------
    str
        ``'import'`` when P > 0, ``'export'`` when P < 0, ``'none'`` when |P| is below
        max(5 W, 2 % of S) (our default threshold, no standard behind it).
    """
    threshold = max(_DIRECTION_MIN_W, _DIRECTION_MIN_FRACTION * abs(s_va))
    if abs(p_w) < threshold:
        return "none"
    return "import" if p_w > 0 else "export"


def cycle_powers(sample_rate_hz, voltage_v, current_a, frequency_hz):
    """Active power of each whole mains cycle, for the cycle-to-cycle spread of P.

    Cycles are laid end to end from the first sample at the given frequency; each sample
    stands for half a sample interval either side, and a sample cut by a cycle boundary
    counts in proportion (as in the windows of :class:`CaptureAccumulator`).

    Parameters
    ----------
    sample_rate_hz : float
        Sampling rate [Hz].
    voltage_v, current_a : array_like
        Samples [V], [A].
    frequency_hz : float
        Mains frequency [Hz].

    Returns
    -------
    numpy.ndarray
        P of each whole cycle, positive = import [W].

    References
    ----------
    .. [1] IEEE Std 1459-2010, active power as the mean of v*i over whole cycles.
    """
    v = np.asarray(voltage_v, dtype=float)
    i = np.asarray(current_a, dtype=float)
    period = float(sample_rate_hz) / float(frequency_hz)
    count = int(math.floor((v.size - 1) / period))
    out = np.empty(count)
    p = v * i
    for k in range(count):
        a, b = k * period, (k + 1) * period
        n_lo = int(math.floor(a + 0.5))
        n_hi = min(int(math.ceil(b - 0.5)), v.size - 1)
        n = np.arange(n_lo, n_hi + 1, dtype=float)
        w = np.clip(np.minimum(b, n + 0.5) - np.maximum(a, n - 0.5), 0.0, 1.0)
        out[k] = float(w @ p[n_lo:n_hi + 1]) / (b - a)
    return out


def dc_removed_power_factor(voltage_v, current_a):
    """Power factor with the DC offsets of both channels removed: P_ac / (V_ac * I_ac).

    Parameters
    ----------
    voltage_v, current_a : array_like
        Samples over whole cycles [V], [A].

    Returns
    -------
    tuple of float
        (power factor without DC [1], DC offset of the voltage [V], of the current [A]).

    References
    ----------
    .. [1] IEEE Std 1459-2010: the DC component is treated apart from the AC quantities.
    """
    v = np.asarray(voltage_v, dtype=float)
    i = np.asarray(current_a, dtype=float)
    vdc, idc = float(v.mean()), float(i.mean())
    va, ia = v - vdc, i - idc
    s = math.sqrt(float(va @ va) / v.size) * math.sqrt(float(ia @ ia) / i.size)
    pf = float(va @ ia) / v.size / s if s > 0 else math.nan
    return pf, vdc, idc
