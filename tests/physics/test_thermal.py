"""Heatsink soak fit against scipy.optimize.curve_fit (an independent nonlinear least-squares
solver) and against the known parameters of synthetic soaks; Student t quantiles against
scipy.stats.t; the worst-case scaling and junction estimate against the formulas of
CHECKS.md evaluated by hand here."""

import math

import numpy as np
import pytest
from scipy import optimize, stats

from commission.physics import thermal


def _model(t, t0, tinf, tau):
    return tinf - (tinf - t0) * np.exp(-t / tau)


def _soak(tau=900.0, t0=24.0, tinf=71.0, covered=1.5, step=30.0, noise=0.2, seed=0):
    rng = np.random.default_rng(seed)
    t = np.arange(0.0, covered * tau + step / 2, step)
    return t, _model(t, t0, tinf, tau) + rng.normal(0, noise, t.size)


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_fit_agrees_with_curve_fit(seed):
    """scipy.optimize.curve_fit on the same data: parameters, standard errors and RMSE agree."""
    t, y = _soak(seed=seed)
    fit = thermal.fit_first_order(t, y)
    popt, pcov = optimize.curve_fit(_model, t, y, p0=(y[0], y[-1] + 10, t[-1] / 2))
    assert fit.t0_c == pytest.approx(popt[0], abs=1e-3)
    assert fit.t_inf_c == pytest.approx(popt[1], abs=1e-3)
    assert fit.tau_s == pytest.approx(popt[2], rel=1e-4)
    assert fit.t_inf_stderr_k == pytest.approx(math.sqrt(pcov[1, 1]), rel=1e-2)
    assert fit.tau_stderr_s == pytest.approx(math.sqrt(pcov[2, 2]), rel=1e-2)
    resid = y - _model(t, *popt)
    assert fit.rmse_k == pytest.approx(math.sqrt(np.mean(resid**2)), rel=1e-4)


@pytest.mark.parametrize("seed", range(6))
def test_t_inf_within_1_5_k_when_soak_covers_1_5_tau(seed):
    """Issue 3 acceptance: t_inf within 1.5 K of the true value at 1.5 time constants."""
    t, y = _soak(covered=1.5, seed=seed, noise=0.3)
    fit = thermal.fit_first_order(t, y)
    assert abs(fit.t_inf_c - 71.0) < 1.5
    assert fit.time_constants_covered == pytest.approx(1.5, rel=0.2)


@pytest.mark.slow
def test_confidence_interval_covers_the_truth_about_95_percent():
    """Monte Carlo over white-noise soaks: the 95 % interval holds the true T_inf in about
    95 % of cases (binomial spread of 300 trials: 0.92...0.98)."""
    hits = 0
    trials = 300
    for seed in range(trials):
        t, y = _soak(covered=1.2, step=60.0, noise=0.3, seed=100 + seed)
        lo, hi = thermal.fit_first_order(t, y).t_inf_ci_c
        hits += lo <= 71.0 <= hi
    assert 0.92 <= hits / trials <= 0.985


@pytest.mark.parametrize("dof", [1, 2, 3, 4, 5, 7, 10, 17, 30, 57, 100, 199, 200, 201, 500,
                                 5000])
@pytest.mark.parametrize("p", [0.975, 0.9, 0.995])
def test_student_t_quantile_against_scipy(dof, p):
    """Student t quantiles against scipy.stats.t.ppf."""
    assert thermal.student_t_quantile(p, dof) == pytest.approx(stats.t.ppf(p, dof), rel=1e-6)


def test_predict_worst_case_scaling():
    """CHECKS.md: T_max = T_amb,worst + F*(T_inf - T_amb), applied to both ends of the CI."""
    t, y = _soak()
    fit = thermal.fit_first_order(t, y)
    pred = thermal.predict_worst_case(fit, 22.0, worst_ambient_c=40.0, rise_factor=1.18)
    assert pred.predicted_max_c == pytest.approx(40.0 + 1.18 * (fit.t_inf_c - 22.0))
    lo, hi = fit.t_inf_ci_c
    assert pred.predicted_max_ci_c[0] == pytest.approx(40.0 + 1.18 * (lo - 22.0))
    assert pred.predicted_max_ci_c[1] == pytest.approx(40.0 + 1.18 * (hi - 22.0))
    same = thermal.predict_worst_case(fit, 22.0)
    assert same.predicted_max_c == pytest.approx(fit.t_inf_c)


def test_conduction_loss_against_numerical_average_over_a_sine():
    """Datasheet model v_T = V_T0 + r_T*|i|: mean loss over a full sine cycle by numerical
    averaging, against V_T0*I_avg + r_T*I_rms^2 with I_avg = 2*sqrt(2)/pi*I_rms."""
    i_rms, v_t0, r_t = 13.0, 0.85, 0.012
    th = np.linspace(0, 2 * np.pi, 200001)
    i = math.sqrt(2) * i_rms * np.sin(th)
    want = np.trapezoid(np.abs(i) * (v_t0 + r_t * np.abs(i)), th) / (2 * np.pi)
    i_avg = thermal.full_conduction_i_avg_a(i_rms)
    got = thermal.conduction_loss_w(i_avg, i_rms, v_t0, r_t)
    assert got == pytest.approx(want, rel=1e-6)
    assert thermal.junction_temperature_c(70.0, got, 1.2, 0.3) == pytest.approx(70 + got * 1.5)


def test_refuses_bad_logs():
    """Too few readings and repeated times are refused."""
    with pytest.raises(ValueError):
        thermal.fit_first_order([0, 1, 2], [20, 21, 22])
    with pytest.raises(ValueError):
        thermal.fit_first_order([0, 1, 2, 2, 3, 4], [20, 21, 22, 23, 24, 25])
