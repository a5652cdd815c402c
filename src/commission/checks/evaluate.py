"""Verdicts for every item of a job: a pure function of the checklist and entries.

Nothing here is stored: the register keeps the raw entries, and this module
derives the verdicts from them, the same way for the walk, ``show``, the record
and its verification.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, field
from typing import Any

from ..checklist.model import Checklist, Item
from ..register.store import Entry, Instrument
from ..units import Bound, as_reading
from .registry import (
    CHECKS,
    FAIL,
    NA,
    PASS,
    PENDING,
    RECORDED,
    REVIEW,
    Context,
    Expected,
    Measured,
    MissingFile,
    MissingInput,
    Outcome,
    worst,
)

READY, NOT_READY, INCOMPLETE = "ready", "not-ready", "incomplete"


@dataclass
class Result:
    item: Item
    section: str
    entry: Entry | None
    verdict: str
    reason: str
    source: str
    measured: Measured | None = None
    expected: Expected | None = None
    history: list[Entry] = field(default_factory=list)
    applicable: bool = True
    section_title: str = ""
    analysis: Any = None  # the analysis of the item's file, when a check analysed one
    change: Any = None  # a revisit: the change since the baseline (checks.change.Change)

    @property
    def answered(self) -> bool:
        return self.entry is not None and self.entry.action == "answer"

    @property
    def skipped(self) -> bool:
        return self.entry is not None and self.entry.action == "skip"


def current_entries(entries: Iterable[Entry]) -> tuple[dict[str, Entry], dict[str, list[Entry]]]:
    """The latest entry per item (it supersedes the rest) and each item's history."""
    current: dict[str, Entry] = {}
    history: dict[str, list[Entry]] = {}
    for e in entries:
        if e.action == "detail":
            continue
        current[e.item_id] = e
        history.setdefault(e.item_id, []).append(e)
    return current, history


def _answer_word(item: Item, value: Any) -> str | None:
    if item.kind == "confirm":
        return "yes" if value else "no"
    if item.kind == "choice":
        return str(value)
    return None


def evaluate(
    checklist: Checklist,
    entries: Iterable[Entry],
    instruments: dict[int, Instrument] | None = None,
    files: Any = None,
    baseline: dict[str, Any] | None = None,
) -> list[Result]:
    """One Result per item, in walk order.

    ``files`` gives checks the bytes of recorded files: an object with
    ``path(sha256) -> Path | None`` and a ``memo`` dict (see job.FileStore).
    ``baseline`` (a revisit job's, commission.baseline) adds the change since it to every
    repeated reading and carried answer (commission.checks.change).
    """
    instruments = instruments or {}
    current, history = current_entries(entries)
    pairs = checklist.items()
    by_id = {item.id: item for _, item in pairs}
    applicable = _applicability(pairs, current, by_id)
    since = _Since(checklist, current, baseline) if baseline else None
    return [_result(section, item, current, history, applicable, checklist, files, by_id,
                    instruments, since) for section, item in pairs]


def _applicability(pairs, current: dict[str, Entry], by_id: dict[str, Item]) -> dict[str, bool]:
    applicable: dict[str, bool] = {}
    for _, item in pairs:
        applicable[item.id] = _applies(item, current, applicable, by_id)
    return applicable


def _result(section, item: Item, current: dict[str, Entry], history: dict[str, list[Entry]],
            applicable: dict[str, bool], checklist: Checklist, files: Any,
            by_id: dict[str, Item], instruments: dict[int, Instrument],
            since: _Since | None) -> Result:
    """One item's Result (see :func:`evaluate`)."""
    entry = current.get(item.id)
    base = {"item": item, "section": section.id, "entry": entry,
            "history": history.get(item.id, []), "section_title": section.title}
    if not applicable[item.id]:
        assert item.when is not None
        return Result(**base, verdict=NA, applicable=False,
                      reason=f"not applicable: only when {item.when.text()}",
                      source=f"checklist condition on {item.when.item}")
    if entry is None:
        return Result(**base, verdict=PENDING, reason="not answered yet",
                      source=_item_source(item, checklist))
    if entry.action == "skip":
        return Result(**base, verdict=REVIEW, reason=f"skipped: {entry.raw}",
                      source=_item_source(item, checklist))
    if entry.action == "na":
        return Result(**base, verdict=NA, reason=f"n/a: {entry.raw}",
                      source="installer's statement")
    outcome = _judge(item, entry.value, current, applicable, checklist, files, by_id,
                     instruments, getattr(entry, "read_with", None))
    verdict, reason = outcome.verdict, outcome.reason
    # An instrument's calibration speaks only for what it measured: a declared value
    # (nameplate, setting, size) stamped by an older release is not judged by it.
    inst = instruments.get(entry.instrument_id) \
        if entry.instrument_id and item.is_measured else None
    if inst is not None and entry.at[:10] > inst.calibration_due:
        note = (f"instrument {inst.serial} was past its calibration due date "
                f"{inst.calibration_due} when this was taken")
        if verdict != FAIL:
            verdict = worst(verdict, REVIEW)
            reason = f"{note}; {reason}"
        else:
            reason = f"{reason}; {note}"
    change = since.judge(item, outcome, entry, history.get(item.id, [])) \
        if since is not None else None
    if change is not None:
        if change.verdict == REVIEW and verdict != FAIL:
            verdict = REVIEW
        reason = f"{reason}; since the baseline: {change.reason}"
    return Result(**base, verdict=verdict, reason=reason, source=outcome.source,
                  measured=outcome.measured, expected=outcome.expected,
                  analysis=outcome.analysis, change=change)


