"""`jobs` at company scale: the status cache (keyed by last entry, checklist hash and
check-logic version), its staleness after new entries or an upgrade, filters and pages in
the database, on both engines; listing loads neither the unit library nor the checks.
References: the evaluator itself (checks.evaluate via JobState) for the derived status,
Python's own module table (sys.modules) for what `jobs` imports."""

from __future__ import annotations

import json
import sqlite3
import subprocess
import sys

import pytest

from commission.checklist import load
from commission.checks import CHECKS
from commission.job import JobState
from commission.register import Register
from conftest import CHECKLIST


def _new(reg, site: str, **details):
    job = reg.create_job(load(CHECKLIST, checks=CHECKS), {"site": site, **details})
    JobState(reg, job).remember_status()
    return job


def test_check_logic_version_read_without_importing_the_checks():
    from commission.checks.registry import CHECK_LOGIC_VERSION
    from commission.status_cache import check_logic_version

    assert check_logic_version() == CHECK_LOGIC_VERSION


def test_cached_status_goes_stale_and_is_derived_again(engine_reg, monkeypatch):
    job = _new(engine_reg, "Larch House")
    (row,), total = engine_reg.list_jobs()
    assert total == 1 and row[1] == "incomplete" and row[2] is True
    engine_reg.amend(job, {"client": "R. Okafor"})  # a detail changes no verdict
    assert engine_reg.list_jobs()[0][0][2] is True
    engine_reg.add_entry(job, "supply.voltage", "answer", "231", 231.0)
    (row,), _ = engine_reg.list_jobs()
    assert row[1] == "incomplete" and row[2] is False  # last status, marked stale
    assert JobState(engine_reg, job).remember_status() == "incomplete"
    assert engine_reg.list_jobs()[0][0][2] is True
    # an upgrade of the checks: every status is stale until derived again
    import commission.status_cache as cache

    monkeypatch.setattr(cache, "check_logic_version", lambda: 10_000)
    assert engine_reg.list_jobs()[0][0][2] is False
    JobState(engine_reg, job).remember_status()
    assert engine_reg.list_jobs()[0][0][2] is True


def test_filters_and_pages_in_the_database(engine_reg):
    made = [_new(engine_reg, f"Site {n}", installer="Ann" if n % 2 else "Ben",
                 next_inspection=f"2027-0{1 + n % 5}-01") for n in range(7)]
    engine_reg.amend(made[0], {"installer": "Ann", "next_inspection": "2026-01-01"})
    ann, total = engine_reg.list_jobs(installer="Ann")
    assert total == 4 and {j.details["site"] for j, _s, _f in ann} == \
        {"Site 0", "Site 1", "Site 3", "Site 5"}
    due, _ = engine_reg.list_jobs(due="2027-02-01")
    assert sorted(j.details["site"] for j, _s, _f in due) == ["Site 0", "Site 1", "Site 5",
                                                              "Site 6"]
    first, total = engine_reg.list_jobs(page=1, size=3)
    third, _ = engine_reg.list_jobs(page=3, size=3)
    assert total == 7 and [j.short_id for j, _s, _f in first] == \
        [j.short_id for j in made[:3]]
    assert [j.short_id for j, _s, _f in third] == [made[6].short_id]
    assert engine_reg.list_jobs(status="ready")[1] == 0
    assert engine_reg.list_jobs(status="incomplete")[1] == 7


def test_show_never_trusts_the_cache(cli, new_job, register_path):
    """A cache that says `ready` (forged, with a matching key) changes what `jobs` shows,
    never what `show` derives; `report` and `verify` derive the same way as `show`."""
    job = new_job()
    db = sqlite3.connect(register_path)
    db.execute("UPDATE job_status SET status = 'ready'")
    db.commit()
    db.close()
    assert json.loads(cli("jobs", "--json").stdout)[0]["status"] == "ready"
    assert json.loads(cli("show", job, "--json").stdout)["status"] == "incomplete"


def test_jobs_cli_pages_filters_and_refresh(cli, new_job, tmp_path):
    jobs = [new_job(site=f"Site {n}") for n in range(3)]
    paged = cli("jobs", "--page-size", "2")
    assert jobs[0] in paged.stdout and jobs[2] not in paged.stdout
    assert "page 1 of 2" in paged.stdout
    answers = tmp_path / "a.yaml"
    answers.write_text("supply.voltage: 231 V\n", encoding="utf-8")
    with Register(tmp_path / "reg.sqlite3") as reg:  # an entry arriving by sync
        reg.add_entry(reg.find_job(jobs[1]), "supply.voltage", "answer", "231", 231.0)
    listed = cli("jobs")
    assert "incomplete*" in listed.stdout and "--refresh" in listed.stdout
    refreshed = cli("jobs", "--refresh")
    assert "*" not in refreshed.stdout
    bad = cli("jobs", "--due", "next week")
    assert bad.exit_code == 2 and "--due next week" in bad.stderr
    assert "no jobs match" in cli("jobs", "--status", "ready").stdout


