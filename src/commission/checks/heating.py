"""Heating-rate check: does the water heat as fast as the element's power predicts?"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

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


# Inputs and limits shared by the two heating checks (readings, and a logged run).
POWER_INPUTS = {
    "volume": Input("stored volume (volume reading)"),
    "rated_power": Input("element nameplate power"),
    "cold_resistance": Input("element cold resistance", required=False),
    "supply_voltage": Input("measured supply voltage", required=False),
}
BAND_PARAMS = {
    "fill_temp_c": Param(15.0, "°C", "common practice: cold mains water (from memory)"),
    "band_low": Param(0.85, None, "common practice"),
    "band_high": Param(1.10, None, "common practice"),
}


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


# -- heating from a logged temperature rise -----------------------------------------------
# Our defaults unless a source is named; shared by the heating_log check and
# `commission analyse heating`.
LOG_MIN_RISE_K = 3.0  # common practice: smaller rises are lost in sensor resolution
LOG_MIN_POINTS = 5  # our default: fewer readings cannot show whether the line is straight
Z95 = 1.96  # two-sided 95 % normal quantile, for the interval of the ratio


@dataclass(frozen=True)
class HeatingAssessment:
    fit: Any  # physics.water.HeatingRateFit
    expected_k_per_h: float
    ratio: float
    mass_kg: float
    cp_j_per_kg_k: float
    delivered_w: float
    verdict: str
    reason: str
    whole_log: bool


def assess_heating_log(time_s, temp_c, *, power_w: float, volume_l: float,
                       fill_temp_c: float = 15.0,
                       band: tuple[float, float] = (0.85, 1.10)) -> HeatingAssessment:
    """Fit the steady part of a heating log and judge it against P/(m·cp).

    pass inside the band; fail below it; review above it, or when the log is too short or
    noisy to say. The ratio carries a 95 % interval from the slope's standard error; the
    verdict is pass or fail only when the whole interval lies on one side of a band edge.
    """
    from ..physics import water

    mass = float(water.mass_kg(volume_l, fill_temp_c))
    fit = water.fit_heating_rate(time_s, temp_c)
    expected = float(water.heating_rate_k_per_h(power_w, mass, fit.mean_temp_c))
    whole_log = False
    if fit.plateau_from_s is not None and _log_too_short(fit, expected):
        # The log levels off almost at once (a dead element, or a thermostat that opened
        # early): judge the whole log instead of the few readings before the plateau.
        fit = water.fit_heating_rate(time_s, temp_c, detect_plateau=False)
        expected = float(water.heating_rate_k_per_h(power_w, mass, fit.mean_temp_c))
        whole_log = True
    delivered = float(water.delivered_power_w(fit.rate_k_per_h, mass, fit.mean_temp_c))
    cp = float(water.heat_capacity_j_per_kg_k(fit.mean_temp_c))
    ratio = fit.rate_k_per_h / expected
    verdict, reason = _log_verdict(fit, expected, ratio, *band)
    if whole_log:
        reason += ("; the log shows no steady rise before it levels off, so the whole log "
                   "was fitted")
    return HeatingAssessment(fit, expected, ratio, mass, cp, delivered, verdict, reason,
                             whole_log)


def _log_too_short(fit, expected) -> bool:
    span_h = (fit.fit_end_s - fit.fit_start_s) / 3600.0
    return expected * span_h < LOG_MIN_RISE_K or fit.points < LOG_MIN_POINTS


def _log_verdict(fit, expected, ratio, lo, hi) -> tuple[str, str]:
    span_h = (fit.fit_end_s - fit.fit_start_s) / 3600.0
    shown = (f"{fit.rate_k_per_h:.2f} K/h measured against {expected:.2f} K/h expected "
             f"(ratio {ratio:.2f}, band {lo:g}-{hi:g})")
    expected_rise = expected * span_h
    if expected_rise < LOG_MIN_RISE_K:
        return REVIEW, (f"{shown}; the fitted span of {span_h * 60:.0f} min should give "
                        f"only {expected_rise:.1f} K, too little to judge (at least "
                        f"{LOG_MIN_RISE_K:g} K, common practice): log for longer")
    if fit.points < LOG_MIN_POINTS:
        return REVIEW, (f"{shown}; only {fit.points} readings in the fitted span (at least "
                        f"{LOG_MIN_POINTS}, our default): log more often")
    half = Z95 * fit.rate_stderr_k_per_h / expected
    if ratio + half < lo:
        return FAIL, (f"{shown}: the water heats too slowly. Usual causes: thermostat "
                      "cycling (check the log for a plateau or a saw-tooth), a failed "
                      "element section, a wrong volume, a sensor outside the heated zone "
                      "(ask where it sits and which volume the element serves)")
    if ratio - half > hi:
        return REVIEW, (f"{shown}: faster than the element can heat the whole volume; the "
                        "sensor probably sits in the hot layer above the element, or the "
                        "element serves a smaller volume than stated: judge by hand")
    if ratio - half >= lo and ratio + half <= hi:
        return PASS, shown
    return REVIEW, (f"{shown}; the log is too noisy to say (95 % interval of the ratio "
                    f"{ratio - half:.2f}-{ratio + half:.2f} crosses a band edge): check "
                    "the sensor's contact and log for longer")


@check(
    "heating_log",
    summary="heating rate fitted from a temperature log against the element's power",
    source=SRC_HEATING + "; steady part fitted by least squares",
    kinds=("file",),
    inputs=dict(POWER_INPUTS),
    params=dict(BAND_PARAMS),
)
def heating_log(ctx: Context) -> Outcome:
    from ..captures import CaptureError, read_heating_log

    power_w, power_text = expected_power_w(ctx)
    volume_l = float(ctx.input("volume")) * 1000.0
    path = ctx.file_path(ctx.value)
    band = (float(ctx.param("band_low")), float(ctx.param("band_high")))

    def run():
        try:
            log = read_heating_log(path)
            return assess_heating_log(log.time_s, log.temp_c, power_w=power_w,
                                      volume_l=volume_l, fill_temp_c=ctx.param("fill_temp_c"),
                                      band=band)
        except (CaptureError, ValueError) as exc:
            return ValueError(str(exc))

    judged = ctx.memo(("heating_log", ctx.value["sha256"], power_w, volume_l, band), run)
    if isinstance(judged, Exception):
        raise judged
    expected = Expected("K/h", min=round(band[0] * judged.expected_k_per_h, 2),
                        max=round(band[1] * judged.expected_k_per_h, 2))
    return Outcome(judged.verdict, f"{judged.reason}; power {power_text}, "
                   f"{judged.delivered_w:.0f} W delivered into {judged.mass_kg:.0f} kg",
                   SRC_HEATING, Measured(round(judged.fit.rate_k_per_h, 2), "K/h"), expected)
