"""Decision rules: a reading with its expanded uncertainty against a limit.

ILAC-G8:09/2019 names the rules. *Simple acceptance* (§4.2.1) compares the reading itself
with the tolerance limit. A *guard band* ``w`` moves the acceptance limit inside the
tolerance (AL = TL − w); ``w = U``, the expanded uncertainty, is the usual choice. The
*non-binary* rule (§4.2.3) then has a conditional pass (between AL and TL) and a conditional
fail (between TL and TL + w): both are our ``review``, shown with the interval
``reading ± U``. This is the default; a checklist item may ask for simple acceptance.

A check may keep a margin of its own (the loop-impedance cold factor: pass only below
80 % of Zs,max): the reading passes when ``reading + U`` is within the margin and fails only
when ``reading − U`` is beyond the limit itself.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ..units import format_number as f
from .registry import FAIL, PASS, REVIEW, Context, Param

SRC_DECISION = "ILAC-G8:09/2019 §4.2.3 non-binary rule, guard band w = U (expanded, k = 2)"
GUARDED, SIMPLE = "guarded", "simple"
DECISION_PARAM = Param(GUARDED, None, SRC_DECISION,
                       "'guarded' (ILAC-G8 non-binary, w = U) or 'simple' (simple acceptance)")
NO_UNCERTAINTY = "no uncertainty applied: no stated instrument accuracy covers this reading"


@dataclass(frozen=True)
class Decision:
    verdict: str
    uncertainty: float | None  # U applied, in the reading's display unit; None if none
    note: str  # the interval, or why no uncertainty was applied; "" for simple acceptance

    def tail(self) -> str:
        """Text to append to a reason: "; 2.17 ± 0.07 Ω (U, k = 2; ILAC-G8 guard band)"."""
        return f"; {self.note}" if self.note else ""


def rule_of(ctx: Context) -> str:
    rule = str(ctx.params.get("decision_rule", GUARDED) or GUARDED).strip().lower()
    if rule not in (GUARDED, SIMPLE):
        raise ValueError(f"decision_rule must be 'guarded' or 'simple', not {rule!r}")
    return rule


def two_significant(u: float) -> str:
    """An uncertainty to two significant digits (GUM 7.2.6): 0.08476 → "0.085"."""
    if u <= 0 or not math.isfinite(u):
        return f(u)
    decimals = 1 - math.floor(math.log10(u))
    return f"{round(u, decimals):.{max(decimals, 0)}f}"


def _interval(value: float, u: float, unit: str) -> str:
    return f"{f(round(value, 6))} ± {two_significant(u)} {unit} (U, k = 2)"


def decide_upper(value: float, u: float | None, unit: str, *, accept: float,
                 reject: float | None = None, rule: str = GUARDED) -> Decision:
    """A reading that must stay at or below a limit (Zs, a break time).

    ``accept``: at or below it passes (the limit, or a margin inside it such as 80 % of
    Zs,max); ``reject``: beyond it fails (the limit itself; ``accept`` when not given). In
    between, or within ``U`` of either, the verdict is ``review``.
    """
    return _decide(value, u, unit, accept, accept if reject is None else reject, rule, 1.0)


def decide_lower(value: float, u: float | None, unit: str, *, accept: float,
                 reject: float | None = None, rule: str = GUARDED) -> Decision:
    """A reading that must stay at or above a limit (insulation resistance, a minimum time)."""
    return _decide(value, u, unit, accept, accept if reject is None else reject, rule, -1.0)


def _decide(value: float, u: float | None, unit: str, accept: float, reject: float,
            rule: str, sign: float) -> Decision:
    # sign +1: the limit is a maximum; -1: a minimum (every comparison mirrored)
    v, a, r = sign * value, sign * accept, sign * reject
    if u is None or rule == SIMPLE:
        verdict = PASS if v <= a else FAIL if v > r else REVIEW
        note = NO_UNCERTAINTY if u is None else (
            f"simple acceptance, reading {_interval(value, u, unit)}")
        return Decision(verdict, u, note)
    if v + u <= a:
        verdict = PASS
    elif v - u > r:
        verdict = FAIL
    else:
        verdict = REVIEW
    return Decision(verdict, u, f"reading {_interval(value, u, unit)}, ILAC-G8 guard band")


def in_conditional_zone(decision: Decision) -> bool:
    """True when the guard band alone made the verdict ``review``."""
    return decision.verdict == REVIEW and decision.uncertainty is not None
