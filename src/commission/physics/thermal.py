"""Heatsink soak: first-order thermal model, steady-state prediction and junction estimate.

The power stage and its heatsink, at constant loss, warm like a single lumped heat capacity
behind a thermal resistance: ``T(t) = T_inf - (T_inf - T0)*exp(-t/tau)``. A soak log at full
output with the enclosure closed gives T0, T_inf and tau by nonlinear least squares; the
steady state is then scaled to the worst ambient and supply the site will see.

Names: ``fit_first_order`` and ``fit_two_constant`` estimate the models,
``lag1_autocorrelation`` and ``information_criteria`` compare them, ``predict_worst_case``
scales a steady state, ``conduction_loss_w`` and ``junction_temperature_c`` estimate the
semiconductor junction. Numbers only: the verdict is the soak analysis's
(``commission.analyses.soak``).

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
    """Sum of squares and the linear parameters (T0, T_inf) for a given tau.

    y = T0·e + T_inf·(1 − e) = T_inf + (T0 − T_inf)·e: a straight line in e, solved by its
    normal equations (ordinary least squares)."""
    e = np.exp(-t / tau)
    n = e.size
    se, sy = float(e.sum()), float(y.sum())
    see, sey = float(e @ e), float(e @ y)
    den = n * see - se * se
    if not den > 1e-12 * n * max(see, 1e-300):
        coef, *_ = np.linalg.lstsq(np.column_stack((e, 1.0 - e)), y, rcond=None)
        t0, tinf = float(coef[0]), float(coef[1])
    else:
        slope = (n * sey - se * sy) / den  # T0 - T_inf
        tinf = (sy - slope * se) / n
        t0 = tinf + slope
    r = y - (tinf + (t0 - tinf) * e)
    return float(r @ r), t0, tinf


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
class TwoConstantFit:
    """Fit of ``T(t) = T_inf - A_fast*exp(-t/tau_fast) - A_slow*exp(-t/tau_slow)``.

    Attributes
    ----------
    t_inf_c : float
        Fitted steady state [degC] (or steady rise [K] when fitted on the rise).
    a_fast_k, a_slow_k : float
        Amplitudes of the fast and slow terms [K].
    tau_fast_s, tau_slow_s : float
        Time constants, fast < slow [s].
    t_inf_stderr_k : float
        Standard error of ``t_inf_c`` (linearised, all five parameters) [K]; infinite when
        the slow constant is not determined.
    rmse_k : float
        Root mean square of the residuals [K].
    sse_k2 : float
        Sum of squared residuals [K^2].
    points : int
        Readings [1].
    duration_s : float
        Span of the log [s].
    slow_at_bound : bool
        True when the slow constant ran to the edge of its range: the log is too short to
        show it, and ``t_inf_c`` is not determined.
    """

    t_inf_c: float
    a_fast_k: float
    tau_fast_s: float
    a_slow_k: float
    tau_slow_s: float
    t_inf_stderr_k: float
    rmse_k: float
    sse_k2: float
    points: int
    duration_s: float
    slow_at_bound: bool

    def model(self, time_s):
        """The fitted curve at ``time_s`` (from the first reading) [degC]."""
        t = np.asarray(time_s, dtype=float)
        return (self.t_inf_c - self.a_fast_k * np.exp(-t / self.tau_fast_s)
                - self.a_slow_k * np.exp(-t / self.tau_slow_s))


_SLOW_MAX_FACTOR = 20.0  # the slow constant is searched up to 20 x the log length


def fit_two_constant(time_s, temp_c):
    """Fit two time constants (heatsink and enclosure air) by nonlinear least squares.

    The sum-of-exponentials (Foster) form of a thermal network [1]_. For fixed time
    constants the model is linear in (T_inf, A_fast, A_slow), so a grid over both
    constants with linear least squares at each point (separable least squares [2]_)
    gives the start for ``scipy.optimize.least_squares`` on all five parameters (time
    constants as logarithms). The standard error of T_inf comes from ``s^2 (J^T J)^-1`` at
    the optimum [2]_.

    Parameters
    ----------
    time_s : array_like
        Times of the readings, increasing [s].
    temp_c : array_like
        Temperatures, or rises over ambient [degC] or [K].

    Returns
    -------
    TwoConstantFit

    Raises
    ------
    ValueError
        Fewer than 8 readings, NaN, or times that do not increase.

    References
    ----------
    .. [1] Transient thermal impedance Zth(t) = sum Ri (1 - exp(-t/tau_i)) of semiconductor
       datasheets (Foster network); Incropera & DeWitt for the lumped terms.
    .. [2] Bates & Watts 1988, separable least squares and linearised intervals.
    """
    from scipy.optimize import least_squares

    t_abs = np.asarray(time_s, dtype=float).ravel()
    y = np.asarray(temp_c, dtype=float).ravel()
    if t_abs.size != y.size:
        raise ValueError(f"{t_abs.size} times but {y.size} temperatures")
    if t_abs.size < 8:
        raise ValueError("a two-constant fit needs at least 8 readings")
    if not (np.all(np.isfinite(t_abs)) and np.all(np.isfinite(y))):
        raise ValueError("the soak log contains NaN or infinite values")
    steps = np.diff(t_abs)
    if np.any(steps <= 0):
        raise ValueError("the times of a soak log must increase")
    t = t_abs - t_abs[0]
    duration = float(t[-1])
    lo = math.log(max(0.5 * float(steps.min()), duration / 500.0))
    hi = math.log(_SLOW_MAX_FACTOR * duration)
    grid = np.linspace(lo, hi, 36)
    # Normal equations of the linear parameters for every pair of constants at once.
    e = np.exp(-t[None, :] / np.exp(grid)[:, None])  # (grid, n)
    gram, sums, ey = e @ e.T, e.sum(axis=1), e @ y
    ia, ib = np.triu_indices(grid.size, k=2)
    n_pts = float(t.size)
    mats = np.empty((ia.size, 3, 3))
    mats[:, 0, 0] = n_pts
    mats[:, 0, 1] = mats[:, 1, 0] = -sums[ia]
    mats[:, 0, 2] = mats[:, 2, 0] = -sums[ib]
    mats[:, 1, 1] = gram[ia, ia]
    mats[:, 2, 2] = gram[ib, ib]
    mats[:, 1, 2] = mats[:, 2, 1] = gram[ia, ib]
    rhs = np.column_stack((np.full(ia.size, y.sum()), -ey[ia], -ey[ib]))
    with np.errstate(all="ignore"):
        det = np.linalg.det(mats)
        ok = np.abs(det) > 1e-12 * np.abs(mats).max(axis=(1, 2)) ** 3
        coefs = np.zeros_like(rhs)
        coefs[ok] = np.linalg.solve(mats[ok], rhs[ok][..., None])[..., 0]
        sse = float(y @ y) - np.einsum("ij,ij->i", coefs, rhs)
    sse[~ok] = np.inf
    k = int(np.argmin(sse))
    coef, g1, g2 = coefs[k], grid[ia[k]], grid[ib[k]]

    def residuals(p):
        tinf, a1, a2, l1, l2 = p
        return y - (tinf - a1 * np.exp(-t / math.exp(l1)) - a2 * np.exp(-t / math.exp(l2)))

    start = np.array([coef[0], coef[1], coef[2], g1, g2])
    fit = least_squares(residuals, start, bounds=([-np.inf, -np.inf, -np.inf, lo, lo],
                                                  [np.inf, np.inf, np.inf, hi, hi]),
                        x_scale="jac", max_nfev=2000)
    tinf, a1, a2, l1, l2 = (float(x) for x in fit.x)
    if l1 > l2:
        a1, a2, l1, l2 = a2, a1, l2, l1
    r = residuals(np.array([tinf, a1, a2, l1, l2]))
    sse = float(r @ r)
    n = y.size
    at_bound = hi - l2 < 0.05
    jac = -_two_constant_jacobian(t, a1, a2, l1, l2)
    try:
        cov = (sse / max(1, n - 5)) * np.linalg.inv(jac.T @ jac)
        var = float(cov[0, 0])
    except np.linalg.LinAlgError:
        var = math.inf
    if not (math.isfinite(var) and var >= 0) or at_bound:
        var = math.inf
    return TwoConstantFit(
        t_inf_c=tinf, a_fast_k=a1, tau_fast_s=math.exp(l1), a_slow_k=a2,
        tau_slow_s=math.exp(l2), t_inf_stderr_k=math.sqrt(var), rmse_k=math.sqrt(sse / n),
        sse_k2=sse, points=int(n), duration_s=duration, slow_at_bound=bool(at_bound),
    )


def _two_constant_jacobian(t, a1, a2, l1, l2):
    """d(model)/d(T_inf, A1, A2, log tau1, log tau2)."""
    e1 = np.exp(-t / math.exp(l1))
    e2 = np.exp(-t / math.exp(l2))
    return np.column_stack((np.ones_like(t), -e1, -e2,
                            -a1 * e1 * t / math.exp(l1), -a2 * e2 * t / math.exp(l2)))


def first_order_model(fit, time_s):
    """The first-order curve of ``fit`` at ``time_s`` (from the first reading) [degC]."""
    t = np.asarray(time_s, dtype=float)
    return fit.t_inf_c - (fit.t_inf_c - fit.t0_c) * np.exp(-t / fit.tau_s)


def lag1_autocorrelation(residuals):
    """Lag-1 autocorrelation of residuals: near 0 for white noise, near 1 when a model
    misses a slow structure (Box & Jenkins, *Time Series Analysis*).

    Parameters
    ----------
    residuals : array_like
        Residuals in time order [K].

    Returns
    -------
    float
        r1 [1]; 0 for fewer than 3 values or all-zero residuals.
    """
    r = np.asarray(residuals, dtype=float)
    r = r - r.mean()
    den = float(r @ r)
    if r.size < 3 or den <= 0:
        return 0.0
    return float(r[:-1] @ r[1:]) / den


def information_criteria(sse, points, parameters):
    """Akaike and Bayesian information criteria of a least-squares fit with normal errors:
    ``AIC = n ln(SSE/n) + 2k``, ``BIC = n ln(SSE/n) + k ln n``.

    Parameters
    ----------
    sse : float
        Sum of squared residuals [K^2].
    points : int
        Readings n [1].
    parameters : int
        Fitted parameters k [1].

    Returns
    -------
    tuple of float
        (AIC, BIC) [1].

    References
    ----------
    .. [1] K. P. Burnham, D. R. Anderson, *Model Selection and Multimodel Inference*,
       2nd ed., Springer 2002, sections 2.2 and 6.4.
    """
    n = int(points)
    base = n * math.log(max(float(sse), 1e-12 * n) / n)
    return base + 2.0 * parameters, base + parameters * math.log(n)


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
