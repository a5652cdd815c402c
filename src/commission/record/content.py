"""Verify what a record says, after its signatures have been checked.

In this order, stopping at the first failure (every failure is one line naming the
field or item):

1. read the bytes strictly (no duplicate keys, NaN, infinities, deep nesting, size) and
   parse them against the schema (unknown fields, types, bounds, control characters);
2. hash the embedded checklist text against its declared SHA-256, read it with YAML
   aliases bounded, and say which checklist judged: a released one, the one the
   reviewer named, or a custom one with its differences from the shipped checklist;
3. check every entry against that checklist: known item ids, values of the item's kind,
   and the raw text re-parsed to the stored value (raw text is the truth);
4. check each attached file against its SHA-256;
5. re-evaluate every verdict and the job status with this release's checks and compare:
   under the record's own check-logic version any difference is a forgery; under
   another version it is listed as "judged differently by this version".

Nothing here prints; the commands render :class:`ContentResult`.
"""

from __future__ import annotations

import hashlib
import math
import shutil
import tempfile
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from ..errors import UserError
from .build import ATTACH_LIMIT, RECORD_NAME, verdict_snapshot
from .schema import AnyRecord, FileValue, parse
from .strictjson import RecordError, loads
from .text import safe


def _detail_items() -> set[str]:
    from ..register.store import DETAIL_FIELDS

    return {f"job.{k}" for k in DETAIL_FIELDS}


class ContentFailure(Exception):
    """The record's content does not verify (one line)."""


@dataclass
class ChecklistVerdict:
    kind: str = ""  # released | named | custom
    id: str = ""
    version: str = ""
    sha256: str = ""
    released_as: str | None = None  # the released version with this text
    differences: list[str] = field(default_factory=list)

    def as_json(self) -> dict[str, Any]:
        return dict(self.__dict__)


@dataclass
class ContentResult:
    ok: bool = False
    problem: str | None = None
    problems: list[str] = field(default_factory=list)
    notices: list[str] = field(default_factory=list)
    record: AnyRecord | None = None
    data: dict[str, Any] | None = None
    job_status: str | None = None
    status_now: str | None = None
    checklist: ChecklistVerdict = field(default_factory=ChecklistVerdict)
    mismatches: list[dict[str, Any]] = field(default_factory=list)
    judged_differently: list[dict[str, Any]] = field(default_factory=list)
    not_reevaluable: list[str] = field(default_factory=list)
    check_logic: tuple[int | None, int] = (None, 0)
    program_version: str | None = None
    unverified_import: bool = False
    record_sha256: str | None = None  # of the record's bytes as embedded (set by verify)
    results: list[Any] | None = None  # the re-evaluated results (for the page checks)
    # where the first failure was found: read (bytes, schema), checklist, entries, files,
    # verdicts; a record that fails at read or entries cannot even be imported unverified
    failed_at: str | None = None
    _stage: str = "read"

    def fail(self, message: str) -> ContentResult:
        self.ok = False
        line = " ".join(safe(message).split())
        self.problems.append(line)
        if self.problem is None:
            self.problem = line
            self.failed_at = self._stage
        return self

    def as_json(self) -> dict[str, Any]:
        out = {k: v for k, v in self.__dict__.items()
               if k not in ("record", "data", "_stage", "results")}
        out["checklist"] = self.checklist.as_json()
        out["check_logic"] = {"recorded": self.check_logic[0], "now": self.check_logic[1]}
        return out


class FilesFromPdf:
    """The file store the evaluator needs, backed by the PDF's attachments (written to a
    private folder under names that are their SHA-256, never the attachment's name)."""

    def __init__(self, attachments: dict[str, bytes]):
        self.memo: dict = {}
        self._dir: Path | None = None
        self._attachments = attachments
        self._paths: dict[str, Path | None] = {}

    def path(self, sha256: str) -> Path | None:
        if sha256 not in self._paths:
            data = self._attachments.get(sha256)
            if data is None or hashlib.sha256(data).hexdigest() != sha256:
                self._paths[sha256] = None
            else:
                if self._dir is None:
                    self._dir = Path(tempfile.mkdtemp(prefix="commission-verify-"))
                target = self._dir / sha256
                target.write_bytes(data)
                self._paths[sha256] = target
        return self._paths[sha256]

    def close(self) -> None:
        if self._dir is not None:
            shutil.rmtree(self._dir, ignore_errors=True)


