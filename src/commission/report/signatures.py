"""Checking the signatures of a PDF record: integrity first, trust second.

:func:`check_signatures` never raises for an unsigned, damaged or tampered file: it
returns a :class:`SignatureReport` whose ``problems`` say, one line each, what is
wrong. Only bytes that cannot be read as a PDF at all raise :class:`NotAPdf` (a
:class:`~commission.errors.UserError`, so the CLI exits 2).

How integrity and trust are decided
-----------------------------------
Records are signed offline, with no timestamp authority, so every certificate check
is made at the signing time the signature itself claims (its ``/M`` entry), and
nothing is ever fetched (``allow_fetching=False``; no revocation data exists for a
self-signed certificate).

Each signature is validated by pyHanko twice, with two different trust roots:

1. **Integrity pass.** ``validate_pdf_signature`` with a ``ValidationContext`` whose
   only trust root is the signer's *own* certificate, taken from the signature. Trust
   is thereby granted on purpose, so the result answers only "is this signature
   intact and cryptographically valid, and was its certificate usable (validity
   period, key usage digitalSignature or nonRepudiation) at the claimed time?".
   This pass also runs pyHanko's difference analysis: the signature's coverage and
   the modification level of everything added after the signed revision.
   certvalidator does not check a trust anchor's own validity period, so the claimed
   time is compared with the certificate's notBefore/notAfter here.
   ``valid`` = digest intact + signature value verifies + certificate usable.
   Unsigned parts of the container that verifiers ignore (the zero padding of
   ``/Contents``, the SignedData digest list and version numbers) are checked for
   consistency too, so that no changed byte goes unreported.
2. **Trust pass.** The same signature validated (difference analysis skipped)
   against a ``ValidationContext`` whose trust roots are the local trust store
   (``config_dir()/trust``) plus ``extra_trust``, and nothing else. ``trusted`` is
   pyHanko's verdict that a path from the signer's certificate to one of those roots
   exists and holds at the claimed time, for an intact, valid signature. A
   certificate carried inside the PDF is only ever a path candidate, never a root,
   so a PDF cannot make itself trusted; a stranger's key with a copied name fails,
   because path building checks the root's signature, not its name.

Document-level rules on top of pyHanko's per-signature results:

* the last signature must cover the whole file (``SignatureCoverageLevel.
  ENTIRE_FILE``); bytes appended after it are a problem;
* every earlier signature must cover its whole revision, the difference analysis
  from it onwards must stay at ``ModificationLevel.FORM_FILLING`` or below, and the
  only form fields that change after it must be the later signatures' own fields;
* every revision after the first signed one must be a revision that a signature
  signs (each update adds a signature and nothing else).

Otherwise the problem "content changed after signing" is reported.
"""

from __future__ import annotations

import contextlib
import datetime as dt
import hashlib
import logging
from collections.abc import Iterable, Iterator
from dataclasses import asdict, dataclass, field
from typing import Any

from ..errors import UserError

__all__ = ["NotAPdf", "SignatureInfo", "SignatureReport", "check_signatures", "open_pdf",
           "one_line", "quiet_pyhanko"]


class NotAPdf(UserError):
    """The bytes cannot be read as a PDF at all (the CLI exits 2)."""


@dataclass
class SignatureInfo:
    field: str
    signer: str
    registration: str | None
    fingerprint: str
    valid: bool
    intact: bool
    trusted: bool
    covers_whole: bool
    signing_time: str | None

    def as_json(self) -> dict[str, Any]:
        return asdict(self)


@dataclass
class SignatureReport:
    signed: bool
    signatures: list[SignatureInfo] = field(default_factory=list)
    signature_valid: bool = False
    intact: bool = False
    trusted: bool = False
    problems: list[str] = field(default_factory=list)
    trust_note: str | None = None
    """Why the first (installer's) signature is not trusted; None when it is."""

    def ok(self, *, allow_untrusted: bool = False) -> bool:
        """Everything holds (and the installer's signature is trusted, unless allowed)."""
        good = self.signed and self.signature_valid and self.intact and not self.problems
        return good and (self.trusted or allow_untrusted)

    def first_reason(self, *, allow_untrusted: bool = False) -> str | None:
        """One line saying why :meth:`ok` is False, or None."""
        if self.problems:
            return self.problems[0]
        if not allow_untrusted and not self.trusted:
            return self.trust_note or "the installer's signature is not trusted"
        return None

    def as_json(self) -> dict[str, Any]:
        return {
            "signed": self.signed,
            "signatures": [s.as_json() for s in self.signatures],
            "signature_valid": self.signature_valid,
            "intact": self.intact,
            "trusted": self.trusted,
            "problems": list(self.problems),
            "trust_note": self.trust_note,
        }


