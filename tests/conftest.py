"""Shared fixtures: every test gets its own register and config folder."""

from __future__ import annotations

import os

# One BLAS thread, as the package itself sets (see src/commission/__init__.py): set here too,
# before any test module imports numpy ahead of commission.
for _name in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_name, "1")
import shutil
import subprocess
import sys
from pathlib import Path

import pytest
from typer.testing import CliRunner

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
def demo_record(tmp_path_factory) -> Path:
    """A demo record made once per session by the real `commission demo` in a subprocess,
    in its own folder, for the tests that read the drawn pages."""
    folder = tmp_path_factory.mktemp("demo") / "run"
    env = {k: v for k, v in os.environ.items() if not k.startswith("COMMISSION_")}
    env["NO_COLOR"] = "1"
    done = subprocess.run([sys.executable, "-m", "commission.cli.app", "demo", "--out",
                           str(folder)], capture_output=True, text=True, env=env, timeout=300)
    assert done.returncode == 0, done.stderr
    return next(folder.glob("record-*.pdf"))
