"""Trust means exactly these keys; signing times must be plausible; seals are checked.

From a fresh signed record of the demo job, one file per attack: a certificate issued by
a trusted non-CA certificate; issued by a CA the reviewer trusts only as a signer (not
added with ``--authority``); a trusted signer who is not the record's installer; a
same-name impostor; an extra untrusted signature; a signing time backdated into an
expired certificate's life; a future signing time; a not-yet-valid certificate; a seal
by an untrusted timestamp authority. For each, ``verify`` exits 1 with its own reason in
the one line it prints, ``countersign`` and ``import`` refuse and write nothing, and a
control file built by the same code without the attack step verifies.

Outside references: every certificate is made here with ``cryptography`` (RFC 5280
basicConstraints, keyUsage, extendedKeyUsage timeStamping); the timestamp authority is
pyHanko's test TSA (DummyTimeStamper) behind ``http.server`` on 127.0.0.1, started here
(nothing reaches a network); ``openssl ts -verify`` checks the document timestamp's
token against the TSA's root; poppler's ``pdfsig`` checks the approval signatures.
"""

from __future__ import annotations

import datetime as dt
import re
import subprocess
import threading
from dataclasses import dataclass
from pathlib import Path

import pytest

from conftest import need_tool

PASS = "a long enough passphrase for tests"
NOW = dt.datetime.now(dt.UTC)
DAY = dt.timedelta(days=1)


# --------------------------------------------------------------------------- certificates

@dataclass
class Who:
    cert: object  # cryptography x509.Certificate
    key: object
    pem: Path
    identity: object  # commission.report.identity.Identity

    @property
    def fingerprint(self) -> str:
        from cryptography.hazmat.primitives import hashes

        return self.cert.fingerprint(hashes.SHA256()).hex()


def make_cert(folder: Path, name: str, reg: str = "REG-1", *, issuer: Who | None = None,
              ca: bool = False, tsa: bool = False, not_before: dt.datetime | None = None,
              not_after: dt.datetime | None = None, rsa: bool = False) -> Who:
    from cryptography import x509
    from cryptography.hazmat.primitives import hashes, serialization
    from cryptography.hazmat.primitives.asymmetric import ec
    from cryptography.hazmat.primitives.asymmetric import rsa as _rsa
    from cryptography.x509.oid import ExtendedKeyUsageOID, NameOID

    from commission.report.identity import Identity

    key = _rsa.generate_private_key(65537, 2048) if rsa else ec.generate_private_key(
        ec.SECP256R1())
    subject = x509.Name([x509.NameAttribute(NameOID.COMMON_NAME, name),
                         x509.NameAttribute(NameOID.SERIAL_NUMBER, reg)])
    usage = dict(digital_signature=True, content_commitment=not (ca or tsa),
                 key_encipherment=False, data_encipherment=False, key_agreement=False,
                 key_cert_sign=ca, crl_sign=ca, encipher_only=False, decipher_only=False)
    builder = (x509.CertificateBuilder()
               .subject_name(subject)
               .issuer_name(issuer.cert.subject if issuer else subject)
               .public_key(key.public_key())
               .serial_number(x509.random_serial_number())
               .not_valid_before(not_before or NOW - DAY)
               .not_valid_after(not_after or NOW + 365 * DAY)
               .add_extension(x509.BasicConstraints(ca=ca, path_length=None), critical=True)
               .add_extension(x509.KeyUsage(**usage), critical=True)
               .add_extension(x509.SubjectKeyIdentifier.from_public_key(key.public_key()),
                              critical=False)
               .add_extension(x509.AuthorityKeyIdentifier.from_issuer_public_key(
                   (issuer.key if issuer else key).public_key()), critical=False))
    if tsa:
        builder = builder.add_extension(
            x509.ExtendedKeyUsage([ExtendedKeyUsageOID.TIME_STAMPING]), critical=True)
    cert = builder.sign((issuer.key if issuer else key), hashes.SHA256())
    folder.mkdir(parents=True, exist_ok=True)
    stem = re.sub(r"\W+", "-", f"{name}-{reg}-{cert.serial_number % 10**6}").strip("-")
    pem, key_file = folder / f"{stem}.pem", folder / f"{stem}.key"
    pem.write_bytes(cert.public_bytes(serialization.Encoding.PEM))
    key_file.write_bytes(key.private_bytes(
        serialization.Encoding.PEM, serialization.PrivateFormat.PKCS8,
        serialization.BestAvailableEncryption(PASS.encode())))
    return Who(cert, key, pem, Identity(cert, key_file, pem))


