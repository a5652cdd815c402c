"""`commission import`: restore a job from the record embedded in a handover PDF."""

from __future__ import annotations

import tempfile
from pathlib import Path
from typing import Any

from ..checklist import Loaded, parse
from ..errors import UserError
from ..register.store import Register


def restore(reg: Register, data: dict[str, Any], files: dict[str, bytes]) -> tuple[str, int]:
    """Insert the job, its entries (same ids and times), instruments and files.
    Returns (short id, number of files restored)."""
    job_data = data["job"]
    if reg.db.execute("SELECT 1 FROM jobs WHERE uuid = ?", (job_data["uuid"],)).fetchone():
        raise UserError(f"job {job_data['id']} ({job_data['uuid']}) is already in "
                        f"{reg.path}; nothing imported")
    if reg.db.execute("SELECT 1 FROM jobs WHERE short_id = ?", (job_data["id"],)).fetchone():
        raise UserError(f"another job already uses the id {job_data['id']} in {reg.path}; "
                        "import it into another register (--register)")
    checklist = data["checklist"]
    loaded = parse(checklist["text"], "embedded checklist")
    if loaded.sha256 != checklist["sha256"]:
        raise UserError("the embedded checklist text does not match its SHA-256; not imported")
    source = (job_data.get("checklist") or {}).get("source", "")
    loaded = Loaded(loaded.checklist, loaded.text, loaded.sha256, source)
    known = {i.serial for i in reg.instruments()}
    for inst in data.get("instruments", []):
        if inst["serial"] not in known:
            reg.add_instrument(inst["serial"], inst["make"], inst["model"],
                               inst["calibration_due"])
    details = job_data.get("original") or {
        k: job_data.get(k, "") for k in ("site", "address", "client", "installer",
                                         "installer_contact", "installer_registration")}
    job = reg.insert_job(short_id=job_data["id"], uuid=job_data["uuid"],
                         created_at=job_data["created_at"], created_by=job_data["created_by"],
                         details=details, checklist=loaded)
    restored = 0
    with tempfile.TemporaryDirectory(prefix="commission-import-") as tmp:
        for meta in data.get("files", []):
            blob = files.get(meta["sha256"])
            if blob is None:
                continue
            path = Path(tmp) / meta["sha256"]  # our own name: never the attachment's
            path.write_bytes(blob)
            sha, _ = reg.put_file(path)
            if sha == meta["sha256"]:
                restored += 1
    serials = {i.serial: i.id for i in reg.instruments()}
    for e in data["entries"]:
        reg.add_entry(job, e["item"], e["action"], e["raw"], e["value"], e.get("unit_typed"),
                      serials.get(e.get("instrument") or ""), by=e["by"], at=e["at"],
                      uuid=e["uuid"], host=e.get("host", ""))
    return job.short_id, restored


__all__ = ["restore"]
