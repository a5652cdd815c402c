"""Checks on the element circuit's conductors, fault current and test settings."""

from __future__ import annotations

from ..physics import protection as prot
from ..units import Bound
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

SRC_R1R2 = (
    "IEC 60364-6, 6.4.3.2 continuity of protective conductors; IEC 60228 copper conductor "
    "resistance at 20 °C (from memory); ratio limits: common practice"
)


@check(
    "r1r2_continuity",
    summary="R1+R2 against what the circuit's length and conductor sizes allow (copper)",
    source=SRC_R1R2,
    quantities=("resistance",),
    inputs={
        "length": Input("cable length of the circuit, origin to the far end (length reading)"),
        "line_size": Input("line conductor cross-section (area reading)"),
        "cpc_size": Input("protective conductor cross-section (area reading)"),
    },
    params={
        "max_ratio": Param(2.0, None, "common practice", "review above this multiple of the "
                           "copper figure at 20 °C"),
        "min_ratio": Param(0.5, None, "common practice", "review below this fraction of it"),
    },
    bounds=True,
)
def r1r2_continuity(ctx: Context) -> Outcome:
    if isinstance(ctx.value, Bound) and ctx.value.open:  # whatever the cable's length
        return Outcome(FAIL, "open circuit: the line or the protective conductor is not "
                       "continuous end to end; find the break before energising", SRC_R1R2,
                       Measured("OL", "Ω", bound="open"))
    length = float(ctx.input("length"))
    line = float(ctx.input("line_size")) * 1e6  # m² → mm²
    cpc = float(ctx.input("cpc_size")) * 1e6
    copper = prot.r1r2_expected_ohm(length, line, cpc)
    hi, lo = copper * ctx.param("max_ratio"), copper * ctx.param("min_ratio")
    expected = Expected("Ω", min=round(lo, 3), max=round(hi, 3))
    cable = f"{f(length)} m of {f(round(line, 2))}/{f(round(cpc, 2))} mm² copper"
    if isinstance(ctx.value, Bound):
        measured = Measured(ctx.value.si, "Ω", bound="over")
        if ctx.value.si > hi:
            times = f(round(ctx.value.si / copper, 1))
            return Outcome(REVIEW, f"R1+R2 {measured.text()} is over {times} times what "
                           f"{cable} gives ({copper:.3f} Ω at 20 °C): a broken or loose "
                           "joint, or a wrong reading; find it", SRC_R1R2, measured, expected)
        return Outcome(REVIEW, f"the tester shows only R1+R2 {measured.text()}: measure on a "
                       "low-resistance range", SRC_R1R2, measured, expected)
    r = float(ctx.value)
    measured = Measured(r, "Ω")
    if r > hi:
        return Outcome(REVIEW, f"R1+R2 {f(r)} Ω is {f(round(r / copper, 1))} times what {cable} "
                       f"gives ({copper:.3f} Ω at 20 °C): a loose or corroded joint, a smaller "
                       "conductor than declared, or leads not nulled; find it", SRC_R1R2,
                       measured, expected)
    if r < lo:
        return Outcome(REVIEW, f"R1+R2 {f(r)} Ω is less than half of what {cable} gives "
                       f"({copper:.3f} Ω at 20 °C): a parallel path, a shorter run or a larger "
                       "conductor than declared; check the length and sizes", SRC_R1R2,
                       measured, expected)
    return Outcome(PASS, f"R1+R2 {f(r)} Ω for {cable} ({copper:.3f} Ω at 20 °C)", SRC_R1R2,
                   measured, expected)


SRC_PFC = (
    "IEC 60364-4-43, 434.5.1: a device's breaking capacity at least the prospective fault "
    "current, unless an upstream device gives back-up protection (from memory); Icn per "
    "IEC 60898-1; Ipf ≈ U0/Ze (from memory)"
)


