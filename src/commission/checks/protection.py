"""Checks on protective devices and the safety tests of initial verification."""

from __future__ import annotations

from ..physics import protection as prot
from ..units import Bound
from ..units import format_number as f
from .decision import (
    DECISION_PARAM,
    GUARDED,
    SRC_DECISION,
    decide_lower,
    decide_upper,
    rule_of,
)
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
    worst,
)


def _bound_measured(value: Bound, scale: float, unit: str) -> Measured:
    """How a bound reading is shown among a check's figures (scale: SI → unit)."""
    if value.open:
        return Measured("OL", unit, bound="open")
    return Measured(round(value.si * scale, 6), unit, bound="over")

SRC_RCD_TYPE = (
    "IEC 60364-5-53, 531.3.3 type selection (from memory); type A or better for "
    "electronic phase-controlled loads is common practice"
)


@check(
    "rcd_type",
    summary="RCD type suits a phase-controlled load (A or better)",
    source=SRC_RCD_TYPE,
    kinds=("choice",),
    params={"accepted": Param("A,F,B", None, SRC_RCD_TYPE, "comma-separated types")},
)
def rcd_type(ctx: Context) -> Outcome:
    accepted = csv_list(ctx.param("accepted"))
    value = str(ctx.value)
    expected = Expected(None, value=" or ".join(accepted))
    if value in accepted:
        return Outcome(PASS, f"type {value} detects the residual currents of an electronic load",
                       SRC_RCD_TYPE, Measured(value, None), expected)
    return Outcome(
        FAIL,
        f"type {value} may be blinded by pulsating DC residual current from the triac: "
        f"fit type {' or '.join(accepted)}",
        SRC_RCD_TYPE, Measured(value, None), expected,
    )


SRC_RCD_RATED = "IEC 60364-4-41, 411.3.3 additional protection by 30 mA RCD (from memory)"


@check(
    "rcd_rated_residual",
    summary="rated residual operating current IΔn gives additional protection",
    source=SRC_RCD_RATED,
    quantities=("current",),
    params={"max_ma": Param(30.0, "mA", SRC_RCD_RATED)},
)
def rcd_rated_residual(ctx: Context) -> Outcome:
    ma = float(ctx.value) * 1000
    limit = ctx.param("max_ma")
    expected = Expected("mA", max=limit)
    if ma <= limit:
        return Outcome(PASS, f"IΔn {f(ma)} mA", SRC_RCD_RATED, Measured(ma, "mA"), expected)
    return Outcome(
        REVIEW,
        f"IΔn {f(ma)} mA is above {f(limit)} mA: no additional protection; acceptable only "
        "where local rules do not ask for it",
        SRC_RCD_RATED, Measured(ma, "mA"), expected,
    )


SRC_RCD_TIME = "IEC 61008-1 / IEC 61009-1, Table 1 break times (from memory)"


