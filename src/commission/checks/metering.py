"""Checks on the diverter's own measurement: its metering against a reference instrument,
the clamp's rating, where its voltage is sensed, and what it does when the measurement is
lost. The numbers come from :mod:`commission.physics.metering`."""

from __future__ import annotations

import math

from ..units import format_number as f
from .decision import GUARDED, SRC_DECISION, decide_upper, rule_of, two_significant
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

SRC_METER = ("IEC 62053-21 Ed.1 (2003) class 1/2 error limits as a field guide (from memory); "
             "gain, offset and channel phase error by weighted least squares; reference "
             "instrument's uncertainty combined (GUM 5.1.2)")

POINTS = ("p1", "p2", "p3", "p4")


def _resolution_w(ctx: Context, name: str | None) -> float:
    """Value of the last digit the installer copied from the diverter's display [W]."""
    from ..physics.uncertainty import resolution_of_typed_number
    from ..units import convert

    typed = ctx.extra.get("own_typed") if name is None else ctx.input_typed(name)
    if typed is None:
        return 1.0
    raw, unit = typed
    try:
        res = resolution_of_typed_number(raw)
    except ValueError:
        return 1.0
    return abs(convert(res, unit or "W", "W", "power"))


@check(
    "metering_accuracy",
    summary="the diverter's grid power against a reference instrument (gain, offset, phase)",
    source=SRC_METER,
    kinds=("reading",),
    quantities=("power",),
    inputs={
        "p1_reference": Input("reference power at point 1 (power reading)"),
        "p1_shown": Input("diverter's displayed power at point 1"),
        "p2_reference": Input("reference power at point 2"),
        "p2_shown": Input("diverter's displayed power at point 2"),
        "p3_reference": Input("reference power at point 3"),
        "p4_reference": Input("reference power at a power factor below 0.9", required=False),
        "p4_power_factor": Input("the reference's displacement power factor at point 4",
                                 required=False),
        "p4_shown": Input("diverter's displayed power at point 4", required=False),
        "supply_voltage": Input("supply voltage (reading)", required=False),
    },
    params={
        "accuracy_class": Param("2", None, "IEC 62053-21 (from memory)", "1 or 2"),
        "basic_current_a": Param(10.0, "A", "IEC 62053-21 Ib of a direct meter (from memory)",
                                 "basic current Ib the class limits are stated against"),
        "decision_rule": Param(GUARDED, None, SRC_DECISION, "'guarded' or 'simple'"),
        "phases": Param(1, None, "the supply", "3 when the powers are totals of three phases "
                        "(the current per phase is then a third)"),
    },
)
def metering_accuracy(ctx: Context) -> Outcome:
    """Sits on point 3's displayed power; points 1–3 near unity power factor, point 4 (if the
    site has one) at a power factor below 0.9, which measures the channel phase error."""
    judged = judge_metering(ctx)
    return Outcome(judged.verdict, judged.reason, judged.source, judged.measured,
                   judged.expected)


class MeteringJudgement:
    """Figures and words of the metering check (the record's chart reads the points)."""

    def __init__(self, verdict: str, reason: str, source: str, measured: Measured,
                 expected: Expected | None, points: list[dict], fit) -> None:
        self.verdict, self.reason, self.source = verdict, reason, source
        self.measured, self.expected, self.points, self.fit = measured, expected, points, fit


