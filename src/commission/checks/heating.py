"""Heating-rate check: does the water heat as fast as the element's power predicts?"""

from __future__ import annotations

from ..analyses.heating import (
    DEFAULT_BAND,
    DEFAULT_FILL_TEMP_C,
    DEFAULT_SERVED_FRACTIONS,
    HeatingSettings,
)
from ..analyses.heating import (
    SRC_HEATING as SRC_HEATING_LOG,
)
from ..units import format_number as f
from .registry import FAIL, PASS, REVIEW, Context, Expected, Input, Measured, Outcome, Param, check

SRC_HEATING = (
    "dT/dt = P/(m·cp), m = ρ·V of the water above the element at filling; ρ, cp from "
    "IAPWS-95; band 0.85–1.10 common practice"
)
CAUSES = ("the thermostat cycled, a failed element section, a smaller volume than stated, "
          "or a sensor outside the heated zone")


def expected_power_w(ctx: Context) -> tuple[float, str]:
    """Element power: from cold resistance at the measured voltage, else the nameplate."""
    if ctx.has("cold_resistance") and ctx.has("supply_voltage"):
        r = float(ctx.input("cold_resistance"))
        u = float(ctx.input("supply_voltage"))
        if r > 0:
            return u * u / r, f"{f(round(u * u / r))} W from {f(r)} Ω at {f(u)} V"
    p = float(ctx.input("rated_power"))
    return p, f"{f(p)} W nameplate"


# Inputs and limits shared by the two heating checks (readings, and a logged run); the
# defaults are the heating analysis's, one place for the command and the checks.
POWER_INPUTS = {
    "volume": Input("stored volume (volume reading)"),
    "rated_power": Input("element nameplate power"),
    "cold_resistance": Input("element cold resistance", required=False),
    "supply_voltage": Input("measured supply voltage", required=False),
    "position": Input("where the element sits (choice item)", required=False),
    "fraction_above": Input("share of the cylinder above the element's lowest point, in %",
                            required=False),
}
BAND_PARAMS = {
    "fill_temp_c": Param(DEFAULT_FILL_TEMP_C, "°C",
                         "common practice: cold mains water (from memory)"),
    "band_low": Param(DEFAULT_BAND[0], None, "common practice"),
    "band_high": Param(DEFAULT_BAND[1], None, "common practice"),
    "served_fractions": Param(DEFAULT_SERVED_FRACTIONS, None,
                              "common practice (from memory): an element heats the water "
                              "above its lowest point; fraction of the cylinder per position"),
}


def heating_settings(ctx: Context, power_w: float) -> HeatingSettings:
    """The heating analysis's settings from the item's inputs and parameters."""
    fraction = None
    if ctx.has("fraction_above"):
        fraction = float(ctx.input("fraction_above")) / 100.0
    return HeatingSettings(
        power_w=power_w,
        volume_l=float(ctx.input("volume")) * 1000.0,
        element_position=str(ctx.input("position")) if ctx.has("position") else None,
        fraction_above=fraction,
        served_fractions=str(ctx.param("served_fractions")),
        fill_temp_c=float(ctx.param("fill_temp_c")),
        band=(float(ctx.param("band_low")), float(ctx.param("band_high"))),
    )


@check(
    "heating_rate",
    summary="heating rate against the element's power",
    source=SRC_HEATING,
    quantities=("temperature",),
    inputs={
        "start_temp": Input("temperature at the start"),
        "minutes": Input("time between the two readings"),
        **POWER_INPUTS,
    },
    params={
        **BAND_PARAMS,
        "min_rise_k": Param(3.0, "K", "common practice: smaller rises are lost in sensor "
                            "resolution"),
    },
)
def heating_rate(ctx: Context) -> Outcome:
    from ..analyses.heating import served_volume
    from ..physics import water

    end_c = float(ctx.value)
    start_c = float(ctx.input("start_temp"))
    seconds = float(ctx.input("minutes"))
    power_w, power_text = expected_power_w(ctx)
    settings = heating_settings(ctx, power_w)
    volume_l, volume_text = served_volume(settings)
    mass = float(water.mass_kg(volume_l, settings.fill_temp_c))
    mean_c = 0.5 * (start_c + end_c)
    expected_rate = float(water.heating_rate_k_per_h(power_w, mass, mean_c))
    rate = (end_c - start_c) / (seconds / 3600.0)
    lo, hi = settings.band
    expected = Expected("K/h", min=round(lo * expected_rate, 2), max=round(hi * expected_rate, 2))
    measured = Measured(round(rate, 2), "K/h")
    delivered = float(water.delivered_power_w(rate, mass, mean_c))
    ratio = rate / expected_rate
    text = (f"{rate:.1f} K/h against {expected_rate:.1f} K/h expected for {power_text} into "
            f"{mass:.0f} kg, volume served {volume_text} (ratio {ratio:.2f}, {delivered:.0f} W "
            "delivered)")
    if end_c - start_c < ctx.param("min_rise_k"):
        return Outcome(REVIEW, f"{text}; a rise of {f(end_c - start_c)} K is too small to judge "
                       "— run longer", SRC_HEATING, measured, expected)
    if ratio < lo:
        return Outcome(FAIL, f"{text}: too slow — usual causes: {CAUSES}", SRC_HEATING,
                       measured, expected)
    if ratio > hi:
        return Outcome(REVIEW, f"{text}: faster than the element can heat the whole store — "
                       "the sensor sits in the hot layer above the element or the volume "
                       "served is smaller; judge by hand", SRC_HEATING, measured, expected)
    return Outcome(PASS, text, SRC_HEATING, measured, expected)


@check(
    "heating_log",
    summary="heating rate fitted from a temperature log against the element's power",
    source=SRC_HEATING_LOG,
    kinds=("file",),
    inputs=dict(POWER_INPUTS),
    params=dict(BAND_PARAMS),
)
def heating_log(ctx: Context) -> Outcome:
    from .recordings import file_analysis, outcome_of

    power_w, power_text = expected_power_w(ctx)
    a = file_analysis(ctx, ctx.value, "heating", heating_settings(ctx, power_w))
    out = outcome_of(a)
    return Outcome(out.verdict, f"{a.reason}; power {power_text}, "
                   f"{a.figures['delivered_power_w']:.0f} W delivered into "
                   f"{a.figures['mass_kg']:.0f} kg", out.source, out.measured, out.expected,
                   analysis=a)
