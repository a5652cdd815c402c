"""Who may do what on a company register: installers, reviewers and the office as
database roles with row-level security, checked through the CLI and through raw SQL
sessions as each role. References: PostgreSQL's own refusals (SQLSTATE 42501
insufficient_privilege; a row-level security WITH CHECK violation is also 42501) and
libpq's password file (PGPASSFILE)."""

from __future__ import annotations

from urllib.parse import urlsplit

import psycopg
import pytest

from commission.register.postgres import PostgresRegister

PEOPLE = {"alice": "commission_installer", "bob": "commission_installer",
          "rita": "commission_reviewer", "olga": "commission_office"}


@pytest.fixture
def company(pg_cluster, pg_url):
    """A company register with four people; returns {name: URL as that person}."""
    with PostgresRegister(pg_url):
        pass  # made (and its group roles) by the owner
    for name, group in PEOPLE.items():
        pg_cluster.admin(f"DO $$ BEGIN IF NOT EXISTS (SELECT FROM pg_roles WHERE rolname = "
                         f"'{name}') THEN CREATE ROLE {name} LOGIN; END IF; END $$")
        pg_cluster.admin(f"GRANT {group} TO {name}")
    return {name: pg_url.replace("commission_admin@", f"{name}@") for name in PEOPLE}


def _job_for(cli, company, installer: str, site: str) -> str:
    made = cli("new", "--checklist", "diverter-1ph", "--site", site, "--register",
               company["olga"])
    assert made.exit_code == 0, made.output
    short = made.stdout.strip().splitlines()[-1]
    assigned = cli("assign", short, "--to", installer, "--register", company["olga"])
    assert assigned.exit_code == 0, assigned.output
    return short


def test_installer_sees_and_walks_only_their_own_jobs(cli, company, tmp_path):
    mine = _job_for(cli, company, "alice", "Larch House")
    theirs = _job_for(cli, company, "bob", "Quay Cottage")
    listed = cli("jobs", "--register", company["alice"])
    assert mine in listed.stdout and theirs not in listed.stdout
    refused = cli("show", theirs, "--register", company["alice"])
    assert refused.exit_code == 2 and "not in" in refused.stderr
    answers = tmp_path / "a.yaml"
    answers.write_text("supply.voltage: 231 V\n", encoding="utf-8")
    assert cli("walk", mine, "--answers", answers, "--register",
               company["alice"]).exit_code == 0
    walked = cli("walk", theirs, "--answers", answers, "--register", company["alice"])
    assert walked.exit_code == 2 and "not in" in walked.stderr
    # the reviewer and the office read every job
    for who in ("rita", "olga"):
        seen = cli("jobs", "--register", company[who]).stdout
        assert mine in seen and theirs in seen
    # an installer cannot assign
    took = cli("assign", theirs, "--to", "alice", "--register", company["alice"])
    assert took.exit_code == 2


def test_raw_sql_as_each_role(cli, company):
    mine = _job_for(cli, company, "alice", "Larch House")
    theirs = _job_for(cli, company, "bob", "Quay Cottage")
    with PostgresRegister(company["bob"]) as bob:
        job = bob.find_job(theirs)
        bob.add_entry(job, "supply.voltage", "answer", "231", 231.0)
    with psycopg.connect(company["alice"], autocommit=True) as alice:
        shorts = [r[0] for r in alice.execute("SELECT short_id FROM jobs")]
        assert shorts == [mine]
        assert alice.execute("SELECT count(*) FROM entries").fetchone()[0] == 0
        for sql in ("UPDATE entries SET raw = 'x'", "DELETE FROM entries",
                    "TRUNCATE entries", "UPDATE jobs SET assigned_to = 'alice'"):
            with pytest.raises(psycopg.errors.InsufficientPrivilege):
                alice.execute(sql)
        bobs_id = None
        with psycopg.connect(company["rita"], autocommit=True) as rita:
            bobs_id = rita.execute("SELECT id FROM jobs WHERE short_id = %s",
                                   (theirs,)).fetchone()[0]
            assert rita.execute("SELECT count(*) FROM entries").fetchone()[0] == 1
            with pytest.raises(psycopg.errors.InsufficientPrivilege):
                rita.execute("UPDATE entries SET raw = 'x'")
            with pytest.raises(psycopg.errors.InsufficientPrivilege):  # review entries only
                rita.execute("INSERT INTO entries (uuid, job_id, item_id, action, raw, at, by)"
                             " VALUES ('u-r1', %s, 'supply.voltage', 'answer', '1', 'x', 'r')",
                             (bobs_id,))
            rita.execute("INSERT INTO entries (uuid, job_id, item_id, action, raw, at, by)"
                         " VALUES ('u-r2', %s, 'review.countersigned', 'answer', 'yes', 'x',"
                         " 'r')", (bobs_id,))
        with pytest.raises(psycopg.errors.InsufficientPrivilege):  # not alice's job
            alice.execute("INSERT INTO entries (uuid, job_id, item_id, action, raw, at, by)"
                          " VALUES ('u-a1', %s, 'supply.voltage', 'answer', '1', 'x', 'a')",
                          (bobs_id,))


