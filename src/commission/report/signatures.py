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
2. **Trust pass.** A trusted certificate vouches for its own key only: the signature
   is trusted when its certificate's SHA-256 fingerprint is one the reviewer trusts as a
   signer (``trust add CERT``, or ``--trust CERT`` for one call). Otherwise it is
   trusted only through an authority the reviewer added with ``trust add --authority``
   (a CA by basicConstraints and keyCertSign): pyHanko validates the path from the
   signer's certificate to one of those roots, and nothing else, at the claimed time. A
   certificate issued by a trusted non-CA certificate, or by a CA added as a plain
   signer, is not trusted; a stranger's key with a copied name is not either (the
   fingerprint differs). A certificate carried inside the PDF is only ever a path
   candidate, never a root. EVERY signature must be trusted; the first untrusted one is
   named in the problem line.

Time (every signature): the claimed signing time (``/M``) must lie within the
certificate's validity and not after this computer's present plus
:data:`CLOCK_SKEW`; that it is not before the record's own creation time is checked by
:func:`time_problems` once the record is read. Document timestamps (RFC 3161, added by
``commission seal``) are validated against the TSA certificates trusted with ``trust add
--tsa`` only; their time is reported as attested, and no signature may claim a time
after the timestamp that covers it.

Document-level rules on top of pyHanko's per-signature results:

* the last signature must cover the whole file (``SignatureCoverageLevel.
  ENTIRE_FILE``); bytes appended after it are a problem;
* every earlier signature must cover its whole revision, the difference analysis
  from it onwards must stay at ``ModificationLevel.FORM_FILLING`` or below, and the
  only form fields that change after it must be the later signatures' own fields;
* every revision after the first signed one must be a revision that a signature
  signs (each update adds a signature and nothing else).