def judge_metering(ctx: Context) -> MeteringJudgement:
    from ..physics import metering as mt
    from ..physics.uncertainty import combined_standard_uncertainty

    names = [("p1", 1.0), ("p2", 1.0), ("p3", 1.0)]
    if ctx.has("p4_reference") and ctx.has("p4_shown") and ctx.has("p4_power_factor"):
        pf4 = float(ctx.input("p4_power_factor"))
        pf4 = pf4 / 100.0 if pf4 > 1.0 else pf4  # "60 %" is stored as 60 on a ratio item
        names.append(("p4", pf4))
    rule = rule_of(ctx)
    cls = str(ctx.param("accuracy_class")).strip()
    ib = float(ctx.param("basic_current_a"))
    volts = float(ctx.input("supply_voltage")) if ctx.has("supply_voltage") else 230.0
    points = []
    stated = True
    for name, pf in names:
        ref = float(ctx.input(f"{name}_reference"))
        shown = float(ctx.value) if name == "p3" else float(ctx.input(f"{name}_shown"))
        big_u = ctx.input_uncertainty(f"{name}_reference")
        stated = stated and big_u is not None
        res = _resolution_w(ctx, f"{name}_shown" if name != "p3" else None)
        u = combined_standard_uncertainty(0.0 if big_u is None else big_u / 2.0,
                                          res / math.sqrt(12.0))
        points.append({"name": name, "reference_w": ref, "shown_w": shown, "power_factor": pf,
                       "u_w": u})
    fit = mt.fit_metering([p["reference_w"] for p in points],
                          mt.reactive_power_var([p["reference_w"] for p in points],
                                                [p["power_factor"] for p in points]),
                          [p["shown_w"] for p in points], [p["u_w"] for p in points])
    verdicts, notes = [], []
    for p in points:
        ref = p["reference_w"]
        if ref == 0:
            notes.append(f"{p['name']}: zero reference power, not judged")
            continue
        phases = max(1, int(float(ctx.param("phases"))))
        current = abs(ref) / (phases * volts * p["power_factor"])
        limit = mt.class_limit_pct(cls, current / ib, p["power_factor"])
        err = mt.point_error_pct(ref, p["shown_w"])
        p["error_pct"] = err
        if limit is None:
            notes.append(f"{p['name']} ({f(round(ref))} W): below the class's lowest current, "
                         "not judged")
            continue
        u_pct = 2.0 * p["u_w"] / abs(ref) * 100.0 if stated else None
        d = decide_upper(abs(err), u_pct, "%", accept=limit, rule=rule)
        p["limit_pct"] = limit
        verdicts.append(d.verdict)
        if d.verdict != PASS:
            notes.append(f"{p['name']} ({f(round(ref))} W) reads {err:+.1f} % against "
                         f"±{f(limit)} % (class {cls})" + d.tail())
    verdict = worst(*verdicts) if verdicts else REVIEW
    if not verdicts:
        notes.append("no point is large enough to judge against the class: add a larger load")
    advice = _advice(fit)
    if verdict == PASS:
        head = f"every judged point within class {cls}"
    else:
        head = "; ".join(n for n in notes if "not judged" not in n) or "not judged"
    rest = [n for n in notes if "not judged" in n or verdict == PASS]
    if not stated:
        rest.append("no uncertainty applied: the reference instrument states no accuracy")
    reason = "; ".join([head, advice, *rest])
    gain_limit = mt.class_limit_pct(cls, 1.0, 1.0)
    source = f"{SRC_METER}; {SRC_DECISION}" if stated and rule == GUARDED else SRC_METER
    return MeteringJudgement(verdict, reason, source,
                             Measured(round(fit.gain_error * 100, 2), "% gain error"),
                             Expected("%", min=-gain_limit, max=gain_limit), points, fit)


def _signed(x: float) -> str:
    text = f"{x:+.0f}"
    return "0" if text in ("+0", "-0") else text


def _advice(fit) -> str:
    """What to correct, in the installer's words."""
    g, ug = fit.gain_error, fit.gain_error_u
    parts = []
    if abs(g) > 2 * ug and abs(g) >= 0.005:
        word = "high" if g > 0 else "low"
        parts.append(f"gain reads {abs(g) * 100:.1f} % {word} (U {two_significant(2 * ug * 100)}"
                     f" %): multiply the calibration by {fit.calibration_factor:.3f}")
    else:
        parts.append(f"gain error {g * 100:+.1f} % (U {two_significant(2 * ug * 100)} %)")
    b, ub = fit.offset_w, fit.offset_u_w
    if abs(b) > 2 * ub and abs(b) >= 5:
        parts.append(f"offset {_signed(b)} W (U {two_significant(2 * ub)} W): correct the zero "
                     f"by {_signed(-b)} W")
    else:
        parts.append(f"offset {_signed(b)} W (U {two_significant(2 * ub)} W)")
    if fit.phase_error_deg is None:
        parts.append("phase error not measured (no point below power factor 0.9)")
    else:
        d, ud = fit.phase_error_deg, fit.phase_error_u_deg
        lag = "lags" if d > 0 else "leads"
        if abs(d) > 2 * ud and abs(d) >= 0.3:
            parts.append(f"the current channel {lag} the voltage channel by {abs(d):.1f}° "
                         f"(U {two_significant(2 * ud)}°): inductive loads read "
                         f"{'low' if d > 0 else 'high'}; correct the phase calibration")
        else:
            parts.append(f"phase error {d:+.1f}° (U {two_significant(2 * ud)}°)")
    return "; ".join(parts)


SRC_CLAMP_RATING = ("the clamp maker's rated current; a current transformer driven beyond it "
                    "saturates and distorts (common practice)")