class Incremental:
    """One job's verdicts kept between evaluations (job.JobState, the walk): after new
    entries only the items they can change are judged again, the rest keep their Result.

    An item's Result is a function of its own entries, of the entries and applicability
    of the items its check reads, of its condition's item (and so on along conditions),
    and of the checklist, instruments, files and baseline. So the items to judge again
    after new entries are the answered items and, transitively, every item whose check
    input or condition names one of them or one whose applicability changed. Anything
    else (other entries, instruments, files, checklist or baseline; a revisit's
    temperature) means a full evaluation, which is also what the first call does.
    ``tests/checks/test_incremental_evaluation.py`` compares every step with a fresh
    evaluation.
    """

    def __init__(self) -> None:
        self._context: tuple | None = None
        self._seen = 0
        self._last: Entry | None = None
        self._results: dict[str, Result] = {}
        self._current: dict[str, Entry] = {}
        self._history: dict[str, list[Entry]] = {}
        self._applicable: dict[str, bool] = {}
        self._dependents: dict[str, set[str]] = {}

    def evaluate(self, checklist: Checklist, entries: list[Entry],
                 instruments: dict[int, Instrument], files: Any = None,
                 baseline: dict[str, Any] | None = None) -> list[Result]:
        context = (checklist, files, baseline, dict(instruments))
        fresh = entries[self._seen:]
        if (self._context is None or self._context != context or len(entries) < self._seen
                or (self._seen and entries[self._seen - 1] is not self._last)
                or self._temperature_in(checklist, baseline, fresh)):
            return self._full(checklist, entries, instruments, files, baseline, context)
        if not fresh:
            return [self._results[item.id] for _, item in checklist.items()]
        self._context = None  # kept only once the new entries are judged
        changed: set[str] = set()
        for e in fresh:
            if e.action == "detail":
                continue
            self._current[e.item_id] = e
            # a new list: the Result made before keeps the history it was made with
            self._history[e.item_id] = [*self._history.get(e.item_id, []), e]
            changed.add(e.item_id)
        results = self._judge_again(checklist, changed, instruments, files, baseline)
        self._context = context
        self._seen, self._last = len(entries), entries[-1]
        return results

    def _full(self, checklist, entries, instruments, files, baseline, context):
        self._context = None  # kept only once every item is judged
        self._current, self._history = current_entries(entries)
        self._results, self._applicable = {}, {}
        self._dependents = {}
        for _, item in checklist.items():
            named = [item.when.item] if item.when is not None else []
            if item.check is not None:
                named += [s for s in item.check.inputs.values() if isinstance(s, str)]
            for ref in named:
                self._dependents.setdefault(ref, set()).add(item.id)
        results = self._judge_again(checklist, None, instruments, files, baseline)
        self._context = context
        self._seen, self._last = len(entries), (entries[-1] if entries else None)
        return results

    def _judge_again(self, checklist, changed: set[str] | None, instruments, files,
                     baseline) -> list[Result]:
        """The steps of :func:`evaluate` over the kept entries, for the items ``changed``
        and every item that reads them (every item when ``changed`` is None)."""
        pairs = checklist.items()
        by_id = {item.id: item for _, item in pairs}
        applicable = _applicability(pairs, self._current, by_id)
        if changed is None:
            again = set(by_id)
        else:
            # (the conditions graph reaches these already; kept so that applicability,
            # which is worked out in walk order, can never differ from a full pass unseen)
            changed |= {k for k, v in applicable.items() if self._applicable.get(k) != v}
            again = self._closure(changed)
        since = _Since(checklist, self._current, baseline) if baseline else None
        for section, item in pairs:
            if item.id in again:
                self._results[item.id] = _result(section, item, self._current, self._history,
                                                 applicable, checklist, files, by_id,
                                                 instruments, since)
        self._applicable = applicable
        return [self._results[item.id] for _, item in pairs]

    def _closure(self, changed: set[str]) -> set[str]:
        again = set(changed)
        todo = list(changed)
        while todo:
            for dependent in self._dependents.get(todo.pop(), ()):
                if dependent not in again:
                    again.add(dependent)
                    todo.append(dependent)
        return again

    @staticmethod
    def _temperature_in(checklist: Checklist, baseline, fresh: list[Entry]) -> bool:
        """A revisit's temperature reading enters every change judgment."""
        rv = checklist.revisit
        return bool(baseline) and rv is not None and bool(rv.temperature) and any(
            e.item_id == rv.temperature for e in fresh)