@check(
    "rcd_trip_time",
    summary="RCD break time at a multiple of IΔn (½: must not trip)",
    source=SRC_RCD_TIME,
    bounds=True,
    kinds=("reading", "confirm"),
    quantities=("time",),
    inputs={
        "multiple": Input("test current as a multiple of IΔn: 0.5, 1, 2 or 5"),
        "delay_class": Input("'general' or 'S' (choice item); general if absent", required=False),
    },
    params={
        "max_ms": Param(None, "ms", SRC_RCD_TIME, "empty: from the table by class and multiple"),
        "min_ms": Param(None, "ms", SRC_RCD_TIME, "empty: from the table by class and multiple"),
        "decision_rule": DECISION_PARAM,
    },
)
def rcd_trip_time(ctx: Context) -> Outcome:
    multiple = float(ctx.input("multiple"))
    delay = str(ctx.input("delay_class")) if ctx.has("delay_class") else "general"
    cls = "S" if delay.upper() == "S" else "general"
    if multiple == 0.5:
        # Confirm item: "the RCD did not trip at ½ IΔn" (yes passes).
        expected = Expected(None, value="no trip")
        if ctx.value is True:
            return Outcome(PASS, "did not trip at ½ IΔn", SRC_RCD_TIME,
                           Measured("no trip", None), expected)
        return Outcome(
            FAIL,
            "tripped at ½ IΔn: over-sensitive device or standing leakage on the circuit; "
            "find the leakage or replace the RCD",
            SRC_RCD_TIME, Measured("tripped", None), expected,
        )
    if isinstance(ctx.value, bool):
        raise ValueError("a trip-time check above ½ IΔn needs a time reading")
    lo, hi = prot.rcd_break_time_limits_ms(cls, multiple)
    if ctx.param("max_ms") is not None:
        hi = float(ctx.param("max_ms"))
    if ctx.param("min_ms") is not None:
        lo = float(ctx.param("min_ms"))
    if isinstance(ctx.value, Bound):  # ">300 ms": the tester stopped before a trip
        label = f"{f(multiple)} × IΔn"
        measured = _bound_measured(ctx.value, 1000, "ms")
        expected = Expected("ms", min=lo, max=hi)
        if hi is not None and ctx.value.si * 1000 >= hi:
            return Outcome(FAIL, f"no trip within {measured.text()} at {label}, the limit is "
                           f"{f(hi)} ms: the RCD does not disconnect in time; replace it and "
                           "test again", SRC_RCD_TIME, measured, expected)
        return Outcome(REVIEW, f"the tester shows only {measured.text()} at {label}: test "
                       "again to read the trip time", SRC_RCD_TIME, measured, expected)
    ms = float(ctx.value) * 1000
    u = ctx.uncertainty()
    u_ms = None if u is None else u * 1000
    rule = rule_of(ctx)
    expected = Expected("ms", min=lo, max=hi)
    measured = Measured(round(ms, 3), "ms")
    label = f"{f(multiple)} × IΔn, {'type S' if cls == 'S' else 'general type'}"
    source = SRC_RCD_TIME if u_ms is None or rule != GUARDED else f"{SRC_RCD_TIME}; {SRC_DECISION}"
    slow = decide_upper(ms, u_ms, "ms", accept=hi, rule=rule) if hi is not None else None
    fast = decide_lower(ms, u_ms, "ms", accept=lo, rule=rule) if lo is not None else None
    if slow is not None and slow.verdict == FAIL:
        return Outcome(
            FAIL,
            f"{f(ms)} ms at {label} is slower than {f(hi)} ms: the RCD does not disconnect "
            f"in time; replace it and test again{slow.tail()}",
            source, measured, expected,
        )
    if fast is not None and fast.verdict == FAIL:
        return Outcome(
            FAIL,
            f"{f(ms)} ms at {label} is faster than {f(lo)} ms: not acting as a selective "
            f"device; check its marking{fast.tail()}",
            source, measured, expected,
        )
    for d, bound in ((slow, hi), (fast, lo)):
        if d is not None and d.verdict == REVIEW:
            return Outcome(
                REVIEW,
                f"{f(ms)} ms at {label} is within the tester's uncertainty of {f(bound)} ms: "
                f"repeat the test, or use a more accurate tester{d.tail()}",
                source, measured, expected,
            )
    tail = (slow or fast).tail() if (slow or fast) is not None else ""
    return Outcome(PASS, f"{f(ms)} ms at {label} is within {expected.text()}{tail}",
                   source, measured, expected)


SRC_INSULATION = (
    "IEC 60364-6, Table 6A (2006) / Table 6.1 (2016): ≥ 1.0 MΩ at 500 V DC up to 500 V; "
    "SELV/PELV ≥ 0.5 MΩ at 250 V (from memory)"
)