def read_record(payload: bytes) -> tuple[AnyRecord, dict[str, Any]]:
    """Strict read and schema parse; RecordError (one line naming the field)."""
    data = loads(payload)
    return parse(data), data


def verify_content(record_bytes: bytes, attachments: dict[str, bytes],
                   checklist_override=None, strict: bool = False) -> ContentResult:
    """Verify a record's content (see the module text). ``checklist_override`` is a
    commission.checklist.Loaded the reviewer named: the record must use exactly it."""
    from ..checks.registry import CHECK_LOGIC_VERSION

    result = ContentResult(check_logic=(None, CHECK_LOGIC_VERSION))
    try:
        record, data = read_record(record_bytes)
    except RecordError as exc:
        return result.fail(exc.message)
    result.record, result.data = record, data
    result.job_status = record.status
    result.program_version = record.tool.version
    result.check_logic = (record.check_logic, CHECK_LOGIC_VERSION)
    result.unverified_import = record.job.unverified
    try:
        result._stage = "checklist"
        loaded = _checklist(record, result, checklist_override)
        result._stage = "entries"
        _entries_agree(record, loaded.checklist)
        result._stage = "files"
        files = _files(record, attachments)
        result._stage = "verdicts"
        _reevaluate(record, loaded.checklist, files, result)
    except ContentFailure as exc:
        return result.fail(str(exc))
    if record.job.unverified:
        result.notices.append("made from a job imported WITHOUT verification (--unverified)")
    if result.mismatches:
        m = result.mismatches[0]
        return result.fail(
            f"{len(result.mismatches)} verdict(s) differ from the readings under the same "
            f"check-logic version {CHECK_LOGIC_VERSION}, first {m['id']}: recorded "
            f"{m['recorded']}, recomputed {m['now']}")
    for d in result.judged_differently:
        result.notices.append(
            f"judged differently by this version: {d['id']}: recorded {d['recorded']} "
            f"(check logic {d['recorded_version']}), now {d['now']} (check logic "
            f"{d['now_version']})")
    if strict and result.judged_differently:
        d = result.judged_differently[0]
        return result.fail(f"{len(result.judged_differently)} verdict(s) judged differently "
                           f"by this version (--strict), first {d['id']}: recorded "
                           f"{d['recorded']}, now {d['now']}")
    result.ok = True
    return result


# -- 2. the checklist ---------------------------------------------------------------

def _checklist(record: AnyRecord, result: ContentResult, override):
    from ..checklist import ChecklistError
    from ..checklist import parse as parse_checklist
    from ..checks import CHECKS
    from .released import differences, is_released_version, released_version, shipped_checklist

    ref = record.checklist
    verdict = result.checklist
    verdict.id, verdict.version, verdict.sha256 = ref.id, ref.version, ref.sha256
    actual = hashlib.sha256(ref.text.encode("utf-8")).hexdigest()
    if actual != ref.sha256:
        raise ContentFailure(f"checklist: the embedded text hashes to {actual[:16]}…, not the "
                             f"declared SHA-256 {ref.sha256[:16]}…")
    try:
        loaded = parse_checklist(ref.text, "embedded checklist", checks=CHECKS)
    except ChecklistError as exc:
        first = exc.problems[0] if exc.problems else str(exc)
        raise ContentFailure(f"checklist: the embedded checklist cannot be read: {first}") \
            from None
    except RecursionError:
        raise ContentFailure("checklist: the embedded checklist is nested too deeply") from None
    c = loaded.checklist
    if (c.id, c.version) != (ref.id, ref.version):
        raise ContentFailure(f"checklist: the text is {c.id} {c.version} but the record "
                             f"declares {ref.id} {ref.version}")
    verdict.released_as = released_version(ref.id, ref.sha256)
    if override is not None:
        if override.sha256 != ref.sha256:
            raise ContentFailure(
                f"checklist: the record was judged with {ref.id} {ref.version} "
                f"(sha256 {ref.sha256[:16]}…), not the named {safe(override.name)} "
                f"(sha256 {override.sha256[:16]}…)")
        verdict.kind = "named"
    elif verdict.released_as == ref.version:
        verdict.kind = "released"
    elif is_released_version(ref.id, ref.version):
        raise ContentFailure(
            f"checklist: {ref.id} {ref.version} claims a released version but its text "
            f"differs from the released {ref.version} (sha256 {ref.sha256[:16]}…); a "
            "changed checklist needs its own id or version")
    else:
        verdict.kind = "custom"
        shipped = shipped_checklist(ref.id)
        if shipped is None:
            verdict.differences = [f"no shipped checklist has the id {ref.id}"]
        else:
            verdict.differences = differences(shipped.checklist, c)
        result.notices.append(f"custom checklist {ref.id} {ref.version}: "
                              f"{len(verdict.differences)} difference(s) from the shipped "
                              f"{ref.id}")
    return loaded


