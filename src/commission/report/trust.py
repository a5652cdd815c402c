"""The local trust store: certificates this person has decided to trust.

Lives in ``config_dir()/trust/``: one ``<sha256-fingerprint>.pem`` per certificate, and
``labels.json`` with the label and the date each was added. The PEM files are the
truth; a certificate without a label entry is shown under its common name.

Nothing is trusted implicitly: a certificate carried inside a PDF is never added here,
and a person's own identity is only present if ``identity new`` (or ``trust add``) put
it there.
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

    @property
    def fingerprint(self) -> str:
        return fingerprint(self.cert)

    def as_json(self) -> dict[str, Any]:
        data = describe(self.cert)
        data["label"] = self.label
        data["added"] = self.added
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
        out.append(TrustedCert(cert, meta.get("label") or cert_name(cert), meta.get("added"),
                               path))
    out.sort(key=lambda t: (t.label.casefold(), t.fingerprint))
    return out


def trusted_certificates() -> list[x509.Certificate]:
    return [t.cert for t in trusted()]


def add(cert_file: Path, label: str | None = None) -> tuple[TrustedCert, bool]:
    """Trust the certificate in ``cert_file``. Returns it and whether it was new."""
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
    fp = fingerprint(cert)
    folder = trust_dir()
    folder.mkdir(parents=True, exist_ok=True)
    dest = folder / f"{fp}.pem"
    labels = _read_labels()
    is_new = not dest.exists()
    label = " ".join((label or "").split()) or \
        (None if is_new else labels.get(fp, {}).get("label")) or cert_name(cert)
    if is_new:
        tmp = dest.with_name(f".{dest.name}.{os.getpid()}.tmp")
        tmp.write_bytes(cert.public_bytes(serialization.Encoding.PEM))
        os.replace(tmp, dest)
    entry = labels.get(fp, {})
    if is_new or label != entry.get("label"):
        labels[fp] = {"label": label,
                      "added": entry.get("added") or dt.datetime.now(dt.UTC).isoformat(
                          timespec="seconds")}
        _write_labels(labels)
    return TrustedCert(cert, label, labels[fp]["added"], dest), is_new


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
