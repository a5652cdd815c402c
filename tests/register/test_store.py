"""The SQLite register: append-only entries, chunked files, backup, schema version."""

from __future__ import annotations

import hashlib
import json
import os
import sqlite3

import pytest

from commission.checklist import load
from commission.checks import CHECKS
from commission.register import Register
from commission.register.schema import SCHEMA_VERSION
from conftest import CHECKLIST


@pytest.fixture
def reg(register_path):
    with Register(register_path) as r:
        yield r


@pytest.fixture
def job(reg):
    return reg.create_job(load(CHECKLIST, checks=CHECKS), {"site": "Larch House"})


def test_wal_and_full_sync(reg):
    assert reg.db.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
    assert reg.db.execute("PRAGMA synchronous").fetchone()[0] == 2  # FULL
    assert reg.db.execute("PRAGMA user_version").fetchone()[0] == SCHEMA_VERSION


def test_entries_are_append_only(reg, job):
    e = reg.add_entry(job, "supply.voltage", "answer", "231", 231.0)
    with pytest.raises(sqlite3.IntegrityError, match="append-only"):
        reg.db.execute("UPDATE entries SET raw = '999' WHERE id = ?", (e.id,))
    with pytest.raises(sqlite3.IntegrityError, match="append-only"):
        reg.db.execute("DELETE FROM entries WHERE id = ?", (e.id,))
    second = reg.add_entry(job, "supply.voltage", "answer", "236", 236.0)
    assert second.supersedes == e.id
    assert [x.raw for x in reg.entries(job)] == ["231", "236"]


def test_job_keeps_its_checklist_text_and_hash(reg, job):
    text = CHECKLIST.read_text(encoding="utf-8")
    assert job.checklist_text == text
    assert job.checklist_sha256 == hashlib.sha256(text.encode()).hexdigest()
    assert job.checklist_id == "diverter-1ph"
    assert len(job.short_id) == 5
    assert reg.find_job(job.short_id.lower()).uuid == job.uuid
    assert reg.find_job(job.uuid[:8]).short_id == job.short_id


def test_files_stored_in_1mib_chunks_and_streamed_back(reg, tmp_path):
    data = os.urandom(2 * (1 << 20) + 12345)
    path = tmp_path / "capture.bin"
    path.write_bytes(data)
    sha, size = reg.put_file(path)
    assert sha == hashlib.sha256(data).hexdigest() and size == len(data)
    chunks = list(reg.read_blob(sha))
    assert [len(c) for c in chunks] == [1 << 20, 1 << 20, 12345]
    assert b"".join(chunks) == data
    # The same file again is stored once.
    reg.put_file(path)
    assert reg.db.execute("SELECT COUNT(*) FROM blob_chunks").fetchone()[0] == 3


def test_backup_is_a_consistent_copy(reg, job, tmp_path):
    reg.add_entry(job, "supply.voltage", "answer", "231", 231.0)
    dest = tmp_path / "copy.sqlite3"
    reg.backup(dest)
    with Register(dest, create=False) as copy:
        jobs = copy.jobs()
        assert [j.uuid for j in jobs] == [job.uuid]
        assert [e.raw for e in copy.entries(jobs[0])] == ["231"]
        assert copy.db.execute("PRAGMA integrity_check").fetchone()[0] == "ok"


def test_newer_schema_is_refused(register_path):
    with Register(register_path):
        pass
    db = sqlite3.connect(register_path)
    db.execute(f"PRAGMA user_version = {SCHEMA_VERSION + 1}")
    db.close()
    from commission.register import RegisterError

    with pytest.raises(RegisterError, match="newer release"):
        Register(register_path).open()


def test_not_a_register(tmp_path, cli):
    bad = tmp_path / "junk.sqlite3"
    bad.write_bytes(b"this is not sqlite" * 100)
    result = cli("jobs", "--register", bad)
    assert result.exit_code == 2
    assert result.stderr.startswith(f"error: {bad}: not")


def test_register_option_beats_environment(cli, tmp_path, monkeypatch):
    chosen = tmp_path / "chosen.sqlite3"
    result = cli("new", "--checklist", "diverter-1ph", "--site", "A", "--register", chosen)
    assert result.exit_code == 0
    assert chosen.exists()
    env_jobs = json.loads(cli("jobs", "--json").stdout)
    assert env_jobs == []
    opt_jobs = json.loads(cli("jobs", "--json", "--register", chosen).stdout)
    assert [j["site"] for j in opt_jobs] == ["A"]


