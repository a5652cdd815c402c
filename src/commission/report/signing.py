"""Signing a PDF with the stored identity: PAdES baseline B-B, offline.

Every signature is an approval signature (``/SubFilter /ETSI.CAdES.detached``,
SHA-256, signing-certificate-v2 attribute, no ``signingTime`` attribute as PAdES
requires) written by pyHanko as a new incremental revision: the bytes already in the
file are never rewritten, so an earlier signature stays intact when a reviewer
countersigns. The signing time is this computer's clock, recorded in the signature
dictionary's ``/M``; no timestamp authority is asked (work on site is offline), so a
verifier can only rely on the time the signer claims until ``commission seal`` adds an
RFC 3161 document timestamp (see seal.py).

The private key is decrypted in memory for the duration of one signature.
"""

from __future__ import annotations

from io import BytesIO

from ..errors import UserError
from .identity import Identity, check_usable, load_identity
from .signatures import NotAPdf, check_signatures, one_line, open_pdf, quiet_pyhanko

INSTALLER_FIELD = "Installer"
REVIEWER_FIELD = "Reviewer"


def _signer(identity: Identity, passphrase: str):
    from asn1crypto import keys, x509
    from cryptography.hazmat.primitives import serialization
    from pyhanko.sign import signers
    from pyhanko_certvalidator.registry import SimpleCertificateStore

    key = identity.unlock(passphrase)
    cert = x509.Certificate.load(identity.cert.public_bytes(serialization.Encoding.DER))
    key_info = keys.PrivateKeyInfo.load(key.private_bytes(
        serialization.Encoding.DER, serialization.PrivateFormat.PKCS8,
        serialization.NoEncryption()))
    # the registry holds further chain certificates; the signer's own is added anyway,
    # and listing it here too would embed it twice
    return signers.SimpleSigner(signing_cert=cert, signing_key=key_info,
                                cert_registry=SimpleCertificateStore())


def signature_fields(pdf_bytes: bytes) -> dict[str, bool]:
    """Signature field name -> whether it is already signed."""
    from pyhanko.sign.fields import enumerate_sig_fields

    reader, _ = open_pdf(pdf_bytes)
    try:
        with quiet_pyhanko():
            return {name: value is not None
                    for name, value, _ in enumerate_sig_fields(reader)}
    except Exception as exc:
        raise UserError(f"the PDF's form fields cannot be read: {one_line(exc)}") from None


def sign_pdf(pdf_bytes: bytes, *, passphrase: str, reason: str, location: str | None,
             field_name: str, identity: Identity | None = None, stamp=None) -> bytes:
    """``pdf_bytes`` with one more signature, by the stored identity, in a new revision.

    ``field_name`` names the (invisible) signature field; an existing empty field of
    that name is filled, a signed one is refused. Raises :class:`NotAPdf` for bytes
    that are no PDF and :class:`UserError` for a wrong passphrase, a missing or
    expired identity, or a PDF pyHanko cannot append to.
    """
    from pyhanko.pdf_utils.incremental_writer import IncrementalPdfFileWriter
    from pyhanko.sign import signers
    from pyhanko.sign.fields import SigSeedSubFilter

    field_name = (field_name or "").strip()
    if not field_name or "." in field_name:
        raise UserError(f"signature field name '{field_name}': give a name without dots")
    identity = identity or load_identity()
    check_usable(identity)
    reader, damaged = open_pdf(pdf_bytes)
    if damaged:
        raise UserError(f"refusing to sign: {damaged}")
    if getattr(reader, "encrypted", False):
        raise UserError("refusing to sign an encrypted PDF")
    if signature_fields(pdf_bytes).get(field_name):
        raise UserError(f"the PDF already has a signature in the field '{field_name}'")
    signer = _signer(identity, passphrase)
    meta = signers.PdfSignatureMetadata(
        field_name=field_name,
        reason=reason or None,
        location=location or None,
        name=identity.name,
        md_algorithm="sha256",
        subfilter=SigSeedSubFilter.PADES,
        embed_validation_info=False,
        use_pades_lta=False,
    )
    spec = style = None
    if stamp is not None:  # the reviewer's visible stamp, in the box the record reserves
        from pyhanko.sign.fields import SigFieldSpec

        from .stamp import stamp_style

        spec = SigFieldSpec(sig_field_name=field_name, on_page=stamp.page,
                            box=tuple(stamp.rect))
        style = stamp_style(identity.name, identity.fingerprint)
    try:
        with quiet_pyhanko():
            writer = IncrementalPdfFileWriter(BytesIO(bytes(pdf_bytes)))
            out = signers.PdfSigner(meta, signer=signer, stamp_style=style,
                                    new_field_spec=spec).sign_pdf(writer)
    except NotAPdf:
        raise
    except Exception as exc:
        raise UserError(f"cannot sign this PDF: {one_line(exc)}") from None
    return out.getvalue()