# --------------------------------------------------------------------------- local TSA

class LocalTsa:
    """An RFC 3161 timestamp authority on 127.0.0.1 (pyHanko's DummyTimeStamper)."""

    def __init__(self, root: Who, leaf: Who) -> None:
        from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer

        from asn1crypto import keys, tsp
        from asn1crypto import x509 as ax509
        from cryptography.hazmat.primitives import serialization
        from pyhanko.sign.timestamps.dummy_client import DummyTimeStamper

        def der(c):
            return ax509.Certificate.load(c.public_bytes(serialization.Encoding.DER))

        stamper = DummyTimeStamper(
            tsa_cert=der(leaf.cert), certs_to_embed=[der(root.cert)],
            tsa_key=keys.PrivateKeyInfo.load(leaf.key.private_bytes(
                serialization.Encoding.DER, serialization.PrivateFormat.PKCS8,
                serialization.NoEncryption())))
        self.requests = 0
        outer = self

        class Handler(BaseHTTPRequestHandler):
            def do_POST(self):  # noqa: N802 (http.server's name)
                body = self.rfile.read(int(self.headers["Content-Length"]))
                answer = stamper.request_tsa_response(tsp.TimeStampReq.load(body)).dump()
                outer.requests += 1
                self.send_response(200)
                self.send_header("Content-Type", "application/timestamp-reply")
                self.send_header("Content-Length", str(len(answer)))
                self.end_headers()
                self.wfile.write(answer)

            def log_message(self, *args):  # quiet
                pass

        self.server = ThreadingHTTPServer(("127.0.0.1", 0), Handler)
        self.url = f"http://127.0.0.1:{self.server.server_address[1]}/tsa"
        self.thread = threading.Thread(target=self.server.serve_forever, daemon=True)
        self.thread.start()

    def close(self) -> None:
        self.server.shutdown()
        self.server.server_close()


@pytest.fixture(scope="module")
def tsa(tmp_path_factory):
    folder = tmp_path_factory.mktemp("tsa")
    # pyHanko's test TSA signs with RSA only
    root = make_cert(folder, "Test Time Root", "TSA-0", ca=True, rsa=True)
    leaf = make_cert(folder, "Test Time Authority", "TSA-1", issuer=root, tsa=True, rsa=True)
    server = LocalTsa(root, leaf)
    yield {"url": server.url, "root": root, "leaf": leaf, "server": server}
    server.close()


# --------------------------------------------------------------------------- records

class Clock:
    """The attacker's signing tool: any claimed time (/M), any certificate."""

    def __init__(self, monkeypatch):
        del monkeypatch  # its undo() would also undo the test's own settings
        self.mp = pytest.MonkeyPatch()

    def claim(self, moment: dt.datetime | None) -> None:
        import pyhanko.sign.signers.pdf_signer as pdf_signer

        import commission.report.signing as signing

        if moment is None:
            self.mp.undo()
            return

        class Fixed(dt.datetime):
            @classmethod
            def now(cls, tz=None):
                return moment.astimezone(tz) if tz else moment

        self.mp.setattr(pdf_signer, "datetime", Fixed)
        self.mp.setattr(signing, "check_usable", lambda identity: None)


