"""A job as JSON: details, status, and every item with its verdict and history.

This is what ``commission show --json`` prints, and the shape later embedded in
the handover record. Values are in SI units (temperatures in °C).
"""

from __future__ import annotations

from typing import Any

from .checks.evaluate import Result
from .job import JobState
from .register.store import Entry, Instrument


def _entry_json(e: Entry, instruments: dict[int, Instrument],
                uuids: dict[int, str]) -> dict[str, Any]:
    inst = instruments.get(e.instrument_id) if e.instrument_id else None
    return {
        "entry": e.uuid,
        "action": e.action,
        "raw": e.raw,
        "value": e.value if e.action == "answer" else None,
        "unit_typed": e.unit_typed,
        "instrument": inst.serial if inst else None,
        "time": e.at,
        "by": e.by,
        "host": e.host,
        "supersedes": uuids.get(e.supersedes) if e.supersedes else None,
        "carried_from_baseline": getattr(e, "carried", None),
    }


def item_json(r: Result, instruments: dict[int, Instrument],
              uuids: dict[int, str] | None = None) -> dict[str, Any]:
    e = r.entry
    answered = e is not None and e.action == "answer"
    si_unit = None
    if r.item.kind == "reading":
        from .units import QUANTITIES

        si_unit = QUANTITIES[r.item.quantity].si_unit
    inst = instruments.get(e.instrument_id) if e and e.instrument_id else None
    return {
        "id": r.item.id,
        "section": r.section,
        "kind": r.item.kind,
        "critical": r.item.critical,
        "raw": e.raw if e else None,
        "value": e.value if answered else None,
        "si_unit": si_unit,
        "unit_typed": e.unit_typed if answered else None,
        "measured": r.measured.as_json() if r.measured else None,
        "expected": r.expected.as_json() if r.expected else None,
        "verdict": r.verdict,
        "reason": r.reason,
        "source": r.source,
        "instrument": inst.serial if inst else None,
        "time": e.at if e else None,
        "carried_from_baseline": bool(e is not None and getattr(e, "carried", None)),
        "change": r.change.as_json() if r.change is not None else None,
        "history": [_entry_json(h, instruments, uuids or {}) for h in r.history],
    }


def judged_differently(state: JobState, results: list[Result]) -> list[dict[str, Any]]:
    """For an imported job: items whose verdict in the imported record differs from
    today's (a record judged by another check-logic version keeps its own verdicts)."""
    from .checks.registry import CHECK_LOGIC_VERSION

    recorded = state.job.recorded or {}
    verdicts = recorded.get("verdicts") or {}
    return [{"id": r.item.id, "recorded": verdicts[r.item.id], "now": r.verdict,
             "recorded_check_logic": recorded.get("check_logic"),
             "recorded_program": recorded.get("program"), "now_check_logic": CHECK_LOGIC_VERSION}
            for r in results if r.item.id in verdicts and verdicts[r.item.id] != r.verdict]


def job_json(state: JobState, results: list[Result] | None = None) -> dict[str, Any]:
    from .checks.evaluate import status_reasons

    results = results if results is not None else state.results()
    uuids = {e.id: e.uuid for e in state.entries}
    return {
        "job": state.job.as_json(),
        "unverified": state.job.unverified,
        "baseline": state.job.baseline or None,
        "judged_differently": judged_differently(state, results),
        "status": state.status(results),
        "status_reasons": status_reasons(results),
        "items": [item_json(r, state.instruments, uuids) for r in results],
    }
