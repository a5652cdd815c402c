"""Checks on the current clamp: direction and placement."""

from __future__ import annotations

from ..units import format_number as f
from .registry import FAIL, PASS, Context, Expected, Input, Measured, Outcome, Param, check

SRC_KNOWN_LOAD = (
    "common practice (known-load clamp test): with PV at zero the grid reading rises by the "
    "load and is positive; ±10 % default tolerance"
)


@check(
    "clamp_known_load",
    summary="clamp direction and size from a known-load test",
    source=SRC_KNOWN_LOAD,
    quantities=("power",),
    inputs={
        "before": Input("grid reading before the load (power reading)"),
        "load": Input("the known load's power (power reading)"),
    },
    params={"tolerance_pct": Param(10.0, "%", SRC_KNOWN_LOAD)},
)
def clamp_known_load(ctx: Context) -> Outcome:
    after = float(ctx.value)
    before = float(ctx.input("before"))
    load = float(ctx.input("load"))
    tol = ctx.param("tolerance_pct") / 100
    change = after - before
    lo, hi = load * (1 - tol), load * (1 + tol)
    expected = Expected("W", min=round(lo, 1), max=round(hi, 1))
    measured = Measured(round(change, 1), "W")
    text = f"grid reading changed by {f(change)} W for a {f(load)} W load"
    if lo <= change <= hi:
        if after <= 0:
            return Outcome(FAIL, f"{text}, but reads {f(after)} W (export) with PV at zero: "
                           "the PV is not at zero or the sign is inverted in the settings",
                           SRC_KNOWN_LOAD, measured, expected)
        return Outcome(PASS, f"{text}: direction and size agree (positive = import)",
                       SRC_KNOWN_LOAD, measured, expected)
    if -hi <= change <= -lo:
        return Outcome(FAIL, f"{text}: the reading fell by the load — the clamp is reversed; "
                       "turn it round so its arrow points into the premises",
                       SRC_KNOWN_LOAD, measured, expected)
    if abs(change) < 0.5 * load:
        return Outcome(FAIL, f"{text}: far too small — the clamp is on the wrong conductor "
                       "(a branch circuit, or the neutral of another circuit) or the load did "
                       "not run", SRC_KNOWN_LOAD, measured, expected)
    return Outcome(FAIL, f"{text}: outside ±{f(tol * 100)} % — check the clamp sits on the "
                   "incoming line only, and the load's real power", SRC_KNOWN_LOAD,
                   measured, expected)
