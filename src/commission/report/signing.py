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
             field_name: str, identity: Identity | None = None) -> bytes:
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
    try:
        with quiet_pyhanko():
            writer = IncrementalPdfFileWriter(BytesIO(bytes(pdf_bytes)))
            out = signers.sign_pdf(writer, meta, signer=signer)
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


def countersign(pdf_bytes: bytes, *, passphrase: str, reason: str = "reviewed",
                location: str | None = None, field_name: str | None = None,
                identity: Identity | None = None):
    """Add the current identity's signature after the existing ones.

    Refuses an unsigned file, and one whose signatures do not hold (countersigning a
    tampered record would lend it credibility). Returns ``(signed bytes, report of
    the file before countersigning)`` so the caller can mention trust.
    """
    from .verify import verify

    before = check_signatures(pdf_bytes)
    if not before.signed:
        raise UserError("nothing to countersign: the file carries no signature")
    if not before.sound():
        raise UserError(f"refusing to countersign: {before.first_reason()}")
    # the whole verification of the record it carries (installer's certificate, times,
    # every verdict), and every signature trusted by this reviewer
    full = verify(pdf_bytes)
    blocking = [p for p in full.problems if p != full.trust_note]
    if blocking and full.record_embedded:
        raise UserError(f"refusing to countersign: {blocking[0]}")
    if not before.trusted:
        raise UserError(f"refusing to countersign: {before.trust_note}; trust the "
                        "installer's certificate first (check its fingerprint with them)")
    name = field_name or _free_field(signature_fields(pdf_bytes), REVIEWER_FIELD)
    signed = sign_pdf(pdf_bytes, passphrase=passphrase, reason=reason, location=location,
                      field_name=name, identity=identity)
    return signed, before
