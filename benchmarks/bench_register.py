"""The register at company scale, on both engines, each figure against a baseline of the
same run.

* ``commission jobs`` on a register of 100,000 jobs and 5,000,000 entries (``--quick``:
  10,000 and 500,000), SQLite file and PostgreSQL, against ``commission --help``: whole
  processes, interleaved, medians. The jobs are synthetic rows (a short stand-in for the
  checklist text, which `jobs` never reads; 50 entries each) with a derived status cached
  for every job, as after a day's work; the listing shows the first page.
* One walk answer on PostgreSQL (``parse_answer`` + ``JobState.record``: the entry and its
  commit; the verdicts are derived the same way on both engines and are left out) against
  a bare ``INSERT`` + ``COMMIT`` of a row of the same width on the same server.
* ``sync`` of 10,000 new entries from a laptop register to PostgreSQL (the library call,
  in-process) against a bare ``COPY`` of the same rows into a plain table and its commit.

PostgreSQL runs in a throw-away cluster started here the way the tests start it
(``tests/engines.py``: initdb as an unprivileged user, a Unix socket in its folder); without
the server binaries those figures are skipped with the reason.
"""

from __future__ import annotations

import json
import sys
import time
import uuid
from pathlib import Path

from ._common import Context, Figure, checked, median, run_child, spread

TARGET_JOBS = 2.0
TARGET_ANSWER = 5.0
TARGET_SYNC = 3.0
ROOT = Path(__file__).resolve().parent.parent


def _cluster(ctx: Context):
    sys.path.insert(0, str(ROOT / "tests"))
    try:
        import engines
    finally:
        sys.path.pop(0)
    if not (engines._pg_bin("initdb") and engines._pg_bin("pg_ctl")):
        return None
    import os
    import shutil
    import tempfile

    user = "nobody" if os.geteuid() == 0 else None
    root = Path(tempfile.mkdtemp(prefix="commission-pg-", dir=ctx.scratch))
    if user:
        shutil.chown(root, user)
        root.parent.chmod(0o755)
    cluster = engines.PgCluster(root, user)
    cluster.start()
    return cluster


def _entry_rows(n_jobs: int, per_job: int):
    """(job number, entry row) for the synthetic register: times increase per job."""
    items = [f"section{k % 7}.item{k}" for k in range(per_job)]
    for j in range(n_jobs):
        for k in range(per_job):
            yield j, (str(uuid.UUID(int=(j << 32) | k | (1 << 127))), items[k], "answer",
                      f"{230 + k % 9}", json.dumps(230.0 + k % 9), "V", None,
                      f"2026-03-{1 + j % 28:02d}T{8 + k // 60 % 10:02d}:{k % 60:02d}:00.000Z",
                      "bench", "dev-bench", None, None)


