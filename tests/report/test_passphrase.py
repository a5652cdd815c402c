"""A new signing key needs a passphrase worth the name; existing keys keep signing."""

from __future__ import annotations

import pytest


@pytest.mark.parametrize(("typed", "says"), [
    ("abc12", "5 characters"),
    ("elevenchars", "11 characters"),
    ("password1234", "common passwords"),       # a common password with digits added
    ("Qwertyuiop!!", "common passwords"),     # case and trailing symbols do not hide it
    ("monkeymonkey", "common passwords"),          # one common word repeated
    ("aaaaaaaaaaaaaaa", "one or two characters"),
])
def test_identity_new_refuses_weak_passphrases(cli, tmp_path, monkeypatch, typed, says):
    """Reference: NIST SP 800-63B 5.1.1.2 (length, breach-corpus comparison) and zxcvbn's
    published frequency list (an outside list: 'password', 'qwertyuiop' and 'monkey' are in
    it, or its stem is)."""
    monkeypatch.setenv("COMMISSION_PASSPHRASE", typed)
    result = cli("identity", "new", "--name", "A B", "--registration", "1")
    assert result.exit_code == 2
    assert result.stderr.startswith("error: identity new: ") and says in result.stderr
    assert result.stderr.count("\n") == 1 and "Traceback" not in result.stderr
    assert typed not in result.stderr
    assert not (tmp_path / "home" / "identity" / "key.pem").exists()


def test_an_own_phrase_is_accepted(cli, tmp_path, monkeypatch):
    """Reference: zxcvbn's list does not hold this phrase (checked directly here)."""
    from zxcvbn.frequency_lists import FREQUENCY_LISTS

    phrase = "larch loft kettle 42"
    assert phrase.lower() not in FREQUENCY_LISTS["passwords"]
    monkeypatch.setenv("COMMISSION_PASSPHRASE", phrase)
    result = cli("identity", "new", "--name", "A B", "--registration", "1")
    assert result.exit_code == 0, result.output
    assert (tmp_path / "home" / "identity" / "key.pem").exists()


def test_an_existing_short_passphrase_key_still_signs(cli, new_job, tmp_path, monkeypatch):
    """Only `identity new` asks: a key made earlier with a short passphrase still signs.
    Reference: pdfsig (poppler) reads the signature of the signed file."""
    from commission.report import identity

    monkeypatch.setenv("COMMISSION_PASSPHRASE", "short1")
    identity.create_identity("A B", "1", passphrase="short1")
    job = new_job()
    out = tmp_path / "r.pdf"
    result = cli("report", job, "--out", out, "--sign")
    assert result.exit_code == 0, result.output
    from conftest import need_tool

    need_tool("pdfsig")
    import subprocess

    shown = subprocess.run(["pdfsig", str(out)], capture_output=True, text=True).stdout
    assert "Signature #1" in shown
