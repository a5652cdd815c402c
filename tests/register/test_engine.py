"""The register protocol, on every engine: jobs, append-only entries ordered by (entry time,
UUID), instruments, files by SHA-256 in chunks. References: Python's hashlib (SHA-256), the
uuid module's ordering of UUID text, ISO 8601 times compared as text in one format."""

from __future__ import annotations

import hashlib
import os
import subprocess
import sys
import uuid as uuidlib
from pathlib import Path

import pytest

from commission.checklist import load
from commission.checks import CHECKS
from commission.errors import UserError
from commission.register import Register, RegisterEngine, make_register, register_target
from conftest import CHECKLIST

ROOT = Path(__file__).resolve().parents[2]


@pytest.fixture
def job(engine_reg):
    return engine_reg.create_job(load(CHECKLIST, checks=CHECKS), {"site": "Larch House"})


def test_every_engine_offers_the_protocol(engine_reg):
    from commission.register.pg_schema import PG_SCHEMA_VERSION
    from commission.register.schema import SCHEMA_VERSION

    assert isinstance(engine_reg, RegisterEngine)
    latest = SCHEMA_VERSION if isinstance(engine_reg, Register) else PG_SCHEMA_VERSION
    assert engine_reg.schema_version() == latest


def test_current_entry_is_latest_by_time_then_uuid(engine_reg, job):
    """Entries typed on two devices arrive in any order; the current one is the latest
    by (entry time, UUID) whatever order they were stored in."""
    low, high = sorted(str(uuidlib.uuid4()) for _ in range(2))
    engine_reg.add_entry(job, "supply.voltage", "answer", "236", 236.0,
                         at="2026-05-02T10:00:00.000Z", uuid=high, host="dev-b")
    engine_reg.add_entry(job, "supply.voltage", "answer", "229", 229.0,
                         at="2026-05-02T10:00:00.000Z", uuid=low, host="dev-a")
    engine_reg.add_entry(job, "supply.voltage", "answer", "231", 231.0,
                         at="2026-05-02T09:00:00.000Z", host="dev-a")
    order = [e.raw for e in engine_reg.entries(job)]
    assert order == ["231", "229", "236"]  # 09:00, then the 10:00 tie broken by UUID


def test_entries_typed_within_one_millisecond_keep_their_order(engine_reg, job):
    made = [engine_reg.add_entry(job, "supply.voltage", "answer", str(v), float(v))
            for v in range(225, 245)]
    times = [e.at for e in made]
    assert times == sorted(times) and len(set(times)) == len(times)
    assert [e.raw for e in engine_reg.entries(job)] == [str(v) for v in range(225, 245)]


def test_an_entry_after_a_later_one_is_one_millisecond_after_it(engine_reg, job):
    """When the job's last entry lies ahead of this device's clock (another device's
    clock ran fast), a new entry is stamped one millisecond after it, carrying the
    seconds over (the expected times worked out with datetime); it supersedes the
    item's current entry, and the first entry of another item supersedes nothing."""
    from datetime import datetime, timedelta

    ahead = "2999-12-31T23:59:59.999Z"
    first = engine_reg.add_entry(job, "supply.voltage", "answer", "231", 231.0, at=ahead,
                                 host="dev-b")
    second = engine_reg.add_entry(job, "supply.voltage", "answer", "232", 232.0)
    other = engine_reg.add_entry(job, "supply.frequency", "answer", "50", 50.0)
    step = datetime.fromisoformat(ahead.replace("Z", "+00:00")) + timedelta(milliseconds=1)
    assert second.at == step.strftime("%Y-%m-%dT%H:%M:%S.") + f"{step.microsecond // 1000:03d}Z"
    assert second.at == "3000-01-01T00:00:00.000Z"
    assert other.at > second.at
    assert second.supersedes == first.id and other.supersedes is None
    assert first.at == ahead and first.host == "dev-b"
    assert second.host == engine_reg.device_id()


