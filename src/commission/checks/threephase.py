"""Checks for three-phase sites: the words and limits over ``physics/threephase.py``.

The numbers (symmetrical components, unbalance, clamp angles) come from
:mod:`commission.physics.threephase`; here they become instructions a person can act on.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from ..physics.threephase import ClampPlacement

SRC_CLAMP_ANGLES = (
    "phasor angles of a three-phase system, 120° apart (Fortescue 1918; CHECKS.md "
    "\"Three-phase supplies\"); ±20° decision band: our default"
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
