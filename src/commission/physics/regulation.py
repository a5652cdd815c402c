"""Statistics of the grid power while the diverter regulates in automatic mode.

With surplus available and the element able to take it, a diverter steers the grid reading
into a dead band around zero. From a log of grid power this module gives the mean, the
spread (95th percentile of |grid|), the energy still exported and imported, and the
settling time after the largest step. Numbers only: the verdict is the regulation
analysis's (``commission.analyses.regulation``).

Sign of power: positive = import, for a clamp on the incoming supply conductor with its
arrow pointing into the premises; export is negative.

References
----------
.. [1] Common practice of the trade: a dead band of the order of +-50 W as a one-minute
   mean; no standard sets it.
.. [2] Settling time as in control engineering: the time after a disturbance until the
   response enters and stays within a tolerance band (e.g. K. Ogata, *Modern Control
   Engineering*, transient-response specifications).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

DEFAULT_SETTLING_BAND_W = 50.0  # common practice, see the module references
DEFAULT_SETTLING_HOLD_S = 10.0  # our default


@dataclass(frozen=True)
class RegulationStats:
    """Statistics of a grid-power log.

    Attributes
    ----------
    duration_s : float
        Span of the log [s].
    samples : int
        Readings [1].
    mean_grid_w : float
        Time-weighted mean of grid power (trapezoidal) [W].
    p95_abs_grid_w : float
        95th percentile of |grid| over the readings (linear interpolation) [W].
    exported_wh : float
        Energy exported, integral of max(-grid, 0) [Wh].
    imported_wh : float
        Energy imported, integral of max(grid, 0) [Wh].
    largest_step_w : float
        Largest change between consecutive readings, signed [W].
    step_time_s : float
        Time of the reading just after the largest step [s].
    settling_s : float or None
        Time from ``step_time_s`` until the grid reading enters the band
        +-``settling_band_w`` and stays in it for ``settling_hold_s``; 0 if it is already
        in the band and stays; None if that does not happen before the log ends [s].
    settling_band_w : float
        Band used for ``settling_s`` [W].
    mean_diverter_w : float or None
        Time-weighted mean diverted power, when logged [W].
    diverted_wh : float or None
        Energy sent to the element, when logged [Wh].
    """

    duration_s: float
    samples: int
    mean_grid_w: float
    p95_abs_grid_w: float
    exported_wh: float
    imported_wh: float
    largest_step_w: float
    step_time_s: float
    settling_s: float | None
    settling_band_w: float
    mean_diverter_w: float | None
    diverted_wh: float | None


def grid_statistics(time_s, grid_w, *, diverter_w=None,
                    settling_band_w=DEFAULT_SETTLING_BAND_W,
                    settling_hold_s=DEFAULT_SETTLING_HOLD_S):
    """Mean, spread, energies and settling time of a grid-power log.

    Energies integrate the piecewise-linear curve through the readings, split where it
    crosses zero, so import and export are apportioned exactly for that curve.

    Settling time: the largest step is the largest absolute change between two consecutive
    readings; it happens at the later of the two. From there, the settling time is the time
    until the reading first enters the band |grid| <= ``settling_band_w`` and then stays in
    it for at least ``settling_hold_s``. If the log ends before that, it is None.

    Parameters
    ----------
    time_s : array_like
        Times of the readings, increasing [s].
    grid_w : array_like
        Grid power, positive = import [W].
    diverter_w : array_like, optional
        Power sent to the element at the same times [W].
    settling_band_w : float, default 50
        Half-width of the band around zero for the settling time (common practice) [W].
    settling_hold_s : float, default 10
        How long the reading must stay in the band to count as settled (our default) [s].

    Returns
    -------
    RegulationStats

    Raises
    ------
    ValueError
        Fewer than 2 readings, NaN, or times that do not increase.

    References
    ----------
    .. [1] Common practice (dead band); Ogata (settling time).
    """
    t = np.asarray(time_s, dtype=float).ravel()
    g = np.asarray(grid_w, dtype=float).ravel()
    if t.size != g.size:
        raise ValueError(f"{t.size} times but {g.size} grid readings")
    if t.size < 2:
        raise ValueError("a regulation log needs at least 2 readings")
    if not (np.all(np.isfinite(t)) and np.all(np.isfinite(g))):
        raise ValueError("the regulation log contains NaN or infinite values")
    dt = np.diff(t)
    if np.any(dt <= 0):
        raise ValueError("the times of a regulation log must increase")
    if not settling_band_w > 0:
        raise ValueError("settling band must be positive")
    duration = float(t[-1] - t[0])

    imported_j, exported_j = _split_energy_j(dt, g[:-1], g[1:])
    mean = (imported_j - exported_j) / duration
    p95 = float(np.percentile(np.abs(g), 95.0))

    steps = np.diff(g)
    k = int(np.argmax(np.abs(steps)))
    step_w = float(steps[k])
    step_time = float(t[k + 1])
    settling = _settling_time(t[k + 1:], g[k + 1:], settling_band_w, settling_hold_s)

    mean_div = diverted = None
    if diverter_w is not None:
        d = np.asarray(diverter_w, dtype=float).ravel()
        if d.size != t.size:
            raise ValueError(f"{t.size} times but {d.size} diverter readings")
        if not np.all(np.isfinite(d)):
            raise ValueError("the diverter column contains NaN or infinite values")
        energy = float(np.sum(0.5 * (d[:-1] + d[1:]) * dt))
        mean_div = energy / duration
        diverted = energy / 3600.0

    return RegulationStats(
        duration_s=duration,
        samples=int(t.size),
        mean_grid_w=float(mean),
        p95_abs_grid_w=p95,
        exported_wh=exported_j / 3600.0,
        imported_wh=imported_j / 3600.0,
        largest_step_w=step_w,
        step_time_s=step_time,
        settling_s=settling,
        settling_band_w=float(settling_band_w),
        mean_diverter_w=mean_div,
        diverted_wh=diverted,
    )


def _split_energy_j(dt, g0, g1):
    """Integrals of max(g, 0) and max(-g, 0) of the linear pieces between readings [J]."""
    same = g0 * g1 >= 0
    area = 0.5 * (g0 + g1) * dt
    imp = np.where(same & (g0 + g1 > 0), area, 0.0)
    exp_ = np.where(same & (g0 + g1 < 0), -area, 0.0)
    cross = ~same
    if np.any(cross):
        a, b, d = g0[cross], g1[cross], dt[cross]
        frac = a / (a - b)  # share of the interval before the zero
        first = 0.5 * a * frac * d
        second = 0.5 * b * (1.0 - frac) * d
        imp[cross] = np.maximum(first, 0.0) + np.maximum(second, 0.0)
        exp_[cross] = -np.minimum(first, 0.0) - np.minimum(second, 0.0)
    return float(imp.sum()), float(exp_.sum())


def _settling_time(t, g, band, hold):
    inside = np.abs(g) <= band
    start = None
    for k in range(t.size):
        if inside[k]:
            if start is None:
                start = k
            if t[k] - t[start] >= hold:
                return float(t[start] - t[0])
        else:
            start = None
    return None
