"""The homeowner's pages in the job's language: English and French message catalogs
(gettext). The shipped .mo is what Babel compiles from the shipped .po; every message the
code marks is translated; a French job's `report --homeowner-only` is French (pdftotext),
names the signed record's hashes (hashlib over the file, the footer's record hash), and the
English record is unchanged."""

from __future__ import annotations

import gettext
import hashlib
import io
import re
import subprocess

from conftest import ROOT, need_tool

LOCALE = ROOT / "src" / "commission" / "locale"


def test_shipped_mo_is_the_compiled_po():
    from babel.messages.mofile import write_mo
    from babel.messages.pofile import read_po

    po = LOCALE / "fr" / "LC_MESSAGES" / "commission.po"
    with po.open("rb") as f:
        catalog = read_po(f)
    buf = io.BytesIO()
    write_mo(buf, catalog)
    buf.seek(0)
    fresh = gettext.GNUTranslations(buf)
    with (LOCALE / "fr" / "LC_MESSAGES" / "commission.mo").open("rb") as f:
        shipped = gettext.GNUTranslations(f)
    messages = [m.id for m in catalog if m.id]
    assert len(messages) >= 30
    for msgid in messages:
        assert shipped.gettext(msgid) == fresh.gettext(msgid) != msgid, msgid


def test_every_marked_message_is_translated():
    """Babel's extractor over the code, against the French catalog; placeholders kept."""
    from babel.messages.extract import extract_from_file
    from babel.messages.pofile import read_po

    with (LOCALE / "fr" / "LC_MESSAGES" / "commission.po").open("rb") as f:
        fr = {m.id: m.string for m in read_po(f) if m.id}
    found = set()
    for name in ("homeowner.py", "pdf.py"):
        path = ROOT / "src" / "commission" / "report" / name
        for _, message, _, _ in extract_from_file(
                "python", str(path), keywords={"_": None, "tr": None}):
            found.add(message)
    assert len(found) >= 30
    for message in found:
        assert fr.get(message), f"not translated: {message}"
        assert set(re.findall(r"{\w+}", message)) == set(re.findall(r"{\w+}", fr[message]))


def test_french_homeowner_extract(cli, tmp_path, demo_record):
    need_tool("pdftotext")
    from commission.report.signatures import open_pdf
    from commission.report.verify import declared_hash

    home = demo_record.parent
    register = home / "register.sqlite3"
    job = demo_record.stem.removeprefix("record-")
    copy = tmp_path / "reg.sqlite3"
    copy.write_bytes(register.read_bytes())
    assert cli("amend", job, "--language", "fr", "--register", copy).exit_code == 0
    out = tmp_path / "extrait.pdf"
    made = cli("report", job, "--homeowner-only", "--record", demo_record, "--out", out,
               "--register", copy)
    assert made.exit_code == 0, made.stderr
    text = subprocess.run(["pdftotext", str(out), "-"], capture_output=True, text=True,
                          check=True).stdout
    flat = re.sub(r"\s+", " ", text)
    for words in ("Pour l'occupant", "Ce qui a été installé", "Si le différentiel déclenche",
                  "Qui appeler", "Prochain entretien", "non signé"):
        assert words in flat, words
    assert "What was fitted" not in flat and "Whom to call" not in flat
    signed = demo_record.read_bytes()
    assert hashlib.sha256(signed).hexdigest() in flat.replace(" ", "")
    assert declared_hash(open_pdf(signed)[0]) in flat.replace(" ", "")
    assert "Signature #" not in subprocess.run(["pdfsig", str(out)], capture_output=True,
                                               text=True).stdout
    # The signed English record is unchanged: its homeowner page is in English.
    english = subprocess.run(["pdftotext", str(demo_record), "-"], capture_output=True,
                             text=True, check=True).stdout
    assert "What was fitted" in english and "Pour l'occupant" not in english


def test_extract_needs_a_signed_record_of_the_job(cli, tmp_path, demo_record):
    home = demo_record.parent
    job = demo_record.stem.removeprefix("record-")
    register = home / "register.sqlite3"
    out = tmp_path / "x.pdf"
    missing = cli("report", job, "--homeowner-only", "--out", out, "--register", register)
    assert missing.exit_code == 2 and "--record" in missing.stderr
    other = cli("new", "--checklist", "diverter-1ph", "--site", "Elsewhere")
    other_job = other.stdout.strip().splitlines()[-1]
    wrong = cli("report", other_job, "--homeowner-only", "--record", demo_record, "--out", out)
    assert wrong.exit_code == 2 and "not of job" in wrong.stderr
    junk = tmp_path / "junk.pdf"
    junk.write_bytes(b"not a pdf")
    bad = cli("report", job, "--homeowner-only", "--record", junk, "--out", out,
              "--register", register)
    assert bad.exit_code == 2 and len(bad.stderr.strip().splitlines()) == 1
    assert not out.exists()
