"""Checks on what the diverter's output does: what its forced-mode percentages mean, and the
flicker its switching causes (measured from a voltage capture, or predicted for burst fire).
"""

from __future__ import annotations

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
)

SRC_FORCED = ("phase-cut power against the conducting share x: P/P0 = x − sin(2πx)/(2π) "
              "(Rashid, AC voltage controllers, from memory; CHECKS.md); tolerance our default")
POWER_LAW, TIME_LAW = "power", "time"
MEANING = {
    POWER_LAW: "the forced-mode percentages mean power: 20 % gives a fifth of the element's "
               "power",
    TIME_LAW: "the forced-mode percentages mean the share of each half-cycle that conducts, "
              "not power: 20 % gives about 5 % of the element's power, 50 % half, 80 % about "
              "95 %",
}


def forced_mode_law(p20_w: float, p50_w: float, p100_w: float,
                    tolerance: float) -> tuple[str | None, Any]:
    """Which law the readings follow ('power', 'time' or None) and the deviations."""
    from ..physics.phase_control import forced_mode_deviations

    fit = forced_mode_deviations([0.2, 0.5, 1.0], [p20_w, p50_w, p100_w], p100_w)
    fits = [law for law, dev in ((POWER_LAW, fit.power_linear_max_dev),
                                 (TIME_LAW, fit.time_linear_max_dev)) if dev <= tolerance]
    return (fits[0] if len(fits) == 1 else None), fit


@check(
    "forced_mode_law",
    summary="what the diverter's forced-mode percentages mean (power or conduction time)",
    source=SRC_FORCED,
    quantities=("power",),
    inputs={"p20": Input("element power at forced 20 %"),
            "p50": Input("element power at forced 50 %")},
    params={"tolerance_pct": Param(3.0, "% of full power", "our default",
                                   "largest deviation from a law that still fits it")},
)
def forced_mode_check(ctx: Context) -> Outcome:
    """Sits on the element power at forced 100 %."""
    p100 = float(ctx.value)
    p20, p50 = float(ctx.input("p20")), float(ctx.input("p50"))
    if p100 <= 0:
        return Outcome(FAIL, f"{f(p100)} W at forced 100 %: the element takes no power in "
                       "forced mode; check the element and the diverter's output",
                       SRC_FORCED, Measured(p100, "W"), None)
    tol = float(ctx.param("tolerance_pct")) / 100.0
    law, fit = forced_mode_law(p20, p50, p100, tol)
    share20 = 100.0 * fit.measured_fraction[0]
    measured = Measured(round(share20, 1), "% of full power at forced 20 %")
    expected = Expected(None, value="20 % (power) or 4.9 % (time)")
    if law is not None:
        return Outcome(PASS, f"{share20:.1f} % of full power at 20 %, "
                       f"{100 * fit.measured_fraction[1]:.1f} % at 50 %: {MEANING[law]}",
                       SRC_FORCED, measured, expected)
    return Outcome(
        REVIEW,
        f"{share20:.1f} % of full power at 20 %, {100 * fit.measured_fraction[1]:.1f} % at "
        f"50 %: fits neither power ({100 * fit.power_linear_max_dev:.1f} % off) nor conduction "
        f"time ({100 * fit.time_linear_max_dev:.1f} % off) within {f(tol * 100)} % of full "
        "power; read again with the element at working temperature and nothing else on the "
        "circuit",
        SRC_FORCED, measured, expected,
    )


def forced_mode_meaning(p20_w: float, p50_w: float, p100_w: float,
                        tolerance: float = 0.03) -> str | None:
    """The homeowner's sentence on what the percentages mean, or None if undetermined."""
    try:
        law, _ = forced_mode_law(p20_w, p50_w, p100_w, tolerance)
    except ValueError:
        return None
    return None if law is None else MEANING[law]


SRC_FLICKER_FILE = ("IEC 61000-4-15:2010 flickermeter (our implementation, verified against the "
                    "Ed.2 table); limit Pst ≤ 1.0 IEC 61000-3-3 (from memory)")


