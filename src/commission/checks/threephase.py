"""Checks for three-phase sites: the words and limits over ``physics/threephase.py``.

The numbers (symmetrical components, unbalance, clamp angles) come from
:mod:`commission.physics.threephase`; here they become instructions a person can act on.
"""

from __future__ import annotations

import re
from typing import TYPE_CHECKING, Any

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
    worst,
)

if TYPE_CHECKING:
    from ..analyses.threephase import ThreePhaseCaptureResult
    from ..physics.threephase import ClampPlacement

SIGN = ("positive power = import, per phase and in sum, for clamps on the incoming line "
        "conductors with their arrows pointing into the premises")

SRC_CLAMP_ANGLES = (
    "phasor angles of a three-phase system, 120° apart: a resistive load's current is in "
    "phase with its own phase voltage (Fortescue 1918; textbook); ±20° decision band: our "
    "default"
)
ASSUMED_SEQUENCE_NOTE = (
    "phase sequence assumed L1-L2-L3 (one voltage captured); a site that rotates L1-L3-L2 "
    "needs a three-voltage capture"
)


def clamp_instruction(p: ClampPlacement, *, sequence_assumed: bool = False) -> str:
    """One instruction for one clamp, e.g. "clamp 2 is on L3 and reversed: move it to L2 and
    turn it round". Clamp k belongs on Lk with its arrow pointing into the premises."""
    own = f"L{p.clamp}"
    name = f"clamp {p.clamp}"
    if p.state == "no-load":
        return (f"{name} carried no load in this capture: check it with a known load on {own} "
                "alone")
    if p.state == "undecided":
        return (f"{name}: its current sits at {p.angle_deg:+.0f}° to the L1 voltage, "
                f"{p.residual_deg:.0f}° from the nearest pattern, so its phase cannot be told; "
                "repeat with a resistive load on every phase (the diverter at full output)")
    assumed = f" ({ASSUMED_SEQUENCE_NOTE})" if sequence_assumed and p.phase != "L1" else ""
    if p.state == "phase-only":
        where = "its own phase" if p.phase == own else f"{p.phase}, not {own}"
        return (f"{name} looks to be on {where}; its orientation cannot be told with an "
                "unknown load mix: repeat with a known resistive load" + assumed)
    if p.phase == own:
        if p.reversed:
            return f"{name} is on {own} and reversed: turn it round{assumed}"
        return f"{name} is on {own} and the right way round{assumed}"
    if p.reversed:
        return (f"{name} is on {p.phase} and reversed: move it to {own} and turn it round"
                + assumed)
    return f"{name} is on {p.phase}: move it to {own}{assumed}"


def _phase_named(text: str) -> str | None:
    """'L2' from an answer such as "one element on L2"; None when no phase is named."""
    m = re.search(r"\bL([123])\b", text)
    return f"L{m.group(1)}" if m else None


# -- phase sequence ---------------------------------------------------------------------------

SRC_SEQUENCE = ("IEC 60364-6, 6.4.3.9 check of phase sequence for polyphase circuits (from "
                "memory); positive sequence: L2 lags L1 by 120°, L3 by 240° (textbook)")


@check(
    "phase_sequence",
    summary="phase sequence at the origin as required",
    source=SRC_SEQUENCE,
    kinds=("choice",),
    params={"required": Param("L1-L2-L3", None, SRC_SEQUENCE,
                              "the sequence the site must have (L1-L2-L3 or L1-L3-L2)")},
)
def phase_sequence(ctx: Context) -> Outcome:
    got = str(ctx.value).strip()
    required = str(ctx.param("required")).strip()
    if required not in ("L1-L2-L3", "L1-L3-L2"):
        raise ValueError(f"parameter 'required' must be L1-L2-L3 or L1-L3-L2, not {required!r}")
    measured = Measured(got, None)
    expected = Expected(None, value=required)
    if got == required:
        return Outcome(PASS, f"phase sequence {got}, as required", SRC_SEQUENCE, measured,
                       expected)
    if got not in ("L1-L2-L3", "L1-L3-L2"):
        return Outcome(REVIEW, f"phase sequence not determined ({got}): repeat with a rotation "
                       "tester or a three-voltage capture", SRC_SEQUENCE, measured, expected)
    return Outcome(FAIL, f"phase sequence {got}, {required} required: the phases are labelled "
                   "or connected in the other order; relabel, or swap two phases at the origin "
                   "(network operator or licensed person), and note that a clamp test with one "
                   "voltage assumes L1-L2-L3", SRC_SEQUENCE, measured, expected)


