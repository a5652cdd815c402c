"""Shared fixtures: every test gets its own register and config folder."""

from __future__ import annotations

import os

# One BLAS thread, as the package itself sets (see src/commission/__init__.py): set here too,
# before any test module imports numpy ahead of commission.
for _name in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_name, "1")
import sys
import tempfile

# With PYTHONDONTWRITEBYTECODE set (to keep __pycache__ folders out of the tree), every
# pytest worker compiled and assertion-rewrote every test module and compiled the package
# afresh: half of the collection time. The test session then keeps its bytecode under a
# prefix outside the tree instead (PYTHONPYCACHEPREFIX, which the CLI subprocesses read
# too); a prefix set by the developer is left as it is.
if sys.dont_write_bytecode and sys.pycache_prefix is None:
    sys.pycache_prefix = os.path.join(tempfile.gettempdir(), f"commission-pycache-{os.getuid()}")
    sys.dont_write_bytecode = False
    os.environ["PYTHONPYCACHEPREFIX"] = sys.pycache_prefix
import shutil
from pathlib import Path

import pytest
import typer.main
import typer.testing
from typer.testing import CliRunner

# typer's CliRunner turns the app into its click command tree on every invoke (7 ms of the
# 11 ms a `jobs` call takes here, over some two thousand calls in the fast suite). The
# tree is a pure function of the app, so each app is turned once per test process; the
# commands themselves run exactly as before. (The console entry point builds its own.)
_trees: dict[int, object] = {}


def _tree_once(app):
    key = id(app)
    if key not in _trees:
        _trees[key] = (app, typer.main.get_command(app))
    return _trees[key][1]


typer.testing._get_command = _tree_once

ROOT = Path(__file__).resolve().parent.parent
CHECKLIST = ROOT / "checklists" / "diverter-1ph.yaml"
DEMO = ROOT / "src" / "commission" / "demo"
pytest_plugins = ["engines"]  # the register engines (SQLite, and a throw-away PostgreSQL)


@pytest.fixture(autouse=True)
def _isolated(tmp_path, monkeypatch):
    monkeypatch.setenv("COMMISSION_REGISTER", str(tmp_path / "reg.sqlite3"))
    monkeypatch.setenv("COMMISSION_HOME", str(tmp_path / "home"))
    monkeypatch.setenv("COMMISSION_USER", "tester")
    monkeypatch.delenv("COMMISSION_DEBUG", raising=False)
    monkeypatch.setenv("NO_COLOR", "1")


@pytest.fixture
def register_path(tmp_path) -> Path:
    return tmp_path / "reg.sqlite3"


class Cli:
    """Typer's CliRunner around the real app; stdout and stderr kept apart."""

    def __init__(self) -> None:
        from commission.cli.app import app

        self.app = app
        self.runner = CliRunner()

    def __call__(self, *args: str, input: str | None = None):
        result = self.runner.invoke(self.app, [str(a) for a in args], input=input)
        if result.exception and not isinstance(result.exception, SystemExit):
            raise result.exception
        return result


@pytest.fixture
def cli() -> Cli:
    return Cli()


@pytest.fixture
def new_job(cli):
    def make(checklist: str = "diverter-1ph", site: str = "Test Site") -> str:
        result = cli("new", "--checklist", checklist, "--site", site)
        assert result.exit_code == 0, result.output
        return result.stdout.strip().splitlines()[-1]

    return make


def need_tool(name: str):
    """Skip locally with a visible reason when an outside tool is missing; never in CI."""
    if shutil.which(name) is None:
        if os.environ.get("CI") == "true":
            pytest.fail(f"{name} is required in CI but not installed")
        pytest.skip(f"{name} not installed (CI installs it)")


@pytest.fixture(scope="session")
def _demo_once(tmp_path_factory) -> tuple[Path, str]:
    """The real `commission demo`, run once per test session (in-process, as the CLI runs
    it; shared by the pytest-xdist workers through a file lock in their common temporary
    folder): its folder (register, identity, trust store, signed record) and what it
    printed. Tests never touch this folder; they take a private copy through ``demo``."""
    import fcntl
    import json

    from commission.cli.app import app

    base = tmp_path_factory.getbasetemp()
    if os.environ.get("PYTEST_XDIST_WORKER"):
        base = base.parent  # the folder every worker's own temporary folder sits in
    folder = base / "demo-once" / "run"
    done = base / "demo-once" / "printed.json"
    done.parent.mkdir(parents=True, exist_ok=True)
    with open(base / "demo-once.lock", "w") as lock:
        fcntl.flock(lock, fcntl.LOCK_EX)
        if not done.exists():
            old = os.environ.get("COMMISSION_HOME")
            result = CliRunner().invoke(app, ["demo", "--out", str(folder)])
            if old is None:
                os.environ.pop("COMMISSION_HOME", None)
            else:
                os.environ["COMMISSION_HOME"] = old
            assert result.exit_code == 0, result.output
            done.write_text(json.dumps(result.stdout), encoding="utf-8")
        out = json.loads(done.read_text(encoding="utf-8"))
    return folder, out


@pytest.fixture(scope="module")
def demo(_demo_once, tmp_path_factory) -> dict:
    """A private copy of the demo run for one test module: ``folder`` (usable as
    COMMISSION_HOME), ``pdf`` (the signed record), ``job``, ``cert``, ``register``, and
    ``out`` (what the demo printed)."""
    import re

    source, out = _demo_once
    folder = tmp_path_factory.mktemp("demo") / "run"
    shutil.copytree(source, folder)
    (pdf,) = folder.glob("record-*.pdf")
    job = re.search(r"demo job (\w+)", out).group(1)
    return {"folder": folder, "pdf": pdf, "job": job, "cert": folder / "identity" / "cert.pem",
            "register": folder / "register.sqlite3", "out": out}


@pytest.fixture(scope="session")
def demo_record(_demo_once) -> Path:
    """The demo's signed record, for the tests that only read the drawn pages."""
    return next(_demo_once[0].glob("record-*.pdf"))