Otherwise the problem "modified after signing" is reported. The difference analysis
runs with :func:`.diffpolicy.signing_only_policy`: only what signing itself adds may
change (signature fields, document timestamps, DSS, the signing updates of the
document information and XMP).
"""

from __future__ import annotations

import contextlib
import datetime as dt
import hashlib
import logging
from collections.abc import Iterable, Iterator
from dataclasses import dataclass, field, fields
from typing import Any

from ..errors import UserError

__all__ = ["CLOCK_SKEW", "NotAPdf", "SignatureInfo", "SignatureReport", "TimestampInfo",
           "check_reader", "check_signatures", "open_pdf", "one_line", "quiet_pyhanko",
           "read_pdf", "time_problems"]

# How far a claimed signing time may lie ahead of this computer's clock (or a signature
# before the record it signs): computers' clocks disagree by minutes. Five minutes is
# common practice (the default maximum clock skew of Kerberos implementations; RFC 4120
# section 1.6 assumes clocks synchronised to within minutes; from memory).
CLOCK_SKEW = dt.timedelta(minutes=5)


def _plain(value: Any) -> Any:
    return value if value is None or isinstance(value, bool | int | float) else str(value)


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
        # shallow: asdict() deep-copies, and a value read from the PDF may hold the reader
        return {f.name: _plain(getattr(self, f.name)) for f in fields(self)}


@dataclass
class TimestampInfo:
    """A document timestamp (RFC 3161 token in a /DocTimeStamp field)."""

    field: str
    tsa: str
    fingerprint: str
    time: str | None  # attested by the TSA
    valid: bool
    trusted: bool

    def as_json(self) -> dict[str, Any]:
        # shallow: asdict() deep-copies, and a value read from the PDF may hold the reader
        return {f.name: _plain(getattr(self, f.name)) for f in fields(self)}


@dataclass
class SignatureReport:
    signed: bool
    signatures: list[SignatureInfo] = field(default_factory=list)
    signature_valid: bool = False
    intact: bool = False
    trusted: bool = False
    """Every signature (and document timestamp) is trusted."""
    problems: list[str] = field(default_factory=list)
    trust_note: str | None = None
    """Why the first signature that is not trusted is not; None when all are."""
    timestamps: list[TimestampInfo] = field(default_factory=list)

    def sound(self) -> bool:
        """Signed, intact and valid, whoever signed it (trust aside)."""
        return self.signed and self.signature_valid and self.intact and not self.problems

    def ok(self) -> bool:
        """Everything holds and every signature is trusted."""
        return self.sound() and self.trusted

    def first_reason(self) -> str | None:
        """One line saying why :meth:`ok` is False, or None."""
        if self.problems:
            return self.problems[0]
        if not self.trusted:
            return self.trust_note or "a signature is not trusted"
        return None

    def as_json(self) -> dict[str, Any]:
        return {
            "signed": self.signed,
            "signatures": [s.as_json() for s in self.signatures],
            "timestamps": [t.as_json() for t in self.timestamps],
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


def open_pdf(data):
    """A pyHanko reader, plus a problem line if the file is damaged or extended.

    ``data`` is bytes or a seekable binary file object (read in place, never whole:
    see :mod:`.source`). Raises :class:`NotAPdf` when no reading of it gives a PDF.
    """
    reader, problem, _ = _read(data)
    return reader, problem


def read_pdf(data):
    """(reader, problem or None, extended): see ``_read``."""
    return _read(data)


def _parse(stream):
    """(reader, None) from the strict parser, else (reader, error) from the lenient one."""
    from pyhanko.pdf_utils.reader import PdfFileReader

    first_error: Exception | None = None
    for strict in (True, False):
        try:
            stream.seek(0)
            reader = PdfFileReader(stream, strict=strict)
            reader.root  # noqa: B018 - forces the catalogue to be read
            _ = reader.xrefs.total_revisions
        except Exception as exc:  # any parser failure
            first_error = first_error or exc
            continue
        return reader, first_error
    raise NotAPdf(f"cannot be read as a PDF: {one_line(first_error or 'unknown error')}")


def _read(data):
    """(reader, problem or None, extended) where ``extended`` means bytes were found
    after the end of the PDF that no parser could read (then the reader holds the
    file up to the last end-of-file marker that parses). ``data``: bytes or a seekable
    binary file object."""
    import io

    from .source import Window, eof_markers, size_of

    if isinstance(data, bytes | bytearray | memoryview):
        stream = io.BytesIO(bytes(data))
    elif hasattr(data, "read") and hasattr(data, "seek"):
        stream = data
    else:
        raise TypeError("pdf bytes or a binary file object expected")
    stream.seek(0)
    if b"%PDF-" not in stream.read(1024):
        raise NotAPdf("not a PDF: the %PDF- header is missing")
    with quiet_pyhanko():
        try:
            reader, error = _parse(stream)
        except NotAPdf as whole:
            # text appended after the final %%EOF hides the real end from the parsers:
            # try the file up to each earlier end-of-file marker, latest first
            total = size_of(stream)
            for cut in eof_markers(stream):
                try:
                    reader, error = _parse(Window(stream, cut))
                except NotAPdf:
                    continue
                if error is None:
                    return reader, (f"{total - cut} bytes follow the end of the PDF: the "
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


@dataclass
class _Trust:
    """What the reviewer trusts, by role (see :mod:`commission.report.trust`)."""

    signers: dict[str, Any]  # fingerprint -> asn1 certificate (own key only)
    authorities: list[Any]  # asn1 CA certificates added with --authority
    tsa: dict[str, Any]  # fingerprint -> asn1 TSA certificate
    tsa_authorities: list[Any]
    entries: list[tuple[str, Any]]  # (label, cryptography certificate), for explanations

    def explain(self, cert, signer: str, fp: str) -> str:
        """Why a valid signature's certificate is not trusted, in one clause."""
        from cryptography import x509 as _x509

        from ..fingerprint import readable
        from .identity import cert_name, fingerprint
        from .trust import is_authority

        mine = _x509.load_der_x509_certificate(cert.dump())
        for label, entry in self.entries:
            if fingerprint(entry) == fp:
                continue
            try:
                mine.verify_directly_issued_by(entry)
            except Exception:  # noqa: BLE001 — not issued by this entry
                continue
            if not is_authority(entry):
                return (f"its certificate was issued by {label}, a trusted certificate that "
                        "is not a certificate authority (it vouches for its own key only)")
            return (f"its certificate was issued by {label}, a certificate authority you "
                    "did not add with 'trust add --authority' (trusted for its own key only)")
        for label, entry in self.entries:
            if cert_name(entry) == signer:
                return (f"certificate {readable(fp, 4)} is not the one you trust for "
                        f"{signer} ({label}, {readable(fingerprint(entry), 4)}): same name, "
                        "another key")
        return (f"certificate {readable(fp, 4)} is not in your trust store (check its "
                "fingerprint with its owner, then 'commission trust add CERT.pem')")