def _fill(reg, n_jobs: int, per_job: int, say) -> None:
    """Synthetic jobs and entries loaded in bulk (benchmark set-up: plain SQL, COPY on
    PostgreSQL with the heads computed once after the load instead of row by row), then a
    cached status for every job whose key matches its last entry: the state `jobs` finds
    after a day's work."""
    from commission.status_cache import check_logic_version

    t0 = time.perf_counter()
    jobs = [(f"B{j:07d}", str(uuid.UUID(int=j | (1 << 126))), "2026-03-01T08:00:00.000Z",
             "bench", f"Site {j}", f"Installer {j % 40}", "diverter-1ph", "bench", "0" * 64,
             "(benchmark stand-in)") for j in range(n_jobs)]
    cols = ("short_id, uuid, created_at, created_by, site, installer, checklist_id,"
            " checklist_version, checklist_sha256, checklist_text")
    ecols = "uuid, job_id, item_id, action, raw, value_json, unit_typed, at, by, host"
    logic = check_logic_version()
    status = ("INSERT INTO job_status (job_id, last_entry, checklist_sha256, check_logic,"
              " status, derived_at) SELECT h.job_id, h.last_entry, j.checklist_sha256, {p},"
              " 'incomplete', '2026-03-01T09:00:00.000Z' FROM job_heads h JOIN jobs j"
              " ON j.id = h.job_id")
    if hasattr(reg, "db"):  # SQLite
        db = reg.db
        db.execute("BEGIN")
        db.executemany(f"INSERT INTO jobs ({cols}) VALUES (?,?,?,?,?,?,?,?,?,?)", jobs)
        ids = dict(db.execute("SELECT short_id, id FROM jobs"))
        db.executemany(f"INSERT INTO entries ({ecols}) VALUES (?,?,?,?,?,?,?,?,?,?)",
                       ((r[0], ids[f"B{j:07d}"], *r[1:6], *r[7:10])
                        for j, r in _entry_rows(n_jobs, per_job)))
        db.execute(status.format(p="?"), (logic,))
        db.execute("COMMIT")
        db.execute("ANALYZE")
    else:
        conn = reg.conn
        with conn.transaction(), conn.cursor() as cur:
            with cur.copy(f"COPY jobs ({cols}) FROM STDIN") as copy:
                for row in jobs:
                    copy.write_row(row)
            ids = dict(cur.execute("SELECT short_id, id FROM jobs").fetchall())
            cur.execute("ALTER TABLE entries DISABLE TRIGGER job_heads_new_entries")
            with cur.copy(f"COPY entries ({ecols}) FROM STDIN") as copy:
                for j, r in _entry_rows(n_jobs, per_job):
                    copy.write_row((r[0], ids[f"B{j:07d}"], *r[1:6], *r[7:10]))
            cur.execute("ALTER TABLE entries ENABLE TRIGGER job_heads_new_entries")
            cur.execute("UPDATE job_heads h SET last_entry = m.k FROM (SELECT job_id,"
                        " max(at || ' ' || uuid) AS k FROM entries GROUP BY job_id) m"
                        " WHERE m.job_id = h.job_id")
            cur.execute(status.format(p="%s"), (logic,))
        conn.execute("VACUUM ANALYZE")
    say(f"    {n_jobs} jobs, {n_jobs * per_job} entries loaded in "
        f"{time.perf_counter() - t0:.0f} s")


def _jobs_vs_help(ctx: Context, target: str, label: str, n: int) -> Figure:
    env = ctx.child_env()
    jobs_argv = [*ctx.cli, "jobs", "--register", target]
    help_argv = [*ctx.cli, "--help"]
    for argv in (jobs_argv, help_argv):
        checked(run_child(argv, env=env), " ".join(argv[2:4]))
    t_jobs, t_help = [], []
    for _ in range(n):
        t_help.append(checked(run_child(help_argv, env=env), "--help").seconds)
        t_jobs.append(checked(run_child(jobs_argv, env=env), "jobs").seconds)
    fig = Figure(f"jobs, {label}", median(t_jobs) * 1e3, median(t_help) * 1e3, "ms",
                 TARGET_JOBS, baseline_name="commission --help")
    fig.detail.append(f"jobs: {spread(t_jobs, 1e3, 'ms')}; --help: {spread(t_help, 1e3, 'ms')}")
    return fig


def _walk_answer(ctx: Context, url: str, n: int) -> Figure:
    import psycopg

    from commission.checklist import load
    from commission.checks import CHECKS
    from commission.job import JobState
    from commission.register.postgres import PostgresRegister
    from commission.walk.values import parse_answer

    loaded = load(ROOT / "checklists" / "diverter-1ph.yaml", checks=CHECKS)
    item = loaded.checklist.item("supply.voltage")
    bare = psycopg.connect(url, autocommit=True)
    bare.execute("CREATE TABLE IF NOT EXISTS bare_answers (uuid TEXT PRIMARY KEY, job BIGINT,"
                 " item TEXT, action TEXT, raw TEXT, value_json TEXT, unit TEXT, at TEXT,"
                 " by TEXT, host TEXT)")
    t_answer, t_bare = [], []
    with PostgresRegister(url) as reg:
        state = JobState(reg, reg.create_job(loaded, {"site": "Bench"}))
        for k in range(n):
            text = f"{225 + k % 20} V"
            t0 = time.perf_counter()
            answer = parse_answer(item, text)
            state.record(item, text, answer)
            t_answer.append(time.perf_counter() - t0)
            t0 = time.perf_counter()
            with bare.transaction():
                bare.execute("INSERT INTO bare_answers VALUES (%s,%s,%s,%s,%s,%s,%s,%s,%s,%s)",
                             (str(uuid.uuid4()), 1, "supply.voltage", "answer", text,
                              json.dumps(225.0 + k % 20), "V", "2026-03-01T08:00:00.000Z",
                              "bench", "dev-bench"))
            t_bare.append(time.perf_counter() - t0)
    bare.close()
    fig = Figure("walk answer, PostgreSQL", median(t_answer) * 1e3, median(t_bare) * 1e3, "ms",
                 TARGET_ANSWER, baseline_name="bare INSERT + COMMIT, same server")
    fig.detail.append(f"answer: {spread(t_answer, 1e3, 'ms')}; bare: "
                      f"{spread(t_bare, 1e3, 'ms')} (verdicts not included: the same on "
                      "both engines)")
    return fig


