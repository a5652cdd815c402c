"""Checks that the cylinder's own thermostat and cut-out stay in charge, and the
stored-water temperature regime."""

from __future__ import annotations

from ..units import format_number as f
from .registry import (
    FAIL,
    PASS,
    REVIEW,
    Context,
    Expected,
    Input,
    Measured,
    Outcome,
    Param,
    check,
    csv_list,
)

SRC_OPEN = (
    "IEC 60335-2-21 thermostat and cut-out in the element circuit (from memory); "
    "≤ 0.1 A with the thermostat open is common practice"
)


@check(
    "thermostat_open_current",
    summary="element current with the thermostat open",
    source=SRC_OPEN,
    quantities=("current",),
    params={"max_a": Param(0.1, "A", "common practice")},
)
def thermostat_open_current(ctx: Context) -> Outcome:
    amps = float(ctx.value)
    limit = ctx.param("max_a")
    expected = Expected("A", max=limit)
    if amps <= limit:
        return Outcome(PASS, f"{f(amps)} A with the thermostat open: the thermostat governs "
                       "the element", SRC_OPEN, Measured(amps, "A"), expected)
    return Outcome(
        FAIL,
        f"{f(amps)} A still flows with the thermostat open: the thermostat or cut-out is "
        "bypassed; rewire so the diverter feeds the element through both",
        SRC_OPEN, Measured(amps, "A"), expected,
    )


SRC_OPENING = "common practice: thermostat opens within ±5 K of its set point"


@check(
    "thermostat_opening",
    summary="thermostat opening temperature against its set point",
    source=SRC_OPENING,
    quantities=("temperature",),
    inputs={"set_point": Input("thermostat set point (temperature reading)")},
    params={"tolerance_k": Param(5.0, "K", SRC_OPENING)},
)
def thermostat_opening(ctx: Context) -> Outcome:
    opened = float(ctx.value)
    set_point = float(ctx.input("set_point"))
    tol = ctx.param("tolerance_k")
    expected = Expected("°C", min=set_point - tol, max=set_point + tol)
    diff = opened - set_point
    measured = Measured(opened, "°C")
    if abs(diff) <= tol:
        return Outcome(PASS, f"opened at {f(opened)} °C, {f(diff)} K from the set point "
                       f"{f(set_point)} °C", SRC_OPENING, measured, expected)
    return Outcome(
        FAIL,
        f"opened at {f(opened)} °C, {f(diff)} K from the set point {f(set_point)} °C: the "
        "thermostat is faulty or its sensor is not in its pocket; check before handover",
        SRC_OPENING, measured, expected,
    )


SRC_REGIME = (
    "WHO, Legionella and the prevention of legionellosis (2007): store at 60 °C or more "
    "(from memory)"
)


@check(
    "stored_water_regime",
    summary="how the store reaches 60 °C",
    source=SRC_REGIME,
    kinds=("choice",),
    inputs={"highest_temp": Input("highest store temperature observed", required=False)},
    params={
        "target_c": Param(60.0, "°C", SRC_REGIME),
        "heated_options": Param("timed boost,periodic cycle", None, "checklist options that "
                                "bring the store to temperature"),
        "solar_options": Param("solar only", None, "checklist options that rely on the sun"),
    },
)
def stored_water_regime(ctx: Context) -> Outcome:
    regime = str(ctx.value)
    target = ctx.param("target_c")
    expected = Expected("°C", min=target)
    if regime in csv_list(ctx.param("solar_options")):
        return Outcome(REVIEW, f"relies on solar heating alone: the store may stay below "
                       f"{f(target)} °C for days; agree a boost or a periodic cycle with the "
                       "homeowner as local rules require", SRC_REGIME, Measured(regime, None),
                       expected)
    if regime not in csv_list(ctx.param("heated_options")):
        return Outcome(FAIL, f"'{regime}': nothing brings the store to {f(target)} °C; set a "
                       "timed boost or a periodic high-temperature cycle", SRC_REGIME,
                       Measured(regime, None), expected)
    highest = float(ctx.input("highest_temp"))
    measured = Measured(highest, "°C")
    if highest >= target:
        return Outcome(PASS, f"{regime}; store seen at {f(highest)} °C", SRC_REGIME,
                       measured, expected)
    return Outcome(REVIEW, f"{regime}, but the store was seen only at {f(highest)} °C: watch a "
                   f"boost reach {f(target)} °C before relying on it", SRC_REGIME, measured,
                   expected)
