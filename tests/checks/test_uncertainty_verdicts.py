"""The decision rule inside the protection checks, through the evaluator, with a stated
tester accuracy. Intervals are hand-computed from the maker's figure (±(a % + n digits), read
as a bound, u = bound/√3, JCGM 100 4.3.7, or as U at k = 2) against the limits of CHECKS.md
(B16 Zs,max = 230 × 0.95 / 80 = 2.73 Ω, cold margin 80 %; RCD ≤ 300 ms at IΔn; insulation
≥ 1.0 MΩ); the rule is ILAC-G8:09/2019 §4.2.3 with guard band w = U."""

from __future__ import annotations

import pytest

from commission.checks.evaluate import evaluate
from commission.register.store import Entry, Instrument

from .helpers import checklist

ZS_ACC = ("≤ 20 Ω: ±(2 % + 3 digits)", "bound")
RCD_ACC = ("time: ±(1 % + 3 digits)", "k2")
INS_ACC = ("≤ 1000 MΩ: ±(5 % + 3 digits)", "k2")


def _run(items, answers, accuracy, target):
    inst = {1: Instrument(1, "T-1", "Keelson", "MT-5", "2099-01-01", "", *accuracy)} \
        if accuracy else {1: Instrument(1, "T-1", "Keelson", "MT-5", "2099-01-01", "")}
    entries = []
    for n, (item_id, value, raw, unit, measured) in enumerate(answers, start=1):
        entries.append(Entry(n, f"e{n}", item_id, "answer", raw, value, unit,
                             1 if measured else None, "2026-12-01T10:00:00Z", "t", None))
    return next(r for r in evaluate(checklist(items), entries, inst) if r.item.id == target)


ZS_ITEMS = [
    {"id": "b.curve", "kind": "choice", "prompt": "c", "options": ["B", "C", "D"]},
    {"id": "b.rating", "kind": "reading", "prompt": "r", "quantity": "current", "unit": "A"},
    {"id": "zs", "kind": "reading", "prompt": "Zs", "quantity": "resistance", "unit": "Ω",
     "critical": True,
     "check": {"name": "loop_impedance", "inputs": {"curve": "b.curve", "rating": "b.rating"}}},
]


def _zs(typed: str, accuracy=ZS_ACC, **params):
    items = [dict(i) for i in ZS_ITEMS]
    if params:
        items[2] = {**items[2], "check": {**items[2]["check"], "params": params}}
    return _run(items, [("b.curve", "B", "B", None, False), ("b.rating", 16.0, "16", "A", False),
                        ("zs", float(typed), typed, "Ω", True)], accuracy, "zs")


@pytest.mark.parametrize("typed,want", [("1.50", "pass"), ("2.17", "review"),
                                        ("2.60", "review"), ("2.90", "fail")])
def test_zs_with_a_stated_accuracy(typed, want):
    """±(2 % + 3 digits) bound at 2.17 Ω: U = 2(0.0434 + 0.03)/√3 = 0.085 Ω straddles the
    2.185 Ω cold margin → review; 1.50 Ω well inside → pass; 2.90 − U > 2.73 → fail."""
    r = _zs(typed)
    assert r.verdict == want, r.reason
    assert "±" in r.reason and "k = 2" in r.reason
    assert "ILAC-G8" in r.source


def test_zs_interval_is_shown_with_its_value():
    r = _zs("2.17")
    assert "2.17 ± 0.085 Ω" in r.reason  # 2 × 0.0734/√3


def test_zs_without_a_stated_accuracy_is_judged_as_before_and_says_so():
    r = _zs("2.17", accuracy=None)
    assert r.verdict == "pass"
    assert "no uncertainty applied" in r.reason
    assert "ILAC-G8" not in r.source


def test_zs_simple_acceptance_where_the_checklist_says_so():
    r = _zs("2.17", decision_rule="simple")
    assert r.verdict == "pass" and "simple acceptance" in r.reason


RCD_ITEMS = [
    {"id": "t1", "kind": "reading", "prompt": "t", "quantity": "time", "unit": "ms",
     "critical": True, "check": {"name": "rcd_trip_time", "inputs": {"multiple": 1}}},
]


@pytest.mark.parametrize("typed,want", [("250.0", "pass"), ("298.0", "review"),
                                        ("301.0", "review"), ("310.0", "fail")])
def test_rcd_time_with_a_stated_accuracy(typed, want):
    """±(1 % + 3 digits) at k = 2 on 298.0 ms: U = 2.98 + 0.3 = 3.28 ms, within 300 ms →
    review; 250.0 → pass; 310.0 − 3.4 > 300 → fail."""
    r = _run(RCD_ITEMS, [("t1", float(typed) / 1000, typed, "ms", True)], RCD_ACC, "t1")
    assert r.verdict == want, r.reason


INS_ITEMS = [
    {"id": "ir", "kind": "reading", "prompt": "ir", "quantity": "resistance", "unit": "MΩ",
     "critical": True, "check": {"name": "insulation_resistance"}},
]


@pytest.mark.parametrize("typed,want", [("180", "pass"), ("1.04", "review"), ("0.97", "review"),
                                        ("0.80", "fail")])
def test_insulation_with_a_stated_accuracy(typed, want):
    """±(5 % + 3 digits) at k = 2 on 1.04 MΩ: U = 0.052 + 0.03 = 0.082 MΩ straddles 1.0 MΩ
    → review; 180 MΩ → pass; 0.80 + 0.07 < 1.0 → fail."""
    r = _run(INS_ITEMS, [("ir", float(typed) * 1e6, typed, "MΩ", True)], INS_ACC, "ir")
    assert r.verdict == want, r.reason


def test_accuracy_for_another_quantity_applies_no_uncertainty():
    """A time-only accuracy does not cover a resistance reading."""
    r = _run(INS_ITEMS, [("ir", 1.04e6, "1.04", "MΩ", True)], RCD_ACC, "ir")
    assert r.verdict == "pass" and "no uncertainty applied" in r.reason