@check(
    "clamp_rating",
    summary="clamp rated for the supply's maximum current",
    source=SRC_CLAMP_RATING,
    quantities=("current",),
    inputs={"supply_max": Input("the supply's maximum current: main fuse or breaker rating")},
)
def clamp_rating(ctx: Context) -> Outcome:
    rated = float(ctx.value)
    supply = float(ctx.input("supply_max"))
    expected = Expected("A", min=supply)
    measured = Measured(rated, "A")
    if rated >= supply:
        return Outcome(PASS, f"clamp rated {f(rated)} A ≥ supply maximum {f(supply)} A",
                       SRC_CLAMP_RATING, measured, expected)
    return Outcome(
        FAIL,
        f"clamp rated {f(rated)} A is below the supply's {f(supply)} A: above {f(rated)} A it "
        "saturates and the diverter misreads the grid; fit a clamp rated for the supply",
        SRC_CLAMP_RATING, measured, expected,
    )


SRC_VREF = ("load-side RMS of phase-angle control U·√(P/P0) (Rashid, AC voltage controllers, "
            "from memory) against the supply-side drop d ≈ P·R/U² (CHECKS.md); bands our "
            "default")


@check(
    "voltage_reference_side",
    summary="the diverter senses voltage on the supply side of the triac",
    source=SRC_VREF,
    quantities=("voltage",),
    inputs={"at_zero": Input("the diverter's displayed voltage with its output off")},
    params={
        "pass_drop_pct": Param(3.0, "%", SRC_VREF, "a fall up to this is the supply's own drop"),
        "fail_drop_pct": Param(10.0, "%", SRC_VREF,
                               "a fall beyond this means the voltage is sensed after the triac"),
    },
)
def voltage_reference_side(ctx: Context) -> Outcome:
    """Sits on the displayed voltage at 50 % forced output. Sensed after the triac, a
    phase-angle controller at half power shows about U·√0.5, 29 % low."""
    at_half = float(ctx.value)
    at_zero = float(ctx.input("at_zero"))
    if at_zero <= 0:
        raise ValueError("the voltage with the output off must be positive")
    drop = 100.0 * (at_zero - at_half) / at_zero
    lo, hi = float(ctx.param("pass_drop_pct")), float(ctx.param("fail_drop_pct"))
    measured = Measured(round(drop, 2), "% fall at 50 % output")
    expected = Expected("%", max=lo)
    text = f"{f(at_zero)} V with the output off, {f(at_half)} V at 50 %: a fall of {drop:.1f} %"
    if drop <= lo:
        return Outcome(PASS, f"{text}, the supply's own drop: sensed on the supply side",
                       SRC_VREF, measured, expected)
    if drop >= hi:
        return Outcome(
            FAIL,
            f"{text}: the voltage is sensed after the triac, so the diverter's power "
            "reading is wrong at part output; move the voltage reference to the supply side "
            "(the maker's wiring diagram)",
            SRC_VREF, measured, expected,
        )
    return Outcome(REVIEW, f"{text}: more than a supply's drop; check where the voltage "
                   "reference is connected and the loop impedance", SRC_VREF, measured, expected)


SRC_FAILSAFE = ("the diverter maker's stated response to a lost measurement (no published "
                "default exists)")


@check(
    "failsafe_time",
    summary="the element stops (or a fault shows) soon after the clamp is disconnected",
    source=SRC_FAILSAFE,
    quantities=("time",),
    inputs={"maker_time": Input("the maker's stated time (from the manual)", required=False)},
)
def failsafe_time(ctx: Context) -> Outcome:
    measured_s = float(ctx.value)
    measured = Measured(round(measured_s, 3), "s")
    if not ctx.has("maker_time"):
        return Outcome(
            REVIEW,
            f"the element stopped {f(measured_s)} s after the clamp was disconnected; there is "
            "no published default, so type the maker's stated time to judge it",
            SRC_FAILSAFE, measured, None,
        )
    limit = float(ctx.input("maker_time"))
    expected = Expected("s", max=limit)
    if measured_s <= limit:
        return Outcome(PASS, f"stopped after {f(measured_s)} s, within the maker's "
                       f"{f(limit)} s", SRC_FAILSAFE, measured, expected)
    return Outcome(
        FAIL,
        f"stopped only after {f(measured_s)} s, slower than the maker's {f(limit)} s: the "
        "diverter keeps heating from the grid when its measurement is lost; check the "
        "firmware and its settings, or ask the maker",
        SRC_FAILSAFE, measured, expected,
    )

