"""The registry of named checks and the small types they return.

A check is one function registered by name. It receives a :class:`Context`
(the item's own value, its inputs — other items' values or constants — and its
parameters, every one of which has a default with a source) and returns an
:class:`Outcome`: verdict, measured figure, expected value or range, a reason a
person can act on, and the source of the rule.
"""

from __future__ import annotations

from collections import OrderedDict
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

PASS, FAIL, REVIEW, NA, PENDING = "pass", "fail", "review", "n/a", "pending"
# An answered item that no check judges: it counts as answered, and never claims a pass.
RECORDED = "recorded"

# The check-logic version: bump it in the same commit as ANY change to how a check, the
# evaluator or the job status judges (a limit, a formula, a rounding, a reason's verdict).
# Records carry it; `verify` treats a verdict that differs under the same check-logic
# version as a forgery, and under another version as "judged differently" (a notice).
# 1 = the checks of the first release (records of format 1 carry no number: they are 1).
# 2 = an answered item that no check judges is "recorded", no longer "pass"; an overdue
#     instrument marks only the readings it took; a stated instrument accuracy applies the
#     ILAC-G8 guard band (all landed before this constant).
# 3 = recorded files judged through one analysis per kind: clamp verdict from the capture
#     state and the angle residual, soak with one or two time constants, heating fitted
#     on the first rising run; findings (clipping, gaps ...) turn pass into review.
# 4 = a revisit (issue 14): each repeated reading is also judged against its baseline
#     (checks/change.py) and a changed carried answer is reviewed; without a baseline
#     every verdict is as in 3.
CHECK_LOGIC_VERSION = 4
_SEVERITY = {PASS: 0, REVIEW: 1, FAIL: 2}


def csv_list(text: object) -> list[str]:
    """A comma-separated text parameter as a list: "A,F,B" → ["A", "F", "B"]."""
    return [part.strip() for part in str(text).split(",") if part.strip()]


def worst(*verdicts: str) -> str:
    """Worst of pass/review/fail (fail, then review, then pass)."""
    return max(verdicts, key=lambda v: _SEVERITY.get(v, -1))


@dataclass(frozen=True)
class Measured:
    value: float | str | bool
    unit: str | None
    bound: str | None = None  # "over": value is a lower bound; "open": an open circuit

    def as_json(self) -> dict[str, Any]:
        out: dict[str, Any] = {"value": self.value, "unit": self.unit}
        if self.bound:
            out["bound"] = self.bound
        return out

    def text(self) -> str:
        from ..units import format_number

        if self.bound == "open":
            return "open circuit (OL)"
        v = format_number(self.value) if isinstance(self.value, int | float) else str(self.value)
        if self.bound == "over":
            v = f">{v}"
        return f"{v} {self.unit}" if self.unit else v


@dataclass(frozen=True)
class Expected:
    """An expected value, or a range with either bound open."""

    unit: str | None
    min: float | None = None
    max: float | None = None
    value: float | str | bool | None = None

    def as_json(self) -> dict[str, Any]:
        if self.value is not None:
            return {"value": self.value, "unit": self.unit}
        return {"min": self.min, "max": self.max, "unit": self.unit}

    def text(self) -> str:
        from ..units import format_number as f

        u = f" {self.unit}" if self.unit else ""
        if self.value is not None:
            return f"{self.value}{u}"
        if self.min is not None and self.max is not None:
            dash = " to " if self.min < 0 else "–"
            return f"{f(self.min)}{dash}{f(self.max)}{u}"
        if self.max is not None:
            return f"≤ {f(self.max)}{u}"
        if self.min is not None:
            return f"≥ {f(self.min)}{u}"
        return "—"


@dataclass(frozen=True)
class Outcome:
    verdict: str
    reason: str
    source: str
    measured: Measured | None = None
    expected: Expected | None = None
    analysis: Any = None  # the file's analysis (commission.analyses.Analysis), for charts


@dataclass(frozen=True)
class Param:
    """A limit or setting of a check: default value, unit, and where it comes from."""

    default: float | str | None
    unit: str | None
    source: str
    doc: str = ""


@dataclass(frozen=True)
class Input:
    doc: str
    required: bool = True


class MissingInput(Exception):
    """An input item has no usable answer yet: the check cannot decide."""

    def __init__(self, name: str, ref: str | None):
        super().__init__(name)
        self.name = name
        self.ref = ref


