"""Verify a handover record: signatures, the embedded record, and every verdict.

Returns one result object that the command renders as text or JSON; nothing here
prints. A record is re-evaluated with this version's checks from its own embedded
checklist text and raw entries, with the attached files, and every verdict is
compared with the snapshot the record carries (whose hash the pages print).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from .. import record as rec


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
    content: rec.ContentResult | None = None
    content_ok: bool = False
    notices: list[str] = field(default_factory=list)
    timestamps: list[dict[str, Any]] = field(default_factory=list)

    def as_json(self) -> dict[str, Any]:
        out = {k: v for k, v in self.__dict__.items() if k not in ("record", "content")}
        if self.content is not None:
            c = self.content
            out.update(checklist=c.checklist.as_json(), judged_differently=c.judged_differently,
                       check_logic={"recorded": c.check_logic[0], "now": c.check_logic[1]},
                       program_version=c.program_version,
                       unverified_import=c.unverified_import)
        return out

    def ok(self) -> bool:
        """Every signature valid and trusted, the file intact, the record as signed."""
        return (self.signed and self.signature_valid and self.intact and self.record_embedded
                and self.record_hash_match and self.content_ok and self.trusted
                and not self.problems)

    def first_problem(self) -> str | None:
        if self.ok():
            return None
        if self.problems:
            return self.problems[0]
        if not self.trusted:
            return self.trust_note or ("a signature is not trusted (add its certificate "
                                       "with 'commission trust add CERT', or give --trust "
                                       "CERT)")
        return "verification failed"


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


def verify(pdf_bytes: bytes, extra_trust: list[Any] | None = None, checklist=None,
           strict: bool = False) -> Verification:
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
        timestamps=[t.as_json() for t in report.timestamps],
    )
    if not report.signed:
        v.problems.insert(0, "the PDF carries no signature")
    elif not report.trusted and report.trust_note:
        v.problems.append(report.trust_note)  # every signature must be trusted
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
    # The content is verified through the record package (schema, checklist, raw text,
    # files, re-evaluation); signatures and integrity are checked above.
    content = rec.verify_content(payload, files, checklist_override=checklist, strict=strict)
    v.content = content
    v.content_ok = content.ok
    v.record = content.data
    v.job_status = content.job_status
    v.mismatches = content.mismatches
    v.not_reevaluable = content.not_reevaluable
    v.notices = list(content.notices)
    v.verdicts_match = content.record is not None and not content.mismatches and \
        content.problem is None
    if content.record is not None:
        _installer_and_times(v, report, content.record)
    if content.problem:
        v.problems.append(content.problem)
    return v


def _installer_and_times(v: Verification, report, record: rec.AnyRecord) -> None:
    """The first signature is made with exactly the certificate the record declares, and
    no signature claims a time before the record was made (point 5 and 6 of the rules in
    DEVELOPERS.md, "Trust and time")."""
    from ..fingerprint import readable
    from .signatures import time_problems

    declared = record.installer_certificate_sha256
    if declared is None:
        v.notices.append(f"this record ({record.format}) declares no installer certificate: "
                         "the check that the first signature uses it is not available")
    elif report.signatures and report.signatures[0].fingerprint != declared:
        first = report.signatures[0]
        v.problems.append(f"the first signature ('{first.field}', {first.signer}) was "
                             f"made with certificate {readable(first.fingerprint, 4)}, not "
                             f"the installer's certificate {readable(declared, 4)} that the "
                             "record declares")
    created = record.signing.created_at if record.signing is not None else \
        record.generated_at
    v.problems.extend(time_problems(report, created))
