"""`commission due`: exactly the installations whose next inspection falls in the window
(overdue ones marked), in a register of 500 generated jobs (seeded), the expected set
computed here by date arithmetic; the .ics file read back with the icalendar library
(an outside RFC 5545 parser)."""

from __future__ import annotations

import datetime as dt
import json
import random
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
SEED = 1414


def _interval_months() -> int:
    import yaml

    data = yaml.safe_load((ROOT / "checklists" / "diverter-1ph.yaml").read_text("utf-8"))
    return int(data["inspection_interval"]["months"])


def _plus_months(day: dt.date, months: int) -> dt.date:
    y, m = divmod(day.month - 1 + months, 12)
    year, month = day.year + y, m + 1
    for d in (day.day, 30, 29, 28):
        try:
            return dt.date(year, month, min(day.day, d))
        except ValueError:
            continue
    raise AssertionError("unreachable")


def _make(path: Path, count: int):
    """``count`` jobs: 400 with their own next inspection date (today ± 400 days), 100 without
    (the checklist's interval from the day they were made); the first is the baseline of
    a revisit (the last), so only the revisit speaks for that installation."""
    from commission.checklist import load
    from commission.checks import CHECKS
    from commission.register import open_register

    rng = random.Random(SEED)
    today = dt.date(2027, 6, 1)
    loaded = load(ROOT / "checklists" / "diverter-1ph.yaml", checks=CHECKS)
    expected: dict[str, dt.date] = {}
    with open_register(path) as reg, reg.batch():
        first = None
        for n in range(count - 1):
            own = rng.random() < 0.8
            date = today + dt.timedelta(days=rng.randint(-400, 400)) if own else None
            job = reg.create_job(loaded, {
                "site": f"Site {n}", "client": f"Client {n}",
                "client_contact": f"01632 960 {n:03d}",
                "next_inspection": date.isoformat() if date else ""})
            first = first or job
            expected[job.short_id] = date or _plus_months(
                dt.date.fromisoformat(job.created_at[:10]), _interval_months())
        revisit = reg.create_job(loaded, {"site": "Site 0", "next_inspection":
                                          (today - dt.timedelta(days=3)).isoformat()},
                                 baseline={"job": first.short_id, "uuid": first.uuid,
                                           "record_sha256": "0" * 64, "verified": True,
                                           "made_at": first.created_at, "status": "ready",
                                           "visits": []})
        expected[revisit.short_id] = today - dt.timedelta(days=3)
        del expected[first.short_id]
    print(f"seed {SEED}")
    return today, expected, revisit.short_id, first.short_id, path


@pytest.fixture(scope="module")
def register500(tmp_path_factory):
    return _make(tmp_path_factory.mktemp("due") / "reg500.sqlite3", 500)


@pytest.fixture
def register40(tmp_path):
    return _make(tmp_path / "reg40.sqlite3", 40)


@pytest.mark.slow
def test_due_within_30_days_lists_exactly_the_window_of_500(cli, register500, tmp_path):
    _window(cli, register500, tmp_path, 100)


def test_due_within_30_days_lists_exactly_the_window(cli, register40, tmp_path):
    _window(cli, register40, tmp_path, 5)


def _window(cli, made, tmp_path, at_least):
    today, expected, revisit, superseded, path = made
    ics = tmp_path / "due.ics"
    out = cli("due", "--within", "30d", "--today", today.isoformat(), "--json", "--ics", ics,
              "--register", path)
    assert out.exit_code == 0, out.output
    rows = json.loads(out.stdout)["due"]
    horizon = today + dt.timedelta(days=30)
    want = {job for job, date in expected.items() if date <= horizon}
    got = {r["job"] for r in rows}
    assert got == want, f"seed {SEED}: {sorted(got ^ want)[:5]}"
    assert len(want) > at_least and superseded not in got and revisit in got
    for r in rows:
        date = expected[r["job"]]
        assert r["date"] == date.isoformat() and r["days"] == (date - today).days
        assert r["overdue"] is (date < today)
        assert r["client_contact"].startswith("01632 960") or r["job"] == revisit
    assert next(r for r in rows if r["job"] == revisit)["baseline"].startswith("revisit of")

    import icalendar

    cal = icalendar.Calendar.from_ical(ics.read_bytes())
    events = [c for c in cal.walk() if c.name == "VEVENT"]
    assert len(events) == len(rows)
    by_uid = {str(e["UID"]): e for e in events}
    assert len(by_uid) == len(rows)
    for r in rows:
        e = by_uid[f"{r['uuid']}-next-inspection@commission"]
        assert e.decoded("DTSTART") == dt.date.fromisoformat(r["date"])
        assert r["site"] in str(e["SUMMARY"])
        assert ("OVERDUE" in str(e["SUMMARY"])) is r["overdue"]
        assert r["client_contact"] in str(e["DESCRIPTION"]).replace("\\", "")


def test_due_text_marks_overdue_and_refuses_a_bad_window(cli, register40):
    today, expected, _, _, path = register40
    text = cli("due", "--within", "2w", "--today", today.isoformat(), "--register", path)
    assert text.exit_code == 0, text.output
    overdue = [j for j, d in expected.items() if d < today]
    assert text.stdout.count("OVERDUE by") == len(overdue)
    bad = cli("due", "--within", "soon")
    assert bad.exit_code == 2 and bad.stderr.count("\n") == 1 and "--within soon" in bad.stderr
    bad_day = cli("due", "--today", "01/06/2027")
    assert bad_day.exit_code == 2 and "--today" in bad_day.stderr
