"""Heatsink soak: first-order thermal model, steady-state prediction and junction estimate.

The power stage and its heatsink, at constant loss, warm like a single lumped heat capacity
behind a thermal resistance: ``T(t) = T_inf - (T_inf - T0)*exp(-t/tau)``. A soak log at full
output with the enclosure closed gives T0, T_inf and tau by nonlinear least squares; the
steady state is then scaled to the worst ambient and supply the site will see.

Names: ``fit_first_order`` estimates the model, ``predict_worst_case`` scales it,
``soak_verdict`` judges it against a limit, ``conduction_loss_w`` and
``junction_temperature_c`` estimate the semiconductor junction.

References
----------
.. [1] F. P. Incropera, D. P. DeWitt, *Fundamentals of Heat and Mass Transfer*, lumped
   capacitance method (any edition).
.. [2] D. M. Bates, D. G. Watts, *Nonlinear Regression Analysis and Its Applications*,
   Wiley 1988 (linearised confidence intervals; separable least squares).
.. [3] M. Abramowitz, I. A. Stegun, *Handbook of Mathematical Functions*, 26.7.3-26.7.5
   (Student t distribution; from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

# Fit quality below which a soak is judged 'review' rather than trusted: our defaults.
DEFAULT_MAX_RMSE_K = 1.0
# Largest relative standard error of tau still trusted for extrapolating to the steady
# state: beyond it the linearised interval of T_inf misses the truth far more often than
# 5 % (seen in Monte Carlo on soaks under a third of a time constant); our default.
DEFAULT_MAX_TAU_REL_STDERR = 0.25
_MIN_POINTS = 6
_Z975 = 1.959963984540054  # standard normal 97.5 % quantile


@dataclass(frozen=True)
class FirstOrderFit:
    """Fit of ``T(t) = T_inf - (T_inf - T0)*exp(-(t - t_start)/tau)`` to a soak log.

    Attributes
    ----------
    t0_c : float
        Fitted temperature at the first reading [degC].
    t_inf_c : float
        Fitted steady-state temperature [degC].
    tau_s : float
        Time constant [s].
    t_inf_ci_c : tuple of float
        95 % confidence interval of ``t_inf_c`` (linearised, Student t) [degC].
    t_inf_stderr_k : float
        Standard error of ``t_inf_c`` [K].
    tau_stderr_s : float
        Standard error of ``tau_s`` [s].
    rmse_k : float
        Root mean square of the residuals [K].
    points : int
        Readings used [1].
    duration_s : float
        Span of the log [s].
    time_constants_covered : float
        ``duration_s / tau_s`` [1].
    max_logged_c : float
        Highest logged temperature [degC].
    tau_at_bound : bool
        True when tau sits at the edge of the searched range: the log shows no usable
        curvature and T_inf is not determined.
    """

    t0_c: float
    t_inf_c: float
    tau_s: float
    t_inf_ci_c: tuple[float, float]
    t_inf_stderr_k: float
    tau_stderr_s: float
    rmse_k: float
    points: int
    duration_s: float
    time_constants_covered: float
    max_logged_c: float
    tau_at_bound: bool


def fit_first_order(time_s, temp_c):
    """Fit the first-order step response to a soak log by nonlinear least squares.

    For a fixed tau the model is linear in T0 and T_inf, so the sum of squares is minimised
    over log(tau) alone (a grid from half the shortest step to 100 x the log length, then
    golden-section refinement), solving T0, T_inf by linear least squares at each trial
    (separable least squares [2]_). The 95 % interval of T_inf comes from the covariance
    ``s^2 (J^T J)^-1`` of all three parameters at the optimum and the Student t quantile
    with n - 3 degrees of freedom [3]_. It assumes independent residuals; a real log with
    slow wander gives an optimistic interval.

    Parameters
    ----------
    time_s : array_like
        Times of the readings, increasing [s].
    temp_c : array_like
        Heatsink temperatures [degC].

    Returns
    -------
    FirstOrderFit

    Raises
    ------
    ValueError
        Fewer than 6 readings, NaN, or times that do not increase.

    References
    ----------
    .. [1] Incropera & DeWitt, lumped capacitance.
    .. [2] Bates & Watts 1988.
    .. [3] Abramowitz & Stegun 26.7 (from memory).
    """
    t_abs = np.asarray(time_s, dtype=float).ravel()
    y = np.asarray(temp_c, dtype=float).ravel()
    if t_abs.size != y.size:
        raise ValueError(f"{t_abs.size} times but {y.size} temperatures")
    if t_abs.size < _MIN_POINTS:
        raise ValueError(f"a soak log needs at least {_MIN_POINTS} readings")
    if not (np.all(np.isfinite(t_abs)) and np.all(np.isfinite(y))):
        raise ValueError("the soak log contains NaN or infinite values")
    steps = np.diff(t_abs)
    if np.any(steps <= 0):
        raise ValueError("the times of a soak log must increase")
    t = t_abs - t_abs[0]
    duration = float(t[-1])
    lo = math.log(0.5 * float(steps.min()))
    hi = math.log(100.0 * duration)

    def sse(log_tau):
        return _separable(t, y, math.exp(log_tau))[0]

    grid = np.linspace(lo, hi, 241)
    values = np.array([sse(g) for g in grid])
    k = int(np.argmin(values))
    a = grid[max(k - 1, 0)]
    b = grid[min(k + 1, grid.size - 1)]
    log_tau = _golden_min(sse, a, b)
    at_bound = k in (0, grid.size - 1) and (log_tau - lo < 0.02 or hi - log_tau < 0.02)
    tau = math.exp(log_tau)
    ssr, t0, tinf = _separable(t, y, tau)
    n = y.size
    dof = n - 3
    s2 = ssr / dof
    e = np.exp(-t / tau)
    jac = np.column_stack((e, 1.0 - e, (t0 - tinf) * e * t / tau**2))
    jtj = jac.T @ jac
    try:
        cov = s2 * np.linalg.inv(jtj)
        var_tinf = float(cov[1, 1])
        var_tau = float(cov[2, 2])
    except np.linalg.LinAlgError:
        var_tinf = var_tau = math.inf
    if not (math.isfinite(var_tinf) and var_tinf >= 0):
        var_tinf = math.inf
    if not (math.isfinite(var_tau) and var_tau >= 0):
        var_tau = math.inf
    se_tinf = math.sqrt(var_tinf)
    half = student_t_quantile(0.975, dof) * se_tinf
    return FirstOrderFit(
        t0_c=float(t0),
        t_inf_c=float(tinf),
        tau_s=tau,
        t_inf_ci_c=(float(tinf - half), float(tinf + half)),
        t_inf_stderr_k=se_tinf,
        tau_stderr_s=math.sqrt(var_tau),
        rmse_k=math.sqrt(ssr / n),
        points=int(n),
        duration_s=duration,
        time_constants_covered=duration / tau,
        max_logged_c=float(y.max()),
        tau_at_bound=bool(at_bound),
    )


def _separable(t, y, tau):
    """Sum of squares and the linear parameters (T0, T_inf) for a given tau."""
    e = np.exp(-t / tau)
    basis = np.column_stack((e, 1.0 - e))
    coef, *_ = np.linalg.lstsq(basis, y, rcond=None)
    r = y - basis @ coef
    return float(r @ r), float(coef[0]), float(coef[1])


def _golden_min(func, lo, hi, iterations=80):
    g = (math.sqrt(5.0) - 1.0) / 2.0
    a, b = lo, hi
    x1 = b - g * (b - a)
    x2 = a + g * (b - a)
    f1, f2 = func(x1), func(x2)
    for _ in range(iterations):
        if f1 > f2:
            a, x1, f1 = x1, x2, f2
            x2 = a + g * (b - a)
            f2 = func(x2)
        else:
            b, x2, f2 = x2, x1, f1
            x1 = b - g * (b - a)
            f1 = func(x1)
    return 0.5 * (a + b)


def student_t_quantile(p, dof):
    """Quantile of Student's t distribution.

    For integer ``dof`` up to 200 the exact distribution function (finite series,
    Abramowitz & Stegun 26.7.3 for odd and 26.7.4 for even degrees of freedom) is inverted
    by bisection; above that, the Cornish-Fisher expansion about the normal quantile
    (26.7.5) is used, good to better than 1e-6 there.

    Parameters
    ----------
    p : float
        Probability, 0.5 <= p < 1 [1].
    dof : int
        Degrees of freedom, >= 1 [1].

    Returns
    -------
    float
        t such that P(T <= t) = p [1].

    References
    ----------
    .. [1] Abramowitz & Stegun, 26.7.3-26.7.5 (from memory).
    """
    nu = int(dof)
    if nu != dof or nu < 1:
        raise ValueError(f"degrees of freedom must be a positive integer, got {dof!r}")
    if not 0.5 <= p < 1.0:
        raise ValueError("p must lie in [0.5, 1)")
    if p == 0.5:
        return 0.0
    if nu > 200:
        z = _normal_quantile(p)
        return (z + (z**3 + z) / (4 * nu)
                + (5 * z**5 + 16 * z**3 + 3 * z) / (96 * nu**2)
                + (3 * z**7 + 19 * z**5 + 17 * z**3 - 15 * z) / (384 * nu**3)
                + (79 * z**9 + 776 * z**7 + 1482 * z**5 - 1920 * z**3 - 945 * z)
                / (92160 * nu**4))
    target = 2.0 * p - 1.0  # P(|T| < t)
    lo, hi = 0.0, 1.0
    while _t_central(hi, nu) < target:
        hi *= 2.0
    for _ in range(100):
        mid = 0.5 * (lo + hi)
        if _t_central(mid, nu) < target:
            lo = mid
        else:
            hi = mid
    return 0.5 * (lo + hi)


def _t_central(t, nu):
    """P(|T| < t) for Student's t with nu degrees of freedom (A&S 26.7.3, 26.7.4)."""
    theta = math.atan(t / math.sqrt(nu))
    c2 = math.cos(theta) ** 2
    s = math.sin(theta)
    if nu % 2 == 1:
        if nu == 1:
            return 2.0 * theta / math.pi
        term = math.cos(theta)
        total = term
        for k in range(3, nu - 1, 2):  # coefficients 2/3, 2*4/(3*5), ...
            term *= (k - 1) / k * c2
            total += term
        return 2.0 / math.pi * (theta + s * total)
    term = 1.0
    total = 1.0
    for k in range(2, nu - 1, 2):  # coefficients 1/2, 1*3/(2*4), ...
        term *= (k - 1) / k * c2
        total += term
    return s * total


