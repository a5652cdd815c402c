"""The local trust store: certificates this person has decided to trust.

Lives in ``config_dir()/trust/``: one ``<sha256-fingerprint>.pem`` per certificate, and
``labels.json`` with the label and the date each was added. The PEM files are the
truth; a certificate without a label entry is shown under its common name.

Nothing is trusted implicitly: a certificate carried inside a PDF is never added here,
and a person's own identity is only present if ``identity new`` (or ``trust add``) put
it there.

What an entry vouches for is its role (``labels.json`` ``roles``; an entry without one is
a signer, the narrowest role):

* ``signer`` (``trust add CERT``): that one certificate, matched by its SHA-256
  fingerprint. It vouches for its own key only; a certificate it issued is not trusted.
* ``authority`` (``trust add --authority CERT``): a certificate authority whose issued
  certificates are trusted (path validation by pyHanko's certvalidator). Accepted only
  when the certificate says it is one: basicConstraints CA=true and keyUsage
  keyCertSign (RFC 5280 4.2.1.9 and 4.2.1.3); checked again whenever it is used.
* ``tsa`` (``trust add --tsa CERT``): a timestamp authority's certificate, trusted for
  document timestamps only (its own key; or, when it is a CA by the rule above, the
  timestamping certificates it issued).
"""

from __future__ import annotations

import datetime as dt
import json
import os
import re
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

from ..errors import UserError
from ..paths import config_dir
from .identity import cert_name, describe, fingerprint, load_certificate_bytes

if TYPE_CHECKING:  # pragma: no cover
    from cryptography import x509

_FP = re.compile(r"^[0-9a-f]{64}$")
ROLES = ("signer", "authority", "tsa")


def is_authority(cert: x509.Certificate) -> bool:
    """basicConstraints CA=true and keyUsage keyCertSign (RFC 5280 4.2.1.9, 4.2.1.3)."""
    from cryptography import x509 as _x509

    try:
        basic = cert.extensions.get_extension_for_class(_x509.BasicConstraints).value
        usage = cert.extensions.get_extension_for_class(_x509.KeyUsage).value
    except _x509.ExtensionNotFound:
        return False
    return bool(basic.ca and usage.key_cert_sign)


def trust_dir() -> Path:
    return config_dir() / "trust"


def _labels_path() -> Path:
    return trust_dir() / "labels.json"


def _read_labels() -> dict[str, dict[str, str]]:
    try:
        data = json.loads(_labels_path().read_text(encoding="utf-8"))
    except (FileNotFoundError, ValueError, UnicodeDecodeError):
        return {}
    return data if isinstance(data, dict) else {}


def _write_labels(labels: dict[str, dict[str, str]]) -> None:
    trust_dir().mkdir(parents=True, exist_ok=True)
    tmp = _labels_path().with_name(f".labels.{os.getpid()}.tmp")
    tmp.write_text(json.dumps(labels, ensure_ascii=False, indent=2, sort_keys=True) + "\n",
                   encoding="utf-8")
    os.replace(tmp, _labels_path())


@dataclass(frozen=True)
class TrustedCert:
    cert: x509.Certificate
    label: str
    added: str | None
    path: Path
    roles: tuple[str, ...] = ("signer",)

    @property
    def fingerprint(self) -> str:
        return fingerprint(self.cert)

    def as_json(self) -> dict[str, Any]:
        data = describe(self.cert)
        data["label"] = self.label
        data["added"] = self.added
        data["roles"] = list(self.roles)
        return data


def trusted() -> list[TrustedCert]:
    """Every certificate in the store, ordered by label. Unreadable files are skipped."""
    folder = trust_dir()
    if not folder.is_dir():
        return []
    labels = _read_labels()
    out: list[TrustedCert] = []
    for path in sorted(folder.glob("*.pem")):
        try:
            cert = load_certificate_bytes(path.read_bytes(), str(path))
        except (UserError, OSError):
            continue
        # keyed by content, not by file name: a renamed file still means its certificate
        meta = labels.get(fingerprint(cert), {})
        roles = tuple(r for r in ROLES if r in (meta.get("roles") or ["signer"]))
        out.append(TrustedCert(cert, meta.get("label") or cert_name(cert), meta.get("added"),
                               path, roles or ("signer",)))
    out.sort(key=lambda t: (t.label.casefold(), t.fingerprint))
    return out


