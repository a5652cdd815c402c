"""`commission import`: restore a job from the record embedded in a handover PDF."""

from __future__ import annotations

import hashlib
import re
import tempfile
from pathlib import Path
from typing import Any

from ..checklist import Loaded, parse
from ..checks import CHECKS
from ..errors import UserError
from ..register.store import Register

_SHA256 = re.compile(r"[0-9a-f]{64}")


def restore(reg: Register, data: dict[str, Any], files: dict[str, bytes]) -> tuple[str, int]:
    """Insert the job, its entries (same ids and times), instruments and files.
    Returns (short id, number of files restored)."""
    _check_shape(data)
    job_data = data["job"]
    if reg.db.execute("SELECT 1 FROM jobs WHERE uuid = ?", (job_data["uuid"],)).fetchone():
        raise UserError(f"job {job_data['id']} ({job_data['uuid']}) is already in "
                        f"{reg.path}; nothing imported")
    if reg.db.execute("SELECT 1 FROM jobs WHERE short_id = ?", (job_data["id"],)).fetchone():
        raise UserError(f"another job already uses the id {job_data['id']} in {reg.path}; "
                        "import it into another register (--register)")
    for n, e in enumerate(data["entries"], start=1):
        if reg.db.execute("SELECT 1 FROM entries WHERE uuid = ?", (e["uuid"],)).fetchone():
            raise UserError(f"entry {n} of the record ({e['uuid']}) is already in {reg.path}, "
                            "in another job; nothing imported")
    checklist = data["checklist"]
    loaded = parse(checklist["text"], "embedded checklist", checks=CHECKS)
    if loaded.sha256 != checklist["sha256"]:
        raise UserError("the embedded checklist text does not match its SHA-256; not imported")
    source = (job_data.get("checklist") or {}).get("source", "")
    loaded = Loaded(loaded.checklist, loaded.text, loaded.sha256, source)
    known = {i.serial for i in reg.instruments()}
    for inst in data.get("instruments", []):
        if inst["serial"] not in known:
            acc = inst.get("accuracy") or {}
            reg.add_instrument(inst["serial"], inst["make"], inst["model"],
                               inst["calibration_due"], acc.get("text", ""),
                               acc.get("read_as", ""))
            known.add(inst["serial"])
    details = job_data.get("original") or {
        k: job_data.get(k, "") for k in ("site", "address", "client", "installer",
                                         "installer_contact", "installer_registration")}
    job = reg.insert_job(short_id=job_data["id"], uuid=job_data["uuid"],
                         created_at=job_data["created_at"], created_by=job_data["created_by"],
                         details=details, checklist=loaded)
    restored = 0
    with tempfile.TemporaryDirectory(prefix="commission-import-") as tmp:
        for meta in data.get("files", []):
            sha = meta["sha256"]
            blob = files.get(sha)
            # Only a file whose name is its content's SHA-256 is restored: a forged name
            # such as '../../x' or '/x' never becomes a path.
            if blob is None or not _SHA256.fullmatch(sha) or \
                    hashlib.sha256(blob).hexdigest() != sha:
                continue
            path = Path(tmp) / sha
            path.write_bytes(blob)
            sha, _ = reg.put_file(path)
            if sha == meta["sha256"]:
                restored += 1
    serials = {i.serial: i.id for i in reg.instruments()}
    for e in data["entries"]:
        reg.add_entry(job, e["item"], e["action"], e["raw"], e["value"], e.get("unit_typed"),
                      serials.get(e.get("instrument") or ""), by=e["by"], at=e["at"],
                      uuid=e["uuid"], host=e.get("host", ""),
                      read_with=e["read_with"] if isinstance(e.get("read_with"), dict) else None)
    return job.short_id, restored


_ACTIONS = {"answer", "skip", "na", "detail"}


def _check_shape(data: Any) -> None:
    """Refuse a record that is not shaped as commission writes one, before anything is
    written: a forged or damaged record gives one line and leaves no half-imported job."""

    def bad(what: str) -> UserError:
        return UserError(f"the embedded record is damaged or forged ({what}); not imported")

    def text(value: Any, optional: bool = False) -> bool:
        return isinstance(value, str) or (optional and value is None)

    if not isinstance(data, dict):
        raise bad("not a mapping")
    job = data.get("job")
    if not isinstance(job, dict) or not all(text(job.get(k)) for k in
                                            ("id", "uuid", "created_at", "created_by")):
        raise bad("job")
    for key in ("original", "checklist"):
        if job.get(key) is not None and not (
                isinstance(job[key], dict) and all(text(v, optional=True)
                                                   for v in job[key].values())):
            raise bad(f"job {key}")
    if not job.get("original") and not all(text(job.get(k), optional=True) for k in (
            "site", "address", "client", "installer", "installer_contact",
            "installer_registration")):
        raise bad("job details")
    checklist = data.get("checklist")
    if not isinstance(checklist, dict) or not text(checklist.get("text")) or \
            not text(checklist.get("sha256")):
        raise bad("checklist")
    for key in ("instruments", "files", "entries"):
        if not isinstance(data.get(key, []), list) or \
                not all(isinstance(x, dict) for x in data.get(key, [])):
            raise bad(key)
    for inst in data.get("instruments", []):
        if not all(text(inst.get(k)) for k in ("serial", "make", "model", "calibration_due")):
            raise bad("instrument")
        if "accuracy" in inst:
            from ..accuracy import parse_accuracy

            acc = inst["accuracy"]
            try:
                if not isinstance(acc, dict):
                    raise ValueError("not an object")
                parse_accuracy(str(acc.get("text", "")), str(acc.get("read_as", "")))
            except ValueError:
                raise bad("instrument accuracy") from None
    if not all(text(m.get("sha256")) for m in data.get("files", [])):
        raise bad("file list")
    if "entries" not in data:
        raise bad("no entries")
    uuids = set()
    for n, e in enumerate(data["entries"], start=1):
        if not all(text(e.get(k)) for k in ("item", "action", "raw", "by", "at", "uuid")) or \
                not all(text(e.get(k), optional=True) for k in ("unit_typed", "instrument",
                                                               "host")) or \
                e["action"] not in _ACTIONS or "value" not in e:
            raise bad(f"entry {n}")
        if e["uuid"] in uuids:
            raise bad(f"entry {n} repeats the id {e['uuid']}")
        uuids.add(e["uuid"])


__all__ = ["restore"]
