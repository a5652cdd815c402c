"""`report` never replaces a file silently, least of all a signed record."""

from __future__ import annotations

import hashlib
import subprocess

import pytest

from conftest import need_tool

PASS = "kettle larch loft 1907"


def _signed(cli, new_job, tmp_path, monkeypatch):
    from commission.report import identity

    monkeypatch.setenv("COMMISSION_PASSPHRASE", PASS)
    identity.create_identity("Ines Marchetti", "REG-55120", passphrase=PASS)
    job = new_job()
    out = tmp_path / "existing.pdf"
    made = cli("report", job, "--out", out, "--sign")
    assert made.exit_code == 0, made.output
    return job, out


def _digest(path):
    return hashlib.sha256(path.read_bytes()).hexdigest()


def test_report_refuses_an_existing_signed_file_without_force(cli, new_job, tmp_path,
                                                              monkeypatch):
    """Reference: pdfsig (poppler) still validates the untouched signed file; its bytes are
    compared by SHA-256 (hashlib)."""
    need_tool("pdfsig")
    job, out = _signed(cli, new_job, tmp_path, monkeypatch)
    before = _digest(out)
    for extra in ([], ["--sign"]):
        refused = cli("report", job, "--out", out, *extra)
        assert refused.exit_code == 2
        assert refused.stderr.count("\n") == 1
        assert "a signed record already exists" in refused.stderr
        assert "--force" in refused.stderr
    assert _digest(out) == before
    shown = subprocess.run(["pdfsig", str(out)], capture_output=True, text=True)
    assert "Signature is Valid" in shown.stdout, shown.stdout


@pytest.mark.slow
def test_force_keeps_a_signed_record_aside_when_the_new_one_is_unsigned(cli, new_job,
                                                                        tmp_path, monkeypatch):
    """Reference: the kept copy is byte-identical to the signed file (SHA-256) and pdfsig
    finds no signature in the new unsigned file."""
    need_tool("pdfsig")
    job, out = _signed(cli, new_job, tmp_path, monkeypatch)
    before = _digest(out)
    replaced = cli("report", job, "--out", out, "--force")
    assert replaced.exit_code == 0, replaced.output
    kept = [p for p in tmp_path.glob("existing.signed-*.pdf")]
    assert len(kept) == 1 and _digest(kept[0]) == before
    assert "was a signed record: it is kept as" in replaced.stderr
    unsigned = subprocess.run(["pdfsig", str(out)], capture_output=True, text=True)
    assert "Signature #1" not in unsigned.stdout


def test_force_replaces_an_unsigned_file(cli, new_job, tmp_path):
    """Reference: qpdf --check accepts the replaced file."""
    need_tool("qpdf")
    job = new_job()
    out = tmp_path / "r.pdf"
    out.write_bytes(b"not a pdf, written by hand")
    refused = cli("report", job, "--out", out)
    assert refused.exit_code == 2 and "a file already exists" in refused.stderr
    assert out.read_bytes() == b"not a pdf, written by hand"
    assert cli("report", job, "--out", out, "--force").exit_code == 0
    assert subprocess.run(["qpdf", "--check", str(out)], capture_output=True).returncode == 0


def test_bounds_are_printed_as_typed_and_recorded_is_a_verdict(cli, new_job, tmp_path):
    """Reference: pdftotext (poppler) reads the rendered record: the over-range reading and
    OL appear as typed, and an unchecked answer shows the verdict 'recorded', not 'pass'."""
    need_tool("pdftotext")
    job = new_job()
    answers = tmp_path / "a.yaml"
    answers.write_text("insulation.resistance: '>299 MΩ'\nelement.cold_resistance: OL\n"
                       "install.inverter: Brightwell SL-3600\n", encoding="utf-8")
    assert cli("walk", job, "--answers", answers).exit_code == 0
    out = tmp_path / "r.pdf"
    assert cli("report", job, "--out", out).exit_code == 0
    text = subprocess.run(["pdftotext", "-layout", str(out), "-"], capture_output=True,
                          text=True).stdout
    assert ">299 MΩ" in text
    lines = [line for line in text.splitlines() if "Brightwell" in line]
    assert any("recorded; no check judges" in line and " pass " not in line
               for line in lines), lines
    ol = [line for line in text.splitlines() if " OL " in f" {line} "]
    assert any("fail" in line for line in ol), ol
