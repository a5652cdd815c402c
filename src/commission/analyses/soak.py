"""Heatsink soak: one or two time constants, an honest interval, and the verdict.

A heatsink in a closed enclosure heats as a network (CHECKS.md, "Heatsink soak with more
than one time constant"): the heatsink itself in minutes, the enclosure air and walls in
tens of minutes. Both models are fitted to the rise over ambient (logged ambient when the
log has it); two constants are chosen when the one-constant residuals show structure (lag-1
autocorrelation above the white-noise bound 2/√n, Box & Jenkins) and BIC favours them by
more than 2 (Kass & Raftery). The interval of the steady state is the chosen model's
linearised one, widened for correlated residuals (AR(1) variance factor (1+ρ)/(1−ρ)) and for
the model uncertainty (Akaike-weighted spread of the two estimates, Burnham & Anderson 2002,
eq. 4.9). A steady state is only pinned down once the log covers about three of the slowest
constant (e^-3 ≈ 5 % of the rise left): a shorter log is never ``pass``; it is ``review``
with how much longer to log (or ``fail`` when even the lower bound is over the limit).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from commission.analyses import (
    FAIL,
    PASS,
    REVIEW,
    Analysis,
    Finding,
    ReadSettings,
    SettingsError,
    reader_findings,
    resolution_finding,
    with_findings,
)

# Defaults, one place for the command, the check and the chart.
DEFAULT_RISE_FACTOR = 1.2  # +10 % supply voltage: conduction loss and rise +15-20 % (CHECKS.md)
DEFAULT_MAX_RMSE_K = 1.0  # our default: a poorer fit is not trusted
DEFAULT_MIN_COVERAGE = 3.0  # time constants a log must cover (CHECKS.md: e^-3, 5 % left)
BIC_MARGIN = 2.0  # "positive" evidence (Kass & Raftery 1995)
COARSE_K = 0.5  # a sensor stepping by 0.5 K or more is too coarse for the fit (our default)
MAX_AR1_FACTOR = 50.0

SRC_SOAK = ("one or two time constants (lumped capacitance, Incropera; Foster network of "
            "datasheets) fitted by least squares; model by residual autocorrelation and BIC; "
            "95 % interval widened for correlated residuals and model uncertainty (Burnham & "
            "Anderson); at least 3 of the slowest constant logged (CHECKS.md)")


@dataclass(frozen=True)
class SoakSettings:
    """Limit, ambient and scaling of a soak.

    ``ambient_c`` is needed unless the log has an ambient column (which then wins).
    """

    limit_c: float
    ambient_c: float | None = None
    worst_ambient_c: float | None = None
    rise_factor: float = DEFAULT_RISE_FACTOR
    max_rmse_k: float = DEFAULT_MAX_RMSE_K
    min_coverage: float = DEFAULT_MIN_COVERAGE


def analyse_soak(path, settings: SoakSettings, read: ReadSettings | None = None, *,
                 name: str | None = None) -> Analysis:
    """Read a soak log, fit one and two time constants, predict the worst case, judge it.

    Raises
    ------
    commission.captures.CaptureError, ValueError
        A log that cannot be read or fitted; one line.
    """
    import numpy as np

    from commission.captures import read_soak_log
    from commission.physics import thermal

    read = read or ReadSettings()
    if not settings.rise_factor > 0:
        raise SettingsError("the rise factor must be greater than zero, e.g. 1.2")
    log = read_soak_log(path, columns=read.columns, time_format=read.time_format, tz=read.tz,
                        name=name)
    t, temp = log.time_s, log.temp_c
    if log.ambient_c is not None:
        ambient = float(np.mean(log.ambient_c))
        rise = temp - log.ambient_c
        ambient_from = "logged"
    else:
        if settings.ambient_c is None:
            raise SettingsError(f"{log.source}: the log has no ambient column; give the "
                                "ambient temperature during the soak")
        ambient = float(settings.ambient_c)
        rise = temp - ambient
        ambient_from = "given"
    worst = ambient if settings.worst_ambient_c is None else float(settings.worst_ambient_c)
    one = thermal.fit_first_order(t, rise)
    resid_one = rise - thermal.first_order_model(one, t - t[0])
    r1_one = thermal.lag1_autocorrelation(resid_one)
    n = rise.size
    aic1, bic1 = thermal.information_criteria(one.rmse_k ** 2 * n, n, 3)
    two = None
    if n >= 12:
        try:
            two = thermal.fit_two_constant(t, rise)
        except (ValueError, ArithmeticError):
            two = None
    structured = r1_one > 2.0 / math.sqrt(n)
    aic2 = bic2 = math.inf
    if two is not None:
        aic2, bic2 = thermal.information_criteria(two.sse_k2, n, 5)
    use_two = two is not None and structured and bic2 < bic1 - BIC_MARGIN
    if use_two:
        assert two is not None
        est, var = two.t_inf_c, two.t_inf_stderr_k ** 2
        resid = rise - two.model(t - t[0])
        tau_slow, k_params, rmse = two.tau_slow_s, 5, two.rmse_k
        unresolved = two.slow_at_bound or not math.isfinite(var)
    else:
        est, var = one.t_inf_c, one.t_inf_stderr_k ** 2
        resid = resid_one
        tau_slow, k_params, rmse = one.tau_s, 3, one.rmse_k
        unresolved = one.tau_at_bound or not math.isfinite(var)
    rho = max(0.0, thermal.lag1_autocorrelation(resid))
    ar1 = min(MAX_AR1_FACTOR, (1.0 + rho) / (1.0 - rho)) if rho < 1.0 else MAX_AR1_FACTOR
    # model uncertainty: Akaike weights over the models with a finite estimate
    models = [(aic1, one.t_inf_c)]
    if two is not None and math.isfinite(two.t_inf_stderr_k):
        models.append((aic2, two.t_inf_c))
    best_aic = min(a for a, _ in models)
    weights = [math.exp(-0.5 * (a - best_aic)) for a, _ in models]
    total = sum(weights)
    spread = sum(w / total * (e - est) ** 2 for w, (_, e) in zip(weights, models, strict=True))
    se = math.sqrt(var * ar1 + spread) if math.isfinite(var) else math.inf
    half = thermal.student_t_quantile(0.975, max(1, n - k_params)) * se if math.isfinite(se) \
        else math.inf
    t_inf = ambient + est
    ci = (t_inf - half, t_inf + half)
    F = float(settings.rise_factor)

    def scale(tc):
        return worst + F * (tc - ambient)

    predicted = scale(t_inf)
    pci = (scale(ci[0]), scale(ci[1]))
    duration = float(t[-1] - t[0])
    coverage = duration / tau_slow if tau_slow > 0 else 0.0
    need_s = max(0.0, settings.min_coverage * tau_slow - duration)
    if unresolved:
        need_s = max(need_s, 2.0 * duration)

    findings = reader_findings(log)
    coarse = resolution_finding(temp, unit="K", coarse=COARSE_K, what="temperature")
    if coarse:
        findings.append(coarse)
    if use_two:
        findings.append(Finding(
            "two_time_constants",
            f"two time constants ({two.tau_fast_s / 60:.1f} and {two.tau_slow_s / 60:.0f} min; "
            f"one-constant residuals autocorrelated, r1 {r1_one:.2f}; BIC lower by "
            f"{bic1 - bic2:.0f})", affects_verdict=False))
    verdict, reason = _verdict(predicted, pci, float(np.max(temp)), settings.limit_c, rmse,
                               settings.max_rmse_k, unresolved, coverage,
                               settings.min_coverage, need_s, tau_slow, worst)
    verdict, reason = with_findings(verdict, reason, findings)
    max_logged = float(np.max(temp))
    figures: dict[str, Any] = {
        "model": "two time constants" if use_two else "one time constant",
        "t_inf_c": t_inf,
        "t_inf_ci_c": [ci[0], ci[1]],
        "tau_s": tau_slow,
        "tau_fast_s": two.tau_fast_s if use_two else None,
        "tau_slow_s": tau_slow,
        "predicted_max_c": predicted,
        "predicted_max_ci_c": [pci[0], pci[1]],
        "fit_rmse_k": rmse,
        "t0_c": ambient + (one.t0_c if not use_two else float(two.model(np.array([0.0]))[0])),
        "rise_k": est,
        "max_logged_c": max_logged,
        "limit_c": settings.limit_c,
        "ambient_c": ambient,
        "ambient_from": ambient_from,
        "worst_ambient_c": worst,
        "rise_factor": F,
        "points": int(n),
        "duration_s": duration,
        "time_constants_covered": coverage,
        "min_coverage": settings.min_coverage,
        "log_more_s": need_s if verdict == REVIEW else 0.0,
        "residual_lag1_one_constant": r1_one,
        "residual_lag1_chosen": rho,
        "bic_one_minus_two": (bic1 - bic2) if math.isfinite(bic2) else None,
        "one_constant_t_inf_c": ambient + one.t_inf_c,
        "two_constant_t_inf_c": (ambient + two.t_inf_c) if two is not None else None,
        "slow_constant_resolved": not unresolved,
    }
    span = max(float(t[-1] - t[0]), 1.0) * 1.6
    curve_t = [span * k / 80 for k in range(81)]
    if use_two:
        model = two.model(np.array(curve_t))
    else:
        model = thermal.first_order_model(one, np.array(curve_t))
    logged = list(zip([float(x - t[0]) / 60.0 for x in t], [float(x) for x in temp],
                      strict=True))
    if len(logged) > 400:
        logged = logged[:: len(logged) // 400 + 1]
    chart = {
        "logged": logged,
        "model": [(x / 60.0, ambient + float(y)) for x, y in zip(curve_t, model, strict=True)],
        "predicted_max_c": predicted,
        "limit_c": settings.limit_c,
        "caption": (f"{figures['model'].capitalize()} fitted to the rise over ambient: T∞ "
                    f"{t_inf:.1f} °C ({ci[0]:.1f}–{ci[1]:.1f} °C, 95 %), slowest τ "
                    f"{tau_slow / 60:.1f} min, log covers {coverage:.1f} of it; the "
                    f"predicted maximum is scaled to {worst:g} °C ambient and a rise factor "
                    f"of {F:g}."),
    }
    return Analysis("soak", log.source, figures, findings, verdict, reason, SRC_SOAK, chart,
                    read, log.notes, (round(predicted, 2), "°C"),
                    {"unit": "°C", "max": settings.limit_c}, raw=(one, two))


def _verdict(predicted, pci, max_logged, limit, rmse, max_rmse, unresolved, coverage,
             min_coverage, need_s, tau_slow, worst):
    lo, hi = pci
    shown = (f"predicted maximum at {worst:g} °C ambient {predicted:.1f} °C (95 % interval "
             f"{lo:.1f} to {hi:.1f} °C) against the {limit:.1f} °C limit")
    longer = f"log at least {math.ceil(need_s / 60):.0f} min longer"
    if max_logged >= limit:
        return FAIL, (f"a logged value ({max_logged:.1f} °C) already reaches the {limit:.1f} °C "
                      "limit; improve cooling or derate the diverter")
    if rmse > max_rmse:
        return REVIEW, (f"neither model fits the log well (RMSE {rmse:.2f} K, trusted up to "
                        f"{max_rmse:g} K); check the log for power or enclosure changes and "
                        "repeat the soak")
    if math.isfinite(lo) and lo > limit:
        return FAIL, (f"{shown}: the heatsink will overheat even though every logged value is "
                      "below the limit; improve cooling or derate")
    if unresolved:
        return REVIEW, (f"the log rises more slowly than its first minutes explain, and is too "
                        f"short to show the slower time constant; {longer} (at full output, "
                        "enclosure closed)")
    if coverage < min_coverage:
        return REVIEW, (f"{shown}; the log covers {coverage:.1f} of the slowest time constant "
                        f"({tau_slow / 60:.0f} min) and a steady state needs about "
                        f"{min_coverage:g}: {longer}")
    if hi < limit:
        return PASS, shown
    return REVIEW, (f"{shown}: the interval straddles the limit; log longer or measure the "
                    "worst case directly")