def _trust(extra_trust: Iterable[Any]) -> _Trust:
    import hashlib as _h

    from . import trust as trust_store

    def asn1(certs):
        return [_asn1_cert(c) for c in certs]

    entries = trust_store.trusted()
    signer_certs = asn1([e.cert for e in entries if "signer" in e.roles]) + asn1(extra_trust)
    tsa_certs = asn1([e.cert for e in entries if "tsa" in e.roles])
    tsa_cas = asn1([e.cert for e in entries
                    if "tsa" in e.roles and trust_store.is_authority(e.cert)])
    labels = [(e.label, e.cert) for e in entries]
    for cert in extra_trust:
        crypt = _crypto_cert(cert)
        labels.append((f"{_subject(_asn1_cert(cert))[0]} (--trust)", crypt))
    return _Trust(signers={_h.sha256(c.dump()).hexdigest(): c for c in signer_certs},
                  authorities=asn1(trust_store.trusted_certificates("authority")),
                  tsa={_h.sha256(c.dump()).hexdigest(): c for c in tsa_certs},
                  tsa_authorities=tsa_cas, entries=labels)


def _crypto_cert(cert: Any):
    from cryptography import x509 as _x509

    return _x509.load_der_x509_certificate(_asn1_cert(cert).dump())


def check_signatures(pdf, *, extra_trust: Iterable[Any] = ()) -> SignatureReport:
    """Check every signature in ``pdf`` (bytes, a path or a seekable binary file object);
    see the module docstring for the rules. ``extra_trust``: certificates trusted as
    signers (own key only) for this call."""
    from .source import opened

    with opened(pdf) as stream:
        reader, structure_problem, extended = _read(stream)
        return check_reader(reader, structure_problem, extended, extra_trust=extra_trust)


def check_reader(reader, structure_problem: str | None, extended: bool, *,
                 extra_trust: Iterable[Any] = ()) -> SignatureReport:
    """:func:`check_signatures` on a reader made by :func:`read_pdf`."""
    trust = _trust(list(extra_trust))
    with quiet_pyhanko():
        return _check(reader, trust, structure_problem, extended)


def time_problems(report: SignatureReport, created_at: str | None) -> list[str]:
    """Signatures claiming a time before the record was made (``created_at``, from the
    signed record), allowing :data:`CLOCK_SKEW`."""
    if not created_at:
        return []
    try:
        made = dt.datetime.fromisoformat(created_at.replace("Z", "+00:00"))
    except ValueError:
        return [f"the record's creation time {created_at!r} cannot be read"]
    out = []
    for s in report.signatures:
        if not s.signing_time:
            continue
        claimed = dt.datetime.fromisoformat(s.signing_time)
        if claimed < made - CLOCK_SKEW:
            out.append(f"signature '{s.field}' ({s.signer}) claims the signing time "
                       f"{_when(claimed)}, before the record was made ({_when(made)})")
    return out


def _when(moment: dt.datetime) -> str:
    return moment.astimezone(dt.UTC).strftime("%Y-%m-%d %H:%M:%S UTC")


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


