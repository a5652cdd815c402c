"""Checks that read files taken on site: waveform captures, soak and regulation logs.

Each check gathers its settings from the checklist (inputs and parameters) and calls the
file kind's analysis in :mod:`commission.analyses` — the same function, with the same
defaults, that ``commission analyse`` and the record's charts call — and returns its verdict
as an Outcome carrying the analysis. A file the check cannot read gives ``review`` with
the reader's one-line reason (naming the file as recorded), never an exception.
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

from ..analyses.capture import SRC_CLAMP
from ..analyses.regulation import DEFAULT_HOLD_S, SRC_REGULATION
from ..analyses.soak import (
    DEFAULT_MAX_RMSE_K,
    DEFAULT_MIN_COVERAGE,
    DEFAULT_RISE_FACTOR,
    SRC_SOAK,
)
from ..units import format_number as f
from .registry import (
    FAIL,
    PASS,
    REVIEW,
    Context,
    Expected,
    Input,
    Measured,
    MissingInput,
    Outcome,
    Param,
    check,
    csv_list,
)

SIGN = "positive power = import"


def read_settings(ctx: Context):
    """How to read the item's file: the profile stored with its entry, with the
    checklist's WAV full-scale parameters where the item has them."""
    from ..analyses import ReadSettings

    read = ReadSettings.from_json(ctx.extra.get("read_with"))
    v_fs = ctx.params.get("wav_v_full_scale")
    i_fs = ctx.params.get("wav_i_full_scale")
    if v_fs and i_fs and read.v_scale is None and read.i_scale is None:
        read = read.merged(ReadSettings(v_scale=float(v_fs), i_scale=float(i_fs)))
    return read


def file_analysis(ctx: Context, value: Any, kind: str, settings: Any, read: Any = None):
    """The analysis of a recorded file (``commission.analyses``), computed once per file,
    kind and settings; a file it cannot read raises ValueError with the reader's line,
    naming the file by its recorded name (never a temporary copy)."""
    from .. import analyses
    from ..captures import CaptureError

    path: Path = ctx.file_path(value)
    name = str(value.get("name", "")) or None
    read = read if read is not None else read_settings(ctx)
    run_fn = {"capture": analyses.analyse_capture, "heating": analyses.analyse_heating,
              "soak": analyses.analyse_soak, "regulation": analyses.analyse_regulation}[kind]

    def run():
        try:
            return run_fn(path, settings, read, name=name)
        except (CaptureError, ValueError) as exc:
            return ValueError(" ".join(str(exc).split()))

    result = ctx.memo(("analysis", kind, value["sha256"], repr(settings), repr(read), name),
                      run, shared=name is not None)
    if isinstance(result, Exception):
        raise result
    return result


def outcome_of(a) -> Outcome:
    """An analysis as the check's Outcome (verdict, reason, source, measured, expected)."""
    measured = None
    if a.measured is not None and a.measured[0] is not None:
        measured = Measured(a.measured[0], a.measured[1])
    expected = None
    if a.expected is not None:
        e = dict(a.expected)
        expected = Expected(e.pop("unit", None), **e)
    return Outcome(a.verdict, a.reason, a.source, measured, expected, analysis=a)


WAV_PARAMS = {
    "wav_v_full_scale": Param(None, "V", "the measurement front end's calibration",
                              "volts at full scale, for WAV captures"),
    "wav_i_full_scale": Param(None, "A", "the measurement front end's calibration",
                              "amperes at full scale, for WAV captures"),
}


def _capture(ctx: Context, value: Any, settings: Any = None):
    from ..analyses import CaptureSettings

    return file_analysis(ctx, value, "capture", settings or CaptureSettings())




@check(
    "clamp_capture",
    summary="clamp direction and phase from a waveform capture, judged by its state",
    source=SRC_CLAMP,
    kinds=("file",),
    inputs={
        "state": Input("the state the capture was taken in (choice item)", required=False),
        "expect": Input("'import' or 'export' at the moment of the capture, for checklists "
                        "without a state item", required=False),
    },
    params=dict(WAV_PARAMS),
)
def clamp_capture(ctx: Context) -> Outcome:
    from ..analyses import CaptureSettings

    state = str(ctx.input("state")) if ctx.has("state") else None
    expect = str(ctx.input("expect")) if ctx.has("expect") else None
    if state is not None:
        expect = None  # the state says what is expected
    a = _capture(ctx, ctx.value, CaptureSettings(state=state, expect=expect))
    return outcome_of(a)


@check(
    "heatsink_soak",
    summary="heatsink steady state from a soak log",
    source=SRC_SOAK,
    kinds=("file",),
    inputs={
        "ambient": Input("ambient temperature during the soak (unless the log has an ambient "
                         "column)", required=False),
        "worst_ambient": Input("worst expected ambient", required=False),
        "limit": Input("heatsink limit temperature"),
    },
    params={
        "rise_factor": Param(DEFAULT_RISE_FACTOR, None,
                             "CHECKS.md: conduction loss and rise +15–20 % at +10 % supply "
                             "voltage; 1.2 covers it"),
        "max_rmse_k": Param(DEFAULT_MAX_RMSE_K, "K", "our default: a poorer fit is not trusted"),
        "min_coverage": Param(DEFAULT_MIN_COVERAGE, None,
                              "CHECKS.md: a steady state is pinned down once the log covers "
                              "about three of the slowest time constant"),
    },
)
def heatsink_soak(ctx: Context) -> Outcome:
    from ..analyses import SoakSettings

    settings = SoakSettings(
        limit_c=float(ctx.input("limit")),
        ambient_c=float(ctx.input("ambient")) if ctx.has("ambient") else None,
        worst_ambient_c=float(ctx.input("worst_ambient")) if ctx.has("worst_ambient") else None,
        rise_factor=float(ctx.param("rise_factor")),
        max_rmse_k=float(ctx.param("max_rmse_k")),
        min_coverage=float(ctx.param("min_coverage")),
    )
    try:
        a = file_analysis(ctx, ctx.value, "soak", settings)
    except ValueError as exc:
        if settings.ambient_c is None and "no ambient column" in str(exc):
            raise MissingInput("ambient", ctx.refs.get("ambient")) from None
        raise
    return outcome_of(a)


@check(
    "regulation_log",
    summary="grid power held in the dead band in automatic mode",
    source=SRC_REGULATION,
    kinds=("file",),
    inputs={"dead_band": Input("dead band D in W (power reading or constant)")},
    params={"settle_hold_s": Param(DEFAULT_HOLD_S, "s",
                                   "our default: time in the band that counts as settled")},
)
def regulation_log(ctx: Context) -> Outcome:
    from ..analyses import RegulationSettings

    settings = RegulationSettings(dead_band_w=float(ctx.input("dead_band")),
                                  hold_s=float(ctx.param("settle_hold_s")))
    return outcome_of(file_analysis(ctx, ctx.value, "regulation", settings))


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
        currents = {h["order"]: h["i_rms"] for h in a.figures["harmonics"]
                    if h["i_rms"] is not None}
        basis = f"measured at part output ({a.figures['p_w']:.0f} W)"
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
