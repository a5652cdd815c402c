"""The installer's signing identity: one key pair and a self-signed certificate.

Layout, under :func:`commission.paths.config_dir` (``COMMISSION_HOME`` when set)::

    identity/key.pem     PKCS#8 private key, always passphrase-encrypted, mode 0600
    identity/cert.pem    the self-signed X.509 certificate (public)
    identity/retired/    earlier identities moved aside by ``identity new --force``

The certificate's subject carries the person's name as commonName (UTF-8, so
accented, Greek and Cyrillic names survive) and their trade registration number as
serialNumber (the X.520 attribute for an identifier of the subject). Key usage is
digitalSignature + nonRepudiation (content commitment), marked critical.

A private key never reaches the disk unencrypted: it is serialised with
``BestAvailableEncryption`` straight from memory into a file opened with mode 0600.
Backups are PKCS#12 files encrypted with the same passphrase.

Heavy libraries (cryptography) are imported inside the functions that need them.
"""

from __future__ import annotations

import datetime as dt
import os
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

from ..errors import UserError
from ..paths import config_dir

if TYPE_CHECKING:  # pragma: no cover
    from cryptography import x509

KEY_TYPES = ("ec-p256", "rsa-3072")
PASSPHRASE_ENV = "COMMISSION_PASSPHRASE"
# X.520 serialNumber is a PrintableString: these are the only characters it may hold.
_PRINTABLE = set("ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789 '()+,-./:=?")
_MAX_PASSPHRASE_BYTES = 1023  # the limit of cryptography's BestAvailableEncryption


def identity_dir() -> Path:
    return config_dir() / "identity"


def key_path() -> Path:
    return identity_dir() / "key.pem"


def cert_path() -> Path:
    return identity_dir() / "cert.pem"


# --------------------------------------------------------------------------- helpers


def fingerprint(cert: x509.Certificate) -> str:
    """SHA-256 of the certificate's DER encoding, lower-case hex without separators."""
    import hashlib

    from cryptography.hazmat.primitives import serialization

    return hashlib.sha256(cert.public_bytes(serialization.Encoding.DER)).hexdigest()


def _attr(cert: x509.Certificate, oid) -> str | None:
    values = cert.subject.get_attributes_for_oid(oid)
    if not values:
        return None
    value = values[0].value
    return value.decode("utf-8", "replace") if isinstance(value, bytes) else str(value)


def cert_name(cert: x509.Certificate) -> str:
    from cryptography.x509.oid import NameOID

    return _attr(cert, NameOID.COMMON_NAME) or cert.subject.rfc4514_string()


def cert_registration(cert: x509.Certificate) -> str | None:
    from cryptography.x509.oid import NameOID

    return _attr(cert, NameOID.SERIAL_NUMBER)


def cert_email(cert: x509.Certificate) -> str | None:
    from cryptography import x509 as _x509

    try:
        san = cert.extensions.get_extension_for_class(_x509.SubjectAlternativeName).value
    except _x509.ExtensionNotFound:
        return None
    emails = san.get_values_for_type(_x509.RFC822Name)
    return emails[0] if emails else None


def cert_key_type(cert: x509.Certificate) -> str:
    from cryptography.hazmat.primitives.asymmetric import ec, rsa

    key = cert.public_key()
    if isinstance(key, ec.EllipticCurvePublicKey):
        return f"EC {key.curve.name}"
    if isinstance(key, rsa.RSAPublicKey):
        return f"RSA {key.key_size}"
    return type(key).__name__


def describe(cert: x509.Certificate) -> dict[str, Any]:
    """What a person needs to recognise a certificate (JSON-ready)."""
    return {
        "name": cert_name(cert),
        "registration": cert_registration(cert),
        "email": cert_email(cert),
        "fingerprint": fingerprint(cert),
        "key": cert_key_type(cert),
        "valid_from": cert.not_valid_before_utc.isoformat(),
        "valid_until": cert.not_valid_after_utc.isoformat(),
        "self_signed": cert.issuer == cert.subject,
    }


def load_certificate_bytes(data: bytes, source: str) -> x509.Certificate:
    """A certificate from PEM or DER bytes; a one-line UserError otherwise."""
    from cryptography import x509 as _x509

    try:
        if b"-----BEGIN" in data:
            return _x509.load_pem_x509_certificate(data)
        return _x509.load_der_x509_certificate(data)
    except ValueError:
        raise UserError(f"{source}: not an X.509 certificate (PEM or DER)") from None


