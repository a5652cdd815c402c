"""`commission analyse capture` on a three-phase file: per-phase figures in text or JSON.

The analysis is :func:`commission.analyses.threephase.analyse_threephase_capture` (the same
object the check and the record read); the clamp instructions come from
``checks/threephase.py``. Heavy imports stay inside the functions.
"""

from __future__ import annotations

import textwrap
from typing import Any

import typer

WIDTH = 80
HEADER_HINTS = ("voltage_l1_v", "voltage_l2_v", "current_1_a", "current_2_a", "current_3_a")
COLUMNS_EXAMPLE = "voltage_l1_v=U1,current_1_a=I1,time_s=t"
LOAD_WORDS = {"all": "load on every phase", "one": "load on one phase",
              "unknown": "unknown mix of loads"}
SRC_CLASS_A = "IEC 61000-3-2 Class A Table 1 (from memory; indicative on site)"


def maps_three_phase(columns: dict[str, str] | None) -> bool:
    """True when a column mapping (--columns or an export profile) names per-phase columns."""
    return any(k in HEADER_HINTS or k in ("voltage_l3_v", "current_n_a")
               for k in (columns or {}))


def looks_three_phase(path: str) -> bool:
    """True when the CSV header names per-phase columns (read from the first 64 KiB)."""
    try:
        with open(path, "rb") as fh:
            head = fh.read(1 << 16).decode("utf-8", errors="replace").lower()
    except OSError:
        return False
    for line in head.splitlines():
        text = line.strip()
        if text and not text.startswith("#"):
            return any(h in text for h in HEADER_HINTS)
    return False


def _para(text: str, indent: str = "") -> list[str]:
    return textwrap.wrap(text, WIDTH, initial_indent=indent, subsequent_indent=indent + "  ")


def _f(x: float | None, spec: str) -> str:
    if x is None:
        return "—"
    if spec.endswith(".0f") and abs(x) < 0.5:
        x = 0.0  # no "-0"
    return format(x, spec)


def run(file: str, *, rate: float | None, columns: dict[str, str] | None, load: str,
        expect: str, as_json: bool) -> None:
    """Analyse ``file`` as a three-phase capture and print it."""
    from ..analyses.threephase import analyse_threephase_capture
    from ..captures import CaptureError
    from ..checks.threephase import judge_clamps
    from ..errors import UserError
    from .common import emit_json

    try:
        result = analyse_threephase_capture(file, load=load, expect=expect, columns=columns,
                                            sample_rate_hz=rate, name=file)
    except CaptureError as exc:
        raise UserError(" ".join(str(exc).split())) from None
    except ValueError as exc:
        raise UserError(" ".join(f"{file}: {exc}".split())) from None
    verdict, reason, instructions = judge_clamps(result)
    data = result.as_json()
    data["clamp_verdict"] = {"verdict": verdict, "reason": reason,
                             "instructions": instructions}
    for w in result.warnings:
        for line in textwrap.wrap(f"warning: {w}", WIDTH, subsequent_indent="  "):
            typer.echo(line, err=True)
    if as_json:
        emit_json(data)
        return
    typer.echo("\n".join(text_lines(result, data)))