def trusted_certificates(role: str = "signer") -> list[x509.Certificate]:
    """The certificates trusted in ``role``; an authority (also a TSA used as an issuer)
    only while it still says it is a CA."""
    out = [t.cert for t in trusted() if role in t.roles]
    return [c for c in out if is_authority(c)] if role == "authority" else out


def add(cert_file: Path, label: str | None = None, role: str = "signer",
        ) -> tuple[TrustedCert, bool]:
    """Trust the certificate in ``cert_file`` in ``role`` (see the module docstring).
    Returns it and whether it was new in that role."""
    if role not in ROLES:
        raise ValueError(role)
    from cryptography.hazmat.primitives import serialization

    try:
        data = Path(cert_file).read_bytes()
    except FileNotFoundError:
        raise UserError(f"{cert_file}: no such file") from None
    except OSError as exc:
        raise UserError(f"{cert_file}: cannot read ({exc.strerror})") from None
    if b"PRIVATE KEY-----" in data:
        raise UserError(f"{cert_file}: holds a private key; give the certificate only "
                        "(made by 'commission identity export')")
    cert = load_certificate_bytes(data, str(cert_file))
    if role == "authority" and not is_authority(cert):
        raise UserError(f"{cert_file}: not a certificate authority (--authority needs "
                        "basicConstraints CA=true and keyUsage keyCertSign, RFC 5280); "
                        "add it without --authority to trust its own key only")
    fp = fingerprint(cert)
    folder = trust_dir()
    folder.mkdir(parents=True, exist_ok=True)
    dest = folder / f"{fp}.pem"
    labels = _read_labels()
    file_new = not dest.exists()
    label = " ".join((label or "").split()) or \
        (None if file_new else labels.get(fp, {}).get("label")) or cert_name(cert)
    if file_new:
        tmp = dest.with_name(f".{dest.name}.{os.getpid()}.tmp")
        tmp.write_bytes(cert.public_bytes(serialization.Encoding.PEM))
        os.replace(tmp, dest)
    entry = labels.get(fp, {})
    old_roles = [] if file_new else list(entry.get("roles") or ["signer"])
    roles = [r for r in ROLES if r in old_roles or r == role]
    is_new = role not in old_roles
    if is_new or label != entry.get("label"):
        labels[fp] = {"label": label, "roles": roles,
                      "added": entry.get("added") or dt.datetime.now(dt.UTC).isoformat(
                          timespec="seconds")}
        _write_labels(labels)
    return TrustedCert(cert, label, labels[fp]["added"], dest, tuple(roles)), is_new


def find(prefix: str) -> TrustedCert:
    """The one trusted certificate whose fingerprint starts with ``prefix``."""
    wanted = prefix.strip().lower().replace(":", "").replace(" ", "")
    if not wanted or not re.fullmatch(r"[0-9a-f]+", wanted):
        raise UserError(f"'{prefix}' is not a fingerprint (hex digits, as 'trust list' shows)")
    if len(wanted) < 6 and not _FP.match(wanted):
        raise UserError(f"'{prefix}': give at least 6 hex digits of the fingerprint")
    matches = [t for t in trusted() if t.fingerprint.startswith(wanted)]
    if not matches:
        raise UserError(f"no trusted certificate has a fingerprint starting with {wanted}")
    if len(matches) > 1:
        names = ", ".join(f"{t.fingerprint[:16]} ({t.label})" for t in matches)
        raise UserError(f"{wanted} matches {len(matches)} certificates: {names}; "
                        "give more digits")
    return matches[0]


def remove(prefix: str) -> TrustedCert:
    entry = find(prefix)
    entry.path.unlink(missing_ok=True)
    labels = _read_labels()
    if labels.pop(entry.fingerprint, None) is not None:
        _write_labels(labels)
    return entry


def is_trusted(fp: str) -> bool:
    return any(t.fingerprint == fp for t in trusted())