def test_jobs_loads_neither_units_nor_checks(new_job, register_path):
    """Checked in a fresh interpreter on a register with a job; nor the record package
    and its schema (pydantic): a listing prints escaped text without it."""
    new_job()
    code = ("import sys\nfrom commission.cli.app import main\n"
            f"main(['jobs', '--register', {str(register_path)!r}])\n"
            "print(sorted(m for m in sys.modules if m in ('pint', 'numpy', 'pydantic') or"
            " m.startswith(('commission.checks', 'commission.record'))))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True).stdout.strip().splitlines()
    assert out[-1] == "[]" and "incomplete" in out[0]


@pytest.mark.parametrize("n", [0])
def test_heads_follow_entries_by_time_not_arrival(engine_reg, n):
    """An older entry arriving later (a sync) does not move the head back."""
    job = _new(engine_reg, "Larch House")
    engine_reg.add_entry(job, "supply.voltage", "answer", "236", 236.0,
                         at="2026-05-02T11:00:00.000Z")
    JobState(engine_reg, job).remember_status()
    engine_reg.add_entry(job, "supply.voltage", "answer", "229", 229.0,
                         at="2026-05-02T10:00:00.000Z")
    assert engine_reg.list_jobs()[0][0][2] is True  # current is still the 11:00 one


def test_heads_after_a_batch_of_entries(engine_reg):
    """A sync's batch (one statement on PostgreSQL) leaves each job's head on its latest
    entry and its latest amendment, whatever their order in the batch."""
    job = _new(engine_reg, "Larch House", installer="Ann")
    rows = [(f"00000000-0000-4000-8000-00000000000{n}", item, action, raw, json.dumps(raw),
             None, None, at, "t", "dev-x", None, None)
            for n, (item, action, raw, at) in enumerate([
                ("job.installer", "detail", "Cy", "2026-05-02T12:00:00.000Z"),
                ("job.installer", "detail", "Ben", "2026-05-02T10:00:00.000Z"),
                ("supply.voltage", "answer", "231", "2026-05-02T11:00:00.000Z"),
                ("supply.voltage", "answer", "236", "2026-05-02T09:00:00.000Z")])]
    assert engine_reg.insert_entries(job, rows) == 4
    assert engine_reg.list_jobs(installer="Cy")[1] == 1
    assert engine_reg.list_jobs(installer="Ben")[1] == 0
    JobState(engine_reg, job).remember_status()
    assert engine_reg.list_jobs()[0][0][2] is True  # the head is the 11:00 reading


INSTALLERS = ["Ann Smith", "ANN SMITH", "Ann Smithers", "Ann", "Дмитрий Кузнецов",
              "Élise Durand", "Bob"]


def _matched(engine_reg, name: str) -> list[str]:
    rows, total = engine_reg.list_jobs(installer=name)
    assert total == len(rows)
    return sorted(j.details["installer"] for j, _s, _f in rows)


def test_installer_filter_matches_alike_on_both_engines(engine_reg):
    """`--installer` matches the whole name, spaces around it dropped, A-Z in either case;
    any other letter exactly (the expected sets are written out here; the same test runs
    on each engine). An amended installer is matched by the new name only."""
    for n, name in enumerate(INSTALLERS):
        _new(engine_reg, f"Site {n}", installer=name)
    amended = _new(engine_reg, "Site amended", installer="Cy Jones")
    engine_reg.amend(amended, {"installer": "ann smith"})
    expected = {
        "ann smith": ["ANN SMITH", "Ann Smith", "ann smith"],
        "  Ann SMITH ": ["ANN SMITH", "Ann Smith", "ann smith"],
        "Ann": ["Ann"],  # a whole name, not the start of one
        "ann smit": [],
        "Cy Jones": [],  # amended away
        "Дмитрий Кузнецов": ["Дмитрий Кузнецов"],
        "дмитрий кузнецов": [],  # only A-Z fold: the same on every engine and locale
        "élise durand": [],
        "ÉLISE DURAND": ["Élise Durand"],  # É exact, the rest A-Z
        "bob": ["Bob"],
    }
    got = {name: _matched(engine_reg, name) for name in expected}
    assert got == expected


def test_installer_filter_through_the_cli_on_both_engines(engine_reg, cli):
    """The same through `commission jobs --installer` (the register by path or URL)."""
    for n, name in enumerate(["Ann Smith", "Ann Smithers", "Дмитрий Кузнецов"]):
        _new(engine_reg, f"Site {n}", installer=name)
    target = (str(engine_reg.path) if isinstance(engine_reg, Register) else engine_reg.url)
    for name, sites in (("ANN smith", ["Site 0"]), ("ann", []),
                        ("Дмитрий Кузнецов", ["Site 2"])):
        listed = cli("jobs", "--installer", name, "--register", target, "--json")
        assert listed.exit_code == 0, listed.output
        assert sorted(j["site"] for j in json.loads(listed.stdout)) == sites
