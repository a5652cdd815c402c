"""``commission seal``: a document timestamp and validation data for a signed record.

Records are signed offline, so a signature's time is only what the signer's computer
claimed. Once back online, ``seal`` appends one incremental revision holding

* the validation data (PAdES B-LT, ETSI EN 319 142-1 5.4): every signature's
  certificates, and the timestamp authority's, in the document security store (DSS;
  ISO 32000-2 12.8.4.3). Self-signed installer certificates have no revocation data to
  add, so the DSS holds certificates only;
* an RFC 3161 document timestamp over the whole file, DSS included (PAdES B-LTA,
  ``/SubFilter /ETSI.RFC3161``), from the timestamp authority at ``--tsa URL``.

Both go into the same revision, so every revision after the installer's signature is
one that a signature or a timestamp signs. Nothing already in the file is rewritten:
the signatures before it stay valid. The timestamp authority is asked over plain HTTP
POST with ``application/timestamp-query`` (RFC 3161 3.4) using the standard library,
so nothing else is installed for it. ``verify`` then shows the attested time, and
trusts it only when the reviewer added the authority's certificate with ``trust add
--tsa``.
"""

from __future__ import annotations

from io import BytesIO

from ..errors import UserError
from .signatures import check_signatures, one_line, quiet_pyhanko

TSA_TIMEOUT = 20  # seconds; a timestamp authority answers within a few (common practice)
MAX_RESPONSE = 1 << 20  # a TimeStampResp is a few kB; more is refused


def _timestamper(url: str):
    """A pyHanko TimeStamper that asks ``url`` with urllib (no extra HTTP library)."""
    from asn1crypto import tsp
    from pyhanko.sign.timestamps.api import TimeStamper

    class UrlTimeStamper(TimeStamper):
        async def async_request_tsa_response(self, req: tsp.TimeStampReq
                                             ) -> tsp.TimeStampResp:
            import urllib.error
            import urllib.request

            request = urllib.request.Request(
                url, data=req.dump(), method="POST",
                headers={"Content-Type": "application/timestamp-query",
                         "Accept": "application/timestamp-reply"})
            try:
                with urllib.request.urlopen(request, timeout=TSA_TIMEOUT) as answer:  # noqa: S310
                    body = answer.read(MAX_RESPONSE + 1)
            except urllib.error.HTTPError as exc:
                raise UserError(f"--tsa {url}: the timestamp authority answered HTTP "
                                f"{exc.code}") from None
            except (urllib.error.URLError, OSError) as exc:
                reason = getattr(exc, "reason", exc)
                raise UserError(f"--tsa {url}: cannot reach the timestamp authority "
                                f"({one_line(str(reason))}); nothing written") from None
            if len(body) > MAX_RESPONSE:
                raise UserError(f"--tsa {url}: the answer is over {MAX_RESPONSE} bytes, "
                                "not a timestamp response")
            try:
                resp = tsp.TimeStampResp.load(body)
                status = resp["status"]["status"].native
            except Exception:  # noqa: BLE001 — anything unreadable is not a response
                raise UserError(f"--tsa {url}: the answer is not an RFC 3161 timestamp "
                                "response") from None
            if status not in ("granted", "granted_with_mods"):
                raise UserError(f"--tsa {url}: the timestamp authority refused the request "
                                f"({status})")
            return resp

    return UrlTimeStamper()


def _check_url(url: str) -> str:
    from urllib.parse import urlparse

    parts = urlparse(url)
    if parts.scheme not in ("http", "https") or not parts.netloc:
        raise UserError(f"--tsa {url}: give the timestamp authority's http:// or https:// "
                        "address")
    return url


def seal(pdf_bytes: bytes, tsa_url: str) -> bytes:
    """``pdf_bytes`` with the DSS and a document timestamp appended (see module doc)."""
    import asyncio

    from pyhanko.pdf_utils.incremental_writer import IncrementalPdfFileWriter
    from pyhanko.sign.signers.pdf_signer import PdfTimeStamper, TimestampDSSContentSettings
    from pyhanko.sign.validation.dss import DocumentSecurityStore
    from pyhanko_certvalidator import ValidationContext

    url = _check_url(tsa_url)
    report = check_signatures(pdf_bytes)
    if not report.signed:
        raise UserError("nothing to seal: the file carries no signature")
    if not report.sound():
        raise UserError(f"refusing to seal: {report.first_reason()}")
    timestamper = _timestamper(url)
    with quiet_pyhanko():
        # the TSA's certificates, from a first (throw-away) token: they go into the DSS
        # before the timestamp, in the same revision
        dummy = asyncio.run(timestamper.async_dummy_response("sha256"))
        tsa_certs = list(dummy["content"]["certificates"] or [])
        if not tsa_certs:
            raise UserError(f"--tsa {url}: the timestamp token carries no certificate")
        writer = IncrementalPdfFileWriter(BytesIO(bytes(pdf_bytes)))
        for es in writer.prev.embedded_signatures:
            certs = [c.chosen for c in es.signed_data["certificates"]]
            DocumentSecurityStore.supply_dss_in_writer(writer, None, certs=certs)
        context = ValidationContext(trust_roots=[c.chosen for c in tsa_certs],
                                    allow_fetching=False)
        try:
            out = PdfTimeStamper(timestamper).timestamp_pdf(
                writer, "sha256", validation_context=context,
                dss_settings=TimestampDSSContentSettings(update_before_ts=True,
                                                         include_vri=False))
        except UserError:
            raise
        except Exception as exc:
            raise UserError(f"cannot seal this PDF: {one_line(exc)}") from None
    return out.getvalue()