# --------------------------------------------------------------------------- helpers


def one_line(exc: BaseException | str, limit: int = 160) -> str:
    text = " ".join(str(exc).split()) or type(exc).__name__
    return text if len(text) <= limit else text[: limit - 1] + "…"


@contextlib.contextmanager
def quiet_pyhanko() -> Iterator[None]:
    """pyHanko logs expected failures (untrusted roots, bad digests) with tracebacks."""
    loggers = [logging.getLogger(n) for n in ("pyhanko", "pyhanko_certvalidator")]
    saved = [lg.level for lg in loggers]
    try:
        for lg in loggers:
            lg.setLevel(logging.CRITICAL + 1)
        yield
    finally:
        for lg, level in zip(loggers, saved, strict=True):
            lg.setLevel(level)


def open_pdf(data: bytes):
    """A pyHanko reader, plus a problem line if the file is damaged or extended.

    Raises :class:`NotAPdf` when no reading of the bytes gives a PDF.
    """
    reader, problem, _ = _read(data)
    return reader, problem


def _parse(data: bytes):
    """(reader, None) from the strict parser, else (reader, error) from the lenient one."""
    from io import BytesIO

    from pyhanko.pdf_utils.reader import PdfFileReader

    first_error: Exception | None = None
    for strict in (True, False):
        try:
            reader = PdfFileReader(BytesIO(data), strict=strict)
            reader.root  # noqa: B018 - forces the catalogue to be read
            _ = reader.xrefs.total_revisions
        except Exception as exc:  # any parser failure
            first_error = first_error or exc
            continue
        return reader, first_error
    raise NotAPdf(f"cannot be read as a PDF: {one_line(first_error or 'unknown error')}")


def _read(data: bytes):
    """(reader, problem or None, extended) where ``extended`` means bytes were found
    after the end of the PDF that no parser could read (then the reader holds the
    file up to the last end-of-file marker that parses)."""
    if not isinstance(data, bytes | bytearray | memoryview):
        raise TypeError("pdf bytes expected")
    data = bytes(data)
    if b"%PDF-" not in data[:1024]:
        raise NotAPdf("not a PDF: the %PDF- header is missing")
    with quiet_pyhanko():
        try:
            reader, error = _parse(data)
        except NotAPdf as whole:
            # text appended after the final %%EOF hides the real end from the parsers:
            # try the file up to each earlier end-of-file marker, latest first
            end = len(data)
            for _ in range(20):
                end = data.rfind(b"%%EOF", 0, end)
                if end < 0:
                    break
                cut = end + 5
                for eol in (b"\r\n", b"\n", b"\r"):
                    if data.startswith(eol, cut):
                        cut += len(eol)
                        break
                try:
                    reader, error = _parse(data[:cut])
                except NotAPdf:
                    continue
                if error is None:
                    return reader, (f"{len(data) - cut} bytes follow the end of the PDF: the "
                                    "file was extended after it was written"), True
            raise whole from None
    problem = None if error is None else f"the file's structure is damaged ({one_line(error)})"
    return reader, problem, False


def _asn1_cert(cert: Any):
    """asn1crypto certificate from a cryptography / asn1crypto certificate or PEM/DER."""
    from asn1crypto import pem, x509

    if isinstance(cert, x509.Certificate):
        return cert
    if hasattr(cert, "public_bytes"):
        from cryptography.hazmat.primitives import serialization

        return x509.Certificate.load(cert.public_bytes(serialization.Encoding.DER))
    if isinstance(cert, bytes | bytearray):
        data = bytes(cert)
        if pem.detect(data):
            _, _, data = pem.unarmor(data)
        return x509.Certificate.load(data)
    raise TypeError(f"not a certificate: {type(cert).__name__}")