class _Since:
    """A revisit's comparisons with its baseline (commission.checks.change)."""

    def __init__(self, checklist: Checklist, current: dict[str, Entry],
                 baseline: dict[str, Any]):
        from . import change

        self.mod = change
        self.params = change.params_of(checklist)
        self.visits = baseline.get("visits") or []
        last = self.visits[-1] if self.visits else {}
        self.readings = last.get("readings") or {}
        now_t = None
        rv = checklist.revisit
        if rv is not None and rv.temperature:
            e = current.get(rv.temperature)
            if e is not None and e.action == "answer" and isinstance(e.value, int | float) \
                    and not isinstance(e.value, bool):
                now_t = float(e.value)
        self.temperatures = (now_t, last.get("temperature_c"))

    def judge(self, item: Item, outcome: Outcome, entry: Entry, history: list[Entry]):
        carried = next((h for h in history if getattr(h, "carried", None)), None)
        if carried is not None:
            return self.mod.judge_carried(item.id, carried, entry)
        if item.check is None or item.check.name not in self.mod.RULES:
            return None
        base = self.readings.get(item.id)
        m = outcome.measured
        if base is None or m is None or m.bound is not None or m.unit != base.get("unit") \
                or isinstance(m.value, bool) or not isinstance(m.value, int | float):
            return None
        rule = self.mod.RULES[item.check.name]
        change = self.mod.judge_reading(item.id, rule, self.params, float(m.value), m.unit,
                                        entry.at, base, self.temperatures)
        points = [(r["at"], float(r["value"])) for v in self.visits
                  if (r := (v.get("readings") or {}).get(item.id)) and r.get("unit") == m.unit]
        change.trend = self.mod.trend_of(rule, [*points, (entry.at, float(m.value))],
                                         outcome.expected)
        if change.trend is not None:
            t = change.trend
            when = (f"would reach the limit {t['limit']:g} {m.unit} about {t['crossing']}"
                    if t["crossing"] else "not heading for its limit at the observed rate")
            change.reason += f"; trend over {len(t['points'])} visits: {when} ({t['basis']})"
        return change


def _applies(item: Item, current: dict[str, Entry], applicable: dict[str, bool],
             by_id: dict[str, Item]) -> bool:
    if item.when is None:
        return True
    target_id = item.when.item
    if not applicable.get(target_id, True):
        return False
    entry = current.get(target_id)
    if entry is None or entry.action != "answer":
        return True  # not known yet: assume the item applies (the safe side)
    word = _answer_word(by_id[target_id], entry.value)
    return word in item.when.accepts()


def _item_source(item: Item, checklist: Checklist) -> str:
    if item.check is not None and item.check.name in CHECKS:
        return CHECKS[item.check.name].source
    return item.source or f"checklist {checklist.id} {checklist.version}"


def _uncertainty(item: Item | None, entry: Entry | None,
                 instruments: dict[int, Instrument]) -> Any:
    """A function giving the expanded uncertainty (SI) of a reading, or None without one."""
    if item is None or entry is None or item.kind != "reading" or not entry.instrument_id:
        return None
    inst = instruments.get(entry.instrument_id)
    if inst is None or not inst.accuracy or isinstance(entry.value, bool) or \
            not isinstance(entry.value, int | float) or item.quantity is None:
        return None
    quantity = item.quantity

    def compute() -> float | None:
        acc = inst.parsed_accuracy()
        return acc.expanded(float(entry.value), quantity, typed=entry.raw,
                            typed_unit=entry.unit_typed)

    return compute