@check(
    "flicker_capture",
    summary="flicker severity Pst of a 10-minute voltage capture",
    source=SRC_FLICKER_FILE,
    kinds=("file",),
    params={
        "wav_v_full_scale": Param(None, "V", "the measurement front end's calibration",
                                  "volts at full scale of the WAV capture"),
        "limit_pst": Param(1.0, None, "IEC 61000-3-3 (from memory)"),
    },
)
def flicker_capture(ctx: Context) -> Outcome:
    from ..analyses.flicker import SRC_FLICKER, analyse_flicker
    from ..captures import CaptureError

    full = ctx.param("wav_v_full_scale")
    if not full:
        raise ValueError("the checklist must give wav_v_full_scale (volts at full scale)")
    limit = float(ctx.param("limit_pst"))
    value = ctx.value
    path = ctx.file_path(value)

    def run():
        try:
            return analyse_flicker(path, voltage_full_scale_v=float(full), limit=limit,
                                   name=str(value.get("name", "capture")))
        except (CaptureError, ValueError) as exc:
            return ValueError(str(exc))

    result = ctx.memo(("flicker", value["sha256"], float(full), limit,
                       str(value.get("name", "capture"))), run, shared=True)
    if isinstance(result, Exception):
        raise result
    verdict = PASS if result.verdict == "pass" else FAIL
    reason = result.reason
    if result.warnings:
        verdict = REVIEW if verdict == PASS else verdict
        reason = f"{reason}; {'; '.join(result.warnings)}"
    return Outcome(verdict, reason, SRC_FLICKER, Measured(round(result.pst_max, 3), "Pst"),
                   Expected(None, max=limit))


SRC_BURST = ("burst-fire voltage synthesised on the loop impedance (IEC TR 60725 reference "
             "0.40 + j0.25 Ω when none was measured) through our IEC 61000-4-15 flickermeter; "
             "limit Pst ≤ 1.0 IEC 61000-3-3 (from memory)")


@check(
    "burst_fire_flicker",
    summary="predicted flicker of burst-fire switching on this supply",
    source=SRC_BURST,
    kinds=("choice",),
    inputs={
        "power": Input("element rated power (power reading)"),
        "loop": Input("measured loop impedance (resistance reading); the reference impedance "
                      "when absent", required=False),
        "period": Input("burst period (time reading) for a fixed-period pattern",
                        required=False),
        "supply_voltage": Input("supply voltage (reading)", required=False),
    },
    params={"limit_pst": Param(1.0, None, "IEC 61000-3-3 (from memory)")},
)
def burst_fire_flicker(ctx: Context) -> Outcome:
    """Sits on the choice of how the diverter places its burst-fire cycles: 'spread evenly',
    'fixed period' or 'not stated' (both are predicted and the worse is judged)."""
    from ..analyses.flicker import cached_burst_fire

    pattern = str(ctx.value).strip().lower()
    power = float(ctx.input("power"))
    volts = float(ctx.input("supply_voltage")) if ctx.has("supply_voltage") else 230.0
    loop = complex(float(ctx.input("loop")), 0.0) if ctx.has("loop") else None
    limit = float(ctx.param("limit_pst"))
    periods: list[int | None] = []
    if pattern.startswith("spread") or pattern.startswith("not"):
        periods.append(None)
    if pattern.startswith("fixed") or pattern.startswith("not"):
        if ctx.has("period"):
            cycles = max(1, round(float(ctx.input("period")) * 50))
        elif pattern.startswith("fixed"):
            raise ValueError("the burst period is needed for a fixed-period pattern")
        else:
            cycles = 50  # a one-second period, common in burst-fire controllers
        periods.append(cycles)
    if not periods:
        raise ValueError(f"unknown burst pattern {ctx.value!r}")
    predictions = [cached_burst_fire(power, loop, volts, period, limit) for period in periods]
    worst_one = max(predictions, key=lambda p: p.pst_max)
    reason = worst_one.reason
    if loop is not None:
        reason += " (the measured loop taken as resistance)"
    verdict = PASS if worst_one.verdict == "pass" else FAIL
    return Outcome(verdict, reason, SRC_BURST, Measured(round(worst_one.pst_max, 2), "Pst"),
                   Expected(None, max=limit))
