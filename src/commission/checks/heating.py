"""Heating-rate check: does the water heat as fast as the element's power predicts?"""

from __future__ import annotations

from ..units import format_number as f
from .registry import FAIL, PASS, REVIEW, Context, Expected, Input, Measured, Outcome, Param, check

SRC_HEATING = (
    "dT/dt = P/(m·cp), m = ρ·V at filling; ρ, cp from IAPWS-95; band 0.85–1.10 common "
    "practice"
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


@check(
    "heating_rate",
    summary="heating rate against the element's power",
    source=SRC_HEATING,
    quantities=("temperature",),
    inputs={
        "start_temp": Input("temperature at the start"),
        "minutes": Input("time between the two readings"),
        "volume": Input("stored volume (volume reading)"),
        "rated_power": Input("element nameplate power"),
        "cold_resistance": Input("element cold resistance", required=False),
        "supply_voltage": Input("measured supply voltage", required=False),
    },
    params={
        "fill_temp_c": Param(15.0, "°C", "common practice: cold mains water (from memory)"),
        "band_low": Param(0.85, None, "common practice"),
        "band_high": Param(1.10, None, "common practice"),
        "min_rise_k": Param(3.0, "K", "common practice: smaller rises are lost in sensor "
                            "resolution"),
    },
)
def heating_rate(ctx: Context) -> Outcome:
    from ..physics import water

    end_c = float(ctx.value)
    start_c = float(ctx.input("start_temp"))
    seconds = float(ctx.input("minutes"))
    volume_l = float(ctx.input("volume")) * 1000.0
    power_w, power_text = expected_power_w(ctx)
    mass = float(water.mass_kg(volume_l, ctx.param("fill_temp_c")))
    mean_c = 0.5 * (start_c + end_c)
    expected_rate = float(water.heating_rate_k_per_h(power_w, mass, mean_c))
    rate = (end_c - start_c) / (seconds / 3600.0)
    lo, hi = ctx.param("band_low"), ctx.param("band_high")
    expected = Expected("K/h", min=round(lo * expected_rate, 2), max=round(hi * expected_rate, 2))
    measured = Measured(round(rate, 2), "K/h")
    delivered = float(water.delivered_power_w(rate, mass, mean_c))
    ratio = rate / expected_rate
    text = (f"{rate:.1f} K/h against {expected_rate:.1f} K/h expected for {power_text} into "
            f"{mass:.0f} kg (ratio {ratio:.2f}, {delivered:.0f} W delivered)")
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