def _free_field(taken: dict[str, bool], base: str) -> str:
    if base not in taken:
        return base
    n = 2
    while f"{base}-{n}" in taken:
        n += 1
    return f"{base}-{n}"


def signer_certificates(pdf_bytes: bytes) -> list[tuple[str, object]]:
    """(field, asn1 certificate) of every signature, in signing order."""
    reader, _ = open_pdf(pdf_bytes)
    with quiet_pyhanko():
        sigs = sorted(reader.embedded_regular_signatures, key=lambda es: es.signed_revision)
        return [(es.field_name, es.signer_cert) for es in sigs]


def countersign(pdf_bytes: bytes, *, passphrase: str, reason: str = "reviewed",
                location: str | None = None, field_name: str | None = None,
                identity: Identity | None = None, installer_fingerprint: str | None = None):
    """Add the current identity's signature after the existing ones.

    Runs the full verification first (signatures, trust, the record, the pages) and
    refuses a file that fails it: countersigning a tampered record would lend it
    credibility. An installer whose certificate is not in this reviewer's trust store is
    accepted only when ``installer_fingerprint`` (read out by the installer, typed by
    the reviewer) is that certificate's SHA-256. Draws the reviewer's stamp in the box
    the record reserves, when it is still free. Returns ``(signed bytes, report of the
    file before countersigning)`` so the caller can mention trust.
    """
    import hashlib

    from ..fingerprint import readable
    from .verify import verify

    before = check_signatures(pdf_bytes)
    if not before.signed:
        raise UserError("nothing to countersign: the file carries no signature")
    extra = []
    if installer_fingerprint is not None:
        typed = "".join(installer_fingerprint.split()).replace(":", "").lower()
        if len(typed) != 64 or any(ch not in "0123456789abcdef" for ch in typed):
            raise UserError("--installer-fingerprint: give the 64 hex digits of the "
                            "installer's certificate SHA-256 (spaces and colons allowed)")
        field, cert = signer_certificates(pdf_bytes)[0]
        actual = hashlib.sha256(cert.dump()).hexdigest()
        if actual != typed:
            raise UserError(f"refusing to countersign: the installer's certificate ("
                            f"'{field}') is {readable(actual)}, not the fingerprint you "
                            f"typed {readable(typed)}")
        extra = [cert]
    full = verify(pdf_bytes, extra_trust=extra)
    if not full.ok():
        problem = full.first_problem() or "verification failed"
        if full.signatures and not full.signatures[0]["trusted"] and \
                installer_fingerprint is None and problem == full.trust_note:
            problem += ("; if the installer read you their certificate fingerprint, give "
                        "it with --installer-fingerprint HEX")
        raise UserError(f"refusing to countersign: {problem}")
    taken = signature_fields(pdf_bytes)
    record = full.content.record if full.content is not None else None
    box = getattr(record, "reviewer_stamp", None)
    stamp = None
    if field_name is None and box is not None and box.field not in taken:
        name, stamp = box.field, box
    else:
        name = field_name or _free_field(taken, REVIEWER_FIELD)
    signed = sign_pdf(pdf_bytes, passphrase=passphrase, reason=reason, location=location,
                      field_name=name, identity=identity, stamp=stamp)
    return signed, before