def _judge(item: Item, value: Any, current: dict[str, Entry], applicable: dict[str, bool],
           checklist: Checklist, files: Any = None,
           by_id: dict[str, Item] | None = None,
           instruments: dict[int, Instrument] | None = None,
           read_with: Any = None) -> Outcome:
    source = _item_source(item, checklist)
    if item.check is None:
        if item.kind == "confirm":
            wanted = item.pass_answer == "yes"
            expected = Expected(None, value=item.pass_answer)
            given = "yes" if value else "no"
            if bool(value) == wanted:
                return Outcome(PASS, f"confirmed: {given}", source, None, expected)
            return Outcome(FAIL, f"answered {given}; {item.pass_answer} is needed before handover",
                           source, Measured(given, None), expected)
        return Outcome(RECORDED, "recorded; no check judges this answer", source)

    definition = CHECKS[item.check.name]
    instruments = instruments or {}
    inputs: dict[str, Any] = {}
    refs: dict[str, str | None] = {}
    bounded: list[str] = []  # what reached the check as a bound (">299 MΩ", "OL")
    if item.kind == "reading":
        value = as_reading(value)
        if isinstance(value, Bound):
            bounded.append("this reading")
    if by_id is None:
        by_id = {i.id: i for _, i in checklist.items()}
    input_u: dict[str, Any] = {}
    typed: dict[str, tuple[str, str | None]] = {}
    for name, spec in item.check.inputs.items():
        if isinstance(spec, str):
            refs[name] = spec
            e = current.get(spec)
            if e is None or e.action != "answer" or not applicable.get(spec, True):
                inputs[name] = MissingInput(name, spec)
            else:
                given = e.value
                if spec in by_id and by_id[spec].kind == "reading":
                    given = as_reading(given)
                    if isinstance(given, Bound):
                        bounded.append(spec)
                inputs[name] = given
                typed[name] = (e.raw, e.unit_typed)
                u_fn = _uncertainty(by_id.get(spec), e, instruments)
                if u_fn is not None:
                    input_u[name] = u_fn
        else:
            refs[name] = None
            inputs[name] = spec["const"] if isinstance(spec, dict) else spec
    if bounded and not definition.bounds:
        return Outcome(REVIEW, f"{' and '.join(bounded)} is beyond the instrument's range "
                       f"(a bound, not a value): check {definition.name} needs a figure to "
                       "judge; take the reading on a range that shows one", definition.source)
    params = {k: p.default for k, p in definition.params.items()}
    params.update(item.check.params)
    own = current.get(item.id)
    ctx = Context(item.id, value, inputs, refs, params,
                  {"files": files, "uncertainty": _uncertainty(item, own, instruments),
                   "input_uncertainty": input_u, "input_typed": typed,
                   "own_typed": (own.raw, own.unit_typed) if own is not None else None,
                   "read_with": read_with})
    try:
        return definition.fn(ctx)
    except MissingInput as missing:
        what = definition.inputs[missing.name].doc if missing.name in definition.inputs else ""
        where = f" (item {missing.ref})" if missing.ref else ""
        return Outcome(REVIEW, f"waiting for {missing.name}{where}: {what}".rstrip(": "),
                       definition.source)
    except MissingFile as missing:
        return Outcome(REVIEW, f"file {missing.name} is not available here, so this check "
                       "cannot be re-evaluated", definition.source)
    except (ValueError, ArithmeticError, TypeError) as exc:
        return Outcome(REVIEW, f"check {definition.name} could not decide: {exc}",
                       definition.source)


def job_status(results: list[Result]) -> str:
    """not-ready if a critical item fails; incomplete if anything is pending or a
    critical item is under review or skipped; else ready."""
    if any(r.item.critical and r.verdict == FAIL for r in results):
        return NOT_READY
    if any(r.verdict == PENDING for r in results):
        return INCOMPLETE
    if any(r.item.critical and (r.verdict == REVIEW or r.skipped) for r in results):
        return INCOMPLETE
    return READY


def status_reasons(results: list[Result]) -> list[str]:
    """What stands between this job and 'ready', in plain words."""
    out = []
    for r in results:
        if r.item.critical and r.verdict == FAIL:
            out.append(f"{r.item.id}: fails — {r.reason}")
    pending = [r.item.id for r in results if r.verdict == PENDING]
    if pending:
        out.append(f"{len(pending)} item(s) not answered yet, first {pending[0]}")
    for r in results:
        if r.item.critical and r.verdict == REVIEW:
            out.append(f"{r.item.id}: needs review — {r.reason}")
    # a revisit: every deterioration since the baseline, worst first (critical ones that
    # need review are listed above with the same words)
    changed = [r for r in results if r.change is not None and r.change.verdict == REVIEW
               and not (r.item.critical and r.verdict in (REVIEW, FAIL))]
    for r in sorted(changed, key=lambda r: -r.change.weight):
        out.append(f"{r.item.id}: changed since the baseline — {r.change.reason}")
    return out


__all__ = ["INCOMPLETE", "NOT_READY", "READY", "RECORDED", "Result", "evaluate", "job_status",
           "PASS"]