def _subject(cert) -> tuple[str, str | None]:
    native = cert.subject.native
    name = native.get("common_name") or cert.subject.human_friendly
    if isinstance(name, list):
        name = name[0]
    reg = native.get("serial_number")
    if isinstance(reg, list):
        reg = reg[0]
    return str(name), (str(reg) if reg is not None else None)


def _key_usage():
    from pyhanko.sign.validation.settings import KeyUsageConstraints

    return KeyUsageConstraints(key_usage={"digital_signature", "non_repudiation"},
                               match_all_key_usages=False)


def _claimed_time(es) -> dt.datetime | None:
    try:
        return es.self_reported_timestamp
    except Exception:
        return None


# --------------------------------------------------------------------------- the check


def check_signatures(pdf_bytes: bytes, *, extra_trust: Iterable[Any] = ()) -> SignatureReport:
    """Check every signature in ``pdf_bytes``; see the module docstring for the rules."""
    reader, structure_problem, extended = _read(pdf_bytes)

    from . import trust as trust_store

    roots = []
    for cert in [*trust_store.trusted_certificates(), *extra_trust]:
        roots.append(_asn1_cert(cert))

    with quiet_pyhanko():
        return _check(reader, roots, structure_problem, extended)


def _embedded(reader, problems: list[str]):
    """(field name, EmbeddedPdfSignature or None) for every filled signature field."""
    from pyhanko.sign.fields import enumerate_sig_fields
    from pyhanko.sign.validation.pdf_embedded import EmbeddedPdfSignature

    out = []
    try:
        fields = list(enumerate_sig_fields(reader, filled_status=True))
    except Exception as exc:
        problems.append(f"the signature fields cannot be read: {one_line(exc)}")
        return out
    for fq_name, _sig_obj, sig_field in fields:
        try:
            es = EmbeddedPdfSignature(reader, sig_field, fq_name)
            es.signer_cert  # noqa: B018 - parse the CMS now, not halfway through
        except Exception as exc:
            problems.append(f"signature '{fq_name}' cannot be read: {one_line(exc)}")
            out.append((fq_name, None))
            continue
        out.append((fq_name, es))
    return out


def _container_problem(es) -> str | None:
    """Checks of the unsigned parts of the signature container that pyHanko skips.

    The zero padding of /Contents (outside the signed byte range) and the SignedData
    digestAlgorithms list are ignored by verifiers, so a changed byte there alters
    nothing that is relied on; they are checked anyway, so that no changed byte in a
    record goes unnoticed.
    """
    from asn1crypto import cms

    raw = bytes(es.pkcs7_content)
    info = cms.ContentInfo.load(raw)
    if any(raw[len(info.dump()):]):
        return "the unused space after the signature was altered"
    sd, si = es.signed_data, es.signer_info
    listed = {a["algorithm"].dotted for a in sd["digest_algorithms"]}
    if si["digest_algorithm"]["algorithm"].dotted not in listed:
        return "its container does not list the digest algorithm it uses (altered)"
    # RFC 5754 / RFC 5758: digest and (EC)DSA/PKCS#1 algorithm parameters are absent or NULL
    plain = [*sd["digest_algorithms"], si["digest_algorithm"]]
    if si["signature_algorithm"]["algorithm"].native != "rsassa_pss":
        plain.append(si["signature_algorithm"])
    if any(a["parameters"].dump() not in (b"", b"\x05\x00") for a in plain):
        return "its algorithm identifiers carry unexpected parameters (altered)"
    # RFC 5652 5.3: SignerInfo version 1 with issuerAndSerialNumber, 3 with a key id
    want = 1 if si["sid"].name == "issuer_and_serial_number" else 3
    if si["version"].native != f"v{want}":
        return f"its SignerInfo version is {si['version'].native}, not v{want} (altered)"
    # RFC 5652 5.1: SignedData version at least 1, at least 3 with key ids or other content
    floor = 3 if want == 3 or sd["encap_content_info"]["content_type"].native != "data" else 1
    if int(sd["version"].native.lstrip("v")) not in range(floor, 6):
        return f"its SignedData version {sd['version'].native} is not allowed (altered)"
    return None


