"""Verify a handover record: signatures, the embedded record, and every verdict.

Returns one result object that the command renders as text or JSON; nothing here
prints. A record is re-evaluated with this version's checks from its own embedded
checklist text and raw entries, with the attached files, and every verdict is
compared with the snapshot the record carries (whose hash the pages print).
"""

from __future__ import annotations

import hashlib
import json
import shutil
import tempfile
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from . import record as rec


@dataclass
class Verification:
    signed: bool = False
    signatures: list[dict[str, Any]] = field(default_factory=list)
    signature_valid: bool = False
    intact: bool = False
    trusted: bool = False
    record_embedded: bool = False
    record_hash_match: bool = False
    verdicts_match: bool = False
    mismatches: list[dict[str, Any]] = field(default_factory=list)
    not_reevaluable: list[str] = field(default_factory=list)
    job_status: str | None = None
    problems: list[str] = field(default_factory=list)
    trust_note: str | None = None
    record: dict[str, Any] | None = None

    def as_json(self) -> dict[str, Any]:
        out = {k: v for k, v in self.__dict__.items() if k not in ("record",)}
        return out

    def ok(self, allow_untrusted: bool = False) -> bool:
        return (self.signed and self.signature_valid and self.intact and self.record_embedded
                and self.record_hash_match and self.verdicts_match
                and (self.trusted or allow_untrusted))

    def first_problem(self, allow_untrusted: bool = False) -> str | None:
        if self.ok(allow_untrusted):
            return None
        if self.problems:
            return self.problems[0]
        if not self.trusted and not allow_untrusted:
            return ("the installer's certificate is not in your trust store (add it with "
                    "'commission trust add CERT', or give --trust CERT)")
        return "verification failed"


class FilesFromPdf:
    """The file store the evaluator needs, backed by the PDF's attachments."""

    def __init__(self, attachments: dict[str, bytes]):
        self.memo: dict = {}
        self._dir = Path(tempfile.mkdtemp(prefix="commission-verify-"))
        self._attachments = attachments
        self._paths: dict[str, Path | None] = {}

    def path(self, sha256: str) -> Path | None:
        if sha256 not in self._paths:
            data = self._attachments.get(sha256)
            if data is None or hashlib.sha256(data).hexdigest() != sha256:
                self._paths[sha256] = None
            else:
                # Names are our own (the hash), never the attachment's: nothing can be
                # written outside this folder.
                target = self._dir / sha256
                target.write_bytes(data)
                self._paths[sha256] = target
        return self._paths[sha256]

    def close(self) -> None:
        shutil.rmtree(self._dir, ignore_errors=True)


def attachments(reader) -> dict[str, bytes]:
    """Embedded files by name, read from the document's EmbeddedFiles name tree."""
    out: dict[str, bytes] = {}
    try:
        names = reader.root["/Names"]["/EmbeddedFiles"]
    except Exception:  # noqa: BLE001 — a damaged name tree means "no attachments"
        return out
    stack = [names]
    while stack:
        node = stack.pop()
        node = node.get_object() if hasattr(node, "get_object") else node
        if "/Kids" in node:
            kids = node["/Kids"]
            stack.extend(kids.get_object() if hasattr(kids, "get_object") else kids)
        pairs = node.get("/Names", [])
        pairs = pairs.get_object() if hasattr(pairs, "get_object") else pairs
        for n in range(0, len(pairs) - 1, 2):
            try:
                name = str(pairs[n])
                spec = pairs[n + 1].get_object()
                out[name] = spec["/EF"]["/F"].get_object().data
            except Exception:  # noqa: BLE001 — a damaged attachment is skipped, not fatal
                continue
    return out


def declared_hash(reader) -> str | None:
    """The record hash the document declares (the one its page footers print)."""
    try:
        info = reader.trailer["/Info"].get_object()
        keywords = str(info.get("/Keywords", ""))
    except Exception:  # noqa: BLE001 — damaged document info: no declared hash
        return None
    for word in keywords.replace(",", " ").split():
        if word.startswith("record-sha256:"):
            return word.split(":", 1)[1]
    return None


