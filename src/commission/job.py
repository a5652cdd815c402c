"""A job with its checklist, entries, instruments and files: record answers, derive verdicts.

The walk, the report and verify all use it; none of them owns it. It talks to the register
only through ``register.RegisterEngine``, so it works the same on every engine."""

from __future__ import annotations

import hashlib
import os
import shutil
import tempfile
import weakref
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING

from .checklist import Loaded, parse
from .checklist.model import Item
from .checks import CHECKS
from .checks.evaluate import Incremental, Result, job_status
from .register.protocol import RegisterEngine
from .register.store import Entry, Instrument, Job

if TYPE_CHECKING:
    from .walk.values import Answer

_PREFIX = "commission-files-"


def _sweep_stale_copies() -> None:
    """Remove copies left by a process that was killed (they may hold site photos)."""
    for folder in Path(tempfile.gettempdir()).glob(f"{_PREFIX}*-*"):
        pid_text = folder.name[len(_PREFIX):].split("-", 1)[0]
        if not pid_text.isdecimal() or int(pid_text) == os.getpid():
            continue
        try:
            os.kill(int(pid_text), 0)
        except ProcessLookupError:
            shutil.rmtree(folder, ignore_errors=True)
        except (PermissionError, OverflowError, OSError):
            continue  # alive under another user, or not ours to judge


class FileStore:
    """Recorded files as local paths for the checks: streamed out of the register once
    into a private cache folder, verified by SHA-256."""

    def __init__(self, reg: RegisterEngine):
        self.reg = reg
        self.memo: dict = {}
        self._paths: dict[str, Path | None] = {}
        self._dir: Path | None = None

    def path(self, sha256: str) -> Path | None:
        if sha256 in self._paths:
            return self._paths[sha256]
        found = None
        if self.reg.has_blob(sha256):
            if self._dir is None:
                _sweep_stale_copies()
                self._dir = Path(tempfile.mkdtemp(prefix=f"{_PREFIX}{os.getpid()}-"))
            target = self._dir / sha256
            digest = hashlib.sha256()
            with target.open("wb") as out:
                for chunk in self.reg.read_blob(sha256):
                    digest.update(chunk)
                    out.write(chunk)
            found = target if digest.hexdigest() == sha256 else None
        self._paths[sha256] = found
        return found

    def close(self) -> None:
        if self._dir is not None:
            shutil.rmtree(self._dir, ignore_errors=True)
            self._dir = None
        self._paths.clear()


@dataclass
class JobState:
    reg: RegisterEngine
    job: Job
    loaded: Loaded = field(init=False)
    instruments: dict[int, Instrument] = field(init=False)
    entries: list[Entry] = field(init=False)
    files: FileStore = field(init=False)
    _results: tuple[int, list[Result]] | None = field(default=None, init=False, repr=False)
    _incremental: Incremental = field(default_factory=Incremental, init=False, repr=False)

    def __post_init__(self) -> None:
        # The job keeps the checklist text it was made with: a changed file on disk
        # does not change an open job.
        self.loaded = parse(self.job.checklist_text, f"job {self.job.short_id} checklist",
                            checks=CHECKS)
        self.instruments = {i.id: i for i in self.reg.instruments()}
        self.entries = self.reg.entries(self.job)
        self.files = FileStore(self.reg)
        weakref.finalize(self, self.files.close)

    @property
    def checklist(self):
        return self.loaded.checklist

    def results(self) -> list[Result]:
        """Verdicts for the entries as they stand; recomputed only after a new entry
        (entries are append-only and every one goes through ``_append``)."""
        if self._results is None or self._results[0] != len(self.entries):
            self._results = (len(self.entries),
                             self._incremental.evaluate(
                                 self.checklist, self.entries, self.instruments, self.files,
                                 baseline=self.job.baseline or None))
        return self._results[1]

    def status(self, results: list[Result] | None = None) -> str:
        return job_status(results if results is not None else self.results())

    def remember_status(self) -> str:
        """Derive the status and leave it in the register's status cache for `jobs`."""
        from .status_cache import entry_key

        status = self.status()
        last = next((e for e in reversed(self.entries) if e.action != "detail"), None)
        self.reg.remember_status(self.job, entry_key(last.at, last.uuid) if last else "",
                                 status)
        return status

    def current(self, item_id: str) -> Entry | None:
        for e in reversed(self.entries):  # the last one in the job's order
            if e.item_id == item_id and e.action != "detail":
                return e
        return None

    def _append(self, entry: Entry) -> Entry:
        self.entries.append(entry)
        return entry

    def record(self, item: Item, raw: str, answer: Answer,
               instrument: Instrument | None = None,
               read_with: dict | None = None) -> Entry | None:
        """Commit an answer; None when it repeats the current one exactly.

        A file taken with an instrument is read with that instrument's export profile,
        which is stored with the entry (``read_with`` given here wins: the walk asks for
        one when a file cannot be read as it is)."""
        raw = raw.strip()
        profile = (self.reg.export_profile_json(instrument.id)
                   if instrument is not None and item.kind == "file" else None)
        # a file is stamped with the instrument only when it is read with its profile
        instrument_id = (instrument.id if instrument and (item.is_measured or profile)
                         else None)
        value = answer.value
        if answer.path is not None:
            sha, size = self.reg.put_file(answer.path)
            value = {"sha256": sha, "name": answer.path.name, "bytes": size}
        if item.kind == "file" and read_with is None:
            read_with = profile
        now = self.current(item.id)
        # a starting answer carried from the baseline is confirmed by a new entry of today
        if (now is not None and now.action == "answer" and now.raw == raw
                and not getattr(now, "carried", None)
                and now.value == value and now.instrument_id == instrument_id
                and now.read_with == (read_with or None)):
            return None
        return self._append(self.reg.add_entry(self.job, item.id, "answer", raw, value,
                                               answer.unit_typed, instrument_id,
                                               read_with=read_with or None))

    def mark(self, item: Item, action: str, reason: str) -> Entry | None:
        """Record a skip or an n/a with its reason; None if it repeats the current one."""
        now = self.current(item.id)
        if now is not None and now.action == action and now.raw == reason:
            return None
        return self._append(self.reg.add_entry(self.job, item.id, action, reason))
