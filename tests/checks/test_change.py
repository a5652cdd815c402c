"""Change since the baseline (checks/change.py), against closed forms written here:
copper's resistance ∝ (234.5 + t) (IEC 60228:2004 Annex B), rates as (now − then) over
the years between them, and least-squares lines through points that lie exactly on a
line (so the fitted crossing of the limit is the line's own, solved by hand)."""

from __future__ import annotations

import math
from datetime import date, timedelta

from commission.checks.change import PARAMS, RULES, judge_reading, trend_of
from commission.checks.registry import PASS, REVIEW, Expected

DEFAULTS = {k: float(p.default) for k, p in PARAMS.items()}


def _base(value, unit, at="2024-01-01T00:00:00.000Z"):
    return {"value": value, "unit": unit, "at": at}


def test_every_limit_of_change_names_its_source():
    for name, p in PARAMS.items():
        assert p.source and ("common practice" in p.source or "IEC" in p.source), name
    for rule in RULES.values():
        assert rule.param in PARAMS


def test_insulation_fall_by_a_factor():
    rule = RULES["insulation_resistance"]
    bad = judge_reading("ir", rule, DEFAULTS, 4.0, "MΩ", "2026-01-01T00:00:00.000Z",
                        _base(180.0, "MΩ"))
    assert bad.verdict == REVIEW and "factor of 45" in bad.reason
    assert bad.baseline_value == 180.0 and bad.baseline_at.startswith("2024-01-01")
    years = (date(2026, 1, 1) - date(2024, 1, 1)).days / 365.25
    assert math.isclose(bad.rate_per_year, (4.0 - 180.0) / years, rel_tol=1e-9)
    fine = judge_reading("ir", rule, DEFAULTS, 20.0, "MΩ", "2026-01-01T00:00:00.000Z",
                         _base(180.0, "MΩ"))
    assert fine.verdict == PASS  # a factor of 9 < 10


def test_loop_impedance_allows_for_copper_temperature():
    rule = RULES["loop_impedance"]
    # 0.58 Ω at 10 °C, 0.70 Ω at 30 °C: copper explains (234.5+30)/(234.5+10) = +8.18 %,
    # so the excess is 0.70 / (0.58 · 1.0818) − 1 = +11.6 % (< 20 %): no deterioration ...
    explained = (234.5 + 30) / (234.5 + 10)
    excess = 0.70 / (0.58 * explained) - 1
    assert 0.11 < excess < 0.12
    warm = judge_reading("zs", rule, DEFAULTS, 0.70, "Ω", "2026-01-01T00:00:00.000Z",
                         _base(0.58, "Ω"), temperatures=(30.0, 10.0))
    assert warm.verdict == PASS and f"{(explained - 1) * 100:+.1f} %" in warm.reason
    # ... but the same +20.7 % rise without temperatures is judged as it stands, and says so
    bare = judge_reading("zs", rule, DEFAULTS, 0.70, "Ω", "2026-01-01T00:00:00.000Z",
                         _base(0.58, "Ω"))
    assert bare.verdict == REVIEW and "assumed equal" in bare.reason
    risen = judge_reading("zs", rule, DEFAULTS, 0.58 * 1.4, "Ω", "2026-01-01T00:00:00.000Z",
                          _base(0.58, "Ω"), temperatures=(30.0, 10.0))
    assert risen.verdict == REVIEW  # 1.4 / 1.0818 − 1 = +29 % > 20 %


def test_rcd_heatsink_and_heating_rate():
    at = "2025-01-01T00:00:00.000Z"
    rcd = judge_reading("t1", RULES["rcd_trip_time"], DEFAULTS, 190.0, "ms", at,
                        _base(24.0, "ms"))
    assert rcd.verdict == REVIEW and "RCD" in rcd.reason
    same_rcd = judge_reading("t1", RULES["rcd_trip_time"], DEFAULTS, 30.0, "ms", at,
                             _base(24.0, "ms"))
    assert same_rcd.verdict == PASS  # +25 % < 50 %
    sink = judge_reading("hs", RULES["heatsink_soak"], DEFAULTS, 82.4 + 9, "°C", at,
                         _base(82.4, "°C"))
    assert sink.verdict == REVIEW and "9 K" in sink.reason
    assert judge_reading("hs", RULES["heatsink_soak"], DEFAULTS, 82.4 + 4, "°C", at,
                         _base(82.4, "°C")).verdict == PASS
    slow = judge_reading("hr", RULES["heating_rate"], DEFAULTS, 18.27 * 0.8, "K/h", at,
                         _base(18.27, "K/h"))
    assert slow.verdict == REVIEW and "scale" in slow.reason
    same_day = judge_reading("hr", RULES["heating_rate"], DEFAULTS, 18.0, "K/h",
                             "2024-01-01T05:00:00.000Z", _base(18.27, "K/h"))
    assert same_day.rate_per_year is None and "no rate a year" in same_day.reason


def _iso(d: date) -> str:
    return f"{d.isoformat()}T00:00:00.000Z"


def test_trend_in_the_logarithm_crosses_where_the_exponential_does():
    """R = 200 · e^(−0.8 t) MΩ (t in years) reaches 1 MΩ at t = ln(200) / 0.8."""
    start = date(2020, 1, 1)
    points = []
    for k in range(3):
        at = start + timedelta(days=k * 365.25)
        t = (at - start).days / 365.25
        points.append((_iso(at), 200 * math.exp(-0.8 * t)))
    trend = trend_of(RULES["insulation_resistance"], points, Expected("MΩ", min=1.0))
    t_cross = math.log(200) / 0.8
    want = start + timedelta(days=t_cross * 365.25)
    got = date.fromisoformat(trend["crossing"])
    assert abs((got - want).days) <= 1, (got, want)
    assert math.isclose(trend["slope_per_year"], -0.8, rel_tol=1e-3)
    assert "logarithm" in trend["basis"]


def test_trend_in_the_reading_crosses_where_the_line_does():
    """Zs = 0.5 + 0.1 t Ω reaches 2.19 Ω at t = (2.19 − 0.5) / 0.1 = 16.9 years."""
    start = date(2020, 1, 1)
    days = [0, 400, 1100]
    points = [(_iso(start + timedelta(days=d)), 0.5 + 0.1 * d / 365.25) for d in days]
    trend = trend_of(RULES["loop_impedance"], points, Expected("Ω", max=2.19))
    want = start + timedelta(days=16.9 * 365.25)
    assert abs((date.fromisoformat(trend["crossing"]) - want).days) <= 1
    # improving readings never cross; two visits give no trend
    better = [(at, 1.0 - 0.1 * k) for k, (at, _) in enumerate(points)]
    assert trend_of(RULES["loop_impedance"], better, Expected("Ω", max=2.19))["crossing"] \
        is None
    assert trend_of(RULES["loop_impedance"], points[:2], Expected("Ω", max=2.19)) is None
