"""PostgreSQL step 6: a company register made at step 5 (the released steps 1-5 applied as
a release of that time did) is carried over on first use: its jobs, entries and leases
are kept, and from then on an installer sees only the leases of their own jobs.
Reference: PostgreSQL's own catalogue (pg_class.relrowsecurity, pg_policies) and the rows
read back in raw SQL sessions as each role."""

from __future__ import annotations

import psycopg

from commission.register.pg_schema import PG_MIGRATIONS, PG_SCHEMA_VERSION
from commission.register.postgres import PostgresRegister


def _register_at_step_5(pg_cluster, db: str) -> None:
    with psycopg.connect(pg_cluster.url(db), autocommit=True) as conn:
        conn.execute("CREATE TABLE commission_schema (version INTEGER NOT NULL)")
        conn.execute("INSERT INTO commission_schema VALUES (0)")
        for step in range(1, 6):
            conn.execute(PG_MIGRATIONS[step])
            conn.execute("UPDATE commission_schema SET version = %s", (step,))
        for n, (who, short) in enumerate((("alice", "AA0001"), ("bob", "AA0002"))):
            job = conn.execute(
                "INSERT INTO jobs (short_id, uuid, created_at, created_by, site,"
                " checklist_id, checklist_version, checklist_sha256, checklist_text,"
                " assigned_to) VALUES (%s, %s, '2026-05-01T08:00:00.000Z', 'office',"
                " %s, 'diverter-1ph', '1.0.0', %s, 'items: []', %s) RETURNING id",
                (short, f"00000000-0000-4000-8000-00000000000{n}", f"Site {who}",
                 "0" * 64, who)).fetchone()[0]
            conn.execute("INSERT INTO entries (uuid, job_id, item_id, action, raw,"
                         " value_json, at, by) VALUES (%s, %s, 'supply.voltage', 'answer',"
                         " '231', '231.0', '2026-05-01T09:00:00.000Z', %s)",
                         (f"10000000-0000-4000-8000-00000000000{n}", job, who))
            conn.execute("INSERT INTO leases VALUES (%s, %s, %s,"
                         " '2026-05-01T09:00:00.000Z', '2999-01-01T00:00:00.000Z')",
                         (f"00000000-0000-4000-8000-00000000000{n}", f"dev-{who}", who))


def test_step_5_register_carried_to_step_6(pg_cluster):
    assert PG_SCHEMA_VERSION == 6
    db = pg_cluster.new_database()
    _register_at_step_5(pg_cluster, db)
    for name in ("alice", "bob"):
        pg_cluster.admin(f"DO $$ BEGIN IF NOT EXISTS (SELECT FROM pg_roles WHERE rolname = "
                         f"'{name}') THEN CREATE ROLE {name} LOGIN; END IF; END $$")
        pg_cluster.admin(f"GRANT commission_installer TO {name}")
    url = pg_cluster.url(db)
    with psycopg.connect(url, autocommit=True) as conn:  # step 5: every lease readable
        assert conn.execute("SELECT relrowsecurity FROM pg_class WHERE relname = 'leases'"
                            ).fetchone()[0] is False
    with psycopg.connect(pg_cluster.url(db, "alice"), autocommit=True) as alice:
        assert alice.execute("SELECT count(*) FROM leases").fetchone()[0] == 2
    with PostgresRegister(url) as reg:  # first use by this release
        assert reg.schema_version() == 6
        assert [j.short_id for j in reg.jobs()] == ["AA0001", "AA0002"]
        assert [e.raw for j in reg.jobs() for e in reg.entries(j)] == ["231", "231"]
    with psycopg.connect(url, autocommit=True) as conn:
        assert conn.execute("SELECT relrowsecurity FROM pg_class WHERE relname = 'leases'"
                            ).fetchone()[0] is True
        policies = {r[0] for r in conn.execute(
            "SELECT policyname FROM pg_policies WHERE tablename = 'leases'")}
        assert policies == {"installer_own", "staff_all"}
        assert conn.execute("SELECT count(*) FROM leases").fetchone()[0] == 2  # kept
    for name in ("alice", "bob"):
        with psycopg.connect(pg_cluster.url(db, name), autocommit=True) as person:
            seen = person.execute("SELECT device_id, holder FROM leases").fetchall()
            assert seen == [(f"dev-{name}", name)]
    with PostgresRegister(url) as reg:  # opened again: nothing more to do
        assert reg.schema_version() == 6
