"""Checks on the water-heater element."""

from __future__ import annotations

from ..physics import protection as prot
from ..units import Bound
from .registry import FAIL, PASS, REVIEW, Context, Expected, Input, Measured, Outcome, Param, check

SRC_ELEMENT = (
    "P = U²/R; IEC 60335-1 cl. 10.1 tolerance +5 % or 20 W / −10 % (from memory); "
    "NiCr changes a few % cold to hot (handbook, from memory)"
)


@check(
    "element_power",
    summary="element power from its cold resistance against its rating",
    source=SRC_ELEMENT,
    bounds=True,
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
    if isinstance(ctx.value, Bound) and ctx.value.open:  # whatever the nameplate says
        return Outcome(FAIL, "open circuit (OL): the element is broken, or a wire or the "
                       "thermostat is open; replace or repair before energising",
                       SRC_ELEMENT, Measured("OL", "Ω", bound="open"))
    rated_w = float(ctx.input("rated_power"))
    rated_v = float(ctx.input("rated_voltage"))
    if isinstance(ctx.value, Bound):
        lo = rated_w * (1 - ctx.param("below_pct") / 100)
        top = prot.element_power_w(rated_v, ctx.value.si)  # the most it can give
        measured = Measured(ctx.value.si, "Ω", bound="over")
        if top < lo:
            return Outcome(FAIL, f"{measured.text()} gives under {top:.0f} W at {rated_v:g} "
                           f"V, below {lo:.0f} W for {rated_w:g} W rated: a failed section or a "
                           "poor connection", SRC_ELEMENT, measured,
                           Expected("W", min=round(lo, 1)))
        return Outcome(REVIEW, f"the meter shows only {measured.text()}: measure on a range "
                       "that gives a figure", SRC_ELEMENT, measured)
    r = float(ctx.value)
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


SRC_BAND = "IEC 60038: nominal 230 V, +10 %/−10 % at the supply terminals (from memory)"


@check(
    "element_voltage_band",
    summary="element nameplate voltage against the supply's nominal band",
    source=SRC_BAND,
    quantities=("voltage",),
    params={
        "nominal_v": Param(230.0, "V", SRC_BAND),
        "tolerance_pct": Param(10.0, "%", SRC_BAND),
    },
)
def element_voltage_band(ctx: Context) -> Outcome:
    rated = float(ctx.value)
    nominal = float(ctx.param("nominal_v"))
    lo = nominal * (1 - ctx.param("tolerance_pct") / 100)
    hi = nominal * (1 + ctx.param("tolerance_pct") / 100)
    measured = Measured(rated, "V")
    expected = Expected("V", min=round(lo, 1), max=round(hi, 1))
    if rated < lo:
        return Outcome(FAIL, f"an element rated {rated:g} V on a {nominal:g} V supply "
                       f"({lo:.0f}–{hi:.0f} V) takes {(hi / rated) ** 2:.1f} times its rated "
                       "power at the top of the band and overheats: fit an element rated for "
                       "this supply", SRC_BAND, measured, expected)
    if rated > hi:
        return Outcome(REVIEW, f"an element rated {rated:g} V gives only "
                       f"{(nominal / rated) ** 2 * 100:.0f} % of its rated power on a "
                       f"{nominal:g} V supply: check it is the element meant", SRC_BAND,
                       measured, expected)
    return Outcome(PASS, f"rated {rated:g} V, within the supply band {lo:.0f}–{hi:.0f} V",
                   SRC_BAND, measured, expected)


SRC_DIVERTER = (
    "IEC 60038: supply up to +10 % (from memory); I = U·P/U_r² for a resistive element; "
    "the diverter maker's rated current"
)


@check(
    "diverter_current_rating",
    summary="the diverter's rated current against the element's current at +10 % supply",
    source=SRC_DIVERTER,
    quantities=("current",),
    inputs={
        "rated_power": Input("element nameplate power (power reading)"),
        "rated_voltage": Input("element nameplate voltage (voltage reading)"),
    },
    params={
        "nominal_v": Param(230.0, "V", SRC_BAND),
        "supply_max_pct": Param(10.0, "%", SRC_BAND),
    },
)
def diverter_current_rating(ctx: Context) -> Outcome:
    rating = float(ctx.value)
    supply = float(ctx.param("nominal_v")) * (1 + ctx.param("supply_max_pct") / 100)
    current = prot.element_current_a(float(ctx.input("rated_power")),
                                     float(ctx.input("rated_voltage")), supply)
    measured = Measured(rating, "A")
    expected = Expected("A", min=round(current, 2))
    if rating < current:
        return Outcome(FAIL, f"the diverter is rated {rating:g} A but the element draws "
                       f"{current:.1f} A at {supply:.0f} V (+{ctx.param('supply_max_pct'):g} %): "
                       "it would run beyond its rating; fit a larger diverter or a smaller "
                       "element", SRC_DIVERTER, measured, expected)
    return Outcome(PASS, f"rated {rating:g} A ≥ {current:.1f} A drawn by the element at "
                   f"{supply:.0f} V", SRC_DIVERTER, measured, expected)
