"""Register step 9 (job heads and the status cache). Reference: the file
tests/data/register-v8.sqlite3, written by main's code at schema 8 before this step (one
job with readings typed out of time order and amended installer and next inspection),
read with plain sqlite3."""

from __future__ import annotations

import json
import shutil
import sqlite3

from commission.register.schema import SCHEMA_VERSION
from conftest import ROOT


def test_register_from_schema_8_migrates_on_first_use(tmp_path, cli):
    old = tmp_path / "old.sqlite3"
    shutil.copy(ROOT / "tests" / "data" / "register-v8.sqlite3", old)
    db = sqlite3.connect(old)
    assert db.execute("PRAGMA user_version").fetchone()[0] == 8
    before = db.execute("SELECT uuid, raw, value_json, at, by, host FROM entries").fetchall()
    job = db.execute("SELECT short_id FROM jobs").fetchone()[0]
    latest = db.execute("SELECT at || ' ' || uuid FROM entries WHERE action != 'detail'"
                        " ORDER BY at DESC, uuid DESC LIMIT 1").fetchone()[0]
    amended = {item: json.loads(v) for item, v in db.execute(
        "SELECT item_id, value_json FROM entries WHERE action = 'detail' ORDER BY at, uuid")}
    db.close()
    listed = json.loads(cli("jobs", "--json", "--register", old).stdout)
    assert listed[0]["status"] == "not derived" and listed[0]["status_current"] is False
    db = sqlite3.connect(old)
    assert db.execute("PRAGMA user_version").fetchone()[0] == SCHEMA_VERSION
    assert db.execute("SELECT uuid, raw, value_json, at, by, host FROM entries").fetchall() \
        == before
    head = db.execute("SELECT last_entry, installer, next_inspection FROM job_heads").fetchone()
    assert head == (latest, amended["job.installer"], amended["job.next_inspection"])
    assert db.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
    db.close()
    mine = cli("jobs", "--installer", amended["job.installer"], "--register", old)
    assert job in mine.stdout
    refreshed = json.loads(cli("jobs", "--json", "--refresh", "--register", old).stdout)
    assert refreshed[0]["status"] == "incomplete" and refreshed[0]["status_current"]