MAX_LATER_OBJECT = 16 * 1024 * 1024
"""An object added after the first signature larger than this is refused unread: what
signing adds (signature dictionaries, timestamps, validation data) is far smaller."""


def _oversized_after(reader, revision: int) -> str | None:
    """A line naming an object added after ``revision`` that is larger than
    :data:`MAX_LATER_OBJECT`, measured from the cross-reference offsets (the distance to
    the next object or cross-reference section), so that it is never read."""
    import os

    try:
        xrefs = reader.xrefs
        total = xrefs.total_revisions
        offsets: set[int] = set()
        for rev in range(total):
            data = xrefs.get_xref_data(rev)
            offsets.update(pos for _, pos in data.standard_xrefs.values())
            offsets.add(xrefs.get_startxref_for_revision(rev))
        stream = reader.stream
        here = stream.tell()
        offsets.add(stream.seek(0, os.SEEK_END))
        stream.seek(here)
        ordered = sorted(offsets)
        import bisect

        for rev in range(revision + 1, total):
            data = xrefs.get_xref_data(rev)
            for idnum, (_, pos) in data.standard_xrefs.items():
                k = bisect.bisect_right(ordered, pos)
                size = (ordered[k] if k < len(ordered) else pos) - pos
                if size > MAX_LATER_OBJECT:
                    return (f"modified after signing: revision {rev + 1} of {total} adds "
                            f"object {idnum} of {size} bytes (larger than anything signing "
                            "adds)")
    except Exception:  # noqa: BLE001 — the difference analysis judges what this cannot
        return None
    return None


def _reaches_end(es) -> bool:
    """Whether the signature's byte range ends where the file (as read) ends."""
    import os

    try:
        _, _, start2, len2 = (int(x) for x in es.byte_range)
        stream = es.reader.stream
        here = stream.tell()
        end = stream.seek(0, os.SEEK_END)
        stream.seek(here)
        return start2 + len2 == end
    except Exception:  # noqa: BLE001 — pyHanko reports a malformed range itself
        return True


def _check_one(es, trust: _Trust, key_usage, now: dt.datetime, extended: bool,
               problems: list[str], doc_problems: list[str], untrusted_reasons: list[str],
               last: bool = False, skip_diff: bool = False):
    """Both passes for one signature: (pyHanko status of the integrity pass, info)."""
    from pyhanko.sign.validation import SignatureCoverageLevel, validate_pdf_signature
    from pyhanko_certvalidator import ValidationContext

    from .diffpolicy import signing_only_policy

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
        # After the last signature nothing may follow at all, so when something does,
        # the difference analysis (which would read every object added, however large)
        # has nothing to decide: the coverage rule reports it.
        status = validate_pdf_signature(es, ctx, key_usage_settings=key_usage,
                                        diff_policy=signing_only_policy(),
                                        skip_diff=skip_diff or (last and not _reaches_end(es)))
    except Exception as exc:
        problems.append(f"{label} cannot be validated: {one_line(exc)}")
    intact = bool(status and status.intact)
    crypto_ok = bool(status and status.valid)
    # certvalidator does not check a trust anchor's own validity period, and in this
    # pass the signer's certificate is the anchor: check the period here
    validity = cert["tbs_certificate"]["validity"]
    not_before, not_after = validity["not_before"].native, validity["not_after"].native
    in_period = not_before <= moment <= not_after
    if claimed is not None and claimed > now + CLOCK_SKEW:
        problems.append(f"{label} claims the signing time {_when(claimed)}, in the future "
                        f"(now {_when(now)}; {int(CLOCK_SKEW.total_seconds() // 60)} minutes "
                        "of clock skew allowed)")
    cert_ok = bool(status and status.trust_problem_indic is None
                   and status.validation_path is not None and in_period)
    if status is not None:
        if not intact:
            problems.append(f"{label}: the signed bytes were altered (digest mismatch)")
        elif not crypto_ok:
            problems.append(f"{label}: the signature value does not verify")
        elif moment < not_before:
            problems.append(f"{label}: its certificate is not yet valid at the claimed "
                            f"signing time {_when(moment)} (valid from {_when(not_before)})")
        elif moment > not_after:
            problems.append(f"{label}: its certificate had expired at the claimed signing "
                            f"time {_when(moment)} (valid until {_when(not_after)})")
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

    # pass 2: trust. The signer's own certificate by fingerprint, else a path to an
    # authority the reviewer added with --authority (and only those roots).
    trusted = False
    if intact and crypto_ok and cert_ok:
        if fp in trust.signers:
            trusted = True
        elif trust.authorities:
            try:
                tctx = ValidationContext(trust_roots=trust.authorities, allow_fetching=False,
                                         moment=moment)
                tstatus = validate_pdf_signature(es, tctx, key_usage_settings=key_usage,
                                                 skip_diff=True)
                trusted = bool(tstatus.trusted)
            except Exception:  # noqa: BLE001 — no path: not trusted
                trusted = False
        if not trusted:
            try:
                why = trust.explain(cert, signer, fp)
            except Exception as exc:  # noqa: BLE001
                why = f"no trusted certificate vouches for it ({one_line(exc)})"
            untrusted_reasons.append(f"{label} is not trusted: {why}")
    info = SignatureInfo(
        field=name, signer=signer, registration=registration, fingerprint=fp,
        valid=intact and crypto_ok and cert_ok, intact=intact, trusted=trusted,
        covers_whole=covers_whole, signing_time=claimed.isoformat() if claimed else None,
    )
    return status, info