def test_jobs_and_entries_found_by_uuid(engine_reg, job):
    e = engine_reg.add_entry(job, "supply.voltage", "answer", "231", 231.0)
    assert engine_reg.has_job(uuid=job.uuid) and engine_reg.has_job(short_id=job.short_id)
    assert not engine_reg.has_job(uuid=str(uuidlib.uuid4()))
    assert engine_reg.has_entry(e.uuid) and not engine_reg.has_entry(str(uuidlib.uuid4()))
    assert engine_reg.find_job(job.short_id.lower()).uuid == job.uuid
    assert [j.uuid for j in engine_reg.jobs()] == [job.uuid]


def test_files_by_sha256_streamed_in_chunks(engine_reg, tmp_path):
    data = os.urandom(2 * (1 << 20) + 777)
    path = tmp_path / "capture.bin"
    path.write_bytes(data)
    sha, size = engine_reg.put_file(path)
    assert sha == hashlib.sha256(data).hexdigest() and size == len(data)
    chunks = list(engine_reg.read_blob(sha))
    assert [len(c) for c in chunks] == [1 << 20, 1 << 20, 777]
    assert b"".join(bytes(c) for c in chunks) == data
    assert engine_reg.put_file(path) == (sha, size)  # stored once
    assert engine_reg.has_blob(sha)


def test_instruments_and_instrument_in_use(engine_reg, job):
    inst = engine_reg.add_instrument("MFT-1", "Acme", "1701", "2027-01-01", "±1 %", "bound")
    with pytest.raises(UserError, match="already registered"):
        engine_reg.add_instrument("MFT-1", "Acme", "1701", "2027-01-01")
    assert engine_reg.instrument_by_serial("MFT-1") == inst
    engine_reg.set_instrument_in_use(job, inst)
    engine_reg.set_instrument_in_use(job, inst)
    assert engine_reg.instrument_in_use(job) == inst
    engine_reg.set_export_profile("MFT-1", {"columns": {"time": "t"}})
    assert engine_reg.export_profile_json(inst.id) == {"columns": {"time": "t"}}


def test_batch_keeps_all_or_nothing(engine_reg, job):
    with pytest.raises(RuntimeError), engine_reg.batch():
        engine_reg.add_entry(job, "supply.voltage", "answer", "231", 231.0)
        raise RuntimeError("cut")
    assert engine_reg.entries(job) == []


def test_register_option_chooses_the_engine(tmp_path, monkeypatch):
    monkeypatch.setenv("COMMISSION_REGISTER", str(tmp_path / "env.sqlite3"))
    assert register_target(None) == tmp_path / "env.sqlite3"
    assert isinstance(make_register(str(tmp_path / "x.sqlite3")), Register)
    url = "postgresql://office@/commission?host=/tmp/sock"
    assert register_target(url) == url
    monkeypatch.setenv("COMMISSION_REGISTER", url)
    assert register_target(None) == url
    assert register_target(tmp_path / "y.sqlite3") == tmp_path / "y.sqlite3"


def test_nothing_outside_the_register_writes_sql():
    """Every SQL statement lives under register/ (grep over the source tree)."""
    src = ROOT / "src" / "commission"
    offenders = []
    for path in src.rglob("*.py"):
        if path.is_relative_to(src / "register"):
            continue
        text = path.read_text(encoding="utf-8")
        if ".execute(" in text or "import sqlite3" in text or "import psycopg" in text:
            offenders.append(str(path.relative_to(src)))
    assert offenders == []


def test_job_module_is_shared_and_walk_does_not_own_it():
    """The report and verify use commission.job, not the walk (checked in a fresh
    interpreter: importing the report builder loads no walk module)."""
    code = ("import sys, commission.report.build, commission.cli.report\n"
            "print(sorted(m for m in sys.modules if m.startswith('commission.walk')))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True).stdout.strip()
    assert out == "[]"
