"""Make the handover record: verdicts → canonical record → PDF → attachments → signature."""

from __future__ import annotations

import io
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

from ..walk.state import JobState
from . import record as rec


@dataclass(frozen=True)
class Made:
    pdf: bytes
    record_sha256: str
    status: str
    attached: int
    not_attached: list[str]


def embed_files(pdf: bytes, record_payload: bytes, attachments: list[dict[str, Any]],
                state: JobState) -> bytes:
    """Attach the record JSON and the files (named by SHA-256) in one incremental update."""
    from pyhanko.pdf_utils import embed
    from pyhanko.pdf_utils.incremental_writer import IncrementalPdfFileWriter

    writer = IncrementalPdfFileWriter(io.BytesIO(pdf))
    now = datetime.now(UTC)
    params = embed.EmbeddedFileParams(creation_date=now, modification_date=now)
    data = embed.EmbeddedFileObject.from_file_data(writer, data=record_payload, params=params,
                                                   mime_type="application/json")
    embed.embed_file(writer, embed.FileSpec(
        file_spec_string=rec.RECORD_NAME, embedded_data=data,
        description="Machine-readable commissioning record (canonical JSON)"))
    for meta in attachments:
        path = state.files.path(meta["sha256"])
        if path is None:
            continue
        blob = embed.EmbeddedFileObject.from_file_data(
            writer, data=Path(path).read_bytes(), params=params,
            mime_type="application/octet-stream")
        embed.embed_file(writer, embed.FileSpec(
            file_spec_string=meta["sha256"], embedded_data=blob,
            description=f"{meta['name']} ({', '.join(meta['items'])})"))
    out = io.BytesIO()
    writer.write(out)
    return out.getvalue()


def make(state: JobState, form: dict[str, Any], sign: bool = False,
         passphrase: str | None = None) -> Made:
    from .pdf import render

    results = state.results()
    generated_at = datetime.now(UTC).isoformat(timespec="seconds").replace("+00:00", "Z")
    built = rec.build(state, results, generated_at)
    pdf = render(state, results, built.sha256, form, generated_at)
    pdf = embed_files(pdf, built.payload, built.attachments, state)
    if sign:
        from .signing import sign_pdf

        pdf = sign_pdf(pdf, passphrase=passphrase or "", reason="Commissioning record",
                       location=state.job.details.get("site") or None,
                       field_name="InstallerSignature")
    missing = [m["name"] for m in built.data["files"] if not m["attached"]]
    return Made(pdf, built.sha256, built.data["status"], len(built.attachments), missing)
