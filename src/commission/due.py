"""Which installations are due for their next inspection (`commission due`).

Every job carries a next inspection date: the one set for it (`new`/`amend
--next-inspection`), else the one its imported record states, else its checklist's
interval counted from the job's last entry (the day of the visit). An installation is its
latest visit: a job that a revisit in the same register compares with is not listed again.
"""

from __future__ import annotations

import datetime as dt
import re
from dataclasses import dataclass
from typing import Any

from .errors import UserError


@dataclass(frozen=True)
class Due:
    job: str
    uuid: str
    site: str
    address: str
    client: str
    client_contact: str
    date: str  # ISO date of the next inspection
    source: str  # where the date comes from
    days: int  # from today: negative when overdue
    overdue: bool
    origin: str  # "made here", "verified import", "UNVERIFIED import"
    baseline: str  # for a revisit: its baseline record and whether it verified; else ""
    status: str  # the job's status today

    def as_json(self) -> dict[str, Any]:
        return dict(self.__dict__)


def parse_window(text: str) -> int:
    """'60d', '8w' or '60' (days) → days."""
    m = re.fullmatch(r"\s*(\d{1,5})\s*([dw]?)\s*", text or "", re.I)
    if not m:
        raise UserError(f"--within {text}: not a window (accepted: days or weeks, e.g. 60d, "
                        "8w)")
    n = int(m.group(1))
    return n * 7 if m.group(2).lower() == "w" else n


def parse_today(text: str | None) -> dt.date:
    if not text:
        return dt.date.today()
    try:
        return dt.date.fromisoformat(text.strip())
    except ValueError:
        raise UserError(f"--today {text}: not a date (accepted: YYYY-MM-DD, e.g. "
                        "2027-03-01)") from None


def next_date(job, checklist, last_at: str | None) -> tuple[str, str] | None:
    """(date, source) of a job's next inspection, or None when nothing gives one."""
    own = (job.details.get("next_inspection") or "").strip()
    if own:
        return own, "set for this job"
    recorded = (job.recorded or {}).get("next_inspection")
    if recorded:
        return recorded, "stated by its imported record"
    interval = checklist.inspection_interval
    if interval is None:
        return None
    from .report.findings import add_months

    visit = dt.date.fromisoformat((last_at or job.created_at)[:10])
    return (add_months(visit, interval.months).isoformat(),
            f"{interval.months} months after the visit ({visit.isoformat()}), checklist "
            f"{checklist.id} {checklist.version}")


def due(reg, today: dt.date, within_days: int) -> list[Due]:
    """The installations overdue or due within ``within_days`` of ``today``, soonest first."""
    from .checklist import parse
    from .checks import CHECKS

    jobs = reg.jobs()
    superseded = {j.baseline.get("uuid") for j in jobs if j.baseline}
    parsed: dict[str, Any] = {}
    horizon = today + dt.timedelta(days=within_days)
    out = []
    for job in jobs:
        if job.uuid in superseded:
            continue
        if job.checklist_sha256 not in parsed:
            parsed[job.checklist_sha256] = parse(job.checklist_text, f"job {job.short_id}",
                                                 checks=CHECKS)
        loaded = parsed[job.checklist_sha256]
        last = None
        if not (job.details.get("next_inspection") or (job.recorded or {}).get(
                "next_inspection")) and loaded.checklist.inspection_interval is not None:
            entries = reg.entries(job)
            last = max((e.at for e in entries), default=None)
        found = next_date(job, loaded.checklist, last)
        if found is None:
            continue
        when = dt.date.fromisoformat(found[0])
        if when > horizon:
            continue
        out.append((job, loaded, found, when))
    from .job import FileStore

    files = FileStore(reg)  # recorded files, for the checks that read them
    instruments = {i.id: i for i in reg.instruments()}
    rows = []
    try:
        for job, loaded, found, when in out:
            rows.append(_row(reg, job, loaded, found, when, today, files, instruments))
    finally:
        files.close()
    rows.sort(key=lambda r: (r.date, r.job))
    return rows


def _row(reg, job, loaded, found, when, today, files, instruments) -> Due:
    date, source = found
    d = job.details
    return Due(
        job=job.short_id, uuid=job.uuid, site=d.get("site", ""), address=d.get("address", ""),
        client=d.get("client", ""), client_contact=d.get("client_contact", ""), date=date,
        source=source, days=(when - today).days, overdue=when < today,
        origin={"verified": "verified import", "unverified": "UNVERIFIED import"}.get(
            job.imported, "made here"),
        baseline=_baseline_text(job.baseline),
        status=_status(reg, job, loaded, files, instruments))


def _baseline_text(b: dict[str, Any]) -> str:
    if not b:
        return ""
    return (f"revisit of {b['job']} (record sha256 {b['record_sha256']}, "
            f"{'verified' if b['verified'] else 'UNVERIFIED'})")


def _status(reg, job, loaded, files, instruments) -> str:
    from .checks.evaluate import evaluate, job_status

    return job_status(evaluate(loaded.checklist, reg.entries(job), instruments, files,
                               baseline=job.baseline or None))


# -- calendar (RFC 5545) ------------------------------------------------------------------

def _escape(text: str) -> str:
    """TEXT value escaping, RFC 5545 3.3.11."""
    return (text.replace("\\", "\\\\").replace(";", "\\;").replace(",", "\\,")
            .replace("\r\n", "\\n").replace("\n", "\\n"))


def _fold(line: str) -> str:
    """Lines of at most 75 octets, continued with CRLF and a space (RFC 5545 3.1)."""
    data = line.encode("utf-8")
    if len(data) <= 75:
        return line
    parts, current = [], b""
    for ch in line:
        b = ch.encode("utf-8")
        if len(current) + len(b) > (75 if not parts else 74):
            parts.append(current.decode("utf-8"))
            current = b""
        current += b
    parts.append(current.decode("utf-8"))
    return "\r\n ".join(parts)


def ics(rows: list[Due], stamp: dt.datetime | None = None) -> str:
    """The due dates as all-day calendar events, one per installation."""
    stamp = stamp or dt.datetime.now(dt.UTC)
    lines = ["BEGIN:VCALENDAR", "VERSION:2.0", "PRODID:-//commission//due dates//EN",
             "CALSCALE:GREGORIAN"]
    for r in rows:
        day = dt.date.fromisoformat(r.date)
        desc = (f"Job {r.job}; client {r.client} {r.client_contact}; status {r.status}; "
                f"{r.origin}; {r.baseline or 'no baseline (a handover)'}; date {r.source}")
        lines += [
            "BEGIN:VEVENT",
            f"UID:{r.uuid}-next-inspection@commission",
            f"DTSTAMP:{stamp.strftime('%Y%m%dT%H%M%SZ')}",
            f"DTSTART;VALUE=DATE:{day.strftime('%Y%m%d')}",
            f"DTEND;VALUE=DATE:{(day + dt.timedelta(days=1)).strftime('%Y%m%d')}",
            f"SUMMARY:{_escape(('OVERDUE: ' if r.overdue else '') + 'Inspection due: ' + r.site)}",
            f"LOCATION:{_escape(r.address)}",
            f"DESCRIPTION:{_escape(desc)}",
            "END:VEVENT",
        ]
    lines.append("END:VCALENDAR")
    return "".join(_fold(line) + "\r\n" for line in lines)


__all__ = ["Due", "due", "ics", "next_date", "parse_today", "parse_window"]