def _timestamp(es, trust: _Trust, extended: bool) -> tuple[Any, TimestampInfo, str | None]:
    """(pyHanko status, info, problem or None) of one document timestamp."""
    from pyhanko.sign.validation import validate_pdf_timestamp
    from pyhanko_certvalidator import ValidationContext

    del extended  # coverage of the last timestamp is a document rule (see _check)
    cert = es.signer_cert
    tsa, _ = _subject(cert)
    fp = hashlib.sha256(cert.dump()).hexdigest()
    label = f"document timestamp '{es.field_name}' ({tsa})"
    # integrity: the TSA's own certificate as the only root
    status = validate_pdf_timestamp(es, ValidationContext(
        trust_roots=[cert], allow_fetching=False))
    attested = status.timestamp
    valid = bool(status.intact and status.valid and status.trusted)
    trusted = False
    if valid:
        roots = [trust.tsa[fp]] if fp in trust.tsa else trust.tsa_authorities
        if roots:
            try:
                tstatus = validate_pdf_timestamp(es, ValidationContext(
                    trust_roots=roots, allow_fetching=False), skip_diff=True)
                trusted = bool(tstatus.trusted)
            except Exception:  # noqa: BLE001 — no path: not trusted
                trusted = False
    problem = None
    if not status.intact:
        problem = f"{label}: the timestamped bytes were altered"
    elif not valid:
        problem = f"{label} does not verify ({one_line(status.trust_problem_indic or '')})"
    elif not trusted:
        from ..fingerprint import readable

        problem = (f"{label} is not trusted: timestamp authority certificate "
                   f"{readable(fp, 4)} was not added with 'commission trust add --tsa'")
    info = TimestampInfo(field=str(es.field_name), tsa=str(tsa), fingerprint=fp,
                         time=attested.isoformat() if attested else None,
                         valid=valid, trusted=trusted)
    return status, info, problem