@check(
    "insulation_resistance",
    summary="insulation resistance above the minimum for the circuit voltage",
    source=SRC_INSULATION,
    bounds=True,
    quantities=("resistance",),
    inputs={
        "circuit_voltage": Input("nominal circuit voltage (reading or constant)", required=False),
        "test_voltage": Input("test voltage used (voltage reading)", required=False),
    },
    params={
        "min_mohm": Param(None, "MΩ", SRC_INSULATION, "empty: from the table"),
        "selv": Param(0, None, SRC_INSULATION, "1 for a SELV or PELV circuit"),
        "decision_rule": DECISION_PARAM,
    },
)
def insulation_resistance(ctx: Context) -> Outcome:
    circuit_v = float(ctx.input("circuit_voltage")) if ctx.has("circuit_voltage") else 230.0
    test_v, minimum = prot.insulation_min_mohm(circuit_v, bool(ctx.param("selv")))
    if ctx.param("min_mohm") is not None:
        minimum = float(ctx.param("min_mohm"))
    mohm = float(ctx.value) / 1e6
    expected = Expected("MΩ", min=minimum)
    measured = Measured(round(mohm, 6), "MΩ")
    if isinstance(ctx.value, Bound):
        # Over-range (">299 MΩ") or OL: the true resistance is at least the bound.
        measured = _bound_measured(ctx.value, 1e-6, "MΩ")
        if mohm < minimum:
            return Outcome(
                REVIEW,
                f"the tester shows only {measured.text()}, which does not reach the minimum "
                f"{f(minimum)} MΩ: test on a range that reads above {f(minimum)} MΩ",
                SRC_INSULATION, measured, expected,
            )
        shown = measured.text()
        mohm_text = f"{shown} (beyond the tester's range)"
    else:
        mohm_text = f"{f(mohm)} MΩ"
    # a bound (">299 MΩ") above the minimum passes as it stands: the tester's uncertainty
    # applies to a figure it shows, not to the end of its range
    u = None if isinstance(ctx.value, Bound) else ctx.uncertainty()
    rule = rule_of(ctx)
    d = decide_lower(mohm, None if u is None else u / 1e6, "MΩ", accept=minimum, rule=rule)
    source = (SRC_INSULATION if u is None or rule != GUARDED
              else f"{SRC_INSULATION}; {SRC_DECISION}")
    if d.verdict == FAIL:
        return Outcome(
            FAIL,
            f"{f(mohm)} MΩ is below {f(minimum)} MΩ: find the fault (damp, a damaged cable, "
            f"the element sheath) before energising{d.tail()}",
            source, measured, expected,
        )
    if d.verdict == REVIEW:
        return Outcome(
            REVIEW,
            f"{f(mohm)} MΩ is within the tester's uncertainty of {f(minimum)} MΩ: too close "
            f"to call; dry out and test again, or find the leakage{d.tail()}",
            source, measured, expected,
        )
    if ctx.has("test_voltage") and float(ctx.input("test_voltage")) < test_v:
        used = float(ctx.input("test_voltage"))
        return Outcome(
            REVIEW,
            f"{mohm_text}, but tested at {f(used)} V instead of {f(test_v)} V: acceptable only "
            f"where the electronics cannot be disconnected{d.tail()}",
            source, measured, expected,
        )
    return Outcome(PASS, f"{mohm_text} ≥ {f(minimum)} MΩ{d.tail()}", source, measured,
                   expected)


SRC_ZS = (
    "IEC 60364-4-41, 411.4.4 (Zs·Ia ≤ U0); Ia at the top of the IEC 60898-1 instantaneous "
    "range; Cmin 0.95 CENELEC TR 50480 (from memory); cold reading ≤ 80 % common practice"
)


SRC_ZS_R1R2 = (
    "Zs = Ze + (R1+R2) (IEC 60364-6, 6.4.3.7, from memory); tolerance: IEC 61557 testers "
    "may be out by up to ±30 % (from memory)"
)
SRC_ZE = (
    "typical maximum Ze declared by UK network operators: TN-C-S 0.35 Ω, TN-S 0.8 Ω "
    "(from memory; common practice, other countries differ)"
)


@check(
    "loop_impedance",
    summary="earth fault loop impedance Zs against the breaker's maximum (TN); with R1+R2, "
    "Zs against R1+R2 and Ze = Zs − (R1+R2) against its typical maximum",
    source=SRC_ZS,
    quantities=("resistance",),
    inputs={
        "curve": Input("breaker curve B, C or D (choice item)"),
        "rating": Input("breaker rating In (current reading)"),
        "r1r2": Input("R1+R2 of the same circuit (resistance reading)", required=False),
        "earthing": Input("earthing system TN-S or TN-C-S (choice item), for the typical "
                          "maximum Ze", required=False),
    },
    params={
        "u0_v": Param(230.0, "V", "IEC 60364-4-41"),
        "c_min": Param(0.95, None, "CENELEC TR 50480 (from memory)"),
        "cold_factor": Param(0.8, None, "common practice: cold reading ≤ 80 % of Zs,max"),
        "r1r2_tolerance": Param(0.3, None, SRC_ZS_R1R2,
                                "Zs may fall below R1+R2 by this fraction before it fails"),
        "ze_max_tncs": Param(0.35, "Ω", SRC_ZE),
        "ze_max_tns": Param(0.8, "Ω", SRC_ZE),
        "decision_rule": DECISION_PARAM,
    },
    bounds=True,
)
def loop_impedance(ctx: Context) -> Outcome:
    if not isinstance(ctx.value, Bound):
        # Zs below R1+R2 is a wrong reading whatever the breaker: say so before asking
        # for the breaker's curve and rating.
        extra = _zs_against_r1r2(ctx, float(ctx.value))
        if extra is not None and extra[0] == FAIL:
            return Outcome(FAIL, extra[1], f"{SRC_ZS_R1R2}", Measured(float(ctx.value), "Ω"))
    curve = str(ctx.input("curve"))
    rating = float(ctx.input("rating"))
    zmax = prot.loop_impedance_max_ohm(curve, rating, ctx.param("u0_v"), ctx.param("c_min"))
    factor = ctx.param("cold_factor")
    limit = zmax * factor
    expected = Expected("Ω", max=round(limit, 3))
    label = f"{curve}{f(rating)}"
    if isinstance(ctx.value, Bound):
        measured = _bound_measured(ctx.value, 1, "Ω")
        if ctx.value.open:
            return Outcome(FAIL, "open circuit: no earth fault loop at the element end; the "
                           "protective conductor or the supply earth is broken",
                           SRC_ZS, measured, expected)
        if ctx.value.si > zmax:
            return Outcome(FAIL, f"{measured.text()} exceeds Zs,max {zmax:.2f} Ω for {label}: "
                           "the breaker will not disconnect in time", SRC_ZS, measured, expected)
        return Outcome(REVIEW, f"the tester shows only {measured.text()}: measure on a range "
                       f"that reads below {limit:.2f} Ω", SRC_ZS, measured, expected)
    zs = float(ctx.value)
    measured = Measured(zs, "Ω")
    base = _zs_against_max(zs, zmax, limit, factor, label, measured, expected,
                           ctx.uncertainty(), rule_of(ctx))
    extra = _zs_against_r1r2(ctx, zs)
    if extra is None:
        return base
    verdict, reason, source = extra
    if verdict == PASS:
        return Outcome(base.verdict, f"{base.reason}; {reason}", f"{base.source}; {source}",
                       measured, expected)
    first = worst(base.verdict, verdict)
    text = f"{reason}; {base.reason}" if first == verdict else f"{base.reason}; {reason}"
    return Outcome(first, text, f"{base.source}; {source}", measured, expected)


