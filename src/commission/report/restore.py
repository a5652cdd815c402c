"""`commission import`: restore a job from the record embedded in a handover PDF.

The record has been read through the strict schema (commission.record) before it gets
here. Everything is written in ONE register transaction: on any failure nothing is
kept, and a register file that did not exist before is removed again, so a refused
import leaves no trace.
"""

from __future__ import annotations

import contextlib
import hashlib
import tempfile
from pathlib import Path

from ..checklist import ChecklistError, Loaded, parse
from ..checks import CHECKS
from ..errors import UserError
from ..record import AnyRecord, RecordV1
from ..register.protocol import RegisterEngine

_IMPORTED_BY = "record"  # format 2 names no operating-system user: entries say "record"


def restore(register: str | Path | None, record: AnyRecord, files: dict[str, bytes],
            imported: str = "verified", record_sha256: str = "") -> tuple[str, int]:
    """Insert the job, its entries (same ids and times), instruments and files.
    Returns (short id, number of files restored)."""
    from ..register import SQLiteRegister, make_register

    checklist = record.checklist
    try:
        loaded = parse(checklist.text, "embedded checklist", checks=CHECKS)
    except ChecklistError as exc:
        raise UserError(f"the embedded checklist cannot be read ({exc.problems[0]}); not "
                        "imported") from None
    if loaded.sha256 != checklist.sha256:
        raise UserError("the embedded checklist text does not match its SHA-256; not imported")
    v1 = isinstance(record, RecordV1)
    source = record.job.checklist.source if isinstance(record, RecordV1) else ""
    loaded = Loaded(loaded.checklist, loaded.text, loaded.sha256, source)

    reg = make_register(register)
    path = reg.path if isinstance(reg, SQLiteRegister) else None
    existed = path is None or path.exists()
    try:
        reg.open()
        with reg:
            restored = _write(reg, record, files, loaded, imported, v1, record_sha256)
    except BaseException:
        if not existed:
            reg.close()
            for suffix in ("", "-wal", "-shm", "-journal"):
                with contextlib.suppress(OSError):
                    Path(str(path) + suffix).unlink()
        raise
    return record.job.id, restored


def _write(reg: RegisterEngine, record: AnyRecord, files: dict[str, bytes], loaded: Loaded,
           imported: str, v1: bool, record_sha256: str = "") -> int:
    job_data = record.job
    if reg.has_job(uuid=job_data.uuid):
        raise UserError(f"job {job_data.id} ({job_data.uuid}) is already in "
                        f"{reg.location}; nothing imported")
    if reg.has_job(short_id=job_data.id):
        raise UserError(f"another job already uses the id {job_data.id} in {reg.location}; "
                        "import it into another register (--register)")
    for n, e in enumerate(record.entries, start=1):
        if reg.has_entry(e.uuid):
            raise UserError(f"entry {n} of the record ({e.uuid}) is already in "
                            f"{reg.location}, in another job; nothing imported")
    restored = 0
    with reg.batch(), tempfile.TemporaryDirectory(prefix="commission-import-") as tmp:
        known = {i.serial for i in reg.instruments()}
        for inst in record.instruments:
            if inst.serial not in known:
                acc = inst.accuracy
                reg.add_instrument(inst.serial, inst.make, inst.model, inst.calibration_due,
                                   acc.text if acc else "", acc.read_as if acc else "")
                known.add(inst.serial)
        created_by = record.job.created_by if isinstance(record, RecordV1) else _IMPORTED_BY
        job = reg.insert_job(short_id=job_data.id, uuid=job_data.uuid,
                             created_at=job_data.created_at, created_by=created_by,
                             details=job_data.original.model_dump(), checklist=loaded,
                             imported="unverified" if job_data.unverified else imported,
                             recorded={"check_logic": record.check_logic,
                                       "program": record.tool.version,
                                       "verdicts": {v.id: v.verdict
                                                    for v in record.verdicts},
                                       "next_inspection": (
                                           record.next_inspection.date
                                           if record.next_inspection is not None else None),
                                       **_as_baseline(record, record_sha256,
                                                      "unverified" if job_data.unverified
                                                      else imported)},
                             baseline=(record.baseline.model_dump(mode="json")
                                       if getattr(record, "baseline", None) else None),
                             record_sha256=record_sha256)
        for meta in record.files:
            sha = meta.sha256
            blob = files.get(sha)
            # Only a file whose content hashes to its name is restored; names are the
            # schema's SHA-256 pattern, never a path.
            if blob is None or hashlib.sha256(blob).hexdigest() != sha:
                continue
            path = Path(tmp) / sha
            path.write_bytes(blob)
            got, _ = reg.put_file(path)
            if got == sha:
                restored += 1
        serials = {i.serial: i.id for i in reg.instruments()}
        for e in record.entries:
            by = e.by if v1 else _IMPORTED_BY  # type: ignore[union-attr]
            host = e.host if v1 else (e.device or "")  # type: ignore[union-attr]
            reg.add_entry(job, e.item, e.action, e.raw, e.value, e.unit_typed,
                          serials.get(e.instrument or ""), by=by, at=e.at, uuid=e.uuid,
                          host=host,
                          read_with=getattr(e, "read_with", None),
                          carried=getattr(e, "carried", None))
    return restored


def _as_baseline(record: AnyRecord, record_sha256: str, imported: str) -> dict:
    """What a later `commission revisit JOB` compares with (format 2 records only)."""
    if v1_record(record) or not record_sha256:
        return {}
    from ..baseline import baseline_of

    return {"as_baseline": baseline_of(record, record_sha256, imported == "verified")}


def v1_record(record: AnyRecord) -> bool:
    return isinstance(record, RecordV1)


__all__ = ["restore"]
