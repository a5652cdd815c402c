"""Checks on the water-heater element."""

from __future__ import annotations

from ..physics import protection as prot
from .registry import FAIL, PASS, Context, Expected, Input, Measured, Outcome, Param, check

SRC_ELEMENT = (
    "P = U²/R; IEC 60335-1 cl. 10.1 tolerance +5 % or 20 W / −10 % (from memory); "
    "NiCr changes a few % cold to hot (handbook, from memory)"
)


@check(
    "element_power",
    summary="element power from its cold resistance against its rating",
    source=SRC_ELEMENT,
    quantities=("resistance",),
    inputs={
        "rated_power": Input("nameplate power (power reading)"),
        "rated_voltage": Input("nameplate voltage (voltage reading)"),
        "supply_voltage": Input("measured supply voltage", required=False),
    },
    params={
        "below_pct": Param(10.0, "%", "IEC 60335-1 cl. 10.1 (from memory)"),
        "above_pct": Param(5.0, "%", "IEC 60335-1 cl. 10.1 (from memory)"),
        "above_min_w": Param(20.0, "W", "IEC 60335-1 cl. 10.1 (from memory)"),
    },
)
def element_power(ctx: Context) -> Outcome:
    r = float(ctx.value)
    rated_w = float(ctx.input("rated_power"))
    rated_v = float(ctx.input("rated_voltage"))
    if r <= 0:
        return Outcome(FAIL, "0 Ω: the element or its wiring is short-circuited", SRC_ELEMENT,
                       Measured(r, "Ω"))
    p_w = prot.element_power_w(rated_v, r)
    lo = rated_w * (1 - ctx.param("below_pct") / 100)
    hi = rated_w + max(rated_w * ctx.param("above_pct") / 100, ctx.param("above_min_w"))
    expected = Expected("W", min=round(lo, 1), max=round(hi, 1))
    measured = Measured(round(p_w, 1), "W")
    at_supply = ""
    if ctx.has("supply_voltage"):
        u = float(ctx.input("supply_voltage"))
        at_supply = f"; {prot.element_power_w(u, r):.0f} W at the measured {u:g} V"
    if lo <= p_w <= hi:
        return Outcome(
            PASS,
            f"{r:g} Ω gives {p_w:.0f} W at {rated_v:g} V against {rated_w:g} W rated{at_supply}",
            SRC_ELEMENT, measured, expected,
        )
    if p_w < lo:
        why = ("resistance too high for the rating: a failed section, a poor connection, "
               "or a different element from the nameplate")
    else:
        why = ("resistance too low for the rating: a different element from the nameplate, "
               "or a partial short; check before energising")
    return Outcome(
        FAIL,
        f"{r:g} Ω gives {p_w:.0f} W at {rated_v:g} V, outside {lo:.0f}–{hi:.0f} W: {why}",
        SRC_ELEMENT, measured, expected,
    )