def build_record(demo, out: Path, signer: Who, *, declared: Who | None = None,
                 claimed: dt.datetime | None = None, monkeypatch=None) -> Path:
    """A record of the demo job made by `report --sign`'s code, signed by ``signer``
    (the record declaring ``declared``'s certificate, by default the signer's), with
    the signing time ``claimed`` when given (the attack step)."""
    from commission import record as rec
    from commission.register import Register
    from commission.report import build, pdf
    from commission.resources import resolve
    from commission.walk.state import JobState

    signing = None
    if declared is not None:
        made_at = dt.datetime.now(dt.UTC).isoformat(timespec="seconds").replace("+00:00", "Z")
        signing = rec.SigningInfo(created_at=made_at,
                                  installer_certificate_sha256=declared.fingerprint)
    clock = Clock(monkeypatch) if claimed is not None else None
    with Register(demo["register"], create=False) as reg:
        state = JobState(reg, reg.find_job(demo["job"]))
        if clock:
            clock.claim(claimed)
        try:
            made = build.make(state, pdf.load_form(resolve("forms", "handover")), sign=True,
                              passphrase=PASS, signing=signing, identity=signer.identity)
        finally:
            if clock:
                clock.claim(None)
        state.files.close()
    out.write_bytes(made.pdf)
    return out


def add_signature(src: Path, out: Path, signer: Who, field: str = "Reviewer") -> Path:
    """One more signature appended, without any check (the attacker's tool)."""
    from commission.report.signing import sign_pdf

    out.write_bytes(sign_pdf(src.read_bytes(), passphrase=PASS, reason="reviewed",
                             location=None, field_name=field, identity=signer.identity))
    return out


@pytest.fixture
def reviewer(cli, tmp_path, monkeypatch):
    """A reviewer's home with an identity of their own (trusted by themselves)."""
    home = tmp_path / "reviewer"
    monkeypatch.setenv("COMMISSION_HOME", str(home))
    monkeypatch.setenv("COMMISSION_PASSPHRASE", PASS)
    result = cli("identity", "new", "--name", "Rita Reviewer", "--registration", "EL-1")
    assert result.exit_code == 0, result.output
    return home


def trust(cli, who: Who, *flags: str) -> None:
    result = cli("trust", "add", who.pem, *flags)
    assert result.exit_code == 0, result.output


def verifies(cli, pdf: Path) -> None:
    result = cli("verify", pdf)
    assert result.exit_code == 0, result.output
    assert result.stdout.strip().endswith("verified")


def refused_everywhere(cli, pdf: Path, reason: str, tmp_path: Path) -> None:
    """verify exits 1 with ``reason`` in its one line; countersign and import refuse and
    write nothing."""
    result = cli("verify", pdf)
    assert result.exit_code == 1, result.output
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("verification failed: "), result.stderr
    assert reason in lines[0], lines[0]

    out = tmp_path / f"countersigned-{pdf.stem}.pdf"
    signed = cli("countersign", pdf, "--out", out)
    assert signed.exit_code == 2 and not out.exists(), signed.output
    assert "refusing to countersign" in signed.stderr and reason in signed.stderr

    target = tmp_path / f"import-{pdf.stem}.sqlite3"
    imported = cli("import", pdf, "--register", target)
    assert imported.exit_code == 1, imported.output
    assert reason in imported.stderr and "nothing written" in imported.stderr
    assert not target.exists()
    assert not list(tmp_path.glob(f"import-{pdf.stem}*"))


# --------------------------------------------------------------------------- point 5


@pytest.mark.slow
def test_certificate_issued_by_a_trusted_non_ca(cli, demo, reviewer, tmp_path, monkeypatch):
    installer = make_cert(tmp_path / "pki", "Ines Marchetti", "REG-55120")
    trust(cli, installer)
    # the attack step: the installer's (non-CA) key issues a certificate for someone else
    issued = make_cert(tmp_path / "pki", "Carl Cousin", "REG-9", issuer=installer)
    attack = build_record(demo, tmp_path / "issued.pdf", issued, declared=issued)
    refused_everywhere(cli, attack, "a trusted certificate that is not a certificate "
                       "authority (it vouches for its own key only)", tmp_path)
    # --authority is refused for it, so it can never become an issuer
    refused = cli("trust", "add", installer.pem, "--authority")
    assert refused.exit_code == 2 and "not a certificate authority" in refused.stderr
    control = build_record(demo, tmp_path / "control.pdf", installer, declared=installer)
    verifies(cli, control)


