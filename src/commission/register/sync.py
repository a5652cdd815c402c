"""Sync an installer's working register (SQLite, on the laptop) with the company's.

Entries are append-only and named by UUID, so a sync is a union: what one side lacks is
copied over, nothing is ever changed or removed, and running it again copies nothing.
Every batch is one transaction on the side that receives it, and the steps run in an
order that keeps the two registers valid at every cut (the connection dropped, the
server killed):

1. the device joins (its short-id prefix, given once) and instruments are united;
2. jobs: the laptop's new jobs go up, the jobs assigned to this installer come down;
3. per job, BEFORE anything moves: the items that both sides changed since they last met
   (new entries on each side for the same item) are flagged "changed on two devices"
   on both sides, so a cut later on cannot lose the flag;
4. files before the entries that name them (streamed chunk by chunk), then the entries,
   in batches.

Both entries of a conflict stay in the history; the current one is the later by (entry
time, UUID), as everywhere. The flag stays until someone confirms it.
"""

from __future__ import annotations

import json
from collections.abc import Callable
from dataclasses import dataclass, field
from types import SimpleNamespace
from typing import Any

from .store import DETAIL_FIELDS, Job, now_iso

# A portable entry row: the instrument by serial (ids are per register).
# ``carried``: the baseline record's SHA-256 on an answer carried from it (a revisit).
ENTRY_FIELDS = ("uuid", "item_id", "action", "raw", "value_json", "unit_typed", "serial",
                "at", "by", "host", "read_with", "carried")
BATCH = 2000  # entries per transaction on the receiving side


@dataclass
class SyncReport:
    jobs_pushed: int = 0
    jobs_pulled: int = 0
    entries_pushed: int = 0
    entries_pulled: int = 0
    files_pushed: int = 0
    files_pulled: int = 0
    instruments_pushed: int = 0
    instruments_pulled: int = 0
    conflicts: list[dict[str, str]] = field(default_factory=list)
    problems: list[str] = field(default_factory=list)

    def as_json(self) -> dict[str, Any]:
        return dict(self.__dict__)


Hook = Callable[[str], None]


def sync(local, remote, *, installer: str | None = None, batch: int = BATCH,
         hook: Hook | None = None) -> SyncReport:
    """Unite ``local`` (this device's register) with ``remote`` (the company's).

    ``installer``: the database role whose assigned jobs come down (default: the role
    connected to ``remote``). ``hook(point)`` is called at every step (tests cut the
    connection there)."""
    mark = hook or (lambda point: None)
    report = SyncReport()
    prefix = remote.join(local.device_id())
    if local.setting("short_id_prefix") != prefix:
        local.set_setting("short_id_prefix", prefix)
    mark("joined")
    _instruments(local, remote, report, mark)
    pairs = _jobs(local, remote, installer or remote.role(), report, mark)
    for here, there in pairs:
        _job(local, here, remote, there, report, batch, mark)
    return report


def _instruments(local, remote, report: SyncReport, mark: Hook) -> None:
    mine = {i.serial: i for i in local.instruments()}
    theirs = {i.serial: i for i in remote.instruments()}
    for target, source, missing, count in (
            (remote, mine, set(mine) - set(theirs), "instruments_pushed"),
            (local, theirs, set(theirs) - set(mine), "instruments_pulled")):
        for serial in sorted(missing):
            i = source[serial]
            target.add_instrument(i.serial, i.make, i.model, i.calibration_due, i.accuracy,
                                  i.accuracy_read_as)
            setattr(report, count, getattr(report, count) + 1)
            mark("instrument")


def _copy_job(source, job: Job, target) -> Job:
    row = source.job_row(job)
    checklist = SimpleNamespace(
        checklist=SimpleNamespace(id=row["checklist_id"], version=row["checklist_version"]),
        sha256=row["checklist_sha256"], text=row["checklist_text"],
        name=row["checklist_source"])
    recorded = json.loads(row["recorded"]) if row.get("recorded") else None
    # a revisit's baseline and an imported job's record hash travel with the job
    baseline = json.loads(row["baseline"]) if row.get("baseline") else None
    with target.batch():
        return target.insert_job(short_id=row["short_id"], uuid=row["uuid"],
                                 created_at=row["created_at"], created_by=row["created_by"],
                                 details={k: row[k] for k in DETAIL_FIELDS},
                                 checklist=checklist, imported=row.get("imported") or "",
                                 recorded=recorded, baseline=baseline,
                                 record_sha256=row.get("record_sha256") or "")


