"""Change since the baseline: each repeated reading of a revisit against the same
reading of the visits before it (issue 14).

A reading can be within its limit and still tell that something is wearing out: insulation
falling, a joint loosening, an RCD slowing down, dust on the heatsink, scale on the
element. These rules judge the change; the item's own check still judges the limit. The
rules are keyed by the name of the check that judged the reading (its verdict's measured
value is what is compared), so any checklist whose items carry those checks gets them.
Every limit is a parameter with its source; a periodic checklist may replace them under
`revisit: {params: ...}`. A carried answer (a setting, a size, a nameplate) that was
changed on the revisit is a change too.

Verdicts: a deterioration beyond its limit is `review` (it needs a person's judgement even
while the reading is within its limit); anything else is `pass` for the change.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from datetime import datetime
from typing import Any

from .registry import PASS, REVIEW, Param

SRC_CHANGE = ("common practice: deterioration worth a review while still within the limit "
              "(no published limit for change; a checklist parameter)")
SRC_COPPER = ("IEC 60228:2004, Annex B: conductor resistance corrected to 20 °C by "
              "R20 = Rt · 254.5 / (234.5 + t) for copper, i.e. α20 = 0.00393 /K (from memory)")
SRC_SETTING = "common practice: a setting changed since the baseline is checked and explained"

PARAMS: dict[str, Param] = {
    "insulation_fall_factor": Param(10.0, None, SRC_CHANGE,
                                    "review when insulation resistance has fallen by this "
                                    "factor or more"),
    "resistance_rise_pct": Param(20.0, "%", f"{SRC_CHANGE}; temperature: {SRC_COPPER}",
                                 "review when Zs or R1+R2 has risen by more than this beyond "
                                 "what conductor temperature explains"),
    "rcd_time_rise_pct": Param(50.0, "%", SRC_CHANGE,
                               "review when an RCD trip time has lengthened by more than this"),
    "heatsink_rise_k": Param(5.0, "K", SRC_CHANGE,
                             "review when the heatsink's predicted maximum has risen by more "
                             "than this"),
    "heating_rate_fall_pct": Param(10.0, "%", SRC_CHANGE,
                                   "review when the heating rate has fallen by more than this "
                                   "(scale on the element)"),
}

# Copper's resistance is proportional to (234.5 + t) (IEC 60228 Annex B, above).
COPPER_T0_C = 234.5


@dataclass(frozen=True)
class Rule:
    what: str  # the reading in the trade's words
    worse: str  # "fall" or "rise": which way is deterioration
    kind: str  # "factor", "pct", "abs" or "copper" (pct beyond conductor temperature)
    param: str
    scale: str  # "log" or "linear": how the reading drifts, for the trend (issue 14, 3)
    cause: str  # what a deterioration usually means and what to do


_HEATING = Rule("heating rate", "fall", "pct", "heating_rate_fall_pct", "linear",
                "scale on the element, a failing element or less power reaching it: "
                "descale or replace the element and check the supply to it")
RULES: dict[str, Rule] = {
    # Insulation resistance falls by orders of magnitude as moisture gets in, so it is
    # judged (and its trend drawn) on a logarithmic scale.
    "insulation_resistance": Rule(
        "insulation resistance", "fall", "factor", "insulation_fall_factor", "log",
        "moisture, damaged cable insulation or the element's sheath breaking down: find the "
        "cause before it reaches the limit"),
    "loop_impedance": Rule(
        "Zs", "rise", "copper", "resistance_rise_pct", "linear",
        "a loose or corroded joint, or a deteriorating earth path: find it and remake it"),
    "r1r2_continuity": Rule(
        "R1+R2", "rise", "copper", "resistance_rise_pct", "linear",
        "a loose or corroded joint in the circuit: find it and remake it"),
    "rcd_trip_time": Rule(
        "RCD trip time", "rise", "pct", "rcd_time_rise_pct", "linear",
        "the RCD is slowing down (an ageing or sticking mechanism): operate it a few times "
        "with its test button, test again, and replace it if it stays slow"),
    "heatsink_soak": Rule(
        "predicted heatsink maximum", "rise", "abs", "heatsink_rise_k", "linear",
        "dust in the fins or a failing fan: clean the heatsink, check the fan and the "
        "clearances around the diverter"),
    "heating_rate": _HEATING,
    "heating_log": _HEATING,
}


@dataclass
class Change:
    """The change of one item since the baseline."""

    item_id: str
    state: str  # "deteriorated", "within" (no deterioration beyond the limit) or "changed"
    #             / "confirmed" for a carried answer
    verdict: str  # REVIEW or PASS
    reason: str
    source: str
    what: str
    unit: str | None
    value: Any  # today's
    baseline_value: Any
    baseline_at: str  # when the baseline reading was taken
    rate_per_year: float | None = None  # in the unit a year; None when < 1 day apart
    weight: float = 0.0  # how far beyond its limit of change (1 = at it), for ordering
    trend: dict[str, Any] | None = field(default=None)

    @property
    def deteriorated(self) -> bool:
        return self.verdict == REVIEW

    def as_json(self) -> dict[str, Any]:
        return {k: getattr(self, k) for k in (
            "item_id", "state", "verdict", "reason", "source", "what", "unit", "value",
            "baseline_value", "baseline_at", "rate_per_year", "weight", "trend")}


def _when(iso: str) -> datetime:
    return datetime.fromisoformat(iso.replace("Z", "+00:00"))


def years_between(a: str, b: str) -> float:
    """Years (of 365.25 days) from ISO time a to ISO time b."""
    return (_when(b) - _when(a)).total_seconds() / (365.25 * 86400)


def _num(x: float) -> str:
    return f"{x:.3g}" if abs(x) < 1000 else f"{x:.0f}"


def rate_text(rate: float | None, unit: str | None) -> str:
    if rate is None:
        return "taken less than a day after the baseline, so no rate a year"
    return f"{'+' if rate >= 0 else '−'}{_num(abs(rate))} {unit or ''} a year".replace("  ", " ")


def params_of(checklist: Any) -> dict[str, float]:
    out = {k: float(p.default) for k, p in PARAMS.items()}  # type: ignore[arg-type]
    rv = getattr(checklist, "revisit", None)
    if rv is not None:
        out.update({k: float(v) for k, v in rv.params.items() if k in PARAMS})
    return out


def judge_reading(item_id: str, rule: Rule, params: dict[str, float], value: float,
                  unit: str | None, at: str, base: dict[str, Any],
                  temperatures: tuple[float | None, float | None] = (None, None)) -> Change:
    """Today's reading against the baseline's (``base``: {value, unit, at}).
    ``temperatures``: (today, baseline) in °C, for the copper allowance."""
    b = float(base["value"])
    limit = params[rule.param]
    years = years_between(base["at"], at)
    rate = (value - b) / years if years >= 1 / 365.25 else None
    date = base["at"][:10]
    u = f" {unit}" if unit else ""
    moved = f"from {_num(b)}{u} at the baseline ({date}) to {_num(value)}{u}"
    source = PARAMS[rule.param].source
    tail = rate_text(rate, unit)
    if rule.kind == "factor":  # a fall by a factor
        factor = b / value if value > 0 else math.inf
        bad = factor >= limit
        weight = math.log(factor) / math.log(limit) if factor > 1 and limit > 1 else 0.0
        amount = f"fallen by a factor of {_num(factor)}" if factor > 1 else "not fallen"
        rule_text = f"review from a fall by a factor of {_num(limit)}"
    elif rule.kind == "copper":
        now_t, base_t = temperatures
        if now_t is not None and base_t is not None:
            explained = (COPPER_T0_C + now_t) / (COPPER_T0_C + base_t)
            temp_text = (f"conductor temperature {_num(base_t)} → {_num(now_t)} °C explains "
                         f"{(explained - 1) * 100:+.1f} %")
        else:
            explained = 1.0
            temp_text = ("temperature not recorded on both visits: assumed equal, no "
                         "allowance made")
        excess = value / (b * explained) - 1 if b > 0 else 0.0
        pct = excess * 100
        bad = pct > limit
        weight = max(pct, 0.0) / limit
        amount = (f"{'risen' if value >= b else 'fallen'} by {abs(value / b - 1) * 100:.0f} %"
                  if b > 0 else "changed")
        rule_text = (f"{temp_text}; {pct:+.0f} % beyond that, review above +{_num(limit)} %")
        source = f"{source}; {SRC_COPPER}"
    elif rule.kind == "pct":
        pct = ((value / b - 1) if rule.worse == "rise" else (1 - value / b)) * 100 \
            if b != 0 else 0.0
        bad = pct > limit
        weight = max(pct, 0.0) / limit
        verb = ("risen" if value >= b else "fallen")
        amount = f"{verb} by {abs(value / b - 1) * 100:.0f} %" if b != 0 else "changed"
        rule_text = f"review beyond a {'rise' if rule.worse == 'rise' else 'fall'} of " \
                    f"{_num(limit)} %"
    else:  # "abs": a rise in the reading's own unit
        delta = value - b if rule.worse == "rise" else b - value
        bad = delta > limit
        weight = max(delta, 0.0) / limit
        amount = f"{'risen' if value >= b else 'fallen'} by {_num(abs(value - b))}" \
                 f"{' K' if unit == '°C' else u}"
        rule_text = f"review beyond a rise of {_num(limit)} K" if unit == "°C" else \
            f"review beyond {_num(limit)}{u}"
    if bad:
        reason = (f"{rule.what} has {amount}, {moved} ({rule_text}); {tail}: {rule.cause}")
        return Change(item_id, "deteriorated", REVIEW, reason, source, rule.what, unit, value,
                      b, base["at"], rate, weight)
    reason = (f"{rule.what} {moved}: {amount}, no deterioration beyond the limit of change "
              f"({rule_text}); {tail}")
    return Change(item_id, "within", PASS, reason, source, rule.what, unit, value, b,
                  base["at"], rate, weight)


def trend_of(rule: Rule, points: list[tuple[str, float]], expected: Any) -> dict[str, Any] | None:
    """A straight line through the readings of every visit (``points``: (ISO time, value),
    oldest first; three or more), by least squares in the reading itself or, for
    insulation resistance, in its natural logarithm (it falls by orders of magnitude, so
    a constant rate is a constant factor a year), and the date it would cross the limit
    (``expected``: the item's Expected; its min for a reading that falls, its max for one
    that rises) at that rate. None with fewer than three visits."""
    if len(points) < 3:
        return None
    limit = None
    if expected is not None:
        limit = expected.min if rule.worse == "fall" else expected.max
    log = rule.scale == "log"
    if log and any(v <= 0 for _, v in points):
        return None
    t0 = points[0][0]
    xs = [years_between(t0, at) for at, _ in points]
    ys = [math.log(v) if log else v for _, v in points]
    n = len(xs)
    mx, my = sum(xs) / n, sum(ys) / n
    sxx = sum((x - mx) ** 2 for x in xs)
    if sxx <= 0:
        return None
    slope = sum((x - mx) * (y - my) for x, y in zip(xs, ys, strict=True)) / sxx
    intercept = my - slope * mx
    crossing = None
    towards = (slope < 0) if rule.worse == "fall" else (slope > 0)
    if limit is not None and towards and (not log or limit > 0):
        target = math.log(limit) if log else float(limit)
        t_cross = (target - intercept) / slope
        from datetime import timedelta

        crossing = (_when(t0) + timedelta(days=t_cross * 365.25)).date().isoformat()
    shape = "the logarithm of the reading (a constant factor a year)" if log else "the reading"
    basis = f"least squares over {n} visits, straight in {shape}"
    return {"scale": rule.scale, "points": [[at, v] for at, v in points], "limit": limit,
            "slope_per_year": slope, "intercept": intercept, "origin": t0,
            "crossing": crossing, "basis": basis}


def judge_carried(item_id: str, carried: Any, current: Any) -> Change | None:
    """A carried answer (entry ``carried``) against the entry now current: None while it
    stands as carried; 'confirmed' when re-entered unchanged; 'changed' (review) else."""
    if current is carried or getattr(current, "carried", None) or current.action != "answer":
        return None
    date = carried.at[:10]
    if current.value == carried.value:
        return Change(item_id, "confirmed", PASS, f"confirmed as at the baseline ({date})",
                      SRC_SETTING, item_id, None, current.raw, carried.raw, carried.at)
    return Change(item_id, "changed", REVIEW,
                  f"changed since the baseline ({date}): '{carried.raw}' → '{current.raw}'; "
                  "check the change was intended and say why under what was done",
                  SRC_SETTING, item_id, None, current.raw, carried.raw, carried.at,
                  weight=1.0)


__all__ = ["PARAMS", "RULES", "SRC_CHANGE", "SRC_COPPER", "Change", "Rule", "judge_carried",
           "judge_reading", "params_of", "trend_of", "years_between"]