@pytest.mark.slow
def test_ca_not_added_as_an_authority(cli, demo, reviewer, tmp_path):
    ca = make_cert(tmp_path / "pki", "Trade Body CA", "CA-1", ca=True)
    member = make_cert(tmp_path / "pki", "Ines Marchetti", "REG-55120", issuer=ca)
    pdf = build_record(demo, tmp_path / "member.pdf", member, declared=member)
    trust(cli, ca)  # the attack: trusted as a key, not as an issuer
    refused_everywhere(cli, pdf, "a certificate authority you did not add with 'trust add "
                       "--authority'", tmp_path)
    # control: the same file once the reviewer adds the CA as an authority
    trust(cli, ca, "--authority")
    verifies(cli, pdf)
    listed = cli("trust", "list").stdout
    assert "Trade Body CA  (signer, authority;" in listed


@pytest.mark.slow
def test_trusted_signer_who_is_not_the_installer(cli, demo, reviewer, tmp_path):
    installer = make_cert(tmp_path / "pki", "Ines Marchetti", "REG-55120")
    other = make_cert(tmp_path / "pki", "Olaf Other", "REG-77")
    trust(cli, installer)
    trust(cli, other)
    attack = build_record(demo, tmp_path / "other.pdf", other, declared=installer)
    refused_everywhere(cli, attack, "not the installer's certificate", tmp_path)
    control = build_record(demo, tmp_path / "control.pdf", installer, declared=installer)
    verifies(cli, control)


@pytest.mark.slow
def test_same_name_impostor(cli, demo, reviewer, tmp_path):
    installer = make_cert(tmp_path / "pki", "Ines Marchetti", "REG-55120")
    impostor = make_cert(tmp_path / "pki", "Ines Marchetti", "REG-55120")
    trust(cli, installer)
    attack = build_record(demo, tmp_path / "impostor.pdf", impostor, declared=impostor)
    refused_everywhere(cli, attack, "same name, another key", tmp_path)
    control = build_record(demo, tmp_path / "control.pdf", installer, declared=installer)
    verifies(cli, control)


@pytest.mark.slow
def test_extra_untrusted_signature(cli, demo, reviewer, tmp_path):
    installer = make_cert(tmp_path / "pki", "Ines Marchetti", "REG-55120")
    stranger = make_cert(tmp_path / "pki", "Sven Stranger", "REG-13")
    trust(cli, installer)
    control = build_record(demo, tmp_path / "control.pdf", installer, declared=installer)
    attack = add_signature(control, tmp_path / "extra.pdf", stranger)
    refused_everywhere(cli, attack, "signature 'Reviewer' (Sven Stranger) is not trusted",
                       tmp_path)
    verifies(cli, control)


# --------------------------------------------------------------------------- point 6


@pytest.mark.slow
def test_backdated_into_an_expired_certificate(cli, demo, reviewer, tmp_path, monkeypatch):
    expired = make_cert(tmp_path / "pki", "Ines Marchetti", "REG-55120",
                        not_before=NOW - 900 * DAY, not_after=NOW - 300 * DAY)
    trust(cli, expired)
    attack = build_record(demo, tmp_path / "backdated.pdf", expired, declared=expired,
                          claimed=NOW - 600 * DAY, monkeypatch=monkeypatch)
    refused_everywhere(cli, attack, "before the record was made", tmp_path)
    # not backdated, the expired certificate is named as such
    plain = build_record(demo, tmp_path / "expired.pdf", expired, declared=expired,
                         claimed=dt.datetime.now(dt.UTC), monkeypatch=monkeypatch)
    refused_everywhere(cli, plain, "its certificate had expired at the claimed signing time",
                       tmp_path)
    valid = make_cert(tmp_path / "pki", "Ines Marchetti", "REG-55120")
    trust(cli, valid)
    control = build_record(demo, tmp_path / "control.pdf", valid, declared=valid,
                           claimed=dt.datetime.now(dt.UTC), monkeypatch=monkeypatch)
    verifies(cli, control)


