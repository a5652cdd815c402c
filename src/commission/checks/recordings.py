"""Checks that read files taken on site: waveform captures, soak and regulation logs.

The numbers come from :mod:`commission.physics`; the files are read by
:mod:`commission.captures`. A file the check cannot read gives ``review`` with
the reader's one-line reason, never an exception.
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

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

SIGN = "positive power = import"


def _capture(ctx: Context, value: Any):
    """Analyse a recorded capture file (CSV, or WAV with full-scale parameters)."""
    from ..captures import CaptureError, read_capture_csv, read_capture_wav
    from ..physics.waveform import analyse

    path: Path = ctx.file_path(value)
    name = str(value.get("name", "")).lower()

    def run():
        try:
            if name.endswith(".wav"):
                v_fs, i_fs = ctx.param("wav_v_full_scale"), ctx.param("wav_i_full_scale")
                if not v_fs or not i_fs:
                    return ValueError("a WAV capture needs the parameters wav_v_full_scale "
                                      "and wav_i_full_scale in the checklist")
                cap = read_capture_wav(path, voltage_full_scale_v=v_fs,
                                       current_full_scale_a=i_fs)
            else:
                cap = read_capture_csv(path)
            return analyse(cap.sample_rate_hz, cap.voltage_v, cap.current_a)
        except (CaptureError, ValueError) as exc:
            return ValueError(str(exc))

    result = ctx.memo(("capture", value["sha256"], name, ctx.param("wav_v_full_scale"),
                       ctx.param("wav_i_full_scale")), run)
    if isinstance(result, Exception):
        raise result
    return result


WAV_PARAMS = {
    "wav_v_full_scale": Param(None, "V", "the measurement front end's calibration",
                              "volts at full scale, for WAV captures"),
    "wav_i_full_scale": Param(None, "A", "the measurement front end's calibration",
                              "amperes at full scale, for WAV captures"),
}

SRC_CLAMP = ("angle of the current fundamental to the voltage fundamental, DFT per "
             "IEC 61000-4-7; ±45° band our default; power per IEEE 1459-2010")


@check(
    "clamp_capture",
    summary="clamp direction and phase from a waveform capture",
    source=SRC_CLAMP,
    kinds=("file",),
    inputs={"expect": Input("'import' or 'export' at the moment of the capture",
                            required=False)},
    params=dict(WAV_PARAMS),
)
def clamp_capture(ctx: Context) -> Outcome:
    from ..physics.waveform import classify_clamp

    expect = str(ctx.input("expect")) if ctx.has("expect") else None
    if expect not in (None, "import", "export"):
        raise ValueError(f"expect must be import or export, not {expect!r}")
    a = _capture(ctx, ctx.value)
    judged = classify_clamp(a.phase_deg, expect)
    figures = (f"P {a.p_w:+.0f} W ({SIGN}), φ1 {a.phase_deg:+.1f}°, {a.frequency_hz:.2f} Hz, "
               f"{a.v_rms:.1f} V, {a.i_rms:.2f} A")
    if expect == "export":
        expected = Expected("°", value="|φ1| ≥ 135")
    else:
        expected = Expected("°", min=-45.0, max=45.0)
    return Outcome(judged.verdict, f"{figures}: {judged.reason}", SRC_CLAMP,
                   Measured(round(a.phase_deg, 2), "°"), expected)


SRC_SOAK = ("lumped first-order model T∞ − (T∞ − T0)·e^(−t/τ), Incropera, Fundamentals of "
            "Heat and Mass Transfer; 95 % interval from the fit")


@check(
    "heatsink_soak",
    summary="heatsink steady state from a soak log",
    source=SRC_SOAK,
    kinds=("file",),
    inputs={
        "ambient": Input("ambient temperature during the soak"),
        "worst_ambient": Input("worst expected ambient", required=False),
        "limit": Input("heatsink limit temperature"),
    },
    params={
        "rise_factor": Param(1.0, None, "CHECKS.md: 1.15–1.20 covers +10 % supply voltage"),
        "max_rmse_k": Param(1.0, "K", "our default: a poorer fit is not trusted"),
    },
)
def heatsink_soak(ctx: Context) -> Outcome:
    from ..captures import CaptureError, read_soak_log
    from ..physics import thermal

    ambient = float(ctx.input("ambient"))
    worst = float(ctx.input("worst_ambient")) if ctx.has("worst_ambient") else None
    limit = float(ctx.input("limit"))
    path = ctx.file_path(ctx.value)

    def run():
        try:
            log = read_soak_log(path)
            return thermal.fit_first_order(log.time_s, log.temp_c)
        except (CaptureError, ValueError) as exc:
            return ValueError(str(exc))

    fit = ctx.memo(("soak", ctx.value["sha256"]), run)
    if isinstance(fit, Exception):
        raise fit
    prediction = thermal.predict_worst_case(fit, ambient, worst_ambient_c=worst,
                                            rise_factor=ctx.param("rise_factor"))
    judged = thermal.soak_verdict(fit, prediction, limit, max_rmse_k=ctx.param("max_rmse_k"))
    lo, hi = prediction.predicted_max_ci_c
    where = f" at {f(worst)} °C ambient" if worst is not None else ""
    reason = (f"τ {fit.tau_s / 60:.1f} min, log covers {fit.time_constants_covered:.1f} τ; "
              f"predicted maximum{where} {prediction.predicted_max_c:.1f} °C "
              f"({lo:.1f}–{hi:.1f} °C): {judged.reason.replace('degC', '°C')}")
    return Outcome(judged.verdict, reason, SRC_SOAK,
                   Measured(round(prediction.predicted_max_c, 2), "°C"),
                   Expected("°C", max=limit))


SRC_REGULATION = ("common practice: grid power held in the installer's dead band "
                  "(mean within ±D, 95 % of readings within ±3·D)")


@check(
    "regulation_log",
    summary="grid power held in the dead band in automatic mode",
    source=SRC_REGULATION,
    kinds=("file",),
    inputs={"dead_band": Input("dead band D in W (power reading or constant)")},
)
def regulation_log(ctx: Context) -> Outcome:
    from ..captures import CaptureError, read_regulation_log
    from ..physics import regulation

    band = float(ctx.input("dead_band"))
    path = ctx.file_path(ctx.value)

    def run():
        try:
            log = read_regulation_log(path)
            return regulation.grid_statistics(log.time_s, log.grid_w, diverter_w=log.diverter_w)
        except (CaptureError, ValueError) as exc:
            return ValueError(str(exc))

    stats = ctx.memo(("regulation", ctx.value["sha256"]), run)
    if isinstance(stats, Exception):
        raise stats
    judged = regulation.regulation_verdict(stats, band)
    settle = (f"; settled {stats.settling_s:.0f} s after the largest step"
              if stats.settling_s is not None else "")
    reason = (f"{judged.reason.replace('+-', '±')} ({SIGN}); exported "
              f"{stats.exported_wh:.1f} Wh, imported {stats.imported_wh:.1f} Wh{settle}")
    return Outcome(judged.verdict, reason, SRC_REGULATION,
                   Measured(round(stats.mean_grid_w, 1), "W"), Expected("W", min=-band, max=band))


SRC_HARMONICS = ("IEC 61000-3-2 Class A Table 1 (from memory; a type test, indicative on site); "
                 "phase-control spectrum, Rashid, Power Electronics (from memory)")


@check(
    "harmonic_emission",
    summary="harmonic currents at part output against IEC 61000-3-2 Class A",
    source=SRC_HARMONICS,
    kinds=("choice",),
    inputs={
        "cold_resistance": Input("element cold resistance"),
        "supply_voltage": Input("measured supply voltage"),
        "capture": Input("a capture at part output (file item)", required=False),
    },
    params={
        "fraction": Param(0.5, None, "our default: the prediction is made at half power"),
        "burst_options": Param("burst fire", None, "checklist options for whole-cycle control"),
        **WAV_PARAMS,
    },
)
def harmonic_emission(ctx: Context) -> Outcome:
    from ..physics import phase_control
    from ..physics.harmonic_limits import class_a_limit_a

    mode = str(ctx.value)
    if mode in csv_list(ctx.param("burst_options")):
        return Outcome(PASS, "whole-cycle (burst-fire) control: no integer harmonics; its "
                       "on/off steps matter for flicker (IEC 61000-3-3, indicative)",
                       SRC_HARMONICS)
    r = float(ctx.input("cold_resistance"))
    u = float(ctx.input("supply_voltage"))
    if ctx.has("capture"):
        a = _capture(ctx, ctx.input("capture"))
        currents = {h: x for h, x in zip(a.harmonic_orders, a.i_harmonics_a, strict=True)
                    if x is not None}
        basis = f"measured at part output ({a.p_w:.0f} W)"
    else:
        fraction = float(ctx.param("fraction"))
        # Solved once per job state, not on every re-evaluation during the walk.
        alpha = ctx.memo(("firing_angle", fraction),
                         lambda: float(phase_control.firing_angle_for_fraction(fraction)))
        spectrum = phase_control.current_spectrum(u, r, alpha)
        currents = dict(zip(spectrum.orders, spectrum.harmonic_rms_a, strict=True))
        basis = (f"predicted at {f(fraction * 100)} % power (α {math.degrees(alpha):.0f}°) "
                 f"for {f(r)} Ω at {f(u)} V")
    over = [(h, x, class_a_limit_a(h)) for h, x in sorted(currents.items())
            if 2 <= h <= 40 and x > class_a_limit_a(h)]
    h3 = currents.get(3, 0.0)
    measured = Measured(round(h3, 3), "A")
    expected = Expected("A", max=class_a_limit_a(3))
    if not over:
        return Outcome(PASS, f"harmonic currents {basis} are within Class A (h3 {h3:.2f} A)",
                       SRC_HARMONICS, measured, expected)
    worst = ", ".join(f"h{h} {x:.2f} A > {lim:.2f} A" for h, x, lim in over[:4])
    return Outcome(
        REVIEW,
        f"{basis}: over Class A at {len(over)} order(s) ({worst}); a finding to report, not a "
        "fault — where local rules or the network operator require it, use burst-fire control",
        SRC_HARMONICS, measured, expected,
    )


__all__ = ["FAIL", "clamp_capture", "harmonic_emission", "heatsink_soak", "regulation_log"]
