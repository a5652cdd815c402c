"""A periodic inspection's baseline: what a revisit takes from an earlier record.

A revisit job is compared with the record of the visit before it (its *baseline*), named
by the SHA-256 of the record's canonical JSON — not of the PDF, whose bytes change when it
is countersigned. The baseline is kept with the job (register step 10) and embedded in the
revisit's own record, so `verify` re-derives every change verdict from the record alone.

What is kept of each visit: every repeated reading as that visit's check judged it (the
measured value of its verdict, in the unit the verdict states, with the time the reading
was taken) and, where the checklist names one, the temperature at the tests. The baseline
of a revisit of a revisit carries the visits before it, so trends span every visit.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from .checklist.model import Checklist
from .errors import UserError
from .record import AnyRecord, RecordV1


@dataclass(frozen=True)
class Carried:
    """A baseline answer carried into the revisit as a starting answer."""

    item_id: str
    raw: str
    value: Any
    unit_typed: str | None
    at: str  # the baseline entry's own time


def _current(record: AnyRecord) -> dict[str, Any]:
    """The latest entry per item of a record (it supersedes the rest)."""
    out: dict[str, Any] = {}
    for e in record.entries:
        if e.action != "detail":
            out[e.item] = e
    return out


def _checklist_of(record: AnyRecord) -> Checklist:
    from .checklist import parse
    from .checks import CHECKS

    return parse(record.checklist.text, "the baseline's checklist", checks=CHECKS).checklist


def visit_of(record: AnyRecord, record_sha256: str) -> dict[str, Any]:
    """One visit as a later revisit compares with it."""
    current = _current(record)
    readings: dict[str, Any] = {}
    for v in record.verdicts:
        m = v.measured
        e = current.get(v.id)
        if m is None or e is None or e.action != "answer" or m.bound is not None:
            continue
        if isinstance(m.value, bool) or not isinstance(m.value, int | float):
            continue
        readings[v.id] = {"value": float(m.value), "unit": m.unit, "at": e.at}
    temperature = None
    checklist = _checklist_of(record)
    if checklist.revisit is not None and checklist.revisit.temperature:
        e = current.get(checklist.revisit.temperature)
        if e is not None and e.action == "answer" and isinstance(e.value, int | float):
            temperature = float(e.value)
    made_at = record.signing.created_at if record.signing is not None else record.generated_at
    return {"record_sha256": record_sha256, "made_at": made_at, "readings": readings,
            "temperature_c": temperature}


def baseline_of(record: AnyRecord, record_sha256: str, verified: bool) -> dict[str, Any]:
    """The baseline a revisit of this record is compared with (schema: record.Baseline)."""
    if isinstance(record, RecordV1):
        raise UserError("the baseline is a format-1 record (the first release); a revisit "
                        "needs a record of format 2 or later: import it and make its record "
                        "again")
    earlier = []
    before = getattr(record, "baseline", None)  # format 3 on
    if before is not None:  # a revisit of a revisit: keep every earlier visit
        earlier = [v.model_dump(mode="json") for v in before.visits]
    visit = visit_of(record, record_sha256)
    return {"record_sha256": record_sha256, "job": record.job.id, "uuid": record.job.uuid,
            "site": record.job.site, "made_at": visit["made_at"], "status": record.status,
            "verified": verified,
            "checklist": f"{record.checklist.id} {record.checklist.version}",
            "visits": [*earlier, visit]}


def carried_answers(checklist: Checklist, base: Checklist,
                    current: dict[str, Any]) -> list[Carried]:
    """The baseline's answers to the items the revisit checklist carries (same id, kind
    and unit in the baseline's checklist ``base``), in walk order. ``current``: the latest
    entry per item (a record's or the register's). Answers only: a skip or n/a is never
    carried."""
    kinds = {i.id: (i.kind, i.unit) for _, i in base.items()}
    out = []
    for item_id in checklist.carried_ids():
        item = checklist.item(item_id)
        e = current.get(item_id)
        if e is None or e.action != "answer" or kinds.get(item_id) != (item.kind, item.unit):
            continue
        out.append(Carried(item_id, e.raw, e.value, e.unit_typed, e.at))
    return out


def record_current(record: AnyRecord) -> dict[str, Any]:
    """The latest entry per item of a record."""
    return _current(record)


def record_checklist(record: AnyRecord) -> Checklist:
    """The baseline record's own checklist (its embedded text)."""
    return _checklist_of(record)


DETAILS_CARRIED = ("site", "address", "client", "client_contact", "installer",
                   "installer_contact", "installer_registration", "installer_address",
                   "timezone", "language")


def details_of(record: AnyRecord) -> dict[str, str]:
    """The job details a revisit starts from ('commission amend' changes any of them; the
    next inspection date is the revisit's own)."""
    return {k: getattr(record.job, k, "") or "" for k in DETAILS_CARRIED}


__all__ = ["Carried", "baseline_of", "carried_answers", "details_of", "record_checklist",
           "record_current", "visit_of"]