@pytest.mark.slow
def test_future_signing_time(cli, demo, reviewer, tmp_path, monkeypatch):
    installer = make_cert(tmp_path / "pki", "Ines Marchetti", "REG-55120",
                          not_after=NOW + 3650 * DAY)
    trust(cli, installer)
    attack = build_record(demo, tmp_path / "future.pdf", installer, declared=installer,
                          claimed=NOW + 730 * DAY, monkeypatch=monkeypatch)
    refused_everywhere(cli, attack, "in the future", tmp_path)
    # within the clock skew allowed (two minutes ahead) it is not a problem
    control = build_record(demo, tmp_path / "control.pdf", installer, declared=installer,
                           claimed=dt.datetime.now(dt.UTC) + dt.timedelta(minutes=2),
                           monkeypatch=monkeypatch)
    verifies(cli, control)


@pytest.mark.slow
def test_not_yet_valid_certificate(cli, demo, reviewer, tmp_path, monkeypatch):
    early = make_cert(tmp_path / "pki", "Ines Marchetti", "REG-55120",
                      not_before=NOW + 30 * DAY, not_after=NOW + 400 * DAY)
    trust(cli, early)
    attack = build_record(demo, tmp_path / "early.pdf", early, declared=early,
                          claimed=dt.datetime.now(dt.UTC), monkeypatch=monkeypatch)
    refused_everywhere(cli, attack, "its certificate is not yet valid", tmp_path)
    valid = make_cert(tmp_path / "pki", "Ines Marchetti", "REG-55120")
    trust(cli, valid)
    control = build_record(demo, tmp_path / "control.pdf", valid, declared=valid,
                           claimed=dt.datetime.now(dt.UTC), monkeypatch=monkeypatch)
    verifies(cli, control)


# --------------------------------------------------------------------------- seal


def _token_and_data(pdf: Path) -> tuple[bytes, bytes]:
    """The document timestamp's RFC 3161 token and the bytes it covers."""
    import io

    from asn1crypto import cms
    from pyhanko.pdf_utils.reader import PdfFileReader

    data = pdf.read_bytes()
    (ts,) = [s for s in PdfFileReader(io.BytesIO(data)).embedded_signatures
             if s.sig_object_type == "/DocTimeStamp"]
    a, b, c, d = (int(x) for x in ts.byte_range)
    token = cms.ContentInfo.load(bytes(ts.pkcs7_content)).dump()
    return token, data[a:a + b] + data[c:c + d]


