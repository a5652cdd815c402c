"""The machine-readable record embedded in the handover PDF.

Canonical JSON (sorted keys, UTF-8, compact separators) holding everything needed
to re-derive every verdict: the whole checklist text, the job, every entry raw
and parsed with its history, the instruments used, the tool version, the SHA-256
of each captured file and photo, and the verdicts as printed. The record hash
printed in every page footer is the SHA-256 of these bytes.
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import dataclass
from typing import Any

from ..checks.evaluate import Result
from ..register.store import Entry, Instrument
from ..walk.state import JobState

FORMAT = "commission-record/1"
ATTACH_LIMIT = 20 * 1024 * 1024  # files up to 20 MB travel inside the PDF
RECORD_NAME = "commission-record.json"


def canonical(data: Any) -> bytes:
    return json.dumps(data, sort_keys=True, ensure_ascii=False, separators=(",", ":"),
                      allow_nan=False).encode("utf-8")


def record_hash(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def _entry(e: Entry, instruments: dict[int, Instrument]) -> dict[str, Any]:
    inst = instruments.get(e.instrument_id) if e.instrument_id else None
    out = {"uuid": e.uuid, "seq": e.id, "item": e.item_id, "action": e.action, "raw": e.raw,
           "value": e.value, "unit_typed": e.unit_typed,
           "instrument": inst.serial if inst else None, "at": e.at, "by": e.by,
           "supersedes": e.supersedes, "host": e.host}
    # Issue 9: the export profile a file was read with (columns, time format and zone,
    # scales) travels with its entry, so `verify` reads the file the same way. Only present
    # when a profile was used, so records without one keep their earlier shape.
    if e.read_with:
        out["read_with"] = e.read_with
    return out


def verdict_snapshot(results: list[Result]) -> list[dict[str, Any]]:
    return [{"id": r.item.id, "verdict": r.verdict, "reason": r.reason, "source": r.source,
             "measured": r.measured.as_json() if r.measured else None,
             "expected": r.expected.as_json() if r.expected else None}
            for r in results]


@dataclass(frozen=True)
class BuiltRecord:
    data: dict[str, Any]
    payload: bytes
    sha256: str
    attachments: list[dict[str, Any]]  # {"sha256", "name", "bytes"} of files to embed


def build(state: JobState, results: list[Result], generated_at: str) -> BuiltRecord:
    from .. import __version__

    job = state.job
    used = {e.instrument_id for e in state.entries if e.instrument_id}
    instruments = [state.instruments[i].as_json() for i in sorted(used)
                   if i in state.instruments]
    files: dict[str, dict[str, Any]] = {}
    current = {r.item.id: r for r in results}
    for e in state.entries:
        if e.action == "answer" and isinstance(e.value, dict) and "sha256" in e.value:
            sha = e.value["sha256"]
            item = current.get(e.item_id)
            files.setdefault(sha, {
                "sha256": sha, "name": e.value.get("name", ""), "bytes": e.value.get("bytes", 0),
                "items": [], "kind": item.item.kind if item else "file",
            })
            if e.item_id not in files[sha]["items"]:
                files[sha]["items"].append(e.item_id)
    for meta in files.values():
        meta["attached"] = meta["bytes"] <= ATTACH_LIMIT and state.reg.has_blob(meta["sha256"])
    data = {
        "format": FORMAT,
        "tool": {"name": "commission", "version": __version__},
        "generated_at": generated_at,
        "job": {**job.as_json(), "original": job.original},
        "checklist": {"id": job.checklist_id, "version": job.checklist_version,
                      "sha256": job.checklist_sha256, "text": job.checklist_text},
        "entries": [_entry(e, state.instruments) for e in state.entries],
        "instruments": instruments,
        "files": sorted(files.values(), key=lambda m: m["sha256"]),
        "verdicts": verdict_snapshot(results),
        "status": state.status(results),
    }
    # Fields for later visits (issue 11); the job's own details (time zone, language,
    # next inspection set per job) travel in "job" above.
    from .findings import next_inspection

    due = next_inspection(job.details, state.checklist, generated_at)
    data["next_inspection"] = {"date": due[0], "source": due[1]} if due else None
    data["language"] = job.details.get("language") or "en"
    payload = canonical(data)
    attach = [m for m in data["files"] if m["attached"]]
    return BuiltRecord(data, payload, record_hash(payload), attach)


def entries_from_record(data: dict[str, Any]) -> tuple[list[Entry], dict[int, Instrument]]:
    """Entries and instruments as the evaluator needs them, rebuilt from a record."""
    instruments: dict[int, Instrument] = {}
    by_serial: dict[str, int] = {}
    for n, inst in enumerate(data.get("instruments", []), start=1):
        acc = inst.get("accuracy") or {}
        instruments[n] = Instrument(n, inst["serial"], inst["make"], inst["model"],
                                    inst["calibration_due"], "", str(acc.get("text", "")),
                                    str(acc.get("read_as", "")))
        by_serial[inst["serial"]] = n
    entries = [
        Entry(int(e["seq"]), e["uuid"], e["item"], e["action"], e["raw"], e["value"],
              e.get("unit_typed"), by_serial.get(e.get("instrument") or ""), e["at"], e["by"],
              e.get("supersedes"), e.get("host", ""),
              e["read_with"] if isinstance(e.get("read_with"), dict) else None)
        for e in data["entries"]
    ]
    return entries, instruments