def _write_private(path: Path, data: bytes) -> None:
    """Write bytes to a new file that only the owner can read, then move it into place."""
    path.parent.mkdir(parents=True, exist_ok=True)
    tmp = path.with_name(f".{path.name}.{os.getpid()}.tmp")
    tmp.unlink(missing_ok=True)  # a leftover of an interrupted run
    fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
    try:
        os.fchmod(fd, 0o600)
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise
    os.replace(tmp, path)


def _write_public(path: Path, data: bytes) -> None:
    path.parent.mkdir(parents=True, exist_ok=True)
    tmp = path.with_name(f".{path.name}.{os.getpid()}.tmp")
    tmp.write_bytes(data)
    os.replace(tmp, path)


def _private_dir(path: Path) -> None:
    path.mkdir(parents=True, exist_ok=True)
    os.chmod(path, 0o700)


def check_passphrase(passphrase: str | None) -> str:
    if passphrase is None or not passphrase.strip():
        raise UserError("the passphrase is empty; the signing key must be protected by one")
    if len(passphrase.encode("utf-8")) > _MAX_PASSPHRASE_BYTES:
        raise UserError(f"the passphrase is longer than {_MAX_PASSPHRASE_BYTES} bytes")
    return passphrase


def passphrase_from(file: Path | None) -> str | None:
    """The passphrase from ``--passphrase-file``, else ``$COMMISSION_PASSPHRASE``, else None.

    One trailing line break in the file is ignored; nothing else is stripped.
    """
    if file is not None:
        try:
            text = Path(file).read_text(encoding="utf-8")
        except FileNotFoundError:
            raise UserError(f"{file}: no such passphrase file") from None
        except UnicodeDecodeError:
            raise UserError(f"{file}: the passphrase file is not UTF-8 text") from None
        except OSError as exc:
            raise UserError(f"{file}: cannot read ({exc.strerror})") from None
        for ending in ("\r\n", "\n"):
            if text.endswith(ending):
                text = text[: -len(ending)]
                break
        return check_passphrase(text)
    env = os.environ.get(PASSPHRASE_ENV)
    if env is not None:
        return check_passphrase(env)
    return None


# --------------------------------------------------------------------------- identity


@dataclass(frozen=True)
class Identity:
    cert: x509.Certificate
    key_file: Path
    cert_file: Path

    @property
    def name(self) -> str:
        return cert_name(self.cert)

    @property
    def registration(self) -> str | None:
        return cert_registration(self.cert)

    @property
    def fingerprint(self) -> str:
        return fingerprint(self.cert)

    def as_json(self) -> dict[str, Any]:
        data = describe(self.cert)
        data["key_file"] = str(self.key_file)
        data["cert_file"] = str(self.cert_file)
        return data

    def unlock(self, passphrase: str):
        """The private key, decrypted in memory; UserError on a wrong passphrase."""
        from cryptography.hazmat.primitives import serialization

        if not passphrase:
            raise UserError("no passphrase given for the signing key: use --passphrase-file "
                            "or COMMISSION_PASSPHRASE, or type it when asked")
        try:
            pem = self.key_file.read_bytes()
        except OSError as exc:
            raise UserError(f"{self.key_file}: cannot read the signing key "
                            f"({exc.strerror})") from None
        try:
            key = serialization.load_pem_private_key(pem, password=passphrase.encode("utf-8"))
        except (ValueError, TypeError):
            raise UserError(f"wrong passphrase for the signing key {self.key_file} "
                            "(or the key file is damaged)") from None
        if key.public_key().public_bytes(
            serialization.Encoding.DER, serialization.PublicFormat.SubjectPublicKeyInfo
        ) != self.cert.public_key().public_bytes(
            serialization.Encoding.DER, serialization.PublicFormat.SubjectPublicKeyInfo
        ):
            raise UserError(f"{self.key_file} does not belong to the certificate "
                            f"{self.cert_file}; restore both from the same backup")
        return key