@pytest.mark.slow
def test_sealed_record_verifies_against_the_local_tsa(cli, demo, reviewer, tsa, tmp_path):
    need_tool("openssl")
    need_tool("pdfsig")
    installer = make_cert(tmp_path / "pki", "Ines Marchetti", "REG-55120")
    trust(cli, installer)
    record = build_record(demo, tmp_path / "record.pdf", installer, declared=installer)
    sealed = tmp_path / "sealed.pdf"
    before = tsa["server"].requests
    result = cli("seal", record, "--tsa", tsa["url"], "--out", sealed)
    assert result.exit_code == 0, result.output
    assert tsa["server"].requests > before  # it asked the local authority
    assert sealed.read_bytes().startswith(record.read_bytes())  # appended, not rewritten

    trust(cli, tsa["root"], "--tsa")
    shown = cli("verify", sealed)
    assert shown.exit_code == 0, shown.output
    assert "(attested by the timestamp authority)" in shown.stdout
    assert "(claimed by the signer)" in shown.stdout
    attested = re.search(r"time (\S+) \(attested", shown.stdout).group(1)
    assert abs((dt.datetime.fromisoformat(attested) - dt.datetime.now(dt.UTC))
               .total_seconds()) < 600

    # openssl, independently: the token is a valid RFC 3161 token over the covered bytes
    token, covered = _token_and_data(sealed)
    (tmp_path / "token.der").write_bytes(token)
    (tmp_path / "covered.bin").write_bytes(covered)
    run = subprocess.run(["openssl", "ts", "-verify", "-in", str(tmp_path / "token.der"),
                          "-token_in", "-data", str(tmp_path / "covered.bin"), "-CAfile",
                          str(tsa["root"].pem)], capture_output=True, text=True, timeout=60)
    assert run.returncode == 0 and "Verification: OK" in run.stdout, run.stdout + run.stderr
    # and a changed byte in the covered data fails it
    (tmp_path / "covered.bin").write_bytes(covered[:-1] + bytes([covered[-1] ^ 1]))
    bad = subprocess.run(["openssl", "ts", "-verify", "-in", str(tmp_path / "token.der"),
                          "-token_in", "-data", str(tmp_path / "covered.bin"), "-CAfile",
                          str(tsa["root"].pem)], capture_output=True, text=True, timeout=60)
    assert bad.returncode != 0

    # the validation data: a DSS whose certificates include the installer's and the TSA's
    # (read with pyHanko's reader; qpdf checks the structure)
    import io

    from cryptography import x509
    from cryptography.hazmat.primitives import hashes
    from pyhanko.pdf_utils.reader import PdfFileReader

    dss = PdfFileReader(io.BytesIO(sealed.read_bytes())).root["/DSS"]
    held = {x509.load_der_x509_certificate(ref.get_object().data)
            .fingerprint(hashes.SHA256()).hex() for ref in dss["/Certs"]}
    assert {installer.fingerprint, tsa["leaf"].fingerprint} <= held
    need_tool("qpdf")
    check = subprocess.run(["qpdf", "--check", str(sealed)], capture_output=True, text=True,
                           timeout=60)
    assert check.returncode == 0, check.stdout + check.stderr

    # poppler: the approval signature is still valid in the sealed file
    out = subprocess.run(["pdfsig", str(sealed)], capture_output=True, text=True, timeout=60)
    text = out.stdout + out.stderr
    sig1 = text.split("Signature #1", 1)[1].split("Signature #2", 1)[0]
    assert "Signature Validation: Signature is Valid." in sig1, text


@pytest.mark.slow
def test_seal_by_an_untrusted_tsa(cli, demo, reviewer, tsa, tmp_path):
    installer = make_cert(tmp_path / "pki", "Ines Marchetti", "REG-55120")
    trust(cli, installer)
    record = build_record(demo, tmp_path / "record.pdf", installer, declared=installer)
    sealed = tmp_path / "sealed.pdf"
    assert cli("seal", record, "--tsa", tsa["url"], "--out", sealed).exit_code == 0
    # the attack: a timestamp authority the reviewer never added (trusted as a signer
    # does not count either)
    trust(cli, tsa["root"])
    refused_everywhere(cli, sealed, "was not added with 'commission trust add --tsa'",
                       tmp_path)
    trust(cli, tsa["root"], "--tsa")  # control: the same file, the authority trusted
    verifies(cli, sealed)


def test_seal_refuses_a_bad_url_and_an_unreachable_tsa(cli, tmp_path):
    import socket

    pdf = tmp_path / "x.pdf"
    pdf.write_bytes(b"%PDF-1.7\n")
    for url in ("ftp://127.0.0.1/", "not a url"):
        result = cli("seal", pdf, "--tsa", url, "--out", tmp_path / "o.pdf")
        assert result.exit_code == 2 and "--tsa" in result.stderr
    with socket.socket() as s:  # a port nobody listens on (bound, never listening)
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
        from commission.errors import UserError
        from commission.report.seal import _timestamper

        stamper = _timestamper(f"http://127.0.0.1:{port}/")
        import asyncio

        with pytest.raises(UserError, match="cannot reach the timestamp authority"):
            asyncio.run(stamper.async_dummy_response("sha256"))
    assert not (tmp_path / "o.pdf").exists()


# --------------------------------------------------------------------------- fast units