def _check_one(es, roots, key_usage, now: dt.datetime, extended: bool,
               problems: list[str], doc_problems: list[str]):
    """Both passes for one signature: (pyHanko status of the integrity pass, info)."""
    from pyhanko.sign.validation import SignatureCoverageLevel, validate_pdf_signature
    from pyhanko_certvalidator import ValidationContext

    name = es.field_name
    cert = es.signer_cert
    signer, registration = _subject(cert)
    fp = hashlib.sha256(cert.dump()).hexdigest()
    claimed = _claimed_time(es)
    if claimed is not None and claimed.tzinfo is None:
        claimed = claimed.replace(tzinfo=dt.UTC)
    moment = claimed or now
    label = f"signature '{name}' ({signer})"
    if claimed is None:
        problems.append(f"{label} claims no signing time")

    # pass 1: integrity, with the signer's own certificate as the only root
    status = None
    try:
        ctx = ValidationContext(trust_roots=[cert], allow_fetching=False, moment=moment)
        status = validate_pdf_signature(es, ctx, key_usage_settings=key_usage)
    except Exception as exc:
        problems.append(f"{label} cannot be validated: {one_line(exc)}")
    intact = bool(status and status.intact)
    crypto_ok = bool(status and status.valid)
    # certvalidator does not check a trust anchor's own validity period, and in this
    # pass the signer's certificate is the anchor: check the period here
    validity = cert["tbs_certificate"]["validity"]
    in_period = validity["not_before"].native <= moment <= validity["not_after"].native
    cert_ok = bool(status and status.trust_problem_indic is None
                   and status.validation_path is not None and in_period)
    if status is not None:
        if not intact:
            problems.append(f"{label}: the signed bytes were altered (digest mismatch)")
        elif not crypto_ok:
            problems.append(f"{label}: the signature value does not verify")
        elif not in_period:
            problems.append(f"{label}: its certificate was not valid at the claimed "
                            f"signing time {moment.isoformat()}")
        elif not cert_ok:
            problems.append(f"{label}: its certificate was not usable at the claimed "
                            f"signing time {moment.isoformat()} "
                            f"({one_line(status.trust_problem_indic or '')})")
    covers_whole = not extended and bool(
        status and status.coverage == SignatureCoverageLevel.ENTIRE_FILE)
    try:
        container = _container_problem(es)
    except Exception as exc:
        container = f"its signature container is malformed ({one_line(exc)})"
    if container:
        doc_problems.append(f"{label}: {container}")

    # pass 2: trust, with the trust store (+ extra_trust) as the only roots
    trusted = False
    if roots and intact and crypto_ok and cert_ok:
        try:
            tctx = ValidationContext(trust_roots=roots, allow_fetching=False, moment=moment)
            tstatus = validate_pdf_signature(es, tctx, key_usage_settings=key_usage,
                                             skip_diff=True)
            trusted = bool(tstatus.trusted)
        except Exception:
            trusted = False
    info = SignatureInfo(
        field=name, signer=signer, registration=registration, fingerprint=fp,
        valid=intact and crypto_ok and cert_ok, intact=intact, trusted=trusted,
        covers_whole=covers_whole, signing_time=claimed.isoformat() if claimed else None,
    )
    return status, info