def _normal_quantile(p):
    """Standard normal quantile by bisection on erf (accurate to 1e-12)."""
    lo, hi = 0.0, 10.0
    for _ in range(100):
        mid = 0.5 * (lo + hi)
        if 0.5 * (1.0 + math.erf(mid / math.sqrt(2.0))) < p:
            lo = mid
        else:
            hi = mid
    return 0.5 * (lo + hi)


@dataclass(frozen=True)
class SteadyStatePrediction:
    """Steady-state heatsink temperature at the worst ambient and supply.

    Attributes
    ----------
    predicted_max_c : float
        ``T_amb_worst + F*(T_inf - T_amb)`` [degC].
    predicted_max_ci_c : tuple of float
        The same applied to both ends of the 95 % interval of T_inf [degC].
    rise_k : float
        Fitted steady rise above the soak ambient, ``T_inf - T_amb`` [K].
    """

    predicted_max_c: float
    predicted_max_ci_c: tuple[float, float]
    rise_k: float


def predict_worst_case(fit, ambient_c, *, worst_ambient_c=None, rise_factor=1.0):
    """Scale a soak's steady state to the worst ambient and supply.

    ``T_max = T_amb_worst + F*(T_inf - T_amb)``. At +10 % supply voltage a resistive load
    draws +10 % current, so conduction loss and the rise grow by roughly 15-20 %: F of
    1.15-1.20 covers it (CHECKS.md, our estimate from the loss model).

    Parameters
    ----------
    fit : FirstOrderFit
        Result of :func:`fit_first_order`.
    ambient_c : float
        Ambient temperature during the soak [degC].
    worst_ambient_c : float, optional
        Highest ambient the site will see; default ``ambient_c`` [degC].
    rise_factor : float, default 1.0
        Factor on the temperature rise for the worst supply [1].

    Returns
    -------
    SteadyStatePrediction

    References
    ----------
    .. [1] Incropera & DeWitt: a fixed thermal resistance makes the rise proportional to
       the loss and independent of ambient.
    """
    if not rise_factor > 0:
        raise ValueError("rise factor must be positive")
    worst = ambient_c if worst_ambient_c is None else worst_ambient_c
    lo, hi = fit.t_inf_ci_c

    def scale(tc):
        return worst + rise_factor * (tc - ambient_c)

    return SteadyStatePrediction(
        predicted_max_c=float(scale(fit.t_inf_c)),
        predicted_max_ci_c=(float(scale(lo)), float(scale(hi))),
        rise_k=float(fit.t_inf_c - ambient_c),
    )