def reevaluate(data: dict[str, Any], files) -> tuple[list[dict], list[str], str]:
    """Verdicts recomputed from a record; returns (mismatches, not_reevaluable, status)."""
    from ..checklist import parse
    from ..checks import CHECKS
    from ..checks.evaluate import evaluate, job_status

    loaded = parse(data["checklist"]["text"], "embedded checklist", checks=CHECKS)
    entries, instruments = rec.entries_from_record(data)
    results = evaluate(loaded.checklist, entries, instruments, files)
    now = {v["id"]: v for v in rec.verdict_snapshot(results)}
    printed = {v["id"]: v for v in data.get("verdicts", [])}
    missing_files = {m["sha256"] for m in data.get("files", []) if files.path(m["sha256"]) is None}
    not_reevaluable = sorted({item for m in data.get("files", []) if m["sha256"] in missing_files
                              for item in m.get("items", [])})
    mismatches = []
    for item_id in sorted(set(now) | set(printed)):
        a, b = printed.get(item_id), now.get(item_id)
        if item_id in not_reevaluable:
            continue
        if a is None or b is None or any(a.get(k) != b.get(k)
                                         for k in ("verdict", "measured", "expected")):
            mismatches.append({"id": item_id,
                               "printed": a.get("verdict") if a else None,
                               "recomputed": b.get("verdict") if b else None,
                               "reason_now": b.get("reason") if b else None})
    return mismatches, not_reevaluable, job_status(results)


def verify(pdf_bytes: bytes, extra_trust: list[Any] | None = None) -> Verification:
    from .signatures import check_signatures, open_pdf

    reader, _ = open_pdf(pdf_bytes)  # NotAPdf (exit 2) when it is not a PDF at all
    report = check_signatures(pdf_bytes, extra_trust=extra_trust or [])
    v = Verification(
        signed=report.signed,
        signatures=[{"signer": s.signer, "fingerprint": s.fingerprint, "valid": s.valid,
                     "trusted": s.trusted, "covers_whole": s.covers_whole,
                     "signing_time": s.signing_time} for s in report.signatures],
        signature_valid=report.signature_valid, intact=report.intact, trusted=report.trusted,
        problems=list(report.problems), trust_note=report.trust_note,
    )
    if not report.signed:
        v.problems.insert(0, "the PDF carries no signature")
    files = attachments(reader)
    payload = files.get(rec.RECORD_NAME)
    if payload is None:
        v.problems.append(f"no embedded record ({rec.RECORD_NAME}) in the PDF")
        return v
    v.record_embedded = True
    digest = rec.record_hash(payload)
    declared = declared_hash(reader)
    v.record_hash_match = declared is not None and declared == digest
    if not v.record_hash_match:
        v.problems.append(f"the embedded record's SHA-256 {digest[:16]}… does not match the "
                          f"printed {str(declared)[:16]}…")
    try:
        data = json.loads(payload.decode("utf-8"))
        if data.get("format") != rec.FORMAT:
            raise ValueError(f"unknown record format {data.get('format')!r}")
    except (UnicodeDecodeError, ValueError) as exc:
        v.problems.append(f"the embedded record cannot be read: {exc}")
        return v
    v.record = data
    v.job_status = data.get("status")
    store = FilesFromPdf(files)
    try:
        from ..errors import UserError

        try:
            v.mismatches, v.not_reevaluable, status_now = reevaluate(data, store)
        except (UserError, KeyError, TypeError, ValueError) as exc:
            v.problems.append(f"the embedded record cannot be re-evaluated: {exc}")
            return v
    finally:
        store.close()
    if status_now != v.job_status:
        v.mismatches.append({"id": "(job status)", "printed": v.job_status,
                             "recomputed": status_now, "reason_now": None})
    v.verdicts_match = not v.mismatches
    if v.mismatches:
        m = v.mismatches[0]
        v.problems.append(f"{len(v.mismatches)} verdict(s) differ from the readings, first "
                          f"{m['id']}: printed {m['printed']}, recomputed {m['recomputed']}")
    return v
