"""Verify a handover record: signatures, the embedded record, and every verdict.

Returns one result object that the command renders as text or JSON; nothing here
prints. A record is re-evaluated with this version's checks from its own embedded
checklist text and raw entries, with the attached files, and every verdict is
compared with the snapshot the record carries (whose hash the pages print).
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from dataclasses import dataclass, field
from typing import Any

from .. import record as rec
from ..errors import UserError


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
    pages_match: bool = False
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
                and self.record_hash_match and self.content_ok and self.pages_match
                and self.trusted
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


class NotARecord(UserError):
    """A PDF that is no commission record at all (the CLI exits 2)."""


MAX_NAMES = 10_000  # entries of the embedded-files name tree that are looked at
MAX_TREE_DEPTH = 32


def _embedded_specs(root) -> dict[str, Any]:
    """File specifications by name from a catalogue's EmbeddedFiles name tree; only the
    small dictionaries are read, never a file's data."""
    out: dict[str, Any] = {}
    try:
        names = root["/Names"]["/EmbeddedFiles"]
    except Exception:  # noqa: BLE001 — a damaged name tree means "no attachments"
        return out
    stack = [(names, 0)]
    seen: set[int] = set()
    while stack and len(out) < MAX_NAMES:
        node, depth = stack.pop()
        try:
            node = node.get_object() if hasattr(node, "get_object") else node
        except Exception:  # noqa: BLE001
            continue
        if id(node) in seen or depth > MAX_TREE_DEPTH:
            continue
        seen.add(id(node))
        try:
            if "/Kids" in node:
                kids = node["/Kids"]
                kids = kids.get_object() if hasattr(kids, "get_object") else kids
                stack.extend((k, depth + 1) for k in list(kids)[:MAX_NAMES])
            pairs = node.get("/Names", [])
            pairs = pairs.get_object() if hasattr(pairs, "get_object") else pairs
        except Exception:  # noqa: BLE001
            continue
        for n in range(0, min(len(pairs), 2 * MAX_NAMES) - 1, 2):
            try:
                out[str(pairs[n])] = pairs[n + 1]
            except Exception:  # noqa: BLE001 — a damaged entry is skipped, not fatal
                continue
    return out


class Attachments(Mapping[str, bytes]):
    """The embedded files of a PDF by name, read when asked and decoded with a bound
    (at most ``limit + 1`` bytes of each: enough to see that one is too large)."""

    def __init__(self, reader, limit: int = rec.ATTACH_LIMIT):
        self._specs = _embedded_specs(reader.root)
        self._reader = reader
        self._sorted: list[int] | None = None
        self._limit = limit
        self._cache: dict[str, bytes] = {}

    def __iter__(self) -> Iterator[str]:
        return iter(self._specs)

    def __len__(self) -> int:
        return len(self._specs)

    def __contains__(self, name: object) -> bool:
        return name in self._specs

    def read(self, name: str, limit: int | None = None) -> bytes:
        from .source import read_stream_bounded

        if name in self._cache:
            return self._cache[name]
        try:
            spec = self._specs[name].get_object()
            data = read_stream_bounded(spec["/EF"]["/F"].get_object(), limit or self._limit)
        except KeyError:
            raise
        except Exception:  # noqa: BLE001 — a damaged attachment reads as missing
            raise KeyError(name) from None
        self._cache[name] = data
        return data

    def __getitem__(self, name: str) -> bytes:
        return self.read(name)

    def stored_size(self, name: str) -> int | None:
        """The bytes the attachment's stream object takes in the file, measured from the
        cross-reference offsets without reading it (None when it cannot be told)."""
        import bisect

        from pyhanko.pdf_utils import generic

        try:
            spec = self._specs[name].get_object()
            raw = spec["/EF"].raw_get("/F")
            if not isinstance(raw, generic.IndirectObject):
                return None
            pos = self._reader.xrefs[raw.reference]
            if not isinstance(pos, int):
                return None  # inside an object stream: bounded by that stream
            ordered = self._offsets()
            k = bisect.bisect_right(ordered, pos)
            return (ordered[k] if k < len(ordered) else pos) - pos
        except Exception:  # noqa: BLE001 — read it (bounded) and see
            return None

    def _offsets(self) -> list[int]:
        import os

        if self._sorted is None:
            xrefs = self._reader.xrefs
            found: set[int] = set()
            for rev in range(xrefs.total_revisions):
                data = xrefs.get_xref_data(rev)
                found.update(pos for _, pos in data.standard_xrefs.values())
                found.add(xrefs.get_startxref_for_revision(rev))
            stream = self._reader.stream
            here = stream.tell()
            found.add(stream.seek(0, os.SEEK_END))
            stream.seek(here)
            self._sorted = sorted(found)
        return self._sorted


def attachments(reader) -> Attachments:
    """Embedded files by name, read from the document's EmbeddedFiles name tree."""
    return Attachments(reader)