@dataclass(frozen=True)
class SoakVerdict:
    """Verdict of a soak against a temperature limit.

    Attributes
    ----------
    verdict : str
        ``'pass'``, ``'fail'`` or ``'review'``.
    reason : str
        One line a person can act on.
    """

    verdict: str
    reason: str


def soak_verdict(fit, prediction, limit_c, *, max_rmse_k=DEFAULT_MAX_RMSE_K,
                 max_tau_rel_stderr=DEFAULT_MAX_TAU_REL_STDERR):
    """Judge a soak against the heatsink limit.

    In this order: ``fail`` when a logged value already reaches the limit; ``review`` when
    the fit is poor (RMSE above ``max_rmse_k``, tau at the edge of its range, T_inf
    undetermined, or tau known only to worse than ``max_tau_rel_stderr``); ``fail`` when
    even the lower bound of the predicted maximum exceeds the limit; ``pass`` when the
    upper bound is below it; otherwise ``review`` (the interval straddles the limit,
    typically a soak well under two time constants).

    Parameters
    ----------
    fit : FirstOrderFit
        Result of :func:`fit_first_order`.
    prediction : SteadyStatePrediction
        Result of :func:`predict_worst_case`.
    limit_c : float
        Highest permissible heatsink temperature [degC].
    max_rmse_k : float, default 1.0
        Largest RMSE of a fit still trusted (our default) [K].
    max_tau_rel_stderr : float, default 0.25
        Largest standard error of tau, relative to tau, still trusted for the
        extrapolation (our default) [1].

    Returns
    -------
    SoakVerdict

    References
    ----------
    .. [1] Rule from CHECKS.md (heatsink of the power stage), our own.
    """
    lo, hi = prediction.predicted_max_ci_c
    shown = (f"predicted steady state {prediction.predicted_max_c:.1f} degC "
             f"(95 % interval {lo:.1f} to {hi:.1f} degC) against the {limit_c:.1f} degC limit")
    if fit.max_logged_c >= limit_c:
        return SoakVerdict("fail", f"a logged value ({fit.max_logged_c:.1f} degC) already "
                                   f"reaches the {limit_c:.1f} degC limit; improve cooling "
                                   "or derate the diverter")
    if fit.rmse_k > max_rmse_k or fit.tau_at_bound or not math.isfinite(fit.t_inf_stderr_k):
        return SoakVerdict("review", f"the first-order model does not fit the log well (RMSE "
                                     f"{fit.rmse_k:.2f} K, tau {fit.tau_s:.0f} s); check the "
                                     "log for power or enclosure changes and repeat the soak")
    if fit.tau_stderr_s > max_tau_rel_stderr * fit.tau_s:
        return SoakVerdict("review", f"the soak is too short to extrapolate: it covers "
                                     f"{fit.time_constants_covered:.1f} fitted time constants "
                                     f"and tau ({fit.tau_s:.0f} s) is uncertain by "
                                     f"{100 * fit.tau_stderr_s / fit.tau_s:.0f} %; extend the "
                                     "soak to at least two time constants")
    if lo > limit_c:
        return SoakVerdict("fail", f"{shown}: the heatsink will overheat even though every "
                                   "logged value is below the limit; improve cooling or derate")
    if hi < limit_c:
        return SoakVerdict("pass", shown)
    return SoakVerdict("review", f"{shown}: the interval straddles the limit (soak covers "
                                 f"{fit.time_constants_covered:.1f} time constants); extend "
                                 "the soak to at least two time constants")


