"""The facts on page 1 of the record, computed once for the pages and the record.

Findings in order of weight (failures, items needing review, skipped and unanswered
items, departures from the shipped checklist, the installer's limitations), the next
inspection date with its source, and times in the site's own zone. Nothing here names
an item: what an item means for the record comes from its ``report`` declaration.
"""

from __future__ import annotations

import calendar
import datetime as dt
from dataclasses import dataclass

from ..checks.evaluate import Result

WEIGHTS = ("fail", "review", "skipped", "unanswered", "departure", "limitation")


@dataclass(frozen=True)
class Finding:
    weight: str  # one of WEIGHTS
    item: str  # the item's prompt (or the checklist, for a departure)
    item_id: str  # "" where the finding is about the checklist as a whole
    reason: str


def zone(name: str | None):
    from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

    try:
        return ZoneInfo(name or "UTC")
    except (ZoneInfoNotFoundError, ValueError, OSError):
        return ZoneInfo("UTC")


def local_time(iso: str, tz_name: str | None, with_date: bool = True) -> str:
    """An ISO UTC time as the site's local time with its zone: '2026-12-02 09:37 GMT'."""
    try:
        when = dt.datetime.fromisoformat(iso.replace("Z", "+00:00"))
    except ValueError:
        return iso
    if when.tzinfo is None:
        when = when.replace(tzinfo=dt.UTC)
    when = when.astimezone(zone(tz_name))
    text = when.strftime("%Y-%m-%d %H:%M" if with_date else "%H:%M")
    return f"{text} {when.tzname() or ''}".rstrip()


def add_months(day: dt.date, months: int) -> dt.date:
    month = day.month - 1 + months
    year, month = day.year + month // 12, month % 12 + 1
    return dt.date(year, month, min(day.day, calendar.monthrange(year, month)[1]))


def next_inspection(details: dict[str, str], checklist, generated_at: str
                    ) -> tuple[str, str] | None:
    """(date, where it comes from): the job's own date, else the checklist's interval
    counted from the day the record is made; None when neither is given."""
    own = (details.get("next_inspection") or "").strip()
    if own:
        return own, "set for this job by the installer"
    interval = checklist.inspection_interval
    if interval is None:
        return None
    made = dt.date.fromisoformat(generated_at[:10])
    return (add_months(made, interval.months).isoformat(),
            f"{interval.months} months after this record, checklist {checklist.id} "
            f"{checklist.version}: {interval.source}")


def departures(checklist, sha256: str) -> list[Finding]:
    """How the job's checklist differs from the shipped checklist of the same id."""
    from ..checklist import load
    from ..checks import CHECKS
    from ..errors import UserError
    from ..resources import shipped

    path = shipped("checklists").get(checklist.id)
    if path is None:
        return [Finding("departure", f"checklist {checklist.id} {checklist.version}", "",
                        "not a shipped checklist: its items and limits are the installer's "
                        "own")]
    try:
        ref = load(path, checks=CHECKS)
    except UserError:
        return []
    if ref.sha256 == sha256:
        return []
    out = []
    if ref.checklist.version != checklist.version:
        out.append(Finding("departure", f"checklist {checklist.id}", "",
                           f"version {checklist.version} used; the shipped version is "
                           f"{ref.checklist.version}"))
    mine = {i.id: i for _, i in checklist.items()}
    theirs = {i.id: i for _, i in ref.checklist.items()}
    for item_id, item in mine.items():
        other = theirs.get(item_id)
        if other is None:
            out.append(Finding("departure", item.prompt, item_id,
                               "not in the shipped checklist"))
        elif _judged(item) != _judged(other):
            out.append(Finding("departure", item.prompt, item_id,
                               "its check, limits or criticality differ from the shipped "
                               "checklist"))
    for item_id, item in theirs.items():
        if item_id not in mine:
            out.append(Finding("departure", item.prompt, item_id,
                               "in the shipped checklist but left out"))
    if not out:
        out.append(Finding("departure", f"checklist {checklist.id}", "",
                           "wording differs from the shipped checklist; no check or limit "
                           "differs"))
    return out


def _judged(item) -> tuple:
    check = item.check.model_dump() if item.check else None
    return (item.kind, item.critical, check, item.pass_answer,
            item.when.model_dump() if item.when else None, item.unit)


def findings(results: list[Result], checklist, sha256: str) -> list[Finding]:
    """Every finding in order of weight, each with its item and reason."""
    out: list[Finding] = []
    ordered = sorted(results, key=lambda r: not r.item.critical)
    for verdict in ("fail", "review"):
        out += [Finding(verdict, r.item.prompt, r.item.id,
                        ("critical: " if r.item.critical else "") + r.reason)
                for r in ordered if r.verdict == verdict and not r.skipped]
    out += [Finding("skipped", r.item.prompt, r.item.id,
                    f"skipped: {r.entry.raw}" if r.entry and r.entry.raw else "skipped")
            for r in ordered if r.skipped and r.applicable]
    out += [Finding("unanswered", r.item.prompt, r.item.id, "not answered yet")
            for r in ordered if r.verdict == "pending"]
    out += departures(checklist, sha256)
    for r in results:
        if r.item.report.limitations and r.answered and str(r.entry.value).strip():
            out.append(Finding("limitation", r.item.prompt, r.item.id, str(r.entry.value)))
    return out