# -- 3. entries against the checklist -------------------------------------------------

def _entries_agree(record: AnyRecord, checklist) -> None:
    from ..walk.values import BadAnswer, parse_answer

    items = {i.id: i for _, i in checklist.items()}
    seen: set[str] = set()
    file_items = {sha: set(m.items) for sha, m in ((m.sha256, m) for m in record.files)}
    for n, e in enumerate(record.entries):
        where = f"entries[{n}] ({e.item})"
        if e.uuid in seen:
            raise ContentFailure(f"{where}: repeats the entry id {e.uuid}")
        seen.add(e.uuid)
        if e.action == "detail":
            if e.item not in _detail_items():
                raise ContentFailure(f"{where}: unknown job detail (accepted: "
                                     f"{', '.join(sorted(_detail_items()))})")
            if not isinstance(e.value, str) or e.value != e.raw:
                raise ContentFailure(f"{where}: a detail's value must be its text")
            continue
        item = items.get(e.item)
        if item is None:
            raise ContentFailure(f"{where}: unknown item id (not in the embedded checklist "
                                 f"{checklist.id} {checklist.version})")
        if e.action in ("skip", "na"):
            if e.value is not None:
                raise ContentFailure(f"{where}: a {e.action} carries no value")
            if not e.raw.strip():
                raise ContentFailure(f"{where}: a {e.action} needs its reason")
            continue
        # readings are taken with an instrument, and so are files read through that
        # instrument's export profile
        if e.instrument is not None and item.kind not in ("reading", "file"):
            raise ContentFailure(f"{where}: an instrument on a {item.kind} item")
        _value_of_kind(where, item, e.value)
        if item.kind in ("file", "photo"):
            value = FileValue.model_validate(e.value)
            if e.item not in file_items.get(value.sha256, set()):
                raise ContentFailure(f"{where}: its file {value.sha256[:16]}… is not listed "
                                     "in the record's files for this item")
            if record.format != "commission-record/1" and e.raw != value.name:
                raise ContentFailure(f"{where}: raw text {safe(e.raw)!r} is not the file's "
                                     f"name {safe(value.name)!r}")
            continue
        try:
            answer = parse_answer(item, e.raw)
        except BadAnswer as exc:
            raise ContentFailure(f"{where}: raw text {safe(e.raw)!r} is not an answer this "
                                 f"checklist accepts ({exc})") from None
        if not _same(answer.value, e.value) or (item.kind == "reading"
                                                and answer.unit_typed != e.unit_typed):
            raise ContentFailure(f"{where}: raw text {safe(e.raw)!r} reads as "
                                 f"{_shown(answer.value, answer.unit_typed)}, but the record "
                                 f"stores {_shown(e.value, e.unit_typed)}")
    for meta in record.files:
        for item_id in meta.items:
            item = items.get(item_id)
            if item is None or item.kind not in ("file", "photo"):
                raise ContentFailure(f"files ({meta.sha256[:16]}…): names {item_id}, which is "
                                     "not a file or photo item of the embedded checklist")
    from ..accuracy import parse_accuracy

    for n, inst in enumerate(record.instruments):
        if inst.accuracy is not None:
            try:
                parse_accuracy(inst.accuracy.text, inst.accuracy.read_as)
            except ValueError as exc:
                raise ContentFailure(f"instruments[{n}].accuracy: {exc}") from None
    ids = [v.id for v in record.verdicts]
    for v_id in ids:
        if v_id not in items:
            raise ContentFailure(f"verdicts ({v_id}): unknown item id")
    if len(set(ids)) != len(ids):
        raise ContentFailure("verdicts: an item has two verdicts")