def _zs_against_r1r2(ctx: Context, zs: float) -> tuple[str, str, str] | None:
    """Zs = Ze + (R1+R2): a Zs clearly below R1+R2 is a wrong reading; Ze against the
    typical maximum of the earthing system. None when R1+R2 is not known."""
    if not ctx.has("r1r2"):
        return None
    r1r2 = ctx.input("r1r2")
    if isinstance(r1r2, Bound):
        return None  # R1+R2's own check fails or reviews it
    r1r2 = float(r1r2)
    tol = float(ctx.param("r1r2_tolerance"))
    if zs < r1r2 * (1 - tol):
        return (FAIL, f"Zs {f(zs)} Ω (this item) is below R1+R2 {f(r1r2)} Ω of the same "
                f"circuit (item {ctx.refs.get('r1r2')}) by more than {f(tol * 100)} %; Zs "
                "includes R1+R2, so one of the two readings is wrong: measure both again",
                SRC_ZS_R1R2)
    ze = max(zs - r1r2, 0.0)
    system = str(ctx.input("earthing")) if ctx.has("earthing") else ""
    key = {"TN-C-S": "ze_max_tncs", "TN-S": "ze_max_tns"}.get(system)
    if key is None:
        return (PASS, f"Ze = Zs − (R1+R2) ≈ {f(round(ze, 3))} Ω", SRC_ZS_R1R2)
    ze_max = float(ctx.param(key))
    if ze > ze_max:
        return (REVIEW, f"Ze = Zs − (R1+R2) ≈ {f(round(ze, 3))} Ω is above the typical "
                f"{f(ze_max)} Ω for {system}: check the supply's earth (measure Ze at the "
                "origin, main earth disconnected) and the joints", f"{SRC_ZS_R1R2}; {SRC_ZE}")
    return (PASS, f"Ze ≈ {f(round(ze, 3))} Ω within the typical {f(ze_max)} Ω for {system}",
            f"{SRC_ZS_R1R2}; {SRC_ZE}")