def test_amend_is_recorded_as_entries(cli, new_job):
    job = new_job(site="Larch House")
    result = cli("amend", job, "--client", "R. Achterberg", "--site", "Larch House (annexe)")
    assert result.exit_code == 0
    data = json.loads(cli("show", job, "--json").stdout)
    assert data["job"]["client"] == "R. Achterberg"
    assert data["job"]["site"] == "Larch House (annexe)"
    assert cli("amend", job).exit_code == 2


def test_backup_command(cli, new_job, tmp_path):
    new_job()
    dest = tmp_path / "b.sqlite3"
    assert cli("backup", dest).exit_code == 0
    again = cli("backup", dest)
    assert again.exit_code == 2 and "already exists" in again.stderr


def test_register_from_schema_1_migrates_on_first_use(tmp_path, cli):
    """tests/data/register-v1.sqlite3 was written by the first release (schema 1)."""
    import shutil

    from conftest import ROOT

    old = tmp_path / "old.sqlite3"
    shutil.copy(ROOT / "tests" / "data" / "register-v1.sqlite3", old)
    db = sqlite3.connect(old)
    assert db.execute("PRAGMA user_version").fetchone()[0] == 1
    before = db.execute("SELECT uuid, raw, at FROM entries ORDER BY id").fetchall()
    db.close()
    result = cli("show", "QX8KW", "--json", "--register", old)
    assert result.exit_code == 0, result.stderr
    data = json.loads(result.stdout)
    assert data["job"]["site"] == "Fixture House (schema 1)"
    volt = next(i for i in data["items"] if i["id"] == "supply.voltage")
    assert [h["raw"] for h in volt["history"]] == ["236 V", "237 V"]
    assert all(h["host"] == "" for h in volt["history"])  # recorded before hosts were kept
    db = sqlite3.connect(old)
    assert db.execute("PRAGMA user_version").fetchone()[0] == SCHEMA_VERSION
    assert db.execute("SELECT uuid, raw, at FROM entries ORDER BY id").fetchall() == before
    assert db.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
    db.close()
    # New entries now carry the host they were typed on.
    answers = tmp_path / "a.yaml"
    answers.write_text("supply.frequency: 50 Hz\n", encoding="utf-8")
    assert cli("walk", "QX8KW", "--answers", answers, "--register", old).exit_code == 0
    data = json.loads(cli("show", "QX8KW", "--json", "--register", old).stdout)
    freq = next(i for i in data["items"] if i["id"] == "supply.frequency")
    assert freq["history"][-1]["host"] != ""


def test_job_reference_is_not_a_pattern(cli, new_job):
    job = new_job()
    for typed in ("________", "%%%%%%%%", "%"):
        result = cli("show", typed)
        assert result.exit_code == 2, typed
        assert "not in" in result.stderr
    assert cli("show", job).exit_code == 0


def test_register_from_schema_2_migrates_on_first_use(tmp_path, cli):
    """tests/data/register-v2.sqlite3 was written by main's code at schema 2 (before the job
    details of the handover record); sqlite3 itself reads the columns back."""
    import shutil

    from conftest import ROOT

    old = tmp_path / "old.sqlite3"
    shutil.copy(ROOT / "tests" / "data" / "register-v2.sqlite3", old)
    db = sqlite3.connect(old)
    assert db.execute("PRAGMA user_version").fetchone()[0] == 2
    before = db.execute("SELECT uuid, raw, at, host FROM entries ORDER BY id").fetchall()
    db.close()
    result = cli("show", "CJQ9A", "--json", "--register", old)
    assert result.exit_code == 0, result.stderr
    data = json.loads(result.stdout)
    assert data["job"]["site"] == "Fixture House (schema 2)"
    assert data["job"]["client"] == "P. Lindqvist-Berg"  # the amendment survives
    assert data["job"]["language"] == "" and data["job"]["timezone"] == ""
    volt = next(i for i in data["items"] if i["id"] == "supply.voltage")
    assert [h["raw"] for h in volt["history"]] == ["236 V", "237 V"]
    db = sqlite3.connect(old)
    assert db.execute("PRAGMA user_version").fetchone()[0] == SCHEMA_VERSION
    assert db.execute("SELECT uuid, raw, at, host FROM entries ORDER BY id").fetchall() == before
    cols = {r[1] for r in db.execute("PRAGMA table_info(jobs)")}
    assert {"installer_address", "client_contact", "timezone", "language",
            "next_inspection"} <= cols
    assert db.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
    db.close()
    # The new details can be set on the migrated job.
    made = cli("amend", "CJQ9A", "--language", "fr", "--timezone", "Europe/Paris",
               "--next-inspection", "2027-06-30", "--register", old)
    assert made.exit_code == 0, made.stderr
    data = json.loads(cli("show", "CJQ9A", "--json", "--register", old).stdout)
    assert (data["job"]["language"], data["job"]["timezone"],
            data["job"]["next_inspection"]) == ("fr", "Europe/Paris", "2027-06-30")