def _finite(value: Any) -> bool:
    return isinstance(value, int | float) and not isinstance(value, bool) \
        and math.isfinite(value)


def _reading_value(value: Any) -> bool:
    """A reading is a number, or a bound as the instrument showed it: over its range
    (``{"over": x}``, a lower bound) or an open circuit (``{"open": true}``)."""
    if isinstance(value, dict):
        return value == {"open": True} or (set(value) == {"over"} and _finite(value["over"]))
    return _finite(value)


def _value_of_kind(where: str, item, value: Any) -> None:
    kind = item.kind
    ok = {
        "confirm": isinstance(value, bool),
        "reading": _reading_value(value),
        "choice": isinstance(value, str) and value in (item.options or []),
        "text": isinstance(value, str),
        "file": isinstance(value, dict),
        "photo": isinstance(value, dict),
    }[kind]
    if not ok:
        wanted = {"confirm": "true or false",
                  "reading": "a finite number, {over: number} or {open: true}",
                  "choice": f"one of {', '.join(item.options or [])}", "text": "text",
                  "file": "a file (sha256, name, bytes)",
                  "photo": "a photo (sha256, name, bytes)"}[kind]
        raise ContentFailure(f"{where}: value {_shown(value, None)} is not a {kind} answer "
                             f"(accepted: {wanted})")
    if kind in ("file", "photo"):
        from pydantic import ValidationError

        try:
            FileValue.model_validate(value)
        except ValidationError as exc:
            err = exc.errors()[0]
            raise ContentFailure(f"{where}: value.{'.'.join(map(str, err['loc']))}: "
                                 f"{err['msg']}") from None


def _same(a: Any, b: Any) -> bool:
    if isinstance(a, bool) or isinstance(b, bool):
        return a is b
    if isinstance(a, int | float) and isinstance(b, int | float):
        return math.isclose(a, b, rel_tol=1e-12, abs_tol=0.0)
    return a == b


def _shown(value: Any, unit: str | None) -> str:
    text = repr(value)
    text = text if len(text) <= 40 else text[:37] + "…"
    return safe(f"{text} ({unit})" if unit else text)


# -- 4. attached files ----------------------------------------------------------------

def _files(record: AnyRecord, attachments: dict[str, bytes]) -> FilesFromPdf:
    declared = {m.sha256: m for m in record.files}
    for name, blob in attachments.items():
        if name == RECORD_NAME:
            continue
        if name not in declared:
            raise ContentFailure(f"attachment {safe(name)[:40]!r} is not a file of the record")
        if len(blob) > ATTACH_LIMIT:
            raise ContentFailure(f"attachment {name[:16]}… is {len(blob)} bytes (files over "
                                 f"{ATTACH_LIMIT} bytes travel by hash only)")
        if hashlib.sha256(blob).hexdigest() != name:
            raise ContentFailure(f"attachment {name[:16]}… ({safe(declared[name].name)}) does "
                                 "not match its SHA-256: altered")
        if len(blob) != declared[name].bytes:
            raise ContentFailure(f"files ({name[:16]}…): declared {declared[name].bytes} "
                                 f"bytes, attached {len(blob)}")
    for sha, meta in declared.items():
        if meta.attached and sha not in attachments:
            raise ContentFailure(f"attachment {sha[:16]}… ({safe(meta.name)}) is declared "
                                 "attached but missing: removed")
        if meta.attached and meta.bytes > ATTACH_LIMIT:
            raise ContentFailure(f"files ({sha[:16]}…): declared attached but over the "
                                 f"{ATTACH_LIMIT}-byte attachment limit")
    return FilesFromPdf(attachments)


# -- 5. re-evaluation -------------------------------------------------------------------