def validate_subject(name: str, registration: str, email: str | None) -> tuple[str, str,
                                                                               str | None]:
    name = " ".join(name.split())
    registration = registration.strip()
    if not name:
        raise UserError("--name: cannot be empty")
    if len(name) > 64:
        raise UserError(f"--name: {len(name)} characters; a certificate name holds at most 64")
    if not registration:
        raise UserError("--registration: cannot be empty")
    if len(registration) > 64:
        raise UserError("--registration: at most 64 characters")
    bad = sorted({c for c in registration if c not in _PRINTABLE})
    if bad:
        raise UserError(f"--registration: {''.join(bad)!r} cannot go in a certificate; use "
                        "letters A-Z, digits, spaces and ' ( ) + , - . / : = ?")
    if email is not None:
        email = email.strip()
        if not email:
            email = None
        elif email.count("@") != 1 or not email.isascii() or " " in email or \
                email.startswith("@") or email.endswith("@"):
            raise UserError(f"--email: '{email}' is not an e-mail address (ASCII, one @)")
    return name, registration, email


def build_certificate(key, name: str, registration: str, email: str | None,
                      years: int, now: dt.datetime | None = None) -> x509.Certificate:
    """A self-signed certificate for ``key`` naming the installer."""
    from cryptography import x509 as _x509
    from cryptography.hazmat.primitives import hashes
    from cryptography.x509.oid import NameOID

    now = now or dt.datetime.now(dt.UTC)
    subject = _x509.Name([
        _x509.NameAttribute(NameOID.COMMON_NAME, name),
        _x509.NameAttribute(NameOID.SERIAL_NUMBER, registration),
    ])
    start = now - dt.timedelta(minutes=5)  # tolerate a slightly slow clock elsewhere
    try:
        end = start.replace(year=start.year + years)
    except ValueError:  # 29 February
        end = start.replace(year=start.year + years, day=28)
    builder = (
        _x509.CertificateBuilder()
        .subject_name(subject)
        .issuer_name(subject)
        .public_key(key.public_key())
        .serial_number(_x509.random_serial_number())
        .not_valid_before(start)
        .not_valid_after(end)
        .add_extension(_x509.BasicConstraints(ca=False, path_length=None), critical=True)
        .add_extension(
            _x509.KeyUsage(
                digital_signature=True, content_commitment=True, key_encipherment=False,
                data_encipherment=False, key_agreement=False, key_cert_sign=False,
                crl_sign=False, encipher_only=False, decipher_only=False,
            ),
            critical=True,
        )
        .add_extension(_x509.SubjectKeyIdentifier.from_public_key(key.public_key()),
                       critical=False)
    )
    if email:
        builder = builder.add_extension(
            _x509.SubjectAlternativeName([_x509.RFC822Name(email)]), critical=False)
    return builder.sign(key, hashes.SHA256())


def _generate_key(key_type: str):
    from cryptography.hazmat.primitives.asymmetric import ec, rsa

    if key_type == "ec-p256":
        return ec.generate_private_key(ec.SECP256R1())
    if key_type == "rsa-3072":
        return rsa.generate_private_key(public_exponent=65537, key_size=3072)
    raise UserError(f"--key: '{key_type}' is not one of {', '.join(KEY_TYPES)}")


def exists() -> bool:
    return key_path().exists() or cert_path().exists()


def _retire_current() -> Path | None:
    """Move the current identity aside (never delete a key)."""
    if not exists():
        return None
    stamp = dt.datetime.now(dt.UTC).strftime("%Y%m%dT%H%M%SZ")
    dest = identity_dir() / "retired" / stamp
    n = 1
    while dest.exists():
        n += 1
        dest = identity_dir() / "retired" / f"{stamp}-{n}"
    _private_dir(dest.parent)
    _private_dir(dest)
    for src in (key_path(), cert_path()):
        if src.exists():
            os.replace(src, dest / src.name)
    return dest


def create_identity(name: str, registration: str, *, passphrase: str, email: str | None = None,
                    years: int = 10, key_type: str = "ec-p256",
                    force: bool = False) -> tuple[Identity, Path | None]:
    """Make and store a new identity. Returns it and where an older one was moved."""
    from cryptography.hazmat.primitives import serialization

    name, registration, email = validate_subject(name, registration, email)
    passphrase = check_passphrase(passphrase)
    if not 1 <= years <= 50:
        raise UserError(f"--years: {years}; choose 1 to 50")
    if key_type not in KEY_TYPES:
        raise UserError(f"--key: '{key_type}' is not one of {', '.join(KEY_TYPES)}")
    if exists() and not force:
        raise UserError(f"an identity already exists in {identity_dir()}; "
                        "give --force to replace it (the old one is kept under retired/)")
    key = _generate_key(key_type)
    cert = build_certificate(key, name, registration, email, years)
    key_pem = key.private_bytes(
        serialization.Encoding.PEM,
        serialization.PrivateFormat.PKCS8,
        serialization.BestAvailableEncryption(passphrase.encode("utf-8")),
    )
    config_dir().mkdir(parents=True, exist_ok=True)
    _private_dir(identity_dir())
    retired = _retire_current() if force else None
    _write_private(key_path(), key_pem)
    _write_public(cert_path(), cert.public_bytes(serialization.Encoding.PEM))
    return Identity(cert, key_path(), cert_path()), retired


