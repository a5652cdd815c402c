"""A job with its checklist and instruments: record answers, derive verdicts."""

from __future__ import annotations

from dataclasses import dataclass, field

from ..checklist import Loaded, parse
from ..checklist.model import Item
from ..checks.evaluate import Result, evaluate, job_status
from ..register.store import Entry, Instrument, Job, Register
from .values import Answer


@dataclass
class JobState:
    reg: Register
    job: Job
    loaded: Loaded = field(init=False)
    instruments: dict[int, Instrument] = field(init=False)
    entries: list[Entry] = field(init=False)

    def __post_init__(self) -> None:
        # The job keeps the checklist text it was made with: a changed file on disk
        # does not change an open job.
        self.loaded = parse(self.job.checklist_text, f"job {self.job.short_id} checklist")
        self.instruments = {i.id: i for i in self.reg.instruments()}
        self.entries = self.reg.entries(self.job)

    @property
    def checklist(self):
        return self.loaded.checklist

    def results(self) -> list[Result]:
        return evaluate(self.checklist, self.entries, self.instruments)

    def status(self, results: list[Result] | None = None) -> str:
        return job_status(results if results is not None else self.results())

    def current(self, item_id: str) -> Entry | None:
        found = None
        for e in self.entries:
            if e.item_id == item_id and e.action != "detail":
                found = e
        return found

    def _append(self, entry: Entry) -> Entry:
        self.entries.append(entry)
        return entry

    def record(self, item: Item, raw: str, answer: Answer,
               instrument: Instrument | None = None) -> Entry | None:
        """Commit an answer; None when it repeats the current one exactly."""
        raw = raw.strip()
        instrument_id = instrument.id if instrument and item.kind == "reading" else None
        value = answer.value
        if answer.path is not None:
            sha, size = self.reg.put_file(answer.path)
            value = {"sha256": sha, "name": answer.path.name, "bytes": size}
        now = self.current(item.id)
        if (now is not None and now.action == "answer" and now.raw == raw
                and now.value == value and now.instrument_id == instrument_id):
            return None
        return self._append(self.reg.add_entry(self.job, item.id, "answer", raw, value,
                                               answer.unit_typed, instrument_id))

    def mark(self, item: Item, action: str, reason: str) -> Entry | None:
        """Record a skip or an n/a with its reason; None if it repeats the current one."""
        now = self.current(item.id)
        if now is not None and now.action == action and now.raw == reason:
            return None
        return self._append(self.reg.add_entry(self.job, item.id, action, reason))