def text_lines(result, data: dict[str, Any]) -> list[str]:
    from ..analyses.threephase import (
        SIGN_CONVENTION,
        SRC_PER_PHASE,
        SRC_UNBALANCE,
        SRC_UNBALANCE_LIMIT,
    )
    from ..physics.harmonic_limits import class_a_limit_a

    a = result.figures
    lines = _para(f"{result.source_name}: three-phase capture, {a.voltages_measured} voltage"
                  f"{'s' if a.voltages_measured > 1 else ''} and {len(a.clamps)} current"
                  f"{'s' if len(a.clamps) > 1 else ''}, {a.cycles} whole cycles at "
                  f"{a.frequency_hz:.3f} Hz, sampled at {a.sample_rate_hz:g} Hz")
    if a.sequence_measured:
        lines += _para(f"phase sequence: {a.sequence} (measured from the three voltages)")
    else:
        lines += _para("phase sequence: assumed L1-L2-L3 (one voltage captured; L2 and L3 "
                       "inferred at -120 and +120 deg, and the power of clamps 2 and 3 is "
                       "from the fundamentals)")
    lines.append("")
    lines.append(f"Per phase ({SRC_PER_PHASE}):")
    lines.append(f"  {'':<8}{'V rms':>8}{'I rms':>9}{'P':>10}{'Q1':>10}{'PF':>7}"
                 f"{'cos φ1':>8}{'THD V':>7}{'THD I':>7}")
    for row in data["phases"]:
        label = f"{row['clamp']}/{row['phase']}" + ("" if row["voltage_measured"] else "*")
        lines.append(f"  {label:<8}{_f(row['v_rms_v'], '.1f'):>8}{_f(row['i_rms_a'], '.2f'):>9}"
                     f"{_f(row['p_w'], '+.0f'):>10}{_f(row['q1_var'], '+.0f'):>10}"
                     f"{_f(row['power_factor'], '.3f'):>7}{_f(row['displacement_pf'], '.3f'):>8}"
                     f"{_f(row['thd_v_pct'], '.1f'):>7}{_f(row['thd_i_pct'], '.1f'):>7}")
    lines.append(f"  {'total':<8}{'':>8}{'':>9}{a.p_total_w:>+10.0f}")
    lines += _para("  units: V, A, W, var, %; clamp/phase, * = phase voltage inferred from "
                   "L1; Q1 positive for a lagging (inductive) current")
    lines += _para(SIGN_CONVENTION)
    lines.append("")
    if a.line_voltage_rms is not None:
        u12, u23, u31 = a.line_voltage_rms
        lines += _para(f"line to line: L1-L2 {u12:.1f} V, L2-L3 {u23:.1f} V, L3-L1 {u31:.1f} V")
        limit = result.unbalance_limit_pct
        u2 = result.unbalance_pct
        within = "within" if u2 <= limit else "above"
        lines += _para(f"voltage unbalance u2: {u2:.2f} % ({within} {limit:g} %; "
                       f"{SRC_UNBALANCE}; limit {SRC_UNBALANCE_LIMIT})")
    else:
        lines += _para("voltage unbalance: needs all three voltages")
    n = data["neutral"]
    neutral = f"neutral current: {n['fundamental_a']:.2f} A fundamental from the phase currents"
    if n["computed_rms_a"] is not None:
        neutral += f", {n['computed_rms_a']:.2f} A rms from their sum"
    if n["measured_rms_a"] is not None:
        neutral += f", {n['measured_rms_a']:.2f} A rms measured"
    lines += _para(neutral + " (Kirchhoff's current law; triplen harmonics add in the neutral)")
    lines.append("")
    cv = data["clamp_verdict"]
    lines += _para(f"clamps ({LOAD_WORDS[result.load]}, {result.expect} expected): "
                   f"{cv['verdict']}")
    for text in cv["instructions"]:
        lines += _para(f"- {text}", "  ")
    lines += _para("  (phasors 120 deg apart, Fortescue 1918 / any power-systems textbook; "
                   "±20 deg decision band our default)")
    lines.append("")
    lines += _para(f"Harmonic currents per phase, orders 3-13 [A] (limits {SRC_CLASS_A}):")
    orders = (3, 5, 7, 9, 11, 13)
    lines.append("  " + f"{'':<8}" + "".join(f"{'h' + str(h):>9}" for h in orders))
    for row in data["phases"]:
        values = [row["i_harmonics_a"].get(str(h)) for h in orders]
        lines.append("  " + f"{row['clamp']}/{row['phase']:<6}"
                     + "".join(f"{_f(v, '.3f'):>9}" for v in values))
    lines.append("  " + f"{'limit':<8}" + "".join(f"{class_a_limit_a(h):>9.3f}" for h in orders))
    return lines
