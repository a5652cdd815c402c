"""Answers files: scripted, repeatable walks.

The file maps item id → the text a person would type. It is read with YAML's
base loader, so ``yes``, ``no``, ``012`` and ``1:30`` stay text. Special forms::

    some.item: {skip: REASON}
    some.item: {na: REASON}
    some.file: {file: captures/clamp.csv}     # relative to the answers file
    some.photo: {photo: photos/nameplate.jpg}
    some.reading: {text: "0.43 Ω", instrument: SERIAL}
    some.file: {file: logs/soak.csv, instrument: SERIAL}   # read with SERIAL's profile

Answers are applied in walk order through the same parser and checks as the
interactive walk. Repeating the current answer adds nothing; a different one
adds a correcting entry.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import yaml

from ..errors import UserError
from ..job import JobState
from ..register.store import RegisterError
from .values import BadAnswer, parse_answer

_FORMS = {"skip", "na", "file", "photo", "text"}


@dataclass
class AnswersReport:
    added: int = 0
    unchanged: int = 0
    rejected: list[tuple[str, str]] = field(default_factory=list)


def read_answers(path: Path) -> dict[str, object]:
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise UserError(f"{path}: no such answers file") from None
    except IsADirectoryError:
        raise UserError(f"{path}: is a folder, not an answers file") from None
    except UnicodeDecodeError:
        raise UserError(f"{path}: not UTF-8 text") from None
    except OSError as exc:
        raise UserError(f"{path}: cannot read ({exc.strerror})") from None
    try:
        data = yaml.load(text, Loader=yaml.BaseLoader)  # strings only, no object construction
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        line = f":{mark.line + 1}" if mark else ""
        problem = getattr(exc, "problem", None) or "not valid YAML"
        raise UserError(f"{path}{line}: {problem}") from None
    if data is None:
        return {}
    if not isinstance(data, dict):
        raise UserError(f"{path}: an answers file maps item ids to answers (item.id: answer)")
    return data


def apply_answers(state: JobState, path: Path, default_instrument: str | None = None,
                  ) -> AnswersReport:
    data = read_answers(path)
    base = path.parent
    report = AnswersReport()
    order = [item.id for _, item in state.checklist.items()]
    for key in data:
        if key not in order:
            report.rejected.append((str(key), "no such item in checklist "
                                    f"{state.checklist.id} {state.checklist.version}"))
    for item_id in order:
        if item_id not in data:
            continue
        item = state.checklist.item(item_id)
        spec = data[item_id]
        result = next(r for r in state.results() if r.item.id == item_id)
        if not result.applicable:
            report.rejected.append((item_id, f"{result.reason}; answer not used"))
            continue
        try:
            outcome = _apply_one(state, item, spec, base, default_instrument)
        except RegisterError:
            raise  # the register cannot take writes: stop at once, one line, nothing half
        except (BadAnswer, UserError) as exc:
            report.rejected.append((item_id, str(exc)))
            continue
        if outcome:
            report.added += 1
        else:
            report.unchanged += 1
    return report


def _apply_one(state: JobState, item, spec, base: Path, default_instrument: str | None) -> bool:
    instrument_serial = default_instrument
    if isinstance(spec, dict):
        keys = set(spec) - {"instrument"}
        if len(keys) != 1 or not keys <= _FORMS:
            raise BadAnswer("a mapping answer is one of {skip: REASON}, {na: REASON}, "
                            "{file: PATH}, {photo: PATH} or {text: ..., instrument: SERIAL}")
        form = keys.pop()
        text = spec[form]
        if not isinstance(text, str):
            raise BadAnswer(f"{form}: give text, not a list or mapping")
        if "instrument" in spec:
            instrument_serial = spec["instrument"]
        if form in ("skip", "na"):
            if not text.strip():
                raise BadAnswer(f"{form} needs a reason")
            if form == "na" and item.critical:
                raise BadAnswer("critical item: n/a only through its checklist condition; "
                                "answer it or skip it with a reason")
            return state.mark(item, form, text.strip()) is not None
        if form in ("file", "photo") and item.kind != form:
            raise BadAnswer(f"{{{form}: ...}} given for a {item.kind} item")
    elif isinstance(spec, str):
        text = spec
    else:
        raise BadAnswer("an answer is text (or one of the special forms)")
    instrument = None
    if instrument_serial and (item.is_measured or item.kind == "file"):
        instrument = state.reg.instrument_by_serial(instrument_serial)
    answer = parse_answer(item, text, base)
    return state.record(item, text, answer, instrument) is not None
