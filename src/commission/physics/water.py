"""Properties of liquid water and the heating of a storage cylinder.

Density and isobaric heat capacity of liquid water at atmospheric pressure, 0...100 deg C,
as Chebyshev series in ``x = (T - 50 degC)/50 K``. The coefficients are our own least-squares
fit to IAPWS-95 values at 101.325 kPa, computed with the ``iapws`` package (1.5.5) at 200
points from 0 to 99.5 deg C; the fit stays within 3e-7 (density) and 5e-6 (heat capacity)
of those values. A cylinder runs at a few bar, which changes both by under 0.05 %.

Names: ``*_c`` temperatures [deg C], ``*_k`` temperature differences [K], ``*_l`` volumes
[L], ``*_kg`` masses, ``*_w`` powers, ``*_j`` energies, ``*_k_per_h`` heating rates.

The mass of water is fixed when the cylinder is filled: use the density at the filling
temperature. The heat capacity is taken at the mean temperature of the heating.

References
----------
.. [1] W. Wagner, A. Pruss, "The IAPWS formulation 1995 for the thermodynamic properties of
   ordinary water substance for general and scientific use", J. Phys. Chem. Ref. Data 31,
   387 (2002); IAPWS R6-95(2018).
.. [2] F. P. Incropera, D. P. DeWitt, *Fundamentals of Heat and Mass Transfer*, sensible
   heat E = m*cp*dT (any edition).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.polynomial import chebyshev

# Chebyshev coefficients in x = (T - 50)/50, fitted by us to IAPWS-95 at 101.325 kPa
_DENSITY_KG_M3 = (983.667121984, -21.2552777396, -4.46454307842, 0.485809711013,
                  -0.101286767632, 0.0210794724841, -0.00494388450461, 0.0011444571203,
                  -0.000290851019627)
_HEAT_CAPACITY_J_KG_K = (4197.18307864, 3.42613225534, 17.9305528243, -4.58308721681,
                         2.25096284637, -0.664978880048, 0.17600481989, -0.0469107130766,
                         0.0162855265192)
_T_MIN_C = 0.0
_T_MAX_C = 100.0
_S_PER_H = 3600.0


def _scaled(temp_c):
    t = np.asarray(temp_c, dtype=float)
    if not np.all(np.isfinite(t)) or np.any((t < _T_MIN_C) | (t > _T_MAX_C)):
        raise ValueError(f"liquid-water properties cover 0 to 100 degC, got {temp_c!r}")
    return (t - 50.0) / 50.0


def density_kg_per_m3(temp_c):
    """Density of liquid water at atmospheric pressure.

    Parameters
    ----------
    temp_c : numeric
        Water temperature, 0...100 [degC].

    Returns
    -------
    numeric
        Density [kg/m^3] (999.84 at 0 degC, 999.10 at 15 degC, 983.20 at 60 degC).

    References
    ----------
    .. [1] IAPWS-95 (Wagner & Pruss 2002), fitted by us; see the module docstring.
    """
    out = chebyshev.chebval(_scaled(temp_c), _DENSITY_KG_M3)
    return float(out) if np.ndim(out) == 0 else out


def heat_capacity_j_per_kg_k(temp_c):
    """Isobaric specific heat capacity of liquid water at atmospheric pressure.

    Parameters
    ----------
    temp_c : numeric
        Water temperature, 0...100 [degC].

    Returns
    -------
    numeric
        cp [J/(kg K)] (4219 at 0 degC, minimum 4178 near 35 degC).

    References
    ----------
    .. [1] IAPWS-95 (Wagner & Pruss 2002), fitted by us; see the module docstring.
    """
    out = chebyshev.chebval(_scaled(temp_c), _HEAT_CAPACITY_J_KG_K)
    return float(out) if np.ndim(out) == 0 else out


def mass_kg(volume_l, fill_temp_c):
    """Mass of water in a vessel, fixed by its volume at the filling temperature.

    Parameters
    ----------
    volume_l : numeric
        Water volume at filling [L].
    fill_temp_c : numeric
        Temperature of the water when filled [degC].

    Returns
    -------
    numeric
        Mass [kg] (150 L at 15 degC: 149.87 kg).

    References
    ----------
    .. [1] IAPWS-95 density (Wagner & Pruss 2002).
    """
    if np.any(np.asarray(volume_l) <= 0):
        raise ValueError("volume must be positive")
    return volume_l * 1e-3 * density_kg_per_m3(fill_temp_c)


def energy_to_heat_j(mass_kg, start_c, end_c):
    """Energy to heat water from ``start_c`` to ``end_c``, with cp at the mean temperature:
    ``E = m * cp((T1 + T2)/2) * (T2 - T1)``.

    Parameters
    ----------
    mass_kg : numeric
        Mass of water [kg].
    start_c : numeric
        Start temperature [degC].
    end_c : numeric
        End temperature [degC].

    Returns
    -------
    numeric
        Energy [J]; divide by 3.6e6 for kWh (150 kg 15 -> 55 degC: about 6.96 kWh).

    References
    ----------
    .. [1] Incropera & DeWitt, sensible heat; cp from IAPWS-95.
    """
    mean = 0.5 * (np.asarray(start_c, dtype=float) + np.asarray(end_c, dtype=float))
    return mass_kg * heat_capacity_j_per_kg_k(mean) * (end_c - start_c)


def heating_rate_k_per_h(power_w, mass_kg, temp_c):
    """Heating rate of well-mixed water with no losses: ``dT/dt = P/(m*cp)``.

    Parameters
    ----------
    power_w : numeric
        Heating power delivered to the water [W].
    mass_kg : numeric
        Mass of water heated [kg].
    temp_c : numeric
        Mean water temperature, for cp [degC].

    Returns
    -------
    numeric
        Heating rate [K/h] (2.4 kW into 200 kg: about 10.3 K/h).

    References
    ----------
    .. [1] Incropera & DeWitt, lumped energy balance; cp from IAPWS-95.
    """
    if np.any(np.asarray(mass_kg) <= 0):
        raise ValueError("mass must be positive")
    return power_w / (mass_kg * heat_capacity_j_per_kg_k(temp_c)) * _S_PER_H


def heating_time_s(power_w, mass_kg, start_c, end_c):
    """Time to heat water from ``start_c`` to ``end_c`` at constant power with no losses.

    Parameters
    ----------
    power_w : numeric
        Heating power [W].
    mass_kg : numeric
        Mass of water [kg].
    start_c : numeric
        Start temperature [degC].
    end_c : numeric
        End temperature [degC].

    Returns
    -------
    numeric
        Time [s] (150 kg 15 -> 55 degC at 2.85 kW: about 2 h 26 min).

    References
    ----------
    .. [1] Incropera & DeWitt, sensible heat; cp from IAPWS-95.
    """
    if np.any(np.asarray(power_w) <= 0):
        raise ValueError("power must be positive")
    return energy_to_heat_j(mass_kg, start_c, end_c) / power_w


def delivered_power_w(rate_k_per_h, mass_kg, temp_c):
    """Power reaching the water, inferred from a measured heating rate:
    ``P = (dT/dt) * m * cp``.

    Parameters
    ----------
    rate_k_per_h : numeric
        Measured heating rate [K/h].
    mass_kg : numeric
        Mass of water heated [kg].
    temp_c : numeric
        Mean water temperature, for cp [degC].

    Returns
    -------
    numeric
        Power [W].

    References
    ----------
    .. [1] Incropera & DeWitt, lumped energy balance; cp from IAPWS-95.
    """
    return rate_k_per_h / _S_PER_H * mass_kg * heat_capacity_j_per_kg_k(temp_c)


def rate_from_readings_k_per_h(start_temp_c, end_temp_c, duration_s):
    """Average heating rate from two readings, as the walk records them.

    Parameters
    ----------
    start_temp_c : float
        First reading [degC].
    end_temp_c : float
        Second reading [degC].
    duration_s : float
        Time between them [s].

    Returns
    -------
    float
        Heating rate [K/h].
    """
    if not duration_s > 0:
        raise ValueError("the time between the readings must be positive")
    return (end_temp_c - start_temp_c) / duration_s * _S_PER_H


@dataclass(frozen=True)
class HeatingRateFit:
    """Straight-line fit over the steady part of a heating log.

    Attributes
    ----------
    rate_k_per_h : float
        Fitted slope [K/h].
    rate_stderr_k_per_h : float
        Standard error of the slope, assuming independent residuals [K/h].
    residual_rms_k : float
        RMS of the residuals about the line [K].
    rise_k : float
        Temperature rise over the fitted span, from the line [K].
    fit_start_s, fit_end_s : float
        Span of the log used, on the log's time axis [s].
    start_temp_c, end_temp_c : float
        Line values at the start and end of the span [degC].
    mean_temp_c : float
        Mean temperature over the span, for cp [degC].
    points : int
        Log points used [1].
    warmup_dropped_s : float
        Length dropped at the start as warm-up [s].
    plateau_from_s : float or None
        Time from which the log no longer rises (thermostat opened, or the end of heating),
        if such a plateau was found [s].
    """

    rate_k_per_h: float
    rate_stderr_k_per_h: float
    residual_rms_k: float
    rise_k: float
    fit_start_s: float
    fit_end_s: float
    start_temp_c: float
    end_temp_c: float
    mean_temp_c: float
    points: int
    warmup_dropped_s: float
    plateau_from_s: float | None


def fit_heating_rate(time_s, temp_c, *, warmup_s=None, plateau_margin_k=None,
                     detect_plateau=True):
    """Fit the heating rate over the steady part of a (time, temperature) log.

    Steps: (1) estimate the sensor noise from second differences; (2) find where the log
    first comes within ``plateau_margin_k`` of its highest (lightly smoothed) value -- after
    that the element has stopped heating (thermostat open) or the log is flat, so it is left
    out; (3) drop a warm-up at the start, by default the first 10 % of the rising span, while
    the sensor and the water around it catch up; (4) least-squares line through the rest.

    A low or noisy result is the caller's to judge: compare ``residual_rms_k`` and
    ``rate_stderr_k_per_h`` with the rise. Consecutive residuals of a real log are often
    correlated, so the standard error is optimistic.

    Parameters
    ----------
    time_s : array_like
        Times of the readings, increasing [s].
    temp_c : array_like
        Water temperatures [degC].
    warmup_s : float, optional
        Length to drop at the start [s]; default 10 % of the rising span (our default).
    plateau_margin_k : float, optional
        Margin below the top that marks the plateau [K]; default max(0.3 K, 3 x noise)
        (our default).
    detect_plateau : bool, default True
        Set False to fit the whole log after the warm-up.

    Returns
    -------
    HeatingRateFit

    Raises
    ------
    ValueError
        Fewer than 3 readings, NaN, or times that do not increase.

    References
    ----------
    .. [1] Ordinary least squares; see e.g. N. R. Draper, H. Smith, *Applied Regression
       Analysis* (slope standard error).
    """
    t = np.asarray(time_s, dtype=float).ravel()
    y = np.asarray(temp_c, dtype=float).ravel()
    if t.size != y.size:
        raise ValueError(f"{t.size} times but {y.size} temperatures")
    if t.size < 3:
        raise ValueError("a heating log needs at least 3 readings")
    if not (np.all(np.isfinite(t)) and np.all(np.isfinite(y))):
        raise ValueError("the heating log contains NaN or infinite values")
    if np.any(np.diff(t) <= 0):
        raise ValueError("the times of a heating log must increase")

    noise = _noise_from_second_differences(y)
    margin = max(0.3, 3.0 * noise) if plateau_margin_k is None else float(plateau_margin_k)
    smooth = _running_mean(y, 5)
    top = float(smooth.max())
    first_top = int(np.flatnonzero(smooth >= top - margin)[0])
    plateau_from = None
    end = t.size
    # only a plateau if something of the log is left after reaching the top
    if detect_plateau and 2 <= first_top < t.size - 2:
        end = first_top + 1
        plateau_from = float(t[first_top])
    if end < 3:
        end = t.size
    t_rise, y_rise = t[:end], y[:end]
    span = float(t_rise[-1] - t_rise[0])
    drop = 0.1 * span if warmup_s is None else float(warmup_s)
    keep = t_rise >= t_rise[0] + drop
    if np.count_nonzero(keep) < 3:
        keep = np.ones(t_rise.size, dtype=bool)
        drop = 0.0
    tk, yk = t_rise[keep], y_rise[keep]
    tm = tk.mean()
    dt = tk - tm
    sxx = float(dt @ dt)
    slope = float(dt @ (yk - yk.mean())) / sxx
    intercept = float(yk.mean())
    resid = yk - (intercept + slope * dt)
    dof = max(1, tk.size - 2)
    s2 = float(resid @ resid) / dof
    return HeatingRateFit(
        rate_k_per_h=slope * _S_PER_H,
        rate_stderr_k_per_h=math.sqrt(s2 / sxx) * _S_PER_H,
        residual_rms_k=math.sqrt(s2),
        rise_k=slope * float(tk[-1] - tk[0]),
        fit_start_s=float(tk[0]),
        fit_end_s=float(tk[-1]),
        start_temp_c=intercept + slope * float(tk[0] - tm),
        end_temp_c=intercept + slope * float(tk[-1] - tm),
        mean_temp_c=intercept,
        points=int(tk.size),
        warmup_dropped_s=float(drop),
        plateau_from_s=plateau_from,
    )


def _noise_from_second_differences(y):
    """Robust noise estimate: white noise of sigma gives second differences of sigma*sqrt(6);
    the median absolute value of a normal variable is 0.6745 sigma."""
    if y.size < 4:
        return 0.0
    d2 = np.diff(y, 2)
    return float(np.median(np.abs(d2)) / (0.6745 * math.sqrt(6.0)))


def _running_mean(y, width):
    """Centred running mean over ``width`` points, narrowing at the ends."""
    c = np.concatenate(([0.0], np.cumsum(y)))
    half = width // 2
    idx = np.arange(y.size)
    lo = np.maximum(idx - half, 0)
    hi = np.minimum(idx + half + 1, y.size)
    return (c[hi] - c[lo]) / (hi - lo)
