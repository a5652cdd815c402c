"""Answers files for periodic revisits of the demo's record, built from the demo's own
answers (the same site), with chosen readings changed."""

from __future__ import annotations

import json
from pathlib import Path

import yaml

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "src" / "commission" / "demo"
PERIODIC = ROOT / "checklists" / "diverter-1ph-periodic.yaml"

VISIT = {
    "visit.reason": "periodic inspection",
    "condition.damage": "yes",
    "condition.heat_marks": "yes",
    "condition.dust": "yes",
    "condition.labels": "yes",
    "condition.settings": "yes",
    "done.actions": "Tested; nothing replaced",
    "done.notes": "none",
}


def soak_scaled(folder: Path, ambient_c: float, factor: float) -> Path:
    """The demo's heatsink soak log with its rise over ambient multiplied by ``factor``."""
    lines = (DEMO / "files" / "heatsink-soak.csv").read_text(encoding="utf-8").splitlines()
    out = [lines[0]]
    for line in lines[1:]:
        t, temp = line.split(",")
        out.append(f"{t},{ambient_c + (float(temp) - ambient_c) * factor:.3f}")
    path = folder / "heatsink-soak-now.csv"
    path.write_text("\n".join(out) + "\n", encoding="utf-8")
    return path


def periodic_answers(folder: Path, changes: dict[str, object] | None = None) -> Path:
    """An answers file for the periodic checklist: the demo's answers to the items it
    repeats (carried items left as carried), instruments left out, files by absolute path,
    then ``changes`` (item -> typed text or {file: path})."""
    from commission.checklist import load
    from commission.checks import CHECKS

    checklist = load(PERIODIC, checks=CHECKS).checklist
    ids = {i.id for _, i in checklist.items()}
    carried = set(checklist.carried_ids())
    demo = yaml.safe_load((DEMO / "answers.yaml").read_text(encoding="utf-8"))
    answers: dict[str, object] = {}
    for item_id, given in demo.items():
        if item_id not in ids or item_id in carried:
            continue
        if isinstance(given, bool):  # YAML read "yes" as true: type it back as a word
            given = "yes" if given else "no"
        elif isinstance(given, dict) and "text" in given:
            given = given["text"]
        elif isinstance(given, dict):
            given = {k: str(DEMO / v) if k in ("file", "photo") else v
                     for k, v in given.items()}
        answers[item_id] = given
    answers.update(VISIT)
    answers.update(changes or {})
    path = folder / "periodic-answers.yaml"
    path.write_text(json.dumps(answers, ensure_ascii=False, indent=1), encoding="utf-8")
    return path