def declared_hash(reader) -> str | None:
    """The record hash the document declares (the one its page footers print)."""
    return _declared(reader.trailer)


def _declared(trailer) -> str | None:
    try:
        info = trailer["/Info"].get_object()
        keywords = str(info.get("/Keywords", ""))
    except Exception:  # noqa: BLE001 — damaged document info: no declared hash
        return None
    for word in keywords.replace(",", " ").split():
        if word.startswith("record-sha256:"):
            return word.split(":", 1)[1]
    return None


def _is_record(reader) -> bool:
    """Whether any revision of the file holds the record attachment or the commission
    metadata (so a record whose attachment was later removed is still a record)."""
    if rec.RECORD_NAME in _embedded_specs(reader.root) or _declared(reader.trailer):
        return True
    try:
        total = reader.xrefs.total_revisions
    except Exception:  # noqa: BLE001
        return False
    for rev in range(max(0, total - 64), total - 1):
        try:
            hist = reader.get_historical_resolver(rev)
            if rec.RECORD_NAME in _embedded_specs(hist.root) or \
                    _declared(hist.trailer_view):
                return True
        except Exception:  # noqa: BLE001 — an unreadable old revision says nothing
            continue
    return False


def verify(source, extra_trust: list[Any] | None = None, checklist=None,
           strict: bool = False, *, read_anyway: bool = False) -> Verification:
    """Verify a record given as bytes, a path or a seekable binary file object.

    Order: the file must be a PDF (else :class:`NotAPdf`, exit 2) and a commission
    record (else :class:`NotARecord`, exit 2); then the signatures and the file's
    integrity; only when those hold is anything in the record read (``read_anyway``
    reads it regardless, for ``import --unverified``). Then the record's hash against
    the one the document declares, its content, and the pages against it.
    """
    from .source import opened

    with opened(source) as stream:
        return _verify(stream, extra_trust, checklist, strict, read_anyway)


def _verify(stream, extra_trust, checklist, strict: bool, read_anyway: bool) -> Verification:
    from .signatures import check_reader, read_pdf

    reader, structure_problem, extended = read_pdf(stream)  # NotAPdf (exit 2)
    if not _is_record(reader):
        raise NotARecord(f"not a commission record: the PDF holds no embedded record "
                         f"({rec.RECORD_NAME}) and no commission metadata")
    report = check_reader(reader, structure_problem, extended, extra_trust=extra_trust or [])
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
    if v.problems and not read_anyway:
        return v  # signatures first: nothing in a file that fails them is read
    files = Attachments(reader)
    if rec.RECORD_NAME not in files:
        v.problems.append(f"no embedded record ({rec.RECORD_NAME}) in the PDF: removed")
        return v
    from ..record.strictjson import MAX_RECORD_BYTES

    # an attachment far over its limit is refused before its stream is read at all
    for name in files:
        cap = MAX_RECORD_BYTES if name == rec.RECORD_NAME else rec.ATTACH_LIMIT
        size = files.stored_size(name)
        if size is not None and size > cap + cap // 100 + 65536:
            v.problems.append(f"attachment {rec.safe(name)[:40]!r} takes {size} bytes in the "
                              f"file, over the {cap}-byte limit: refused unread")
            return v
    try:
        payload = files.read(rec.RECORD_NAME, MAX_RECORD_BYTES)
    except KeyError:
        v.problems.append(f"the embedded record ({rec.RECORD_NAME}) cannot be read")
        return v
    v.record_embedded = True
    digest = rec.record_hash(payload)
    declared = declared_hash(reader)
    v.record_hash_match = declared is not None and declared == digest
    if not v.record_hash_match:
        v.problems.append(f"the embedded record's SHA-256 {digest[:16]}… does not match the "
                          f"printed {str(declared)[:16]}…")
        if not read_anyway:
            return v
    # The content is verified through the record package (schema, checklist, raw text,
    # files, re-evaluation); signatures and integrity are checked above.
    content = rec.verify_content(payload, files, checklist_override=checklist, strict=strict)
    content.record_sha256 = digest  # names the record to a later import or revisit
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
    if content.ok and not v.problems and content.record is not None:
        # nothing visible but the reviewer's stamp in its reserved box (the box is read
        # from the signed record, so only now)
        from .signatures import quiet_pyhanko
        from .stamp import WidgetProblem, check_widgets

        try:
            with quiet_pyhanko():
                sigs = sorted(reader.embedded_regular_signatures,
                              key=lambda es: es.signed_revision)
                check_widgets(reader, content.record, sigs)
        except WidgetProblem as exc:
            v.problems.append(str(exc))
            return v
        # the pages last: they are read only once everything they are compared with holds
        from .pages import PageMismatch, check_pages

        try:
            check_pages(stream, content.record, digest, content.results or [],
                        answers=not isinstance(content.record, rec.RecordV1))
            v.pages_match = True
        except PageMismatch as exc:
            v.problems.append(f"the pages do not say what the record says: {exc}")
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
