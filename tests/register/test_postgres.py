"""The PostgreSQL engine's own promises, on a throw-away cluster (see tests/engines.py):
append-only entries against raw SQL, secrets never in the URL, device prefixes for short
ids, schema versions, the CLI on a URL, and that the SQLite default needs no server.
References: PostgreSQL's own error classes (psycopg.errors), SQLite's trigger RAISE."""

from __future__ import annotations

import sqlite3
import subprocess
import sys
from urllib.parse import urlsplit

import psycopg
import pytest

from commission.checklist import load
from commission.checks import CHECKS
from commission.errors import UserError
from commission.register import Register
from commission.register.postgres import PostgresRegister
from conftest import CHECKLIST


def _raw(engine_reg):
    """A raw SQL session on the same register, outside the engine."""
    if isinstance(engine_reg, Register):
        return sqlite3.connect(engine_reg.path, isolation_level=None)
    return psycopg.connect(engine_reg.url, autocommit=True)


def test_entries_cannot_be_changed_by_raw_sql_on_any_engine(engine_reg):
    job = engine_reg.create_job(load(CHECKLIST, checks=CHECKS), {"site": "Larch House"})
    e = engine_reg.add_entry(job, "supply.voltage", "answer", "231", 231.0)
    raw = _raw(engine_reg)
    errors = (sqlite3.IntegrityError, psycopg.Error)
    statements = ["UPDATE entries SET raw = '999'", "DELETE FROM entries"]
    if not isinstance(engine_reg, Register):
        statements.append("TRUNCATE entries CASCADE")
    for sql in statements:
        with pytest.raises(errors, match="append-only"):
            raw.execute(sql)
    raw.close()
    assert [x.uuid for x in engine_reg.entries(job)] == [e.uuid]


def test_password_in_the_url_is_refused(pg_url):
    with pytest.raises(UserError, match="PGPASSFILE") as err:
        PostgresRegister(pg_url.replace("commission_admin@", "commission_admin:s3cret@"))
    assert "s3cret" not in str(err.value)
    with pytest.raises(UserError, match="PGPASSFILE"):
        PostgresRegister(pg_url + "&password=s3cret")


def test_devices_get_distinct_prefixes_and_ids_carry_them(pg_url):
    with PostgresRegister(pg_url) as reg:
        a, b = reg.join("dev-aaaa"), reg.join("dev-bbbb")
        assert a != b and reg.join("dev-aaaa") == a  # given once, kept
        job = reg.create_job(load(CHECKLIST, checks=CHECKS), {"site": "Larch House"})
        assert job.short_id.startswith(reg.join(reg.device_id()))
        assert len(job.short_id) == 6


def test_schema_is_made_once_and_a_newer_one_refused(pg_url, pg_cluster):
    with PostgresRegister(pg_url) as reg:
        version = reg.schema_version()
    with PostgresRegister(pg_url) as reg:  # reopening migrates nothing
        assert reg.schema_version() == version
    db = urlsplit(pg_url).path.lstrip("/")
    pg_cluster.admin(f"UPDATE commission_schema SET version = {version + 1}", db)
    with pytest.raises(UserError, match="newer release"):
        PostgresRegister(pg_url).open()


def test_no_register_in_an_empty_database_when_not_creating(pg_url):
    with pytest.raises(UserError, match="no register"):
        PostgresRegister(pg_url, create=False).open()


def test_the_cli_on_a_company_register(cli, pg_url, tmp_path):
    made = cli("new", "--checklist", "diverter-1ph", "--site", "Quay Cottage",
               "--register", pg_url)
    assert made.exit_code == 0, made.output
    short = made.stdout.strip().splitlines()[-1]
    assert "commission_admin@" in made.stdout and len(short) == 6
    answers = tmp_path / "a.yaml"
    answers.write_text("supply.voltage: 231 V\n", encoding="utf-8")
    walked = cli("walk", short, "--answers", str(answers), "--register", pg_url)
    assert walked.exit_code == 0, walked.output
    assert "1 answers added" in walked.stdout
    listed = cli("jobs", "--register", pg_url)
    assert short in listed.stdout and "Quay Cottage" in listed.stdout
    shown = cli("show", short, "--register", pg_url, "--json")
    assert "231" in shown.stdout


def test_second_walk_elsewhere_is_refused_naming_the_holder(pg_url):
    from commission.register.lease import Lease

    with PostgresRegister(pg_url) as office, PostgresRegister(pg_url) as van:
        job = office.create_job(load(CHECKLIST, checks=CHECKS), {"site": "Larch House"})
        van._device = "dev-van0000000000"
        with office.walk_lock(job), pytest.raises(UserError) as err:
            Lease(van, job).__enter__()
        assert "being walked on device" in str(err.value)
        assert office.device_id() in str(err.value) and "since 20" in str(err.value)
        # a lease that was not renewed: refused without, taken over with, the confirmation
        Lease(office, job, hours=-1).__enter__()
        with pytest.raises(UserError, match="--take-over"):
            Lease(van, job).__enter__()
        with Lease(van, job, take_over=True) as taken:
            assert taken.held


def test_sqlite_default_needs_no_server_nor_psycopg(tmp_path):
    """The README's commands on the default register never load the PostgreSQL driver
    (checked in a fresh interpreter)."""
    code = ("import sys\nfrom commission.cli.app import main\n"
            f"main(['jobs', '--register', {str(tmp_path / 'r.sqlite3')!r}])\n"
            "print('psycopg' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True).stdout.strip().splitlines()[-1]
    assert out == "False"