def _check(reader, roots, structure_problem: str | None, extended: bool) -> SignatureReport:
    from pyhanko.sign.diff_analysis import ModificationLevel
    from pyhanko.sign.validation import SignatureCoverageLevel
    from pyhanko.sign.validation.status import DiffResult

    problems: list[str] = []  # about one signature
    doc_problems: list[str] = [structure_problem] if structure_problem else []  # the file
    if getattr(reader, "encrypted", False):
        doc_problems.append("the file is encrypted; a handover record never is")

    found = _embedded(reader, problems)
    if not found:
        return SignatureReport(signed=False,
                               problems=[*doc_problems, *problems,
                                         "the file carries no signature"])

    unreadable = [name for name, es in found if es is None]
    readable = [es for _, es in found if es is not None]
    doc_timestamps = [es for es in readable if es.sig_object_type == "/DocTimeStamp"]
    sigs = sorted((es for es in readable if es.sig_object_type != "/DocTimeStamp"),
                  key=lambda es: es.signed_revision)
    infos: list[SignatureInfo] = []
    statuses = []
    key_usage = _key_usage()
    now = dt.datetime.now(dt.UTC)

    for es in sigs:
        try:
            status, info = _check_one(es, roots, key_usage, now, extended, problems,
                                      doc_problems)
        except Exception as exc:  # a container too odd to judge counts as invalid
            problems.append(f"signature '{es.field_name}' cannot be checked: {one_line(exc)}")
            status, info = None, SignatureInfo(
                field=es.field_name, signer="unknown", registration=None, fingerprint="",
                valid=False, intact=False, trusted=False, covers_whole=False,
                signing_time=None)
        statuses.append(status)
        infos.append(info)

    # ----- document-level rules
    later_fields = [{es.field_name for es in sigs[i + 1:]} for i in range(len(sigs))]
    for i, (status, info) in enumerate(zip(statuses, infos, strict=True)):
        if status is None:
            continue
        if i == len(sigs) - 1:  # the last signature
            if not info.covers_whole:
                doc_problems.append(f"the file was changed or extended after the last "
                                    f"signature ('{info.field}'): it does not cover the "
                                    "whole file")
            continue
        if status.coverage is None or \
                status.coverage < SignatureCoverageLevel.ENTIRE_REVISION:
            doc_problems.append(f"signature '{info.field}' does not cover its whole revision")
        level = status.modification_level
        diff = status.diff_result
        if level is None or level > ModificationLevel.FORM_FILLING:
            why = "" if diff is None or isinstance(diff, DiffResult) else \
                f": {one_line(diff)}"
            doc_problems.append(f"content changed after signing: after signature "
                                f"'{info.field}' ({info.signer}) the file was modified "
                                f"beyond adding signatures{why}")
        elif isinstance(diff, DiffResult):
            extra = sorted(set(diff.changed_form_fields) - later_fields[i])
            if extra:
                doc_problems.append(f"content changed after signing: form field(s) "
                                    f"{', '.join(extra)} changed after signature "
                                    f"'{info.field}'")
        if status.docmdp_ok is False:
            doc_problems.append(f"signature '{info.field}': later changes break its "
                                "modification permissions")
    if sigs:
        try:
            total = reader.xrefs.total_revisions
            signed_revisions = {es.signed_revision for es in sigs + doc_timestamps}
            for rev in range(sigs[0].signed_revision + 1, total):
                if rev not in signed_revisions:
                    doc_problems.append(f"content changed after signing: revision {rev + 1}"
                                        f" of {total} adds no signature")
        except Exception as exc:
            doc_problems.append(f"the file's revisions cannot be followed: {one_line(exc)}")

    for name in unreadable:
        infos.append(SignatureInfo(field=name, signer="unknown", registration=None,
                                   fingerprint="", valid=False, intact=False, trusted=False,
                                   covers_whole=False, signing_time=None))

    if not infos:  # document timestamps only
        return SignatureReport(signed=False,
                               problems=[*doc_problems, *problems,
                                         "the file carries no signature, only timestamps"])
    # de-duplicate while keeping order (several rules can say the same thing)
    problems = list(dict.fromkeys([*problems, *doc_problems]))
    signature_valid = all(s.valid for s in infos)
    intact = all(s.intact for s in infos) and not doc_problems
    first_info = infos[0]
    # an unreadable signature cannot be placed in order, so nothing is "first" for sure
    trusted = first_info.trusted and first_info.valid and not unreadable
    note = None
    if not trusted:
        if not first_info.valid:
            note = f"the installer's signature ('{first_info.field}') is not valid"
        else:
            note = (f"the installer's signature ('{first_info.field}') by {first_info.signer} "
                    f"is not trusted: certificate {first_info.fingerprint[:16]}… is not in "
                    "the trust store (add it with 'commission trust add CERT.pem')")
    return SignatureReport(signed=True, signatures=infos, signature_valid=signature_valid,
                           intact=intact, trusted=trusted, problems=problems,
                           trust_note=note)