def _zs_against_max(zs: float, zmax: float, limit: float, factor: float, label: str,
                    measured: Measured, expected: Expected, u: float | None,
                    rule: str) -> Outcome:
    """Zs against the cold margin and Zs,max, with the tester's uncertainty as a guard band
    on top of the margin (ILAC-G8 non-binary rule)."""
    d = decide_upper(zs, u, "Ω", accept=limit, reject=zmax, rule=rule)
    source = SRC_ZS if u is None or rule != GUARDED else f"{SRC_ZS}; {SRC_DECISION}"
    if d.verdict == PASS:
        return Outcome(
            PASS,
            f"{f(zs)} Ω ≤ {limit:.2f} Ω ({f(factor * 100)} % of Zs,max {zmax:.2f} Ω for "
            f"{label}){d.tail()}",
            source, measured, expected,
        )
    if d.verdict == REVIEW:
        if u is not None and zs <= limit:
            why = (f"{f(zs)} Ω is within the tester's uncertainty of {limit:.2f} Ω "
                   f"({f(factor * 100)} % of Zs,max {zmax:.2f} Ω for {label}): too close to "
                   "call; measure again with a more accurate tester or judge with the cable "
                   "temperature and length")
        elif u is not None and zs > zmax:
            why = (f"{f(zs)} Ω is over Zs,max {zmax:.2f} Ω for {label} but within the tester's "
                   "uncertainty of it: measure again with a more accurate tester")
        else:
            why = (f"{f(zs)} Ω is under Zs,max {zmax:.2f} Ω for {label} but above "
                   f"{f(factor * 100)} % of it: may exceed the limit when the conductors are "
                   "hot; judge with the cable temperature and length")
        return Outcome(REVIEW, why + d.tail(), source, measured, expected)
    return Outcome(
        FAIL,
        f"{f(zs)} Ω exceeds Zs,max {zmax:.2f} Ω for {label}: the breaker will not disconnect "
        f"in time; improve the earth path, shorten the cable or choose another device{d.tail()}",
        source, measured, expected,
    )


SRC_TT = "IEC 60364-4-41, 411.5.3: RA · IΔn ≤ 50 V"


@check(
    "tt_touch_voltage",
    summary="RA·IΔn ≤ 50 V on a TT installation",
    source=SRC_TT,
    bounds=True,
    quantities=("resistance",),
    inputs={"residual_rating": Input("RCD rated residual current IΔn (current reading)")},
    params={"limit_v": Param(50.0, "V", SRC_TT)},
)
def tt_touch_voltage(ctx: Context) -> Outcome:
    idn = float(ctx.input("residual_rating"))
    if isinstance(ctx.value, Bound):
        measured = _bound_measured(ctx.value, 1, "Ω")
        expected = Expected("V", max=ctx.param("limit_v"))
        if ctx.value.open or ctx.value.si * idn > ctx.param("limit_v"):
            return Outcome(FAIL, f"RA {measured.text()} × {f(idn * 1000)} mA exceeds "
                           f"{f(ctx.param('limit_v'))} V: improve the earth electrode",
                           SRC_TT, measured, expected)
        return Outcome(REVIEW, f"the tester shows only RA {measured.text()}: measure on a "
                       "range that gives a figure", SRC_TT, measured, expected)
    ra = float(ctx.value)
    touch = prot.touch_voltage_tt_v(ra, idn)
    limit = ctx.param("limit_v")
    expected = Expected("V", max=limit)
    measured = Measured(round(touch, 3), "V")
    if touch <= limit:
        return Outcome(PASS, f"{f(ra)} Ω × {f(idn * 1000)} mA = {touch:.2f} V ≤ {f(limit)} V",
                       SRC_TT, measured, expected)
    return Outcome(
        FAIL,
        f"{f(ra)} Ω × {f(idn * 1000)} mA = {touch:.1f} V exceeds {f(limit)} V: improve the "
        "earth electrode",
        SRC_TT, measured, expected,
    )


SRC_COORD = "IEC 60364-4-43, 433.1: Ib ≤ In ≤ Iz (I2 ≤ 1.45 Iz holds for IEC 60898 breakers)"


@check(
    "circuit_coordination",
    summary="Ib ≤ In ≤ Iz for the element circuit",
    source=SRC_COORD,
    quantities=("current",),
    inputs={
        "load_power": Input("element rated power (power reading)"),
        "load_voltage": Input("element rated voltage (voltage reading)"),
        "breaker_rating": Input("breaker rating In (current reading)"),
    },
)
def circuit_coordination(ctx: Context) -> Outcome:
    iz = float(ctx.value)
    ib = prot.design_current_a(float(ctx.input("load_power")), float(ctx.input("load_voltage")))
    in_a = float(ctx.input("breaker_rating"))
    expected = Expected("A", min=round(ib, 2), max=iz)
    measured = Measured(in_a, "A")
    text = f"Ib {ib:.1f} A, In {f(in_a)} A, Iz {f(iz)} A"
    if ib <= in_a <= iz:
        return Outcome(PASS, text, SRC_COORD, measured, expected)
    if in_a < ib:
        why = "the breaker is smaller than the element's current and will trip in service"
    else:
        why = ("the breaker does not protect the cable against overload; fit a smaller breaker "
               "or a larger cable")
    return Outcome(FAIL, f"{text}: {why}", SRC_COORD, measured, expected)