def conduction_loss_w(i_avg_a, i_rms_a, v_t0_v, r_t_ohm):
    """Conduction loss of a thyristor or triac from its datasheet model:
    ``P = V_T0*I_avg + r_T*I_rms^2``.

    ``I_avg`` is the mean of |i| over the whole cycle: ``2*sqrt(2)/pi * I_rms`` (about
    0.90 I_rms) at full conduction, less at partial conduction.

    Parameters
    ----------
    i_avg_a : float
        Mean of the absolute current over a cycle [A].
    i_rms_a : float
        RMS current [A].
    v_t0_v : float
        Threshold voltage of the on-state model, at high junction temperature [V].
    r_t_ohm : float
        Slope resistance of the on-state model [ohm].

    Returns
    -------
    float
        Conduction loss [W].

    References
    ----------
    .. [1] The on-state model V_T = V_T0 + r_T*i_T of thyristor and triac datasheets (e.g.
       any manufacturer's application note on thyristor power loss).
    """
    return v_t0_v * i_avg_a + r_t_ohm * i_rms_a**2


def full_conduction_i_avg_a(i_rms_a):
    """Mean of |i| for a sine at full conduction: ``2*sqrt(2)/pi * I_rms``.

    Parameters
    ----------
    i_rms_a : float
        RMS current [A].

    Returns
    -------
    float
        Rectified mean current [A].
    """
    return 2.0 * math.sqrt(2.0) / math.pi * i_rms_a


def junction_temperature_c(heatsink_c, loss_w, rth_jc_k_per_w, rth_cs_k_per_w):
    """Junction temperature from the heatsink temperature:
    ``Tj = T_hs + P_loss*(Rth_j-c + Rth_c-s)``.

    Parameters
    ----------
    heatsink_c : float
        Heatsink temperature next to the device [degC].
    loss_w : float
        Device loss, e.g. from :func:`conduction_loss_w` [W].
    rth_jc_k_per_w : float
        Junction-to-case thermal resistance, full-cycle value [K/W].
    rth_cs_k_per_w : float
        Case-to-heatsink thermal resistance (interface) [K/W].

    Returns
    -------
    float
        Junction temperature [degC].

    References
    ----------
    .. [1] Incropera & DeWitt, thermal resistances in series; datasheet Rth values.
    """
    return heatsink_c + loss_w * (rth_jc_k_per_w + rth_cs_k_per_w)