def _check(reader, trust: _Trust, structure_problem: str | None,
           extended: bool) -> SignatureReport:
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
    untrusted: list[str] = []  # one line per signature that is not trusted

    # the last signature or document timestamp: nothing may follow it
    final = max(sigs + doc_timestamps, key=lambda es: es.signed_revision) if sigs else None
    oversized = _oversized_after(reader, sigs[0].signed_revision) if sigs else None
    if oversized:
        doc_problems.append(oversized)
    for es in sigs:
        try:
            status, info = _check_one(es, trust, key_usage, now, extended, problems,
                                      doc_problems, untrusted, last=es is final,
                                      skip_diff=bool(oversized))
        except Exception as exc:  # a container too odd to judge counts as invalid
            problems.append(f"signature '{es.field_name}' cannot be checked: {one_line(exc)}")
            status, info = None, SignatureInfo(
                field=es.field_name, signer="unknown", registration=None, fingerprint="",
                valid=False, intact=False, trusted=False, covers_whole=False,
                signing_time=None)
        statuses.append(status)
        infos.append(info)

    # ----- document timestamps (seal): attested times, trusted TSAs only
    stamps: list[TimestampInfo] = []
    stamp_status: dict[str, Any] = {}
    for es in sorted(doc_timestamps, key=lambda es: es.signed_revision):
        try:
            tstatus, tinfo, tproblem = _timestamp(es, trust, extended)
        except Exception as exc:  # noqa: BLE001 — an odd token counts as invalid
            problems.append(f"document timestamp '{es.field_name}' cannot be checked: "
                            f"{one_line(exc)}")
            continue
        stamps.append(tinfo)
        stamp_status[es.field_name] = tstatus
        if tproblem:
            (untrusted if tinfo.valid and not tinfo.trusted else problems).append(tproblem)
        if tinfo.time:
            attested = dt.datetime.fromisoformat(tinfo.time)
            for other, oinfo in zip(sigs, infos, strict=True):
                if other.signed_revision < es.signed_revision and oinfo.signing_time and \
                        dt.datetime.fromisoformat(oinfo.signing_time) > attested + CLOCK_SKEW:
                    problems.append(f"signature '{oinfo.field}' ({oinfo.signer}) claims the "
                                    f"signing time {oinfo.signing_time}, after the document "
                                    f"timestamp that covers it ({tinfo.time})")

    # ----- document-level rules
    # every signature and timestamp in revision order; the last must cover the whole file
    order = sorted(sigs + [es for es in doc_timestamps if es.field_name in stamp_status],
                   key=lambda es: es.signed_revision)
    last = order[-1] if order else None
    if last is not None and last.sig_object_type == "/DocTimeStamp":
        from pyhanko.sign.validation import SignatureCoverageLevel as _Cov

        tstatus = stamp_status[last.field_name]
        if extended or tstatus.coverage != _Cov.ENTIRE_FILE:
            doc_problems.append(f"the file was changed or extended after the last "
                                f"timestamp ('{last.field_name}'): it does not cover the "
                                "whole file")
    later_fields = [{o.field_name for o in order if o.signed_revision > es.signed_revision}
                    for es in sigs]
    for i, (status, info) in enumerate(zip(statuses, infos, strict=True)):
        if status is None:
            continue
        if sigs[i] is last:  # the last signature, nothing after it
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
            doc_problems.append(f"modified after signing: after signature "
                                f"'{info.field}' ({info.signer}) the file was modified "
                                f"beyond adding signatures{why}")
        elif isinstance(diff, DiffResult):
            extra = sorted(set(diff.changed_form_fields) - later_fields[i])
            if extra:
                doc_problems.append(f"modified after signing: form field(s) "
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
                    doc_problems.append(f"modified after signing: revision {rev + 1}"
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
    # an unreadable signature cannot be placed in order, so nothing is "first" for sure
    trusted = all(i.trusted and i.valid for i in infos) and not unreadable \
        and not untrusted and all(t.trusted for t in stamps)
    note = None
    if not trusted:
        invalid = [i for i in infos if not i.valid]
        if invalid:
            note = f"signature '{invalid[0].field}' ({invalid[0].signer}) is not valid"
        elif untrusted:
            note = untrusted[0]
        else:
            note = "a signature cannot be read, so it cannot be trusted"
    return SignatureReport(signed=True, signatures=infos, signature_valid=signature_valid,
                           intact=intact, trusted=trusted, problems=problems,
                           trust_note=note, timestamps=stamps)
