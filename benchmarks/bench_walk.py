"""One walk answer on a 150-item job against a bare SQLite insert-and-commit.

A walk answer is what the walk does between the person pressing Enter and the next
question: ``parse_answer(item, text)``, ``JobState.record(item, raw, answer)`` (one entry,
committed with WAL and ``synchronous=FULL``) and ``JobState.results()`` (every verdict
re-evaluated). The job is the 150-item job of the report benchmark with its 80 extra
readings still open; each is answered in turn (and, in the full run, corrected once more).
The baseline is a bare ``sqlite3`` connection with the same pragmas on a file in the same
folder, one row inserted and committed per answer, interleaved with the answers so that
both see the same disk at the same moment. The ratio is of the medians per answer.
"""

from __future__ import annotations

import sqlite3
import time
import uuid

from ._common import Context, Figure, median, profile_top, spread
from ._jobs import extra_answer, make_job, restore_home, use_home

TARGET = 5.0


def _firing_angle() -> str:
    """The share of one re-evaluation spent inverting the phase-control power curve."""
    from commission.physics.phase_control import firing_angle_for_fraction

    times = []
    for _ in range(50):
        t0 = time.perf_counter()
        firing_angle_for_fraction(0.5)
        times.append(time.perf_counter() - t0)
    return (f"firing_angle_for_fraction(0.5), which the harmonic_emission check calls on "
            f"every re-evaluation: {median(times) * 1e3:.2f} ms per call (median of 50)")


class BareSqlite:
    """The least a durable answer costs: one INSERT and COMMIT, WAL + synchronous=FULL."""

    def __init__(self, path):
        self.db = sqlite3.connect(path, isolation_level=None)
        self.db.execute("PRAGMA journal_mode = WAL")
        self.db.execute("PRAGMA synchronous = FULL")
        self.db.execute("CREATE TABLE entries (id INTEGER PRIMARY KEY, uuid TEXT NOT NULL, "
                        "item_id TEXT NOT NULL, raw TEXT NOT NULL, value_json TEXT, at TEXT)")

    def insert(self, item_id: str, raw: str) -> None:
        self.db.execute("BEGIN IMMEDIATE")
        self.db.execute("INSERT INTO entries (uuid, item_id, raw, value_json, at) "
                        "VALUES (?,?,?,?,?)",
                        (str(uuid.uuid4()), item_id, raw, "230.0", time.time()))
        self.db.execute("COMMIT")

    def close(self) -> None:
        self.db.close()


def run(ctx: Context) -> list[Figure]:
    old = use_home(ctx.scratch / "home")
    try:
        return _run(ctx)
    finally:
        restore_home(old)


def _run(ctx: Context) -> list[Figure]:
    from commission.register import Register
    from commission.walk.state import JobState
    from commission.walk.values import parse_answer

    folder = ctx.scratch / "walk-150"
    bench = make_job(folder, 150, answer_extra=False)
    bare = BareSqlite(folder / "bare.sqlite3")
    rounds = 1 if ctx.quick else 2
    t_answer: list[float] = []
    t_parse: list[float] = []
    t_record: list[float] = []
    t_eval: list[float] = []
    t_bare: list[float] = []
    with Register(bench.register) as reg:
        state = JobState(reg, reg.find_job(bench.short_id))
        state.results()  # the walk evaluates once before the first question
        for _ in range(3):  # warm the bare connection too
            bare.insert("warm", "230 V")
        for r in range(rounds):
            for k, item_id in enumerate(bench.extra_ids):
                item = state.checklist.item(item_id)
                raw = extra_answer(k, r + 1)
                p = time.perf_counter()
                t0 = time.perf_counter()
                answer = parse_answer(item, raw)
                t1 = time.perf_counter()
                entry = state.record(item, raw, answer)
                t2 = time.perf_counter()
                results = state.results()
                t3 = time.perf_counter()
                if entry is None or len(results) != bench.items:
                    raise RuntimeError(f"{item_id}: answer not recorded")
                t_parse.append(t1 - t0)
                t_record.append(t2 - t1)
                t_eval.append(t3 - t2)
                t_answer.append(t3 - p)
                b0 = time.perf_counter()
                bare.insert(item_id, raw)
                t_bare.append(time.perf_counter() - b0)
        entries = len(state.entries)
        status = state.status(results)
        profile = []
        fig = Figure("walk answer, 150-item job", median(t_answer) * 1e3, median(t_bare) * 1e3,
                     "ms", TARGET, baseline_name="bare SQLite insert+commit, same pragmas")
        if fig.met is False:
            def answers(count=20):
                for k, item_id in enumerate(bench.extra_ids[:count]):
                    item = state.checklist.item(item_id)
                    raw = f"{225 + k % 10}.5 V"
                    state.record(item, raw, parse_answer(item, raw))
                    state.results()

            profile = profile_top(answers, n=12, sort="tottime")
            profile[0] = profile[0].replace("cProfile:", "cProfile of 20 more answers:")
            profile.append(_firing_angle())
        state.files.close()
    bare.close()
    fig.detail += [
        f"per answer: {spread(t_answer, 1e3, 'ms')}; {len(t_answer)} answers, the job ends "
        f"with {entries} entries, status {status}",
        f"  parse {median(t_parse) * 1e3:.2f} ms, record (commit) "
        f"{median(t_record) * 1e3:.2f} ms, re-evaluate {median(t_eval) * 1e3:.2f} ms "
        "(medians)",
        f"bare insert+commit: {spread(t_bare, 1e3, 'ms')}",
        *profile,
    ]
    return [fig]
