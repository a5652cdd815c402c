"""Jobs for the report and walk benchmarks: the shipped checklist padded with readings.

A job of N items is the shipped ``diverter-1ph`` checklist (its capture, heating and soak
items give the record its four charts) with extra sections of voltage readings, each judged
by the ``supply_voltage`` check, until the checklist holds N items. The shipped items are
answered from the bundled demo's answers file (its files and photos by absolute path); the
extra readings are answered through the same parser and register calls as the walk.
"""

from __future__ import annotations

import os
from dataclasses import dataclass
from pathlib import Path

SHIPPED = "diverter-1ph"
PER_SECTION = 20
PASSPHRASE = "bench-passphrase-not-secret"


@dataclass
class BenchJob:
    register: Path
    short_id: str
    items: int
    shipped_items: int
    extra_ids: list[str]


def padded_checklist(total_items: int) -> tuple[str, int, list[str]]:
    """YAML text of the shipped checklist with readings appended up to ``total_items``."""
    from commission.checklist import parse
    from commission.checks import CHECKS
    from commission.resources import resolve

    text = resolve("checklists", SHIPPED).read_text(encoding="utf-8")
    shipped = len(parse(text, SHIPPED, checks=CHECKS).checklist.items())
    extra = total_items - shipped
    if extra < 0:
        raise ValueError(f"the shipped checklist alone has {shipped} items")
    lines: list[str] = []
    ids: list[str] = []
    for s in range((extra + PER_SECTION - 1) // PER_SECTION):
        lines += [f"  - id: extra{s}", f"    title: Further voltage readings, part {s + 1}",
                  "    items:"]
        for k in range(min(PER_SECTION, extra - s * PER_SECTION)):
            item_id = f"extra{s}.socket_{k}"
            ids.append(item_id)
            lines += [f"      - id: {item_id}", "        kind: reading",
                      "        quantity: voltage", "        unit: V",
                      "        check: {name: supply_voltage}",
                      f"        prompt: Voltage at socket {k + 1} of circuit {s + 1}, element "
                      "running at full output"]
    padded = text.rstrip("\n") + "\n\n" + "\n".join(lines) + "\n"
    got = len(parse(padded, "padded", checks=CHECKS).checklist.items())
    if got != total_items:
        raise RuntimeError(f"padded checklist has {got} items, wanted {total_items}")
    return padded, shipped, ids


def demo_answers(dest: Path) -> Path:
    """The demo's answers with file and photo paths made absolute, written to ``dest``."""
    import yaml

    from commission.resources import demo_dir
    from commission.walk.answers import read_answers

    base = demo_dir()
    answers = read_answers(base / "answers.yaml")
    for key, spec in answers.items():
        if isinstance(spec, dict):
            for form in ("file", "photo"):
                if form in spec:
                    spec[form] = str((base / spec[form]).resolve())
        answers[key] = spec
    dest.write_text(yaml.safe_dump(answers, allow_unicode=True, sort_keys=False),
                    encoding="utf-8")
    return dest


def extra_answer(k: int, round_: int = 0) -> str:
    """Text typed for the k-th extra reading: 221 to 239 V, different in each round."""
    return f"{221 + (k * 7 + round_ * 5) % 19} V"


def make_job(folder: Path, total_items: int, *, answer_extra: bool = True) -> BenchJob:
    """A register in ``folder`` holding one job of ``total_items`` items, answered."""
    import yaml

    from commission.checklist import parse
    from commission.checks import CHECKS
    from commission.register import Register
    from commission.resources import demo_dir
    from commission.walk.answers import apply_answers
    from commission.walk.state import JobState
    from commission.walk.values import parse_answer

    folder.mkdir(parents=True, exist_ok=True)
    text, shipped, extra_ids = padded_checklist(total_items)
    loaded = parse(text, f"{SHIPPED}+{total_items - shipped}", checks=CHECKS)
    from commission.cli.demo import _due

    scenario = yaml.safe_load((demo_dir() / "scenario.yaml").read_text(encoding="utf-8"))
    answers = demo_answers(folder / "answers.yaml")
    path = folder / f"register-{total_items}.sqlite3"
    with Register(path) as reg:
        for inst in scenario["instruments"]:
            reg.add_instrument(inst["serial"], inst["make"], inst["model"],
                               _due(inst["calibration_due"]))
        job = reg.create_job(loaded, scenario["job"], by="bench")
        state = JobState(reg, job)
        report = apply_answers(state, answers)
        if report.rejected:
            raise RuntimeError(f"demo answers rejected: {report.rejected[:3]}")
        if answer_extra:
            for k, item_id in enumerate(extra_ids):
                item = state.checklist.item(item_id)
                raw = extra_answer(k)
                state.record(item, raw, parse_answer(item, raw))
        state.files.close()
    return BenchJob(path, job.short_id, total_items, shipped, extra_ids)


def use_home(folder: Path) -> str | None:
    """Point COMMISSION_HOME of this process at ``folder``; returns the old value."""
    old = os.environ.get("COMMISSION_HOME")
    os.environ["COMMISSION_HOME"] = str(folder)
    return old


def restore_home(old: str | None) -> None:
    if old is None:
        os.environ.pop("COMMISSION_HOME", None)
    else:
        os.environ["COMMISSION_HOME"] = old
