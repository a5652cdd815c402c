"""Heating log: the measured rate against P/(m·cp), robust to the thermostat.

* Thermostat cycling (the log rises, drops when the thermostat opens, rises again) is
  detected, and only the first rising run before the first opening is fitted; the opening
  temperatures and their spread are a finding.
* The element heats the water above its lowest point: the volume it serves is the cylinder
  volume times the fraction above that point (recorded by the installer, or a default per
  element position, common practice), and the reason names the volume used.
* A ratio outside 0.5–1.5 is implausible for a working element: the reason lists the
  likely causes, units first.
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

# Defaults, one place for the command, the checks and the chart.
DEFAULT_BAND = (0.85, 1.10)  # common practice
DEFAULT_FILL_TEMP_C = 15.0  # common practice: cold mains water (from memory)
# Fraction of the cylinder above the element's lowest point, per position (common practice,
# from memory: a top-entry element reaches near the bottom; a high side entry heats the top).
DEFAULT_SERVED_FRACTIONS = "top entry=0.95, side entry low=0.9, side entry high=0.45"
LOG_MIN_RISE_K = 3.0  # common practice: smaller rises are lost in sensor resolution
LOG_MIN_POINTS = 5  # our default: fewer readings cannot show whether the line is straight
PLAUSIBLE = (0.5, 1.5)  # outside this a working element is implausible (our default)
Z95 = 1.96  # two-sided 95 % normal quantile, for the interval of the ratio
OPENING_DROP_K = 0.5  # a fall of this much after a peak is a thermostat opening (our default)
COARSE_K = 0.5

SRC_HEATING = ("dT/dt = P/(m·cp), m = ρ·V of the water above the element at filling; ρ, cp "
               "from IAPWS-95; band 0.85–1.10 common practice; first rising run fitted by "
               "least squares")
UNIT_CAUSES = ("units first: a log in °F read as °C, a power in kW typed as W (or the "
               "reverse), a time column in minutes or milliseconds read as seconds")
SLOW_CAUSES = ("then: thermostat cycling, a failed element section, a wrong volume (more "
               "than the element serves), a sensor outside the heated zone (ask where it "
               "sits)")
FAST_CAUSES = ("then: the sensor sits in the hot layer above the element, or the element "
               "serves a smaller volume than stated")


@dataclass(frozen=True)
class HeatingSettings:
    """Element and cylinder of a heating run.

    ``volume_l`` is the cylinder's nominal volume; the volume served is that times
    ``fraction_above`` (the share of the cylinder above the element's lowest point, as
    recorded), or the default for ``element_position`` from ``served_fractions``, or the
    whole cylinder when neither is known.
    """

    power_w: float
    volume_l: float
    element_position: str | None = None
    fraction_above: float | None = None
    served_fractions: str = DEFAULT_SERVED_FRACTIONS
    fill_temp_c: float = DEFAULT_FILL_TEMP_C
    band: tuple[float, float] = DEFAULT_BAND


def fractions_table(text: str) -> dict[str, float]:
    """``"top entry=0.95, side entry high=0.45"`` -> {"top entry": 0.95, ...}."""
    out: dict[str, float] = {}
    for part in str(text).split(","):
        key, sep, value = (s.strip() for s in part.partition("="))
        if not (sep and key):
            raise SettingsError(f"served fractions: {part.strip()!r} is not POSITION=FRACTION, "
                                "e.g. top entry=0.95")
        try:
            x = float(value)
        except ValueError:
            raise SettingsError(f"served fractions: {value!r} is not a number between 0 and "
                                "1") from None
        if not 0.0 < x <= 1.0:
            raise SettingsError(f"served fractions: {x:g} for {key!r} is not between 0 and 1")
        out[key.lower()] = x
    return out


def served_volume(settings: HeatingSettings) -> tuple[float, str]:
    """(volume served [L], how it was found, in words)."""
    v = float(settings.volume_l)
    if settings.fraction_above is not None:
        f = float(settings.fraction_above)
        if not 0.0 < f <= 1.0:
            raise SettingsError(f"fraction above the element: {f:g} is not between 0 and 1 "
                                "(give e.g. 0.8 or 80 %)")
        return v * f, f"{v * f:.0f} L ({f:.0%} of {v:g} L above the element, as recorded)"
    if settings.element_position:
        table = fractions_table(settings.served_fractions)
        f = table.get(settings.element_position.strip().lower())
        if f is None:
            known = ", ".join(table)
            raise SettingsError(f"element position {settings.element_position!r} has no "
                                f"default fraction; known: {known} (or give the fraction "
                                "above the element)")
        return v * f, (f"{v * f:.0f} L ({f:.0%} of {v:g} L, default for a "
                       f"{settings.element_position.strip()} element, common practice)")
    return v, f"{v:g} L (the whole cylinder: no element position given)"


def thermostat_openings(temp_c, drop_k: float) -> list[int]:
    """Indices of the peaks after which the temperature falls by ``drop_k`` or more."""
    import numpy as np

    y = np.asarray(temp_c, dtype=float)
    peaks: list[int] = []
    top_i, low = 0, None
    for k in range(1, y.size):
        if low is None:  # rising: track the peak
            if y[k] >= y[top_i]:
                top_i = k
            elif y[top_i] - y[k] >= drop_k:
                peaks.append(top_i)
                low = k
        else:  # falling: track the trough until it rises again
            if y[k] <= y[low]:
                low = k
            elif y[k] - y[low] >= drop_k:
                top_i, low = k, None
    return peaks


def analyse_heating(path, settings: HeatingSettings, read: ReadSettings | None = None, *,
                    name: str | None = None) -> Analysis:
    """Read a heating log, fit its first rising run, compare with the element's power."""

    from commission.captures import read_heating_log
    from commission.physics import water

    read = read or ReadSettings()
    lo, hi = settings.band
    if not (0 < lo < hi):
        raise SettingsError("band: LOW must be above zero and below HIGH, e.g. 0.85,1.10")
    volume_l, volume_text = served_volume(settings)
    log = read_heating_log(path, columns=read.columns, time_format=read.time_format,
                           tz=read.tz, name=name)
    t, y = log.time_s, log.temp_c
    findings = reader_findings(log)
    coarse = resolution_finding(y, unit="K", coarse=COARSE_K, what="temperature")
    if coarse:
        findings.append(coarse)
    noise = _noise(y)
    openings = thermostat_openings(_smooth(y), max(OPENING_DROP_K, 4.0 * noise))
    end = y.size
    if openings:
        end = openings[0] + 1
        temps = [float(y[k]) for k in openings]
        spread = max(temps) - min(temps)
        findings.append(Finding(
            "thermostat_cycling",
            f"the thermostat opened {len(openings)} time(s), at {min(temps):.1f}–"
            f"{max(temps):.1f} °C (spread {spread:.1f} K); only the first rising run "
            f"(to {t[openings[0]] / 60:.0f} min) was fitted", affects_verdict=False))
    mass = float(water.mass_kg(volume_l, settings.fill_temp_c))
    run_t, run_y = t[:end], y[:end]
    if run_t.size < 3:
        run_t, run_y = t, y
    fit = water.fit_heating_rate(run_t, run_y)
    expected = float(water.heating_rate_k_per_h(settings.power_w, mass, fit.mean_temp_c))
    whole_log = False
    if fit.plateau_from_s is not None and _too_short(fit, expected):
        # levels off almost at once (a dead element, or a thermostat that opened early):
        # judge the whole run instead of the few readings before the plateau
        fit = water.fit_heating_rate(run_t, run_y, detect_plateau=False)
        expected = float(water.heating_rate_k_per_h(settings.power_w, mass, fit.mean_temp_c))
        whole_log = True
    delivered = float(water.delivered_power_w(fit.rate_k_per_h, mass, fit.mean_temp_c))
    cp = float(water.heat_capacity_j_per_kg_k(fit.mean_temp_c))
    ratio = fit.rate_k_per_h / expected
    verdict, reason = _verdict(fit, expected, ratio, lo, hi)
    if whole_log:
        reason += ("; the log shows no steady rise before it levels off, so the whole run was "
                   "fitted")
    reason += f"; volume served {volume_text}"
    verdict, reason = with_findings(verdict, reason, findings)
    span_s = fit.fit_end_s - fit.fit_start_s
    figures: dict[str, Any] = {
        "rate_k_per_h": fit.rate_k_per_h,
        "expected_rate_k_per_h": expected,
        "delivered_power_w": delivered,
        "ratio": ratio,
        "power_w": settings.power_w,
        "volume_l": settings.volume_l,
        "served_volume_l": volume_l,
        "served_volume_basis": volume_text,
        "fill_temp_c": settings.fill_temp_c,
        "mass_kg": mass,
        "cp_j_per_kg_k": cp,
        "band": [lo, hi],
        "start_temp_c": fit.start_temp_c,
        "end_temp_c": fit.end_temp_c,
        "mean_temp_c": fit.mean_temp_c,
        "minutes": span_s / 60.0,
        "fit_start_s": fit.fit_start_s,
        "fit_end_s": fit.fit_end_s,
        "points": fit.points,
        "rate_stderr_k_per_h": fit.rate_stderr_k_per_h,
        "residual_rms_k": fit.residual_rms_k,
        "warmup_dropped_s": fit.warmup_dropped_s,
        "plateau_from_s": fit.plateau_from_s,
        "thermostat_openings": len(openings),
        "opening_temps_c": [float(y[k]) for k in openings],
        "whole_log": whole_log,
    }
    t_min = [float(x) / 60.0 for x in t]
    logged = list(zip(t_min, [float(x) for x in y], strict=True))
    if len(logged) > 400:
        logged = logged[:: len(logged) // 400 + 1]
    t0, t1 = fit.fit_start_s / 60.0, fit.fit_end_s / 60.0
    chart = {
        "logged": logged,
        "fitted": [(t0, fit.start_temp_c), (t1, fit.end_temp_c)],
        "expected": [(t0, fit.start_temp_c),
                     (t1, fit.start_temp_c + expected * (t1 - t0) / 60.0)],
        "caption": (f"Fitted {fit.rate_k_per_h:.1f} K/h over the first steady rise against "
                    f"{expected:.1f} K/h expected from {settings.power_w:.0f} W into "
                    f"{volume_l:.0f} L (P/(m·cp), IAPWS-95 water properties)."),
    }
    return Analysis("heating", log.source, figures, findings, verdict, reason, SRC_HEATING,
                    chart, read, log.notes, (round(fit.rate_k_per_h, 2), "K/h"),
                    {"unit": "K/h", "min": round(lo * expected, 2),
                     "max": round(hi * expected, 2)}, raw=fit)


def _noise(y) -> float:
    import numpy as np

    if y.size < 4:
        return 0.0
    d2 = np.diff(y, 2)
    return float(np.median(np.abs(d2)) / (0.6745 * math.sqrt(6.0)))


def _smooth(y):
    import numpy as np

    if y.size < 3:
        return y
    c = np.concatenate(([0.0], np.cumsum(y)))
    idx = np.arange(y.size)
    lo = np.maximum(idx - 1, 0)
    hi = np.minimum(idx + 2, y.size)
    return (c[hi] - c[lo]) / (hi - lo)


def _too_short(fit, expected) -> bool:
    span_h = (fit.fit_end_s - fit.fit_start_s) / 3600.0
    return expected * span_h < LOG_MIN_RISE_K or fit.points < LOG_MIN_POINTS


def _verdict(fit, expected, ratio, lo, hi) -> tuple[str, str]:
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
    implausible = not (PLAUSIBLE[0] <= ratio <= PLAUSIBLE[1])
    if ratio + half < lo:
        if implausible:
            return FAIL, (f"{shown}: implausibly slow for a working element; likely causes, "
                          f"{UNIT_CAUSES}; {SLOW_CAUSES}")
        return FAIL, (f"{shown}: the water heats too slowly; usual causes: {SLOW_CAUSES[6:]}")
    if ratio - half > hi:
        if implausible:
            return REVIEW, (f"{shown}: implausibly fast for the element's power; likely "
                            f"causes, {UNIT_CAUSES}; {FAST_CAUSES}: judge by hand")
        return REVIEW, (f"{shown}: faster than the element can heat the volume it serves; "
                        f"{FAST_CAUSES[6:]}: judge by hand")
    if ratio - half >= lo and ratio + half <= hi:
        return PASS, shown
    return REVIEW, (f"{shown}; the log is too noisy to say (95 % interval of the ratio "
                    f"{ratio - half:.2f}-{ratio + half:.2f} crosses a band edge): check "
                    "the sensor's contact and log for longer")