# -- voltage unbalance ------------------------------------------------------------------------

SRC_UNBALANCE = ("u2 = |V2|/|V1|, IEC 61000-4-30 5.7.1 (formula from line-to-line values; from "
                 "memory); limit 2 % for 95 % of 10-minute values, EN 50160 4.2.5 (from memory); "
                 "a spot reading is indicative")


@check(
    "voltage_unbalance",
    summary="voltage unbalance from the three line-to-line voltages",
    source=SRC_UNBALANCE,
    quantities=("voltage",),
    inputs={"l1_l2": Input("line-to-line voltage L1-L2 (voltage reading)"),
            "l2_l3": Input("line-to-line voltage L2-L3 (voltage reading)")},
    params={"limit_pct": Param(2.0, "%", "EN 50160 4.2.5 (from memory)")},
)
def voltage_unbalance(ctx: Context) -> Outcome:
    from ..physics.threephase import unbalance_from_line_voltages

    u31 = float(ctx.value)
    u12, u23 = float(ctx.input("l1_l2")), float(ctx.input("l2_l3"))
    limit = float(ctx.param("limit_pct"))
    expected = Expected("%", max=limit)
    try:
        u2 = 100.0 * unbalance_from_line_voltages(u12, u23, u31)
    except ValueError as exc:
        return Outcome(FAIL, f"{exc}: check the three readings and the probes", SRC_UNBALANCE,
                       None, expected)
    measured = Measured(round(u2, 2), "%")
    shown = f"u2 {u2:.2f} % from {f(u12)}, {f(u23)}, {f(u31)} V line to line"
    if u2 <= limit:
        return Outcome(PASS, f"{shown}: within {f(limit)} %", SRC_UNBALANCE, measured, expected)
    return Outcome(REVIEW, f"{shown}: above {f(limit)} % on a spot reading; EN 50160 judges "
                   "95 % of a week's 10-minute values, so log it or report it to the network "
                   "operator, and spread single-phase loads across the phases",
                   SRC_UNBALANCE, measured, expected)


# -- clamps from a three-phase capture ----------------------------------------------------------

_LOADS = {"all": "all", "one": "one", "unknown": "unknown",
          "load on every phase": "all", "load on one phase": "one", "unknown mix": "unknown"}
# Three voltages whose unbalance is this large are not three phases of one supply (two
# probes on the same phase, or one missing): our default.
_PROBE_UNBALANCE = 0.3


def clamp_load(text: str) -> str:
    """'all', 'one' or 'unknown' from a checklist's answer or constant."""
    load = _LOADS.get(text.strip().lower())
    if load is None:
        raise ValueError(f"load {text.strip()!r} is not one of: {', '.join(_LOADS)}")
    return load


def judge_clamps(r: ThreePhaseCaptureResult, *, site_sequence: str | None = None
                 ) -> tuple[str, str, list[str]]:
    """Verdict, one-line reason and the per-clamp instructions for a three-phase capture."""
    from ..physics.threephase import POSITIVE

    a = r.figures
    placed = r.placements
    assumed = not a.sequence_measured
    lines = [clamp_instruction(p, sequence_assumed=assumed) for p in placed]
    plain = [clamp_instruction(p) for p in placed]
    if a.unbalance is not None and a.unbalance > _PROBE_UNBALANCE:
        return REVIEW, (f"the three voltages do not look like three phases (unbalance "
                        f"{100 * a.unbalance:.0f} %): check that each voltage probe is on its "
                        "own phase"), lines
    if assumed and site_sequence not in (None, POSITIVE):
        return REVIEW, (f"the site's phase sequence is {site_sequence} but only one voltage was "
                        "captured, so the clamps cannot be placed (the inference assumes "
                        "L1-L2-L3): capture all three voltages"), lines
    wrong = [t for p, t in zip(placed, plain, strict=True) if p.state == "placed"
             and (p.phase != f"L{p.clamp}" or p.reversed)]
    open_ = [t for p, t in zip(placed, plain, strict=True)
             if p.state in ("no-load", "undecided", "phase-only")]
    note = f" ({ASSUMED_SEQUENCE_NOTE})" if assumed and len(placed) > 1 else ""
    seq = "" if assumed else f"; sequence {a.sequence} measured"
    if wrong:
        return FAIL, "; ".join(wrong + open_) + note + seq, lines
    if open_:
        ok = [t for p, t in zip(placed, plain, strict=True) if p.state == "placed"]
        return REVIEW, "; ".join(ok + open_) + note + seq, lines
    return PASS, "; ".join(plain) + note + seq, lines