def _jobs(local, remote, installer: str, report: SyncReport, mark: Hook) -> list[tuple]:
    pairs = []
    for job in local.jobs():
        if remote.has_job(uuid=job.uuid):
            pairs.append((job, remote.find_job(job.uuid)))
        elif remote.has_job(short_id=job.short_id):
            report.problems.append(
                f"job {job.short_id}: another job in the company register has this id "
                "(made before this device joined); it stays on this device only")
        else:
            pairs.append((job, _copy_job(local, job, remote)))
            report.jobs_pushed += 1
            mark("job pushed")
    known = {j.uuid for j, _ in pairs}
    for job in remote.jobs_assigned(installer):
        if job.uuid in known:
            continue
        if local.has_job(short_id=job.short_id) and not local.has_job(uuid=job.uuid):
            report.problems.append(f"job {job.short_id}: this device has another job with "
                                   "this id; not pulled")
            continue
        here = local.find_job(job.uuid) if local.has_job(uuid=job.uuid) else None
        if here is None:
            here = _copy_job(remote, job, local)
            report.jobs_pulled += 1
            mark("job pulled")
        pairs.append((here, job))
    return pairs


def _files_named(rows: list[tuple]) -> set[str]:
    out = set()
    for r in rows:
        if not r[4] or '"sha256"' not in r[4]:  # a file's value names its "sha256"
            continue
        try:
            value = json.loads(r[4])
        except ValueError:
            continue
        if isinstance(value, dict) and isinstance(value.get("sha256"), str):
            out.add(value["sha256"])
    return out


def _job(local, here: Job, remote, there: Job, report: SyncReport, batch: int,
         mark: Hook) -> None:
    mine, theirs = local.entry_index(here), remote.entry_index(there)
    only_mine = sorted(set(mine) - set(theirs))
    only_theirs = sorted(set(theirs) - set(mine))
    # 3. flag both sides before anything moves (see the module docstring)
    both = {mine[u] for u in only_mine} & {theirs[u] for u in only_theirs}
    flags = [{"job_uuid": here.uuid, "item_id": item,
              "entry_uuids": " ".join(sorted([u for u in only_mine if mine[u] == item]
                                             + [u for u in only_theirs if theirs[u] == item])),
              "flagged_at": now_iso(), "confirmed_by": "", "confirmed_at": ""}
             for item in sorted(both)]
    if flags:
        remote.add_conflicts(flags)
        mark("flagged remote")
        local.add_conflicts(flags)
        mark("flagged local")
    # the flags already on either side travel too (a union; a confirmation wins)
    known_here, known_there = local.conflicts(here), remote.conflicts(there)
    if _missing(known_there, known_here):
        local.add_conflicts(known_there)
    if _missing(known_here, known_there):
        remote.add_conflicts(known_here)
    report.conflicts += [c for c in local.conflicts(here) if not c["confirmed_at"]]
    mark("conflicts united")
    # 4. files first, then entries in batches (a target may read the next batch while it
    # writes the last: see insert_entry_batches)
    for source, sjob, target, tjob, uuids, kind in (
            (local, here, remote, there, only_mine, "pushed"),
            (remote, there, local, here, only_theirs, "pulled")):

        def files_first(rows: list[tuple], source=source, target=target, kind=kind) -> None:
            for sha in sorted(_files_named(rows)):
                if source.has_blob(sha) and not target.has_blob(sha):
                    target.put_stream(source.read_blob(sha))
                    setattr(report, f"files_{kind}", getattr(report, f"files_{kind}") + 1)
                    mark(f"file {kind}")

        batches = (source.entry_rows(sjob, uuids[start:start + batch])
                   for start in range(0, len(uuids), batch))
        for added in target.insert_entry_batches(tjob, batches, before=files_first):
            setattr(report, f"entries_{kind}", getattr(report, f"entries_{kind}") + added)
            mark(f"entries {kind}")


def _missing(source: list[dict], target: list[dict]) -> bool:
    have = {(c["item_id"], c["entry_uuids"], c["confirmed_at"] != "") for c in target}
    return any((c["item_id"], c["entry_uuids"], c["confirmed_at"] != "") not in have
               for c in source)