def test_trust_roles_and_fingerprint_grouping(cli, tmp_path):
    """`trust add` keeps the narrowest role; --authority only for a real CA; the grouping
    reads as 16 groups of four upper-case hex digits (grouped here independently)."""
    import json

    from commission.fingerprint import readable

    leaf = make_cert(tmp_path / "pki", "Ines Marchetti", "REG-55120")
    ca = make_cert(tmp_path / "pki", "Trade Body CA", "CA-1", ca=True)
    assert readable(leaf.fingerprint) == " ".join(
        leaf.fingerprint.upper()[k:k + 4] for k in range(0, 64, 4))
    assert cli("trust", "add", leaf.pem).exit_code == 0
    bad = cli("trust", "add", leaf.pem, "--authority")
    assert bad.exit_code == 2 and bad.stderr.count("\n") == 1
    assert cli("trust", "add", ca.pem, "--authority").exit_code == 0
    both = cli("trust", "add", ca.pem, "--tsa", "--authority")
    assert both.exit_code == 2
    roles = {e["name"]: e["roles"] for e in json.loads(cli("trust", "list", "--json").stdout)}
    assert roles == {"Ines Marchetti": ["signer"], "Trade Body CA": ["authority"]}
    from commission.report import trust as store

    assert [store.is_authority(c) for c in (leaf.cert, ca.cert)] == [False, True]


# --------------------------------------------------------------------------- fast units
# The same rules on a one-page PDF (no record), so each stays covered by the fast suite.


def _tiny_pdf() -> bytes:
    import io

    from reportlab.pdfgen import canvas

    buf = io.BytesIO()
    page = canvas.Canvas(buf)
    page.drawString(72, 720, "handover")
    page.showPage()
    page.save()
    return buf.getvalue()


def _sign(pdf: bytes, who: Who, claimed: dt.datetime | None = None,
          field: str = "Installer") -> bytes:
    from commission.report.signing import sign_pdf

    clock = Clock(None)
    if claimed is not None:
        clock.claim(claimed)
    try:
        return sign_pdf(pdf, passphrase=PASS, reason="r", location=None, field_name=field,
                        identity=who.identity)
    finally:
        clock.claim(None)


def test_trust_reasons_on_a_small_file(tmp_path):
    from commission.report import trust as store
    from commission.report.signatures import check_signatures

    pki = tmp_path / "pki"
    installer = make_cert(pki, "Ines Marchetti", "REG-55120")
    ca = make_cert(pki, "Trade Body CA", "CA-1", ca=True)
    cases = [
        (make_cert(pki, "Carl Cousin", "REG-9", issuer=installer),
         "a trusted certificate that is not a certificate authority"),
        (make_cert(pki, "Mia Member", "REG-3", issuer=ca),
         "a certificate authority you did not add with 'trust add --authority'"),
        (make_cert(pki, "Ines Marchetti", "REG-55120"), "same name, another key"),
        (make_cert(pki, "Sven Stranger", "REG-13"), "is not in your trust store"),
    ]
    store.add(installer.pem)
    store.add(ca.pem)
    pdf = _tiny_pdf()
    assert check_signatures(_sign(pdf, installer)).ok()  # the control
    for who, reason in cases:
        report = check_signatures(_sign(pdf, who))
        assert report.sound() and not report.trusted and not report.ok()
        assert report.first_reason().startswith(
            f"signature 'Installer' ({who.cert.subject.rfc4514_string().split('CN=')[1]}) "
            "is not trusted: "), report.first_reason()
        assert reason in report.first_reason(), (reason, report.first_reason())
    # an extra untrusted signature after a trusted one is named
    two = check_signatures(_sign(_sign(pdf, installer), cases[3][0], field="Reviewer"))
    assert two.signatures[0].trusted and not two.signatures[1].trusted and not two.ok()
    assert two.first_reason().startswith("signature 'Reviewer' (Sven Stranger) is not trusted")
    # once the CA is an authority, what it issued is trusted (and only that)
    store.add(ca.pem, role="authority")
    assert check_signatures(_sign(pdf, cases[1][0])).ok()
    assert not check_signatures(_sign(pdf, cases[0][0])).ok()