@check(
    "clamp_phase_capture",
    summary="each clamp on its own phase and the right way round, from a three-phase capture",
    source=SRC_CLAMP_ANGLES,
    kinds=("file",),
    inputs={
        "load": Input("what ran during the capture: load on every phase, load on one phase, "
                      "unknown mix (a choice item or a constant)"),
        "sequence": Input("the site's phase sequence (choice item)", required=False),
        "expect": Input("'import' or 'export' on the loaded phases", required=False),
    },
    params={
        "tolerance_deg": Param(20.0, "°", "our default (classes are 60° apart)"),
        "min_current_fraction": Param(0.1, None, "our default: below it a clamp carries no "
                                      "load"),
    },
)
def clamp_phase_capture(ctx: Context) -> Outcome:
    load = clamp_load(str(ctx.input("load")))
    expect = str(ctx.input("expect")) if ctx.has("expect") else "import"
    site = str(ctx.input("sequence")) if ctx.has("sequence") else None
    tolerance = float(ctx.param("tolerance_deg"))
    fraction = float(ctx.param("min_current_fraction"))
    r = capture_result(ctx, ctx.value, load=load, expect=expect, tolerance_deg=tolerance,
                       min_current_fraction=fraction)
    verdict, reason, _ = judge_clamps(r, site_sequence=site)
    a = r.figures
    return Outcome(verdict, f"{reason}; net {a.p_total_w:+.0f} W ({SIGN})", SRC_CLAMP_ANGLES,
                   Measured(round(a.p_total_w, 1), "W"),
                   Expected(None, value="clamp k on Lk, arrow into the premises"))


def capture_result(ctx: Context, value: Any, *, load: str = "all", expect: str = "import",
                   tolerance_deg: float = 20.0, min_current_fraction: float = 0.1
                   ) -> ThreePhaseCaptureResult:
    """The one analysis of a recorded three-phase capture, memoised per file and settings
    (the check and the record's table and phasor diagram read the same object)."""
    from ..analyses.threephase import analyse_threephase_capture
    from ..captures import CaptureError

    path = ctx.file_path(value)
    name = str(value.get("name", "capture"))

    def run():
        try:
            return analyse_threephase_capture(path, load=load, expect=expect, name=name,
                                              tolerance_deg=tolerance_deg,
                                              min_current_fraction=min_current_fraction)
        except (CaptureError, ValueError) as exc:
            return ValueError(str(exc))

    result = ctx.memo(("threephase-capture", value["sha256"], load, expect, tolerance_deg,
                       min_current_fraction, name), run, shared=True)
    if isinstance(result, Exception):
        raise result
    return result


# -- what the diverter regulates --------------------------------------------------------------

SRC_TARGET = ("common practice: the diverter should regulate the quantity "
              "that is billed (a meter that nets the phases bills the sum; one that counts "
              "each phase bills each phase)")


def _metering(text: str) -> str:
    t = text.lower()
    if "net" in t or "sum" in t:
        return "net"
    if "each phase" in t or "per phase" in t:
        return "per-phase"
    return "unknown"


def _target(text: str) -> str:
    t = text.lower()
    if "sum" in t or "net" in t or "all three" in t:
        return "sum"
    if "each phase" in t:
        return "each"
    return _phase_named(text) or "unknown"


