"""Make the handover record: verdicts → canonical record → PDF → attachments → signature."""

from __future__ import annotations

import io
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

from .. import record as rec
from ..job import JobState
from . import archival


@dataclass(frozen=True)
class Made:
    pdf: bytes
    record_sha256: str
    status: str
    attached: int
    not_attached: list[str]


def embed_files(pdf: bytes, record_payload: bytes, attachments: list[dict[str, Any]],
                state: JobState) -> bytes:
    """Attach the record JSON and the files (named by SHA-256) in one incremental update,
    and make the file PDF/A-3b: XMP metadata (pdfaid part 3, conformance B) in step with the
    document info, an sRGB output intent, and every attachment an associated file (/AF):
    the record with relationship /Data, the recorded files with /Source."""
    from pyhanko.pdf_utils import embed, generic
    from pyhanko.pdf_utils.incremental_writer import IncrementalPdfFileWriter

    writer = IncrementalPdfFileWriter(io.BytesIO(pdf))
    now = datetime.now(UTC)
    params = embed.EmbeddedFileParams(creation_date=now, modification_date=now)
    data = embed.EmbeddedFileObject.from_file_data(writer, data=record_payload, params=params,
                                                   mime_type="application/json")
    embed.embed_file(writer, embed.FileSpec(
        file_spec_string=rec.RECORD_NAME, file_name=rec.RECORD_NAME, embedded_data=data,
        description="Machine-readable commissioning record (canonical JSON)",
        af_relationship=generic.NameObject("/Data")))
    for meta in attachments:
        path = state.files.path(meta["sha256"])
        if path is None:
            continue
        blob = embed.EmbeddedFileObject.from_file_data(
            writer, data=Path(path).read_bytes(), params=params,
            mime_type="application/octet-stream")
        embed.embed_file(writer, embed.FileSpec(
            file_spec_string=meta["sha256"], file_name=meta["sha256"], embedded_data=blob,
            description=f"{meta['name']} ({', '.join(meta['items'])})",
            af_relationship=generic.NameObject("/Source")))
    archival.make_pdfa3b(writer, now)
    out = io.BytesIO()
    writer.write(out)
    return out.getvalue()


def make(state: JobState, form: dict[str, Any], sign: bool = False,
         passphrase: str | None = None, signing: rec.SigningInfo | None = None,
         identity=None) -> Made:
    """``signing``: the signed facts the record declares (creation time, the installer's
    certificate fingerprint, the reviewer's stamp box). When signing without one, the
    creation time, the loaded identity's certificate fingerprint and the stamp box the
    layout reserved are declared. ``identity``: sign with it instead of the stored one."""
    from .pdf import render

    results = state.results()
    generated_at = datetime.now(UTC).isoformat(timespec="seconds").replace("+00:00", "Z")
    signer = ident = None
    if sign:
        from .identity import load_identity

        ident = identity or load_identity()
        signer = {"name": ident.name, "registration": ident.registration or "",
                  "fingerprint": ident.fingerprint}
    made: dict[str, rec.BuiltRecord] = {}

    def record_for(stamp: dict[str, Any] | None) -> str:
        facts = signing
        if facts is None and ident is not None:
            from .signing import REVIEWER_FIELD

            box = rec.StampBox(field=REVIEWER_FIELD, page=stamp["page"],
                               rect=list(stamp["rect"])) if stamp else None
            facts = rec.SigningInfo(created_at=generated_at,
                                    installer_certificate_sha256=ident.fingerprint,
                                    reviewer_stamp=box)
        made["built"] = rec.build(state, results, generated_at, facts)
        return made["built"].sha256

    pdf = render(state, results, record_for, form, generated_at, signer=signer)
    built = made["built"]
    pdf = embed_files(pdf, built.payload, built.attachments, state)
    if sign:
        from .signing import sign_pdf

        pdf = sign_pdf(pdf, passphrase=passphrase or "", reason="Commissioning record",
                       location=state.job.details.get("site") or None,
                       field_name="InstallerSignature", identity=ident)
    missing = [m["name"] for m in built.data["files"] if not m["attached"]]
    return Made(pdf, built.sha256, built.data["status"], len(built.attachments), missing)


def homeowner_extract(state: JobState, form: dict[str, Any], signed: bytes) -> bytes:
    """The homeowner's pages alone, unsigned, naming the signed record (its embedded record's
    SHA-256 and the PDF file's SHA-256) as the authority."""
    import hashlib

    from ..errors import UserError
    from .pdf import render
    from .signatures import NotAPdf, open_pdf
    from .verify import declared_hash

    try:
        reader, _ = open_pdf(signed)
    except NotAPdf as exc:
        raise UserError(f"--record: {exc}") from None
    if not reader.embedded_signatures:
        raise UserError("--record: that record is not signed; the extract names a signed "
                        "record (make it with 'report --sign')")
    record_sha = declared_hash(reader)
    if not record_sha:
        raise UserError("--record: not a record made by commission (no record hash in it)")
    try:
        keywords = str(reader.trailer["/Info"].get_object().get("/Keywords", ""))
    except Exception:  # noqa: BLE001 — damaged document info: cannot tell whose record
        keywords = ""
    if f"job:{state.job.uuid}" not in keywords:
        raise UserError(f"--record: that record is not of job {state.job.short_id}")
    results = state.results()
    generated_at = datetime.now(UTC).isoformat(timespec="seconds").replace("+00:00", "Z")
    extract_of = {"record_sha256": record_sha,
                  "file_sha256": hashlib.sha256(signed).hexdigest()}
    return render(state, results, record_sha, form, generated_at, extract_of=extract_of)