def _sync_vs_copy(ctx: Context, cluster, n_entries: int, repeats: int) -> Figure:
    import psycopg

    from commission.checklist import load
    from commission.checks import CHECKS
    from commission.register import Register
    from commission.register.postgres import PostgresRegister
    from commission.register.sync import sync

    loaded = load(ROOT / "checklists" / "diverter-1ph.yaml", checks=CHECKS)
    t_sync, t_copy = [], []
    for r in range(repeats):
        url = cluster.url(cluster.new_database())
        with Register(ctx.scratch / f"laptop-{r}.sqlite3") as laptop:
            job = laptop.create_job(loaded, {"site": "Bench"})
            rows = [row for _j, row in _entry_rows(1, n_entries)]
            laptop.insert_entries(job, rows)
            with PostgresRegister(url) as office:
                t0 = time.perf_counter()
                report = sync(laptop, office)
                t_sync.append(time.perf_counter() - t0)
                assert report.entries_pushed == n_entries, report
            with psycopg.connect(url, autocommit=True) as bare:
                bare.execute("CREATE TABLE bare_entries (uuid TEXT, item_id TEXT, action TEXT,"
                             " raw TEXT, value_json TEXT, unit_typed TEXT, serial TEXT,"
                             " at TEXT, by TEXT, host TEXT, read_with TEXT, carried TEXT)")
                t0 = time.perf_counter()
                with bare.transaction(), bare.cursor() as cur, \
                        cur.copy("COPY bare_entries FROM STDIN") as copy:
                    for row in laptop.entry_rows(job, [r[0] for r in rows]):
                        copy.write_row(row)
                t_copy.append(time.perf_counter() - t0)
    fig = Figure(f"sync {n_entries} entries", median(t_sync) * 1e3, median(t_copy) * 1e3, "ms",
                 TARGET_SYNC, baseline_name="bare COPY of the same rows + COMMIT")
    fig.detail.append(f"sync: {spread(t_sync, 1e3, 'ms')}; COPY: {spread(t_copy, 1e3, 'ms')} "
                      "(the COPY side also reads the rows from the laptop register)")
    return fig


def run(ctx: Context) -> list[Figure]:
    from commission.register import Register
    from commission.register.postgres import PostgresRegister

    n_jobs, per_job = (10_000, 50) if ctx.quick else (100_000, 50)
    n = 5 if ctx.quick else 11
    figures = []
    ctx.say(f"  SQLite register: {n_jobs} jobs, {n_jobs * per_job} entries")
    path = ctx.scratch / "company.sqlite3"
    with Register(path) as reg:
        _fill(reg, n_jobs, per_job, ctx.say)
    figures.append(_jobs_vs_help(ctx, str(path), f"SQLite, {n_jobs} jobs", n))
    cluster = _cluster(ctx)
    if cluster is None:
        ctx.say("  PostgreSQL server binaries not found: the PostgreSQL figures are skipped")
        return figures
    try:
        url = cluster.url(cluster.new_database())
        ctx.say(f"  PostgreSQL register: {n_jobs} jobs, {n_jobs * per_job} entries")
        with PostgresRegister(url) as reg:
            _fill(reg, n_jobs, per_job, ctx.say)
        figures.append(_jobs_vs_help(ctx, url, f"PostgreSQL, {n_jobs} jobs", n))
        figures.append(_walk_answer(ctx, cluster.url(cluster.new_database()),
                                    40 if ctx.quick else 200))
        figures.append(_sync_vs_copy(ctx, cluster, 10_000, 3 if ctx.quick else 5))
    finally:
        cluster.stop()
    return figures
