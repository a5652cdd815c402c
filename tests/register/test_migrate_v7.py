"""Register step 8 (sync with a company register: conflict flags). Reference: the file
tests/data/register-v7.sqlite3, written by main's code at schema 7 before this step, read
with plain sqlite3."""

from __future__ import annotations

import shutil
import sqlite3

from commission.register import Register
from commission.register.schema import SCHEMA_VERSION
from conftest import ROOT


def test_register_from_schema_7_migrates_on_first_use(tmp_path, cli):
    old = tmp_path / "old.sqlite3"
    shutil.copy(ROOT / "tests" / "data" / "register-v7.sqlite3", old)
    db = sqlite3.connect(old)
    assert db.execute("PRAGMA user_version").fetchone()[0] == 7
    before = db.execute("SELECT uuid, raw, value_json, at, by, host FROM entries").fetchall()
    job = db.execute("SELECT short_id FROM jobs").fetchone()[0]
    db.close()
    shown = cli("show", job, "--register", old)
    assert shown.exit_code == 0, shown.stderr
    assert "Larch House" in shown.stdout
    db = sqlite3.connect(old)
    assert db.execute("PRAGMA user_version").fetchone()[0] == SCHEMA_VERSION
    assert db.execute("SELECT uuid, raw, value_json, at, by, host FROM entries").fetchall() \
        == before
    assert db.execute("SELECT count(*) FROM conflicts").fetchone()[0] == 0
    assert db.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
    db.close()
    with Register(old) as reg:  # a short id made before joining keeps the old form
        assert reg.find_job(job).short_id == job and len(job) == 5
        assert reg.conflicts() == []
