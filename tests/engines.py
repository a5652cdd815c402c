"""The register engines for tests: SQLite always, and a throw-away PostgreSQL cluster.

The cluster is made once per test session by ``initdb`` in a temporary folder owned by an
unprivileged user (initdb refuses root: as root it runs through ``runuser -u nobody``),
listening only on a Unix socket in that folder (``-k``, ``listen_addresses=''``), and each
test gets a database of its own. Without the server binaries the PostgreSQL runs skip
with the reason; under ``CI=true`` they fail instead (CI installs them).
"""

from __future__ import annotations

import glob
import os
import shutil
import subprocess
import tempfile
import uuid
from pathlib import Path

import pytest

from commission.register import Register


def _pg_bin(name: str) -> str | None:
    found = shutil.which(name)
    if found:
        return found
    candidates = sorted(glob.glob(f"/usr/lib/postgresql/*/bin/{name}"))
    return candidates[-1] if candidates else None


class PgCluster:
    """A running throw-away cluster; ``url(db)`` connects over its socket."""

    def __init__(self, root: Path, user: str | None):
        self.root = root
        self.data = root / "data"
        self.user = user  # OS user running the server (None: this one)
        self.superuser = "commission_admin"

    def _run(self, *args: str) -> subprocess.CompletedProcess:
        cmd = list(args)
        if self.user:
            cmd = ["runuser", "-u", self.user, "--", *cmd]
        return subprocess.run(cmd, capture_output=True, text=True, timeout=120)

    def start(self) -> None:
        initdb, pg_ctl = _pg_bin("initdb"), _pg_bin("pg_ctl")
        done = self._run(initdb, "-D", str(self.data), "-U", self.superuser, "--auth=trust",
                         "--locale=C.UTF-8", "-E", "UTF8", "--no-sync")
        if done.returncode:
            done = self._run(initdb, "-D", str(self.data), "-U", self.superuser,
                             "--auth=trust", "--no-locale", "-E", "UTF8", "--no-sync")
        assert done.returncode == 0, done.stderr
        opts = (f"-k {self.root} -c listen_addresses='' -c fsync=off "
                "-c max_connections=60 -c shared_buffers=32MB")
        done = self._run(pg_ctl, "-D", str(self.data), "-l", str(self.root / "log"),
                         "-o", opts, "-w", "-t", "60", "start")
        assert done.returncode == 0, done.stderr + (self.root / "log").read_text()

    def stop(self) -> None:
        self._run(_pg_bin("pg_ctl") or "pg_ctl", "-D", str(self.data), "-m", "immediate",
                  "stop")

    def url(self, db: str = "postgres", user: str | None = None) -> str:
        return f"postgresql://{user or self.superuser}@/{db}?host={self.root}"

    def admin(self, sql: str, db: str = "postgres") -> None:
        import psycopg

        with psycopg.connect(self.url(db), autocommit=True) as conn:
            conn.execute(sql)

    def new_database(self) -> str:
        name = "t_" + uuid.uuid4().hex[:12]
        self.admin(f"CREATE DATABASE {name}")
        return name

    def postmaster_pid(self) -> int:
        return int((self.data / "postmaster.pid").read_text().split()[0])


def _cluster_parent() -> str | None:
    """Where the cluster's folder goes: a memory-backed /dev/shm when it has room (each test's
    CREATE DATABASE copies the template, about 8 MB, and on a busy disk that took 0.3 s a test
    where memory takes 0.04 s), else the usual temporary folder (a container's /dev/shm is
    often 64 MB)."""
    shm = "/dev/shm"
    try:
        if os.access(shm, os.W_OK) and shutil.disk_usage(shm).free > 4 << 30:
            return shm
    except OSError:
        pass
    return None


@pytest.fixture(scope="session")
def pg_cluster():
    """One PostgreSQL cluster for the session (see the module docstring)."""
    if not (_pg_bin("initdb") and _pg_bin("pg_ctl") and _pg_bin("postgres")):
        reason = ("PostgreSQL server binaries (initdb, pg_ctl, postgres) not found; "
                  "install the postgresql package to run the register suite on PostgreSQL")
        if os.environ.get("CI") == "true":
            pytest.fail(reason + " (required when CI=true)")
        pytest.skip(reason)
    try:
        import psycopg  # noqa: F401
    except ImportError:
        pytest.fail("psycopg is a dependency; reinstall with pip install -e '.[test]'")
    user = "nobody" if os.geteuid() == 0 else None
    root = Path(tempfile.mkdtemp(prefix="commission-pg-", dir=_cluster_parent()))
    if user:
        shutil.chown(root, user)
    cluster = PgCluster(root, user)
    try:
        cluster.start()
        yield cluster
    finally:
        cluster.stop()
        shutil.rmtree(root, ignore_errors=True)


@pytest.fixture
def pg_url(pg_cluster) -> str:
    """A fresh database on the session's cluster, as a register URL."""
    return pg_cluster.url(pg_cluster.new_database())


@pytest.fixture(params=["sqlite", "postgresql"])
def engine_reg(request, tmp_path):
    """An opened, empty register on each engine."""
    if request.param == "sqlite":
        with Register(tmp_path / "engine.sqlite3") as reg:
            yield reg
        return
    from commission.register.postgres import PostgresRegister

    url = request.getfixturevalue("pg_url")
    with PostgresRegister(url) as reg:
        yield reg