@check(
    "regulation_target",
    summary="the diverter regulates the quantity the meter bills",
    source=SRC_TARGET,
    kinds=("choice",),
    inputs={
        "metering": Input("how the meter counts: net across the phases, each phase on its "
                          "own, not known (choice item)"),
        "elements": Input("which phase feeds each element (choice item)"),
        "measured": Input("which phases have a clamp (choice item)"),
    },
)
def regulation_target(ctx: Context) -> Outcome:
    target = _target(str(ctx.value))
    metering = _metering(str(ctx.input("metering")))
    elements = str(ctx.input("elements"))
    measured_text = str(ctx.input("measured"))
    all_clamped = _phase_named(measured_text) is None
    element_phase = _phase_named(elements)
    shown = Measured(str(ctx.value), None)
    if metering == "unknown":
        return Outcome(REVIEW, "how the meter counts is not known: read the supply contract or "
                       "the meter's documentation, then set the target (the sum for a meter "
                       "that nets the phases, the element's phase for one that counts each)",
                       SRC_TARGET, shown)
    if metering == "net":
        want = Expected(None, value="the sum of the three phases")
        if target == "sum":
            if not all_clamped:
                return Outcome(FAIL, "the target is the sum but only one phase has a clamp: "
                               "fit a clamp on every phase, or the diverter cannot see the sum",
                               SRC_TARGET, shown, want)
            return Outcome(PASS, "the meter nets the phases and the diverter regulates their "
                           "sum", SRC_TARGET, shown, want)
        if target == "each":
            return Outcome(REVIEW, "the meter nets the phases but the diverter holds each "
                           "phase at zero on its own: it works, but surplus on a phase whose "
                           "element is off is still exported; regulate the sum", SRC_TARGET,
                           shown, want)
        return Outcome(FAIL, f"the meter bills the sum of the phases but the diverter regulates "
                       f"{target} alone: export on the other phases is not used (or import "
                       "there is paid for); set it to regulate the sum, with a clamp on every "
                       "phase", SRC_TARGET, shown, want)
    # each phase counted on its own
    if element_phase is None:  # an element on every phase
        want = Expected(None, value="each phase on its own")
        if target == "each":
            return Outcome(PASS, "the meter counts each phase and the diverter regulates each "
                           "phase on its own", SRC_TARGET, shown, want)
        return Outcome(FAIL, f"the meter counts each phase on its own but the diverter "
                       f"regulates {'the sum' if target == 'sum' else target}: import on one "
                       "phase is billed even when another exports; regulate each phase",
                       SRC_TARGET, shown, want)
    want = Expected(None, value=element_phase)
    if target == element_phase:
        return Outcome(PASS, f"the meter counts each phase and the diverter regulates "
                       f"{element_phase}, the phase of its element", SRC_TARGET, shown, want)
    what = "the sum" if target == "sum" else target
    return Outcome(FAIL, f"the meter counts each phase on its own but the diverter regulates "
                   f"{what}, not {element_phase} where its element is: it would import on "
                   f"{element_phase} to offset export elsewhere, and both are billed",
                   SRC_TARGET, shown, want)


# -- regulation log judged on the billed quantity ---------------------------------------------

SRC_REGULATION_BILLED = ("common practice (grid settles in a dead band around zero), judged on "
                         "the quantity the meter bills (common practice); "
                         "spread ≤ 3 × dead band our default")


@check(
    "regulation_log_billed",
    summary="grid power held in the dead band on the billed quantity (sum or phase)",
    source=SRC_REGULATION_BILLED,
    kinds=("file",),
    inputs={"dead_band": Input("dead band D in W (power reading or constant)"),
            "target": Input("what the diverter regulates (choice item)")},
)
def regulation_log_billed(ctx: Context) -> Outcome:
    from ..analyses.regulation import judge_stats
    from ..captures import CaptureError
    from ..captures.threephase_csv import read_phase_power_log
    from ..physics import regulation

    band = float(ctx.input("dead_band"))
    target = _target(str(ctx.input("target")))
    path = ctx.file_path(ctx.value)

    def run():
        try:
            return read_phase_power_log(path)
        except CaptureError as exc:
            return ValueError(str(exc))

    log = ctx.memo(("phase-power-log", ctx.value["sha256"]), run)
    if isinstance(log, Exception):
        raise log
    series: dict[str, Any]
    if target == "sum":
        net = log.net_w()
        if net is None:
            raise ValueError(f"{log.source}: judging the sum needs grid_w or all three of "
                             "grid_l1_w, grid_l2_w, grid_l3_w")
        series = {"the sum of the phases": net}
    elif target == "each":
        if len(log.phase_w) != 3:
            raise ValueError(f"{log.source}: judging each phase needs grid_l1_w, grid_l2_w and "
                             "grid_l3_w")
        series = dict(log.phase_w)
    elif target in log.phase_w:
        series = {target: log.phase_w[target]}
    else:
        raise ValueError(f"{log.source}: the diverter regulates {target} but the log has no "
                         f"grid_{target.lower()}_w column")
    if not band > 0:
        raise ValueError("the dead band must be greater than zero, e.g. 50 W")
    verdicts, parts, means = [], [], []
    for label, grid in series.items():
        stats = regulation.grid_statistics(log.time_s, grid)
        verdict, reason = judge_stats(stats, band)
        verdicts.append(verdict)
        means.append(stats.mean_grid_w)
        parts.append(f"{label}: {reason}; exported "
                     f"{stats.exported_wh:.1f} Wh")
    mean = max(means, key=abs)
    return Outcome(worst(*verdicts), " | ".join(parts) + f" ({SIGN})", SRC_REGULATION_BILLED,
                   Measured(round(mean, 1), "W"), Expected("W", min=-band, max=band))