def test_new_job_details_are_checked(cli):
    """Bad time zone, language and date: one line each, exit 2 (zoneinfo's IANA database
    and ISO 8601 dates as the reference)."""
    for option, value, words in (("--timezone", "Mars/Olympus", "time zone"),
                                 ("--language", "xx", "accepted: en, fr"),
                                 ("--next-inspection", "31/12/2027", "YYYY-MM-DD")):
        result = cli("new", "--checklist", "diverter-1ph", "--site", "S", option, value)
        assert result.exit_code == 2, (option, result.stdout)
        assert words in result.stderr and len(result.stderr.strip().splitlines()) == 1


def test_register_from_schema_3_migrates_on_first_use(tmp_path, cli):
    """tests/data/register-v3.sqlite3 was written by main's code at schema 3, before the
    instrument in use was kept with the job. It opens, migrates, keeps every entry, and then
    keeps an instrument in use per job. Reference: the file is read with plain sqlite3."""
    import shutil

    from conftest import ROOT

    old = tmp_path / "old.sqlite3"
    shutil.copy(ROOT / "tests" / "data" / "register-v3.sqlite3", old)
    db = sqlite3.connect(old)
    assert db.execute("PRAGMA user_version").fetchone()[0] == 3
    before = db.execute("SELECT uuid, raw, instrument_id, at FROM entries ORDER BY id").fetchall()
    db.close()
    result = cli("show", "PWB2N", "--json", "--register", old)
    assert result.exit_code == 0, result.stderr
    data = json.loads(result.stdout)
    assert data["job"]["site"] == "Fixture Cottage (schema 3)"
    volt = next(i for i in data["items"] if i["id"] == "supply.voltage")
    assert volt["raw"] == "238 V" and volt["instrument"] == "MFT-77310"
    db = sqlite3.connect(old)
    assert db.execute("PRAGMA user_version").fetchone()[0] == SCHEMA_VERSION
    assert db.execute("SELECT uuid, raw, instrument_id, at FROM entries ORDER BY id"
                      ).fetchall() == before
    assert db.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
    assert db.execute("SELECT count(*) FROM job_instrument").fetchone()[0] == 0
    db.close()
    # An answers run with --instrument keeps it with the job; the next run without the
    # option stamps the same instrument, on measured readings only.
    answers = tmp_path / "a.yaml"
    answers.write_text("earth.zs: 0.61 Ω\n", encoding="utf-8")
    assert cli("walk", "PWB2N", "--answers", answers, "--instrument", "MFT-77310",
               "--register", old).exit_code == 0
    answers.write_text("element.cold_resistance: 18.6 Ω\n", encoding="utf-8")
    assert cli("walk", "PWB2N", "--answers", answers, "--register", old).exit_code == 0
    data = json.loads(cli("show", "PWB2N", "--json", "--register", old).stdout)
    stamped = {i["id"]: i["instrument"] for i in data["items"] if i["raw"]}
    assert stamped["earth.zs"] == "MFT-77310"
    assert stamped["element.cold_resistance"] == "MFT-77310"
    # The job keeps checklist 1.3.0, which marks nothing declared: its readings all count
    # as measured (the behaviour it was started with).
    assert data["job"]["checklist"]["version"] == "1.3.0"