def test_time_rules_on_a_small_file(tmp_path):
    from commission.report import trust as store
    from commission.report.signatures import check_signatures, time_problems

    pki = tmp_path / "pki"
    now = dt.datetime.now(dt.UTC)
    valid = make_cert(pki, "Ines Marchetti", "REG-1", not_after=now + 3650 * DAY)
    early = make_cert(pki, "Ines Marchetti", "REG-2", not_before=now + 30 * DAY)
    expired = make_cert(pki, "Ines Marchetti", "REG-3", not_before=now - 900 * DAY,
                        not_after=now - 300 * DAY)
    for who in (valid, early, expired):
        store.add(who.pem)
    pdf = _tiny_pdf()
    cases = [(valid, now + 730 * DAY, "in the future"),
             (early, now, "its certificate is not yet valid at the claimed signing time"),
             (expired, now, "its certificate had expired at the claimed signing time")]
    for who, claimed, reason in cases:
        report = check_signatures(_sign(pdf, who, claimed))
        assert not report.ok() and reason in report.first_reason(), report.first_reason()
    # two minutes ahead is within the skew allowed
    assert check_signatures(_sign(pdf, valid, now + dt.timedelta(minutes=2))).ok()
    # backdated into the expired certificate's life: valid by itself, but before the record
    backdated = check_signatures(_sign(pdf, expired, now - 600 * DAY))
    assert backdated.ok()
    made = now.isoformat(timespec="seconds")
    (line,) = time_problems(backdated, made)
    assert "before the record was made" in line
    assert time_problems(check_signatures(_sign(pdf, valid)), made) == []


def _doc_timestamp(pdf: bytes, tsa_leaf: Who, tsa_root: Who,
                   when: dt.datetime | None = None) -> bytes:
    import io

    from asn1crypto import keys
    from asn1crypto import x509 as ax509
    from cryptography.hazmat.primitives import serialization
    from pyhanko.pdf_utils.incremental_writer import IncrementalPdfFileWriter
    from pyhanko.sign.signers.pdf_signer import PdfTimeStamper
    from pyhanko.sign.timestamps.dummy_client import DummyTimeStamper

    def der(c):
        return ax509.Certificate.load(c.public_bytes(serialization.Encoding.DER))

    stamper = DummyTimeStamper(
        tsa_cert=der(tsa_leaf.cert), certs_to_embed=[der(tsa_root.cert)], fixed_dt=when,
        tsa_key=keys.PrivateKeyInfo.load(tsa_leaf.key.private_bytes(
            serialization.Encoding.DER, serialization.PrivateFormat.PKCS8,
            serialization.NoEncryption())))
    writer = IncrementalPdfFileWriter(io.BytesIO(pdf))
    return PdfTimeStamper(stamper).timestamp_pdf(writer, "sha256").getvalue()


def test_document_timestamps_on_a_small_file(tmp_path):
    """A TSA trusted by its own certificate (--tsa), an untrusted one, and a timestamp
    older than the signing time the signature claims."""
    from commission.report import trust as store
    from commission.report.signatures import check_signatures

    pki = tmp_path / "pki"
    root = make_cert(pki, "Test Time Root", "TSA-0", ca=True, rsa=True)
    leaf = make_cert(pki, "Test Time Authority", "TSA-1", issuer=root, tsa=True, rsa=True)
    installer = make_cert(pki, "Ines Marchetti", "REG-1")
    store.add(installer.pem)
    signed = _sign(_tiny_pdf(), installer)
    stamped = _doc_timestamp(signed, leaf, root)
    untrusted = check_signatures(stamped)
    assert untrusted.sound() and not untrusted.ok()
    assert "was not added with 'commission trust add --tsa'" in untrusted.first_reason()
    store.add(leaf.pem)  # as a signer: does not make it a timestamp authority
    assert not check_signatures(stamped).ok()
    store.add(leaf.pem, role="tsa")
    trusted = check_signatures(stamped)
    assert trusted.ok(), trusted.first_reason()
    (stamp,) = trusted.timestamps
    assert stamp.trusted and stamp.tsa == "Test Time Authority"
    attested = dt.datetime.fromisoformat(stamp.time)
    assert abs((attested - dt.datetime.now(dt.UTC)).total_seconds()) < 600
    # a timestamp a day older than the time the signature claims
    old = check_signatures(_doc_timestamp(signed, leaf, root,
                                          dt.datetime.now(dt.UTC) - DAY))
    assert not old.ok() and "after the document timestamp that covers it" in \
        old.first_reason()
