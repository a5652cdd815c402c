"""What every register engine offers: jobs, entries, instruments, files, locks and its own
migrations.

Two engines implement it: ``store.Register`` (SQLite, one file, the default and an
installer's working copy) and ``postgres.PostgresRegister`` (a company's shared register).
Nothing outside ``register/`` writes SQL; everything else (the walk, the report, verify,
import, sync) talks to this protocol, so the same code and the same tests run on both.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Iterator
from contextlib import AbstractContextManager
from pathlib import Path
from typing import Any, Protocol, runtime_checkable

from .store import Entry, Instrument, Job


@runtime_checkable
class RegisterEngine(Protocol):
    """A register engine. ``location`` names it for people (a file path, or a URL without
    its password); ``read_only`` says this user may read but not write."""

    location: str
    read_only: bool

    # -- opening, closing, migrations -----------------------------------------
    def open(self) -> None:
        """Connect and bring the schema up to date (a newer schema is refused)."""

    def close(self) -> None: ...

    def __enter__(self) -> RegisterEngine: ...

    def __exit__(self, *exc: object) -> None: ...

    def schema_version(self) -> int:
        """The schema version this register is at (after open: the current one)."""

    def batch(self) -> AbstractContextManager[None]:
        """One transaction around many writes: all of them are kept, or none."""

    def device_id(self) -> str:
        """This register's random device id, made on first use."""

    # -- jobs ---------------------------------------------------------------------
    def create_job(self, checklist: Any, details: dict[str, str],
                   by: str | None = None, baseline: dict[str, Any] | None = None) -> Job:
        """A new job; ``baseline`` makes it a revisit compared with that baseline."""

    def insert_job(self, *, short_id: str, uuid: str, created_at: str, created_by: str,
                   details: dict[str, str], checklist: Any, imported: str = "",
                   recorded: dict[str, Any] | None = None,
                   baseline: dict[str, Any] | None = None,
                   record_sha256: str = "") -> Job: ...

    def job(self, job_id: int) -> Job: ...

    def find_job(self, ref: str) -> Job:
        """A job by short id, UUID or an unambiguous UUID prefix (UserError if none)."""

    def has_job(self, *, uuid: str | None = None, short_id: str | None = None) -> bool: ...

    def jobs(self) -> list[Job]: ...

    def amend(self, job: Job, changes: dict[str, str], by: str | None = None) -> list[Entry]:
        ...

    # -- entries (append-only) ------------------------------------------------------
    def add_entry(self, job: Job, item_id: str, action: str, raw: str, value: Any = None,
                  unit_typed: str | None = None, instrument_id: int | None = None,
                  by: str | None = None, at: str | None = None, uuid: str | None = None,
                  host: str | None = None,
                  read_with: dict[str, Any] | None = None,
                  carried: str | None = None) -> Entry:
        """Append one entry and commit it (unless inside ``batch``) before returning."""

    def entries(self, job: Job) -> list[Entry]:
        """Every entry of a job in the order that makes the last one of an item current:
        by (entry time, UUID)."""

    def has_entry(self, uuid: str) -> bool: ...

    # -- instruments ------------------------------------------------------------------
    def add_instrument(self, serial: str, make: str, model: str, calibration_due: str,
                       accuracy: str = "", accuracy_read_as: str = "") -> Instrument: ...

    def instrument(self, instrument_id: int) -> Instrument: ...

    def instruments(self) -> list[Instrument]: ...

    def instrument_by_serial(self, serial: str) -> Instrument: ...

    def instrument_in_use(self, job: Job) -> Instrument | None: ...

    def set_instrument_in_use(self, job: Job, instrument: Instrument | None) -> None: ...

    def set_export_profile(self, serial: str, profile: dict[str, Any]) -> Instrument: ...

    def export_profile_json(self, instrument_id: int) -> dict[str, Any] | None: ...

    def export_profile(self, serial: str) -> Any: ...

    # -- files (by SHA-256, in chunks, streamed) ----------------------------------------
    def put_file(self, path: Path) -> tuple[str, int]: ...

    def read_blob(self, sha256: str) -> Iterator[bytes]: ...

    def has_blob(self, sha256: str) -> bool: ...

    # -- locks and copies -------------------------------------------------------------
    def walk_lock(self, job: Job, take_over: bool = False) -> AbstractContextManager[Any]:
        """Hold the job for one walk; a second walk is refused, naming the holder and since
        when. ``take_over`` confirms taking over a lease that expired (PostgreSQL)."""

    def backup(self, dest: Path) -> None: ...


    def list_jobs(self, *, status: str | None = None, installer: str | None = None,
                  due: str | None = None, page: int = 1, size: int = 100
                  ) -> tuple[list[tuple[Job, str | None, bool]], int]:
        """One page of jobs (oldest first) with the cached status and whether it is
        current (see ``status_cache``); filters run in the database. ``due``: a next
        inspection on or before this ISO date. ``size`` 0: every job."""

    def remember_status(self, job: Job, last_entry: str, status: str) -> None:
        """Cache a derived status under its key (never read by show, report, verify)."""

    # -- sync (register/sync.py): portable rows, a union by UUID ---------------------
    def who(self) -> str:
        """The author of what is written now: a person's identity, never the OS user."""

    def setting(self, key: str) -> str | None: ...

    def entry_index(self, job: Job) -> dict[str, str]:
        """{entry UUID: item id} of a job's entries."""

    def entry_rows(self, job: Job, uuids: list[str]) -> list[tuple]:
        """Entries as portable rows (``sync.ENTRY_FIELDS``)."""

    def insert_entries(self, job: Job, rows: list[tuple]) -> int:
        """Add portable rows, skipping UUIDs already here; one transaction."""

    def insert_entry_batches(self, job: Job, batches: Iterable[list[tuple]],
                             before: Callable[[list[tuple]], None] | None = None
                             ) -> Iterator[int]:
        """``insert_entries`` for each batch in turn, yielding each count once committed;
        ``before(rows)`` runs first, outside any transaction. An engine may read the next
        batch while the last is being written."""

    def job_row(self, job: Job) -> dict[str, Any]: ...

    def put_stream(self, chunks: Iterator[bytes]) -> tuple[str, int]: ...

    def conflicts(self, job: Job | None = None) -> list[dict[str, str]]:
        """Items changed on two devices while apart, confirmed or not."""

    def add_conflicts(self, rows: list[dict[str, str]]) -> None:
        """A union of flags; a confirmation on either side is kept."""