def test_register_from_schema_4_migrates_on_first_use(tmp_path, cli):
    """tests/data/register-v4.sqlite3 was written by main's code at schema 4 (before stated
    instrument accuracies): it gains the accuracy columns and keeps every entry; sqlite3
    itself reads them back."""
    import shutil

    from conftest import ROOT

    old = tmp_path / "old.sqlite3"
    shutil.copy(ROOT / "tests" / "data" / "register-v4.sqlite3", old)
    db = sqlite3.connect(old)
    assert db.execute("PRAGMA user_version").fetchone()[0] == 4
    before = db.execute("SELECT uuid, raw, at, host FROM entries ORDER BY id").fetchall()
    db.close()
    result = cli("show", "MFCYG", "--json", "--register", old)
    assert result.exit_code == 0, result.stderr
    data = json.loads(result.stdout)
    assert data["job"]["site"] == "Fixture House (schema 4)"
    zs = next(i for i in data["items"] if i["id"] == "earth.zs")
    assert [h["raw"] for h in zs["history"]] == ["0.71 Ω"]
    db = sqlite3.connect(old)
    assert db.execute("PRAGMA user_version").fetchone()[0] == SCHEMA_VERSION
    assert db.execute("SELECT uuid, raw, at, host FROM entries ORDER BY id").fetchall() == before
    assert db.execute("SELECT accuracy, accuracy_read_as FROM instruments").fetchall() == [
        ("", "")]
    assert db.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
    db.close()
    listed = cli("instruments", "list", "--json", "--register", old)
    assert json.loads(listed.stdout)[0]["serial"] == "MFT-20931"
    assert "accuracy" not in json.loads(listed.stdout)[0]  # none stated before


def test_register_from_schema_5_migrates_on_first_use(tmp_path, cli):
    """tests/data/register-v5.sqlite3 was written by main's code at schema 5 (the bundled
    demo, walked with that code), before export profiles. It migrates on first use: entries
    kept byte for byte with read_with NULL (files read as they are); an export profile can
    then be saved and is stored with a file entry taken with that instrument. Reference: the
    file is read with plain sqlite3."""
    import shutil

    from conftest import ROOT

    old = tmp_path / "old.sqlite3"
    shutil.copy(ROOT / "tests" / "data" / "register-v5.sqlite3", old)
    db = sqlite3.connect(old)
    assert db.execute("PRAGMA user_version").fetchone()[0] == 5
    before = db.execute("SELECT uuid, raw, value_json, at, host FROM entries ORDER BY id"
                        ).fetchall()
    job = db.execute("SELECT short_id FROM jobs").fetchone()[0]
    db.close()
    result = cli("show", job, "--json", "--register", old)
    assert result.exit_code == 0, result.stderr
    data = json.loads(result.stdout)
    soak = next(i for i in data["items"] if i["id"] == "heatsink.soak_log")
    assert soak["verdict"] == "pass" and "predicted maximum" in soak["reason"]
    db = sqlite3.connect(old)
    assert db.execute("PRAGMA user_version").fetchone()[0] == SCHEMA_VERSION
    assert db.execute("SELECT uuid, raw, value_json, at, host FROM entries ORDER BY id"
                      ).fetchall() == before
    assert db.execute("SELECT count(*) FROM entries WHERE read_with IS NOT NULL"
                      ).fetchone()[0] == 0
    assert db.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
    db.close()
    assert cli("instruments", "profile", "CLAMP-2291", "--columns", "temp_c=T1",
               "--register", old).exit_code == 0
    log = tmp_path / "t1.csv"
    log.write_text("time_s,T1\n" + "".join(f"{k * 60},{20 + 0.3 * k:.2f}\n" for k in range(40)))
    answers = tmp_path / "a.yaml"
    answers.write_text(f"water.heat.log: {{file: {log}, instrument: CLAMP-2291}}\n")
    assert cli("walk", job, "--answers", answers, "--register", old).exit_code == 0
    db = sqlite3.connect(old)
    stored = db.execute("SELECT read_with FROM entries WHERE item_id = 'water.heat.log' "
                        "ORDER BY id DESC").fetchone()[0]
    db.close()
    assert json.loads(stored) == {"columns": {"temp_c": "T1"}}