@check(
    "prospective_fault_current",
    summary="prospective fault current against the breaker's Icn, cross-checked with U0/Ze",
    source=SRC_PFC,
    quantities=("current",),
    inputs={
        "breaker_icn": Input("breaker rated short-circuit capacity Icn (current reading)"),
        "zs": Input("Zs of the circuit (resistance reading)", required=False),
        "r1r2": Input("R1+R2 of the circuit (resistance reading)", required=False),
        "supply_voltage": Input("measured supply voltage U0 (voltage reading)",
                                required=False),
    },
    params={
        "u0_v": Param(230.0, "V", "IEC 60038 nominal, used when no supply reading is given"),
        "tolerance": Param(0.3, None, "IEC 61557 operating uncertainty up to ±30 % "
                           "(from memory)", "how far below U0/Ze the reading may be"),
    },
)
def prospective_fault_current(ctx: Context) -> Outcome:
    pfc = float(ctx.value)
    icn = float(ctx.input("breaker_icn"))
    measured = Measured(round(pfc / 1000, 4), "kA")
    expected = Expected("kA", max=round(icn / 1000, 4))
    notes: list[tuple[str, str]] = []
    if icn < pfc:
        notes.append((REVIEW, f"the breaker's Icn {f(icn / 1000)} kA is below the prospective "
                      f"fault current {f(round(pfc / 1000, 3))} kA: acceptable only with "
                      "back-up protection by an upstream device (the supplier's cut-out fuse, "
                      "or a consumer unit with a conditional short-circuit rating): confirm "
                      "which and record it"))
    else:
        notes.append((PASS, f"prospective fault current {f(round(pfc / 1000, 3))} kA ≤ Icn "
                      f"{f(icn / 1000)} kA"))
    if ctx.has("zs") and ctx.has("r1r2"):
        zs, r1r2 = ctx.input("zs"), ctx.input("r1r2")
        if not isinstance(zs, Bound) and not isinstance(r1r2, Bound):
            ze = float(zs) - float(r1r2)
            u0 = float(ctx.input("supply_voltage")) if ctx.has("supply_voltage") \
                else float(ctx.param("u0_v"))
            if ze > 0:
                line_earth = prot.fault_current_a(u0, ze)
                tol = float(ctx.param("tolerance"))
                if pfc < line_earth * (1 - tol):
                    notes.append((REVIEW, f"{f(round(pfc / 1000, 3))} kA is well below U0/Ze "
                                  f"= {f(round(u0))} V / {f(round(ze, 3))} Ω = "
                                  f"{f(round(line_earth / 1000, 3))} kA; the larger of the "
                                  "line–neutral and line–earth values should not be: check "
                                  "both readings"))
                else:
                    notes.append((PASS, f"consistent with U0/Ze ≈ "
                                  f"{f(round(line_earth / 1000, 3))} kA"))
    verdict = worst(*(v for v, _ in notes))
    ordered = [t for v, t in notes if v != PASS] + [t for v, t in notes if v == PASS]
    return Outcome(verdict, "; ".join(ordered), SRC_PFC, measured, expected)


SRC_TEST_VOLTAGE = (
    "IEC 60364-6, Table 6A (2006) / Table 6.1 (2016): 500 V DC for circuits up to 500 V, "
    "250 V for SELV/PELV, 1000 V above 500 V (from memory)"
)


@check(
    "insulation_test_voltage",
    summary="insulation test voltage suits the circuit voltage",
    source=SRC_TEST_VOLTAGE,
    quantities=("voltage",),
    inputs={"circuit_voltage": Input("nominal circuit voltage (reading or constant)",
                                     required=False)},
    params={
        "circuit_v": Param(230.0, "V", "IEC 60038 nominal, when no input is given"),
        "selv": Param(0, None, SRC_TEST_VOLTAGE, "1 for a SELV or PELV circuit"),
        "max_factor": Param(2.0, None, "common practice", "review above this multiple of the "
                            "table's test voltage"),
    },
)
def insulation_test_voltage(ctx: Context) -> Outcome:
    circuit_v = float(ctx.input("circuit_voltage")) if ctx.has("circuit_voltage") \
        else float(ctx.param("circuit_v"))
    wanted, _ = prot.insulation_min_mohm(circuit_v, bool(ctx.param("selv")))
    used = float(ctx.value)
    top = wanted * float(ctx.param("max_factor"))
    measured = Measured(used, "V")
    expected = Expected("V", min=wanted, max=top)
    if used < wanted:
        return Outcome(REVIEW, f"{f(used)} V DC is below the {f(wanted)} V of the table for a "
                       f"{f(circuit_v)} V circuit: acceptable only where equipment cannot be "
                       "disconnected; say why in the notes", SRC_TEST_VOLTAGE, measured,
                       expected)
    if used > top:
        return Outcome(REVIEW, f"{f(used)} V DC is far above the {f(wanted)} V of the table for "
                       f"a {f(circuit_v)} V circuit: it stresses connected equipment and is "
                       "not the reference test", SRC_TEST_VOLTAGE, measured, expected)
    return Outcome(PASS, f"{f(used)} V DC suits a {f(circuit_v)} V circuit (table: "
                   f"{f(wanted)} V)", SRC_TEST_VOLTAGE, measured, expected)
