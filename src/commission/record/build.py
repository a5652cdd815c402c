"""Build the record (format 3) from a job: everything needed to re-derive every verdict.

The whole checklist text, the job, every entry raw and parsed with its history, the
instruments used, the program and check-logic versions, the SHA-256 of each file and
photo, and the verdicts as printed. Nothing that names this computer or its user: an
entry names its device by the register's random device id, a file by its name without
folders, a checklist by id, version and SHA-256 (never the path it was loaded from);
the person is the signing identity. The result is validated against the schema before
it is written, so a record that this release would refuse is never made.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import PurePosixPath, PureWindowsPath
from typing import Any

from .schema import DEVICE, FORMAT, SigningInfo
from .strictjson import RecordError, canonical, record_hash

ATTACH_LIMIT = 20 * 1024 * 1024  # files up to 20 MB travel inside the PDF
RECORD_NAME = "commission-record.json"
_DEVICE = re.compile(DEVICE)
def _details() -> tuple[str, ...]:
    from ..register.store import DETAIL_FIELDS

    return DETAIL_FIELDS


@dataclass(frozen=True)
class BuiltRecord:
    data: dict[str, Any]
    payload: bytes
    sha256: str
    attachments: list[dict[str, Any]]  # {"sha256", "name", "bytes"} of files to embed


def verdict_snapshot(results) -> list[dict[str, Any]]:
    return [{"id": r.item.id, "verdict": r.verdict, "reason": r.reason, "source": r.source,
             "measured": r.measured.as_json() if r.measured else None,
             "expected": r.expected.as_json() if r.expected else None}
            for r in results]


def file_name(text: str) -> str:
    """A file's name without any folder (POSIX or Windows spelling)."""
    return PureWindowsPath(PurePosixPath(text).name).name or "file"


def _entry(e, instruments, uuids: dict[int, str], kinds: dict[str, str]) -> dict[str, Any]:
    inst = instruments.get(e.instrument_id) if e.instrument_id else None
    raw, value = e.raw, e.value
    if e.action == "answer" and kinds.get(e.item_id) in ("file", "photo") \
            and isinstance(value, dict):
        # what was typed was a local path: the record keeps the file's name only
        value = {**value, "name": file_name(str(value.get("name", "")))}
        raw = value["name"]
    out = {"uuid": e.uuid, "item": e.item_id, "action": e.action, "raw": raw,
           "value": value, "unit_typed": e.unit_typed,
           "instrument": inst.serial if inst else None, "at": e.at,
           "device": e.host if _DEVICE.fullmatch(e.host or "") else None,
           "supersedes": uuids.get(e.supersedes) if e.supersedes else None}
    # the export profile a file was read with travels with its entry (only when one was
    # used, so records without one keep their shape)
    if getattr(e, "read_with", None):
        out["read_with"] = e.read_with
    if getattr(e, "carried", None):  # a revisit's starting answer, carried from its baseline
        out["carried"] = e.carried
    return out


def build(state, results, generated_at: str, signing: SigningInfo | None = None,
          ) -> BuiltRecord:
    """The record of a job (``state``: a walk.state.JobState) and its verdicts."""
    from .. import __version__
    from ..checks.registry import CHECK_LOGIC_VERSION
    from .schema import parse

    job = state.job
    used = {e.instrument_id for e in state.entries if e.instrument_id}
    instruments = [state.instruments[i].as_json() for i in sorted(used)
                   if i in state.instruments]
    kinds = {item.id: item.kind for _, item in state.checklist.items()}
    files: dict[str, dict[str, Any]] = {}
    for e in state.entries:
        if e.action == "answer" and isinstance(e.value, dict) and "sha256" in e.value:
            sha = e.value["sha256"]
            files.setdefault(sha, {
                "sha256": sha, "name": file_name(str(e.value.get("name", ""))),
                "bytes": e.value.get("bytes", 0), "items": [],
                "kind": "photo" if kinds.get(e.item_id) == "photo" else "file",
            })
            if e.item_id not in files[sha]["items"]:
                files[sha]["items"].append(e.item_id)
    for meta in files.values():
        meta["attached"] = meta["bytes"] <= ATTACH_LIMIT and state.reg.has_blob(meta["sha256"])
    uuids = {e.id: e.uuid for e in state.entries}
    data = {
        "format": FORMAT,
        "tool": {"name": "commission", "version": __version__,
                 "check_logic": CHECK_LOGIC_VERSION},
        "generated_at": generated_at,
        "job": {"id": job.short_id, "uuid": job.uuid, "created_at": job.created_at,
                **{k: job.details.get(k, "") for k in _details()},
                "original": {k: (job.original or job.details).get(k, "")
                             for k in _details()},
                "unverified": job.unverified},
        "checklist": {"id": job.checklist_id, "version": job.checklist_version,
                      "sha256": job.checklist_sha256, "text": job.checklist_text},
        "entries": [_entry(e, state.instruments, uuids, kinds) for e in state.entries],
        "instruments": instruments,
        "files": sorted(files.values(), key=lambda m: m["sha256"]),
        "verdicts": verdict_snapshot(results),
        "status": state.status(results),
        "signing": signing.model_dump(mode="json") if signing is not None else None,
    }
    # For later visits (issue 11): the next inspection and the homeowner pages' language.
    from ..report.findings import next_inspection

    due = next_inspection(job.details, state.checklist, generated_at)
    data["next_inspection"] = {"date": due[0], "source": due[1]} if due else None
    data["language"] = job.details.get("language") or "en"
    if job.baseline:  # a periodic inspection: the baseline it was compared with
        data["baseline"] = job.baseline
    try:
        parse(data)
    except RecordError as exc:
        raise RecordError(f"of job {job.short_id} cannot be made: {exc.message}") from None
    payload = canonical(data)
    attach = [m for m in data["files"] if m["attached"]]
    return BuiltRecord(data, payload, record_hash(payload), attach)