def load_identity() -> Identity:
    """The current identity; a UserError saying how to make one if there is none."""
    kp, cp = key_path(), cert_path()
    if not kp.exists() or not cp.exists():
        missing = "no signing identity" if not kp.exists() and not cp.exists() else \
            f"the signing identity in {identity_dir()} is incomplete"
        raise UserError(f"{missing}: make one with 'commission identity new --name NAME "
                        "--registration NUMBER' (or restore a backup)")
    try:
        cert = load_certificate_bytes(cp.read_bytes(), str(cp))
    except OSError as exc:
        raise UserError(f"{cp}: cannot read ({exc.strerror})") from None
    return Identity(cert, kp, cp)


def check_usable(identity: Identity, now: dt.datetime | None = None) -> None:
    now = now or dt.datetime.now(dt.UTC)
    cert = identity.cert
    if now < cert.not_valid_before_utc:
        raise UserError(f"the signing certificate is valid only from "
                        f"{cert.not_valid_before_utc:%Y-%m-%d %H:%M} UTC; check this "
                        "computer's clock")
    if now > cert.not_valid_after_utc:
        raise UserError(f"the signing certificate expired on {cert.not_valid_after_utc:%Y-%m-%d};"
                        " make a new one with 'commission identity new --force'")


def export_certificate(out: Path) -> Identity:
    from cryptography.hazmat.primitives import serialization

    identity = load_identity()
    try:
        _write_public(Path(out), identity.cert.public_bytes(serialization.Encoding.PEM))
    except OSError as exc:
        raise UserError(f"{out}: cannot write ({exc.strerror})") from None
    return identity


def backup_identity(out: Path, passphrase: str) -> Identity:
    """An encrypted PKCS#12 copy of key + certificate, protected by the same passphrase."""
    from cryptography.hazmat.primitives.serialization import BestAvailableEncryption, pkcs12

    identity = load_identity()
    key = identity.unlock(passphrase)
    data = pkcs12.serialize_key_and_certificates(
        name=identity.name.encode("utf-8"), key=key, cert=identity.cert, cas=None,
        encryption_algorithm=BestAvailableEncryption(passphrase.encode("utf-8")),
    )
    out = Path(out)
    if out.resolve() == key_path().resolve():
        raise UserError(f"{out}: that is the key file itself; choose another place")
    try:
        _write_private(out, data)
    except OSError as exc:
        raise UserError(f"{out}: cannot write ({exc.strerror})") from None
    return identity


def restore_identity(src: Path, passphrase: str, *, force: bool = False
                     ) -> tuple[Identity, Path | None]:
    """Put a backup made by :func:`backup_identity` back in place."""
    from cryptography.hazmat.primitives import serialization
    from cryptography.hazmat.primitives.serialization import pkcs12

    try:
        data = Path(src).read_bytes()
    except OSError as exc:
        raise UserError(f"{src}: cannot read ({exc.strerror})") from None
    try:
        key, cert, _ = pkcs12.load_key_and_certificates(data, passphrase.encode("utf-8"))
    except ValueError:
        raise UserError(f"{src}: wrong passphrase, or not a backup made by "
                        "'commission identity backup'") from None
    if key is None or cert is None:
        raise UserError(f"{src}: the backup lacks its key or certificate")
    if exists() and not force:
        raise UserError(f"an identity already exists in {identity_dir()}; "
                        "give --force to replace it (the old one is kept under retired/)")
    key_pem = key.private_bytes(
        serialization.Encoding.PEM, serialization.PrivateFormat.PKCS8,
        serialization.BestAvailableEncryption(passphrase.encode("utf-8")),
    )
    config_dir().mkdir(parents=True, exist_ok=True)
    _private_dir(identity_dir())
    retired = _retire_current() if force else None
    _write_private(key_path(), key_pem)
    _write_public(cert_path(), cert.public_bytes(serialization.Encoding.PEM))
    return Identity(cert, key_path(), cert_path()), retired
