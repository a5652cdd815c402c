"""Checks on the supply: voltage band, frequency, polarity."""

from __future__ import annotations

from .registry import FAIL, PASS, Context, Expected, Measured, Outcome, Param, check

SRC_VOLTAGE = "IEC 60038 (230 V, +10 %/−10 %)"


@check(
    "supply_voltage",
    summary="supply voltage within the nominal band",
    source=SRC_VOLTAGE,
    quantities=("voltage",),
    params={
        "nominal_v": Param(230.0, "V", "IEC 60038", "nominal voltage"),
        "below_pct": Param(10.0, "%", "IEC 60038", "band below nominal"),
        "above_pct": Param(10.0, "%", "IEC 60038", "band above nominal"),
    },
)
def supply_voltage(ctx: Context) -> Outcome:
    u = float(ctx.value)
    nominal = ctx.param("nominal_v")
    lo = nominal * (1 - ctx.param("below_pct") / 100)
    hi = nominal * (1 + ctx.param("above_pct") / 100)
    expected = Expected("V", min=round(lo, 3), max=round(hi, 3))
    measured = Measured(u, "V")
    if lo <= u <= hi:
        return Outcome(PASS, f"{u:g} V is inside {lo:g}–{hi:g} V", SRC_VOLTAGE, measured, expected)
    side = "low" if u < lo else "high"
    return Outcome(
        FAIL,
        f"{u:g} V is {side}: outside {lo:g}–{hi:g} V; measure again at the origin and ask the "
        "network operator if it persists",
        SRC_VOLTAGE,
        measured,
        expected,
    )


SRC_FREQUENCY = "EN 50160, 4.2.1 (±1 % for 99.5 % of a year; from memory)"


@check(
    "supply_frequency",
    summary="supply frequency close to 50 or 60 Hz",
    source=SRC_FREQUENCY,
    quantities=("frequency",),
    params={
        "nominal_hz": Param(None, "Hz", "EN 50160", "50 or 60; empty: the nearer of the two"),
        "tolerance_pct": Param(1.0, "%", SRC_FREQUENCY),
    },
)
def supply_frequency(ctx: Context) -> Outcome:
    f = float(ctx.value)
    nominal = ctx.param("nominal_hz") or (50.0 if abs(f - 50) <= abs(f - 60) else 60.0)
    tol = nominal * ctx.param("tolerance_pct") / 100
    expected = Expected("Hz", min=nominal - tol, max=nominal + tol)
    if abs(f - nominal) <= tol:
        return Outcome(PASS, f"{f:g} Hz on a {nominal:g} Hz system", SRC_FREQUENCY,
                       Measured(f, "Hz"), expected)
    return Outcome(
        FAIL,
        f"{f:g} Hz is more than {tol:g} Hz from {nominal:g} Hz: check the instrument; "
        "an islanded or generator supply needs its own assessment",
        SRC_FREQUENCY,
        Measured(f, "Hz"),
        expected,
    )


SRC_POLARITY = "IEC 60364-6, 6.4.3.6 polarity (from memory)"


@check(
    "polarity",
    summary="single-pole devices in the line conductor",
    source=SRC_POLARITY,
    kinds=("confirm", "choice"),
    params={"correct_option": Param("correct", None, "checklist", "for a choice item")},
)
def polarity(ctx: Context) -> Outcome:
    value = ctx.value
    ok = value is True or (isinstance(value, str) and value == ctx.param("correct_option"))
    shown = {True: "yes", False: "no"}.get(value, value) if isinstance(value, bool) else value
    wanted = "yes" if isinstance(value, bool) else ctx.param("correct_option")
    expected = Expected(None, value=wanted)
    if ok:
        return Outcome(PASS, "polarity correct", SRC_POLARITY, Measured(shown, None), expected)
    return Outcome(
        FAIL,
        "polarity wrong: a switch, breaker or element terminal sits in the neutral; "
        "correct the wiring before energising",
        SRC_POLARITY,
        Measured(shown, None),
        expected,
    )