def entries_from_record(record: AnyRecord):
    """Entries and instruments as the evaluator needs them, rebuilt from a record."""
    from ..register.store import Entry, Instrument

    instruments: dict[int, Instrument] = {}
    by_serial: dict[str, int] = {}
    for n, inst in enumerate(record.instruments, start=1):
        acc = inst.accuracy
        instruments[n] = Instrument(n, inst.serial, inst.make, inst.model,
                                    inst.calibration_due, "", acc.text if acc else "",
                                    acc.read_as if acc else "")
        by_serial[inst.serial] = n
    entries = [Entry(n, e.uuid, e.item, e.action, e.raw, e.value, e.unit_typed,
                     by_serial.get(e.instrument or ""), e.at, "", None, "", e.read_with,
                     getattr(e, "carried", None))
               for n, e in enumerate(record.entries, start=1)]
    for n, e in enumerate(record.entries):
        if e.instrument is not None and e.instrument not in by_serial:
            raise ContentFailure(f"entries[{n}] ({e.item}): instrument {safe(e.instrument)!r} "
                                 "is not in the record's instruments")
    return entries, instruments


def _reevaluate(record: AnyRecord, checklist, files: FilesFromPdf,
                result: ContentResult) -> None:
    from ..checks.evaluate import evaluate, job_status

    entries, instruments = entries_from_record(record)
    try:
        baseline = getattr(record, "baseline", None)
        results = evaluate(checklist, entries, instruments, files,
                           baseline=baseline.model_dump(mode="json") if baseline else None)
    except (UserError, KeyError, TypeError, ValueError, ArithmeticError) as exc:
        raise ContentFailure(f"the record cannot be re-evaluated: {exc}") from None
    finally:
        files.close()
    result.results = results
    now = {v["id"]: v for v in verdict_snapshot(results)}
    # the verdicts as written (schema-checked already), compared key by key
    recorded = {v["id"]: v for v in (result.data or {}).get("verdicts", [])}
    missing = {m.sha256 for m in record.files if not m.attached}
    result.not_reevaluable = sorted({i for m in record.files if m.sha256 in missing
                                     for i in m.items})
    same_logic = record.check_logic == result.check_logic[1]
    for item_id in [i.id for _, i in checklist.items()]:
        a, b = recorded.get(item_id), now.get(item_id)
        if item_id in result.not_reevaluable:
            continue
        if a is None or b is None or any(a.get(k) != b.get(k)
                                         for k in ("verdict", "measured", "expected")):
            row = {"id": item_id, "recorded": a["verdict"] if a else None,
                   "now": b["verdict"] if b else None,
                   "reason_now": b["reason"] if b else None}
            if same_logic or a is None:
                result.mismatches.append(row)
            else:
                result.judged_differently.append(
                    {**row, "recorded_version": record.check_logic,
                     "now_version": result.check_logic[1]})
    result.status_now = job_status(results)
    if result.status_now != record.status:
        row = {"id": "(job status)", "recorded": record.status, "now": result.status_now,
               "reason_now": None}
        if same_logic:
            result.mismatches.append(row)
        else:
            result.judged_differently.append(
                {**row, "recorded_version": record.check_logic,
                 "now_version": result.check_logic[1]})
    if not result.mismatches:
        _snapshot_is_safe(record, checklist)


def _snapshot_is_safe(record: AnyRecord, checklist) -> None:
    """Whatever version judged it, a record never says ready while a critical item fails,
    is pending or under review, or was skipped."""
    if record.status != "ready":
        return
    verdicts = {v.id: v.verdict for v in record.verdicts}
    skipped = set()
    for e in record.entries:
        if e.action == "skip":
            skipped.add(e.item)
        elif e.action in ("answer", "na"):
            skipped.discard(e.item)
    for _, item in checklist.items():
        verdict = verdicts.get(item.id)
        if verdict == "pending" or verdict is None:
            raise ContentFailure(f"status: recorded ready while {item.id} has no verdict")
        if item.critical and (verdict in ("fail", "review") or item.id in skipped):
            raise ContentFailure(f"status: recorded ready while the critical item {item.id} "
                                 f"is {'skipped' if item.id in skipped else verdict}")
