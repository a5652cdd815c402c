"""A job's verdicts kept between evaluations and judged again only where new entries can
change them (``checks.evaluate.Incremental``, behind the walk's ``JobState.results``) are
the verdicts of a fresh evaluation, after every answer, skip and correction, in any order:
the demo job's answers applied in seeded random orders, some corrected to other values and
some skipped, and a condition that switches a check's input off and on again."""

from __future__ import annotations

import random
import re
from pathlib import Path

import pytest
import yaml

import commission.demo
from commission.checklist import load
from commission.checks import CHECKS
from commission.checks.evaluate import evaluate
from commission.cli.demo import _due
from commission.register import Register
from commission.resources import resolve
from commission.walk.answers import _apply_one, read_answers
from commission.walk.state import JobState

DEMO = Path(commission.demo.__file__).parent


def _demo_state(register_path):
    plan = yaml.safe_load((DEMO / "scenario.yaml").read_text(encoding="utf-8"))
    reg = Register(register_path)
    reg.open()
    for inst in plan["instruments"]:
        reg.add_instrument(inst["serial"], inst["make"], inst["model"],
                           _due(inst["calibration_due"]), inst.get("accuracy", ""),
                           inst.get("accuracy_as", ""))
    loaded = load(resolve("checklists", plan["checklist"]), checks=CHECKS)
    job = reg.create_job(loaded, plan["job"], by="test")
    return reg, JobState(reg, job), read_answers(DEMO / plan["answers"])


def _other_value(spec):
    """The same answer with its first number changed by a tenth (a correction)."""
    text = spec.get("text") if isinstance(spec, dict) else spec
    if not isinstance(text, str) or not re.search(r"\d", text):
        return None
    changed = re.sub(r"\d+(?:[.,]\d+)?", lambda m: f"{float(m[0].replace(',', '.')) * 1.1:.3g}",
                     text, count=1)
    return {**spec, "text": changed} if isinstance(spec, dict) else changed


def _same(memo_results, fresh_results):
    assert [r.item.id for r in memo_results] == [r.item.id for r in fresh_results]
    for a, b in zip(memo_results, fresh_results, strict=True):
        assert (a.verdict, a.reason, a.source, a.applicable) == \
            (b.verdict, b.reason, b.source, b.applicable), a.item.id
        assert a.measured == b.measured and a.expected == b.expected, a.item.id


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_kept_outcomes_are_a_fresh_evaluations(register_path, seed):
    reg, state, answers = _demo_state(register_path)
    rng = random.Random(seed)
    order = list(answers)
    rng.shuffle(order)
    steps = 0
    try:
        for item_id in order:
            item = state.checklist.item(item_id)
            spec = answers[item_id]
            moves = [spec]
            corrected = _other_value(spec) if rng.random() < 0.3 else None
            if corrected is not None:
                moves += [corrected, spec]  # corrected, then put back
            for move in moves:
                try:
                    _apply_one(state, item, move, DEMO, None)
                except Exception:  # noqa: BLE001 — a refused correction changes nothing
                    continue
                steps += 1
                _same(state.results(),
                      evaluate(state.checklist, state.entries, state.instruments,
                               state.files, baseline=state.job.baseline or None))
            if not item.critical and rng.random() < 0.1:
                state.mark(item, "skip", "not reachable today")
                _same(state.results(),
                      evaluate(state.checklist, state.entries, state.instruments,
                               state.files, baseline=state.job.baseline or None))
        assert steps >= len(order)
        # the kept Results were used: one more answer leaves most of them as they were
        before = state.results()
        _apply_one(state, state.checklist.item("supply.voltage"), "241 V", DEMO, None)
        after = state.results()
        kept = sum(a is b for a, b in zip(before, after, strict=True))
        assert kept >= len(after) - 10, kept
    finally:
        state.files.close()
        reg.close()


def test_an_input_that_stops_applying_is_judged_again(register_path):
    """earth.ra (TT only) reads the RCD's IΔn, which applies only while an RCD is present:
    saying there is none must change earth.ra's verdict although neither of its own
    entries changed."""
    reg, state, answers = _demo_state(register_path)

    def answer(item_id, text):
        _apply_one(state, state.checklist.item(item_id), text, DEMO, None)
        fresh = evaluate(state.checklist, state.entries, state.instruments, state.files,
                         baseline=state.job.baseline or None)
        _same(state.results(), fresh)
        return next(r for r in fresh if r.item.id == "earth.ra")

    try:
        for item_id, spec in answers.items():
            _apply_one(state, state.checklist.item(item_id), spec, DEMO, None)
        answer("supply.earthing", "TT")
        with_rcd = answer("earth.ra", "40 Ω")
        without = answer("protection.rcd.present", "no")
        assert "waiting for residual_rating" in without.reason
        assert without.reason != with_rcd.reason
        again = answer("protection.rcd.present", "yes")
        assert (again.verdict, again.reason) == (with_rcd.verdict, with_rcd.reason)
    finally:
        state.files.close()
        reg.close()