@dataclass
class Context:
    """What a check sees: its own item's value, its inputs and parameters."""

    item_id: str
    value: Any
    inputs: dict[str, Any]  # resolved values; a MissingInput marker where unanswered
    refs: dict[str, str | None]  # input name → item id (None for a constant)
    params: dict[str, Any]
    extra: dict[str, Any] = field(default_factory=dict)

    def input(self, name: str) -> Any:
        if name not in self.inputs or isinstance(self.inputs[name], MissingInput):
            raise MissingInput(name, self.refs.get(name))
        return self.inputs[name]

    def has(self, name: str) -> bool:
        return name in self.inputs and not isinstance(self.inputs[name], MissingInput)

    def param(self, name: str) -> Any:
        return self.params[name]

    def uncertainty(self) -> float | None:
        """Expanded uncertainty U (k = 2, SI) of this item's reading from its instrument's
        stated accuracy, or None when the instrument states none that covers it."""
        compute = self.extra.get("uncertainty")
        return compute() if compute is not None else None

    def input_typed(self, name: str) -> tuple[str, str | None] | None:
        """An input item's reading as typed and the unit typed, or None for a constant."""
        return self.extra.get("input_typed", {}).get(name)

    def input_uncertainty(self, name: str) -> float | None:
        """The same for an input item's reading (None for constants and unknown accuracy)."""
        compute = self.extra.get("input_uncertainty", {}).get(name)
        return compute() if compute is not None else None

    def file_path(self, value: Any):
        """Local path of a recorded file or photo, or MissingFile if it is not at hand."""
        files = self.extra.get("files")
        if not isinstance(value, dict) or "sha256" not in value:
            raise ValueError("expected a recorded file")
        path = files.path(value["sha256"]) if files is not None else None
        if path is None:
            raise MissingFile(value.get("name", value["sha256"][:12]))
        return path

    def memo(self, key: tuple, compute: Callable[[], Any], *, shared: bool = False) -> Any:
        """Reuse an expensive analysis of the same file within one file store; with
        ``shared``, also across the stores of this process (a command that walks, then
        reports, then verifies opens the job three times). Only for keys that hold
        everything the result depends on: the file's SHA-256, every setting, and the name
        the result and its messages use (never a temporary path)."""
        files = self.extra.get("files")
        if files is None:
            return compute()
        if key not in files.memo:
            if shared and key in _SHARED:
                _SHARED.move_to_end(key)
                files.memo[key] = _SHARED[key]
            else:
                files.memo[key] = compute()
                if shared:
                    _SHARED[key] = files.memo[key]
                    while len(_SHARED) > _SHARED_MAX:
                        _SHARED.popitem(last=False)
        return files.memo[key]


# Analyses of recorded files shared by the file stores of one process (see Context.memo).
_SHARED: OrderedDict[tuple, Any] = OrderedDict()
_SHARED_MAX = 64


class MissingFile(Exception):
    """A recorded file's bytes are not available (e.g. a record without attachments)."""

    def __init__(self, name: str):
        super().__init__(name)
        self.name = name


@dataclass(frozen=True)
class CheckDef:
    name: str
    fn: Callable[[Context], Outcome]
    summary: str
    source: str
    kinds: tuple[str, ...]  # item kinds this check can sit on
    quantities: tuple[str, ...]  # for reading items: the quantities it understands
    inputs: dict[str, Input]
    params: dict[str, Param]
    available: bool = True
    bounds: bool = False  # judges a Bound (">299 MΩ", "OL") honestly as its value or input


CHECKS: dict[str, CheckDef] = {}


def check(
    name: str,
    *,
    summary: str,
    source: str,
    kinds: tuple[str, ...] = ("reading",),
    quantities: tuple[str, ...] = (),
    inputs: dict[str, Input] | None = None,
    params: dict[str, Param] | None = None,
    available: bool = True,
    bounds: bool = False,
) -> Callable[[Callable[[Context], Outcome]], Callable[[Context], Outcome]]:
    """Register a check under ``name``. Adding a check is adding one function."""

    def register(fn: Callable[[Context], Outcome]) -> Callable[[Context], Outcome]:
        if name in CHECKS:
            raise RuntimeError(f"check {name!r} registered twice")
        CHECKS[name] = CheckDef(
            name, fn, summary, source, kinds, quantities, inputs or {}, params or {}, available,
            bounds,
        )
        return fn

    return register
