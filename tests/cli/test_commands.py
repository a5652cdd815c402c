"""Every command's --help, `new`, `jobs`, `demo`, and a non-editable install."""

from __future__ import annotations

import json
import os
import subprocess
import sys
import zipfile

import pytest

from conftest import ROOT

COMMANDS = [[], ["new"], ["jobs"], ["show"], ["amend"], ["walk"], ["backup"], ["demo"],
            ["report"], ["verify"], ["import"], ["blank"], ["countersign"], ["identity"],
            ["identity", "new"], ["trust"], ["trust", "add"], ["analyse"],
            ["analyse", "capture"], ["analyse", "heating"], ["analyse", "soak"],
            ["analyse", "regulation"],
            ["checklists"], ["checklists", "validate"], ["checklists", "show"],
            ["checklists", "schema"], ["checklists", "list"], ["instruments"],
            ["instruments", "add"], ["instruments", "list"]]


@pytest.mark.parametrize("words", COMMANDS, ids=[" ".join(c) or "top" for c in COMMANDS])
def test_help(cli, words):
    result = cli(*words, "--help")
    assert result.exit_code == 0
    assert "Usage" in result.stdout


def test_help_mentions_safety(cli):
    assert "Mains work can kill" in cli("--help").stdout


def test_new_prints_id_last(cli):
    result = cli("new", "--checklist", "diverter-1ph", "--site", "Zoë's Barn",
                 "--installer", "Дмитрий Кузнецов")
    assert result.exit_code == 0
    job = result.stdout.strip().splitlines()[-1]
    listed = json.loads(cli("jobs", "--json").stdout)
    assert listed[0]["id"] == job and listed[0]["site"] == "Zoë's Barn"
    assert listed[0]["status"] == "incomplete"


def test_new_refuses_bad_input(cli, tmp_path):
    result = cli("new", "--checklist", "no-such-list", "--site", "X")
    assert result.exit_code == 2 and "shipped: diverter-1ph" in result.stderr
    assert cli("new", "--checklist", "diverter-1ph", "--site", "  ").exit_code == 2


def test_instruments(cli):
    bad = cli("instruments", "add", "--serial", "S1", "--make", "K", "--model", "M",
              "--calibration-due", "31/12/2027")
    assert bad.exit_code == 2 and "YYYY-MM-DD" in bad.stderr
    assert cli("instruments", "add", "--serial", "S1", "--make", "K", "--model", "M",
               "--calibration-due", "2027-12-31").exit_code == 0
    dup = cli("instruments", "add", "--serial", "S1", "--make", "K", "--model", "M",
              "--calibration-due", "2027-12-31")
    assert dup.exit_code == 2 and "already registered" in dup.stderr
    listed = json.loads(cli("instruments", "list", "--json").stdout)
    assert listed == [{"serial": "S1", "make": "K", "model": "M",
                       "calibration_due": "2027-12-31"}]


@pytest.mark.slow
def test_demo_runs_and_shows(cli, tmp_path):
    result = cli("demo", "--out", tmp_path / "demo")
    assert result.exit_code == 0, result.stderr
    assert "status ready" in result.stdout
    assert "verified here:  yes" in result.stdout
    assert "commission verify" in result.stdout
    assert (tmp_path / "demo" / "register.sqlite3").exists()
    assert list((tmp_path / "demo").glob("record-*.pdf"))
    again = cli("demo", "--out", tmp_path / "demo")
    assert again.exit_code == 2 and "already exists" in again.stderr


def test_show_unknown_job(cli, new_job):
    new_job()
    result = cli("show", "ZZZZZ")
    assert result.exit_code == 2
    assert "job 'ZZZZZ'" in result.stderr


@pytest.mark.slow
def test_non_editable_install_finds_shipped_checklist(tmp_path):
    """Build the wheel, install it without the source tree, and use the checklist by name."""
    wheel_dir = tmp_path / "wheel"
    build = subprocess.run(
        [sys.executable, "-m", "pip", "wheel", "--no-deps", "-q", "-w", wheel_dir, ROOT],
        capture_output=True, text=True, timeout=300,
    )
    if build.returncode != 0:
        pytest.fail(f"wheel build failed: {build.stderr[-2000:]}")
    (wheel,) = wheel_dir.glob("commission-*.whl")
    names = zipfile.ZipFile(wheel).namelist()
    assert "commission/shipped/checklists/diverter-1ph.yaml" in names
    assert "commission/shipped/forms/handover.yaml" in names
    assert "commission/demo/answers.yaml" in names
    target = tmp_path / "site"
    subprocess.run([sys.executable, "-m", "pip", "install", "--no-deps", "-q", "--target",
                    target, wheel], check=True, capture_output=True, timeout=300)
    env = dict(os.environ, PYTHONPATH=str(target), COMMISSION_REGISTER=str(tmp_path / "r.db"))
    run = subprocess.run(
        [sys.executable, "-c", "import commission, sys; print(commission.__file__); "
         "from commission.cli.app import main; sys.exit(main(sys.argv[1:]))",
         "checklists", "validate", "diverter-1ph"],
        capture_output=True, text=True, env=env, cwd=tmp_path, timeout=120,
    )
    assert run.returncode == 0, run.stderr
    assert str(target) in run.stdout.splitlines()[0]  # the installed copy, not the source tree
    assert "shipped/checklists/diverter-1ph.yaml: ok" in run.stdout
