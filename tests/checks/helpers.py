"""Evaluate one check on a two-section checklist built in memory."""

from __future__ import annotations

from itertools import count
from typing import Any

from commission.checklist.model import Checklist
from commission.checks.evaluate import evaluate
from commission.register.store import Entry

_ids = count(1)


def entry(item_id: str, value: Any, action: str = "answer", at: str = "2026-12-01T10:00:00Z",
          instrument_id: int | None = None) -> Entry:
    n = next(_ids)
    return Entry(n, f"e{n}", item_id, action, str(value), value, None, instrument_id, at, "t", None)


def checklist(items: list[dict]) -> Checklist:
    return Checklist.model_validate({
        "id": "t", "title": "t", "version": "1", "rules": {"name": "test"},
        "sections": [{"id": "s", "title": "S", "items": items}],
    })


def judge(check: str, value: Any, *, kind: str = "reading", quantity: str | None = None,
          unit: str | None = None, inputs: dict[str, Any] | None = None,
          params: dict[str, Any] | None = None, others: list[dict] | None = None,
          other_values: dict[str, Any] | None = None, options: list[str] | None = None):
    item: dict[str, Any] = {"id": "x.item", "kind": kind, "prompt": "p", "critical": True,
                            "check": {"name": check, "inputs": inputs or {},
                                      "params": params or {}}}
    if kind == "reading":
        item.update(quantity=quantity, unit=unit)
    if options:
        item["options"] = options
    c = checklist([*(others or []), item])
    entries = [entry(k, v) for k, v in (other_values or {}).items()]
    entries.append(entry("x.item", value))
    results = evaluate(c, entries)
    return next(r for r in results if r.item.id == "x.item")
