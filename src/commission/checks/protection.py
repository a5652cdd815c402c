"""Checks on protective devices and the safety tests of initial verification."""

from __future__ import annotations

from ..physics import protection as prot
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
    kinds=("reading", "confirm"),
    quantities=("time",),
    inputs={
        "multiple": Input("test current as a multiple of IΔn: 0.5, 1, 2 or 5"),
        "delay_class": Input("'general' or 'S' (choice item); general if absent", required=False),
    },
    params={
        "max_ms": Param(None, "ms", SRC_RCD_TIME, "empty: from the table by class and multiple"),
        "min_ms": Param(None, "ms", SRC_RCD_TIME, "empty: from the table by class and multiple"),
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
    ms = float(ctx.value) * 1000
    expected = Expected("ms", min=lo, max=hi)
    measured = Measured(round(ms, 3), "ms")
    label = f"{f(multiple)} × IΔn, {'type S' if cls == 'S' else 'general type'}"
    if hi is not None and ms > hi:
        return Outcome(
            FAIL,
            f"{f(ms)} ms at {label} is slower than {f(hi)} ms: the RCD does not disconnect "
            "in time; replace it and test again",
            SRC_RCD_TIME, measured, expected,
        )
    if lo is not None and ms < lo:
        return Outcome(
            FAIL,
            f"{f(ms)} ms at {label} is faster than {f(lo)} ms: not acting as a selective "
            "device; check its marking",
            SRC_RCD_TIME, measured, expected,
        )
    return Outcome(PASS, f"{f(ms)} ms at {label} is within {expected.text()}",
                   SRC_RCD_TIME, measured, expected)


SRC_INSULATION = (
    "IEC 60364-6, Table 6A (2006) / Table 6.1 (2016): ≥ 1.0 MΩ at 500 V DC up to 500 V; "
    "SELV/PELV ≥ 0.5 MΩ at 250 V (from memory)"
)


@check(
    "insulation_resistance",
    summary="insulation resistance above the minimum for the circuit voltage",
    source=SRC_INSULATION,
    quantities=("resistance",),
    inputs={
        "circuit_voltage": Input("nominal circuit voltage (reading or constant)", required=False),
        "test_voltage": Input("test voltage used (voltage reading)", required=False),
    },
    params={
        "min_mohm": Param(None, "MΩ", SRC_INSULATION, "empty: from the table"),
        "selv": Param(0, None, SRC_INSULATION, "1 for a SELV or PELV circuit"),
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
    if mohm < minimum:
        return Outcome(
            FAIL,
            f"{f(mohm)} MΩ is below {f(minimum)} MΩ: find the fault (damp, a damaged cable, "
            "the element sheath) before energising",
            SRC_INSULATION, measured, expected,
        )
    if ctx.has("test_voltage") and float(ctx.input("test_voltage")) < test_v:
        used = float(ctx.input("test_voltage"))
        return Outcome(
            REVIEW,
            f"{f(mohm)} MΩ, but tested at {f(used)} V instead of {f(test_v)} V: acceptable only "
            "where the electronics cannot be disconnected",
            SRC_INSULATION, measured, expected,
        )
    return Outcome(PASS, f"{f(mohm)} MΩ ≥ {f(minimum)} MΩ", SRC_INSULATION, measured, expected)


SRC_ZS = (
    "IEC 60364-4-41, 411.4.4 (Zs·Ia ≤ U0); Ia at the top of the IEC 60898-1 instantaneous "
    "range; Cmin 0.95 CENELEC TR 50480 (from memory); cold reading ≤ 80 % common practice"
)


@check(
    "loop_impedance",
    summary="earth fault loop impedance Zs against the breaker's maximum (TN)",
    source=SRC_ZS,
    quantities=("resistance",),
    inputs={
        "curve": Input("breaker curve B, C or D (choice item)"),
        "rating": Input("breaker rating In (current reading)"),
    },
    params={
        "u0_v": Param(230.0, "V", "IEC 60364-4-41"),
        "c_min": Param(0.95, None, "CENELEC TR 50480 (from memory)"),
        "cold_factor": Param(0.8, None, "common practice: cold reading ≤ 80 % of Zs,max"),
    },
)
def loop_impedance(ctx: Context) -> Outcome:
    curve = str(ctx.input("curve"))
    rating = float(ctx.input("rating"))
    zmax = prot.loop_impedance_max_ohm(curve, rating, ctx.param("u0_v"), ctx.param("c_min"))
    factor = ctx.param("cold_factor")
    zs = float(ctx.value)
    limit = zmax * factor
    expected = Expected("Ω", max=round(limit, 3))
    measured = Measured(zs, "Ω")
    label = f"{curve}{f(rating)}"
    if zs <= limit:
        return Outcome(
            PASS,
            f"{f(zs)} Ω ≤ {limit:.2f} Ω ({f(factor * 100)} % of Zs,max {zmax:.2f} Ω for {label})",
            SRC_ZS, measured, expected,
        )
    if zs <= zmax:
        return Outcome(
            REVIEW,
            f"{f(zs)} Ω is under Zs,max {zmax:.2f} Ω for {label} but above {f(factor * 100)} % "
            "of it: may exceed the limit when the conductors are hot; judge with the cable "
            "temperature and length",
            SRC_ZS, measured, expected,
        )
    return Outcome(
        FAIL,
        f"{f(zs)} Ω exceeds Zs,max {zmax:.2f} Ω for {label}: the breaker will not disconnect "
        "in time; improve the earth path, shorten the cable or choose another device",
        SRC_ZS, measured, expected,
    )


SRC_TT = "IEC 60364-4-41, 411.5.3: RA · IΔn ≤ 50 V"


@check(
    "tt_touch_voltage",
    summary="RA·IΔn ≤ 50 V on a TT installation",
    source=SRC_TT,
    quantities=("resistance",),
    inputs={"residual_rating": Input("RCD rated residual current IΔn (current reading)")},
    params={"limit_v": Param(50.0, "V", SRC_TT)},
)
def tt_touch_voltage(ctx: Context) -> Outcome:
    ra = float(ctx.value)
    idn = float(ctx.input("residual_rating"))
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