def test_password_comes_from_pgpassfile_never_the_url(pg_cluster, company, tmp_path,
                                                      monkeypatch):
    """A role that must give a password connects with PGPASSFILE (libpq's own file) and
    is refused, in one line, without it."""
    hba = pg_cluster.data / "pg_hba.conf"
    original = hba.read_text()
    pg_cluster.admin("DO $$ BEGIN IF NOT EXISTS (SELECT FROM pg_roles WHERE rolname = "
                     "'paula') THEN CREATE ROLE paula LOGIN; END IF; END $$")
    pg_cluster.admin("GRANT commission_office TO paula")
    pg_cluster.admin("SET password_encryption = 'scram-sha-256'; "
                     "ALTER ROLE paula PASSWORD 'correct horse staple'")
    try:
        hba.write_text("local all paula scram-sha-256\n" + original)
        pg_cluster.admin("SELECT pg_reload_conf()")
        url = company["olga"].replace("olga@", "paula@")
        monkeypatch.setenv("PGPASSFILE", str(tmp_path / "none"))
        with pytest.raises(Exception, match="cannot connect") as err:
            PostgresRegister(url).open()
        assert "\n" not in str(err.value)
        passfile = tmp_path / "pgpass"
        socket = urlsplit(url).query.split("host=")[1]
        passfile.write_text(f"{socket}:*:*:paula:correct horse staple\n")
        passfile.chmod(0o600)
        monkeypatch.setenv("PGPASSFILE", str(passfile))
        with PostgresRegister(url) as reg:
            assert reg.role() == "paula"
            assert "correct horse" not in reg.location
    finally:
        hba.write_text(original)
        pg_cluster.admin("SELECT pg_reload_conf()")


def test_leases_only_of_their_own_jobs_in_a_raw_sql_session(cli, company):
    """Leases follow the jobs' row-level security (PostgreSQL step 6): as alice, in a raw
    SQL session, bob's lease is not seen, and cannot be taken, changed or given back; her
    own she may take and give back. The reviewer and the office see both."""
    from commission.register.lease import Lease

    mine = _job_for(cli, company, "alice", "Larch House")
    theirs = _job_for(cli, company, "bob", "Quay Cottage")
    with PostgresRegister(company["bob"]) as bob:
        Lease(bob, bob.find_job(theirs), device="dev-bob").__enter__()  # left held
    with PostgresRegister(company["rita"]) as rita:
        uuids = {s: rita.find_job(s).uuid for s in (mine, theirs)}
    with psycopg.connect(company["alice"], autocommit=True) as alice:
        assert alice.execute("SELECT count(*) FROM leases").fetchone()[0] == 0
        with pytest.raises(psycopg.errors.InsufficientPrivilege):  # WITH CHECK
            alice.execute("INSERT INTO leases VALUES (%s, 'dev-a', 'alice', 'x', 'y')",
                          (uuids[theirs],))
        for sql in ("UPDATE leases SET expires = '2000-01-01T00:00:00.000Z'",
                    "UPDATE leases SET device_id = 'dev-a' WHERE job_uuid = %s",
                    "DELETE FROM leases WHERE job_uuid = %s"):
            done = alice.execute(sql, (uuids[theirs],) if "%s" in sql else None)
            assert done.rowcount == 0
        alice.execute("INSERT INTO leases VALUES (%s, 'dev-a', 'alice', 'x', 'y')",
                      (uuids[mine],))
        assert alice.execute("SELECT job_uuid FROM leases").fetchall() == [(uuids[mine],)]
        assert alice.execute("DELETE FROM leases WHERE job_uuid = %s",
                             (uuids[mine],)).rowcount == 1
        alice.execute("INSERT INTO leases VALUES (%s, 'dev-a', 'alice', 'x', 'y')",
                      (uuids[mine],))
    for who in ("rita", "olga"):
        with psycopg.connect(company[who], autocommit=True) as staff:
            held = {r[0]: (r[1], r[2]) for r in
                    staff.execute("SELECT job_uuid, device_id, expires FROM leases")}
            assert set(held) == {uuids[mine], uuids[theirs]}
            assert held[uuids[theirs]][0] == "dev-bob"
            assert held[uuids[theirs]][1] > "2026"  # untouched by alice's update


def test_an_installer_still_leases_their_own_job(cli, company):
    """Under the leases' row-level security an installer's own job is still leased as
    before: a second device is refused naming the first, an expired lease is taken over
    only when asked (the row updated in place), and given back."""
    from commission.errors import UserError
    from commission.register.lease import Lease

    mine = _job_for(cli, company, "alice", "Larch House")
    with PostgresRegister(company["alice"]) as alice:
        job = alice.find_job(mine)
        Lease(alice, job, device="dev-van-1", hours=-1).__enter__()  # expired, left held
        with pytest.raises(UserError, match="dev-van-1.*--take-over"):
            Lease(alice, job, device="dev-van-2").__enter__()
        with Lease(alice, job, device="dev-van-2", take_over=True):
            assert alice._x("SELECT device_id FROM leases").fetchall() == [("dev-van-2",)]
            with pytest.raises(UserError, match="dev-van-2"):
                Lease(alice, job, device="dev-van-3").__enter__()
        assert alice._x("SELECT count(*) FROM leases").fetchone()[0] == 0
