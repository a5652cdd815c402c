"""SQLite job register (standard library only; no ORM).

WAL journal with full sync, so a committed entry survives a power cut; every
entry is committed on its own before the walk asks the next question. The
register never stores a verdict: verdicts are derived from the entries.
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import os
import secrets
import sqlite3
import uuid as uuidlib
from collections.abc import Callable, Iterable, Iterator
from dataclasses import dataclass, field
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

from ..errors import UserError
from .schema import MIGRATIONS, SCHEMA_VERSION

CHUNK = 1 << 20  # 1 MiB rows for files and photos
DETAIL_FIELDS = (
    "site",
    "address",
    "client",
    "installer",
    "installer_contact",
    "installer_registration",
    "installer_address",
    "client_contact",
    "timezone",
    "language",
    "next_inspection",
)
CONFLICT_FIELDS = ("job_uuid", "item_id", "entry_uuids", "flagged_at", "confirmed_by",
                   "confirmed_at")
_ENTRY_COLUMNS = ("id, uuid, item_id, action, raw, value_json, unit_typed, instrument_id, at, by,"
                  " supersedes, host, read_with, carried")
# Short job ids: unambiguous letters and digits (no 0/O, 1/I/L, U), typed on site.
_ALPHABET = "23456789ABCDEFGHJKMNPQRSTVWXYZ"


class RegisterError(UserError):
    """The register cannot be used: missing, read-only, full, or from a newer release."""


def now_iso() -> str:
    return datetime.now(UTC).isoformat(timespec="milliseconds").replace("+00:00", "Z")


def later_than(last: str | None) -> str:
    """Now, or one millisecond after ``last`` when the clock has not moved past it: entry
    times within one job on one device are strictly increasing, so ordering by (entry time,
    UUID) keeps the order they were typed in."""
    now = now_iso()
    if last is None or now > last:
        return now
    try:
        then = datetime.fromisoformat(last.replace("Z", "+00:00"))
    except ValueError:
        return now
    from datetime import timedelta

    bumped = (then + timedelta(milliseconds=1)).astimezone(UTC)
    return bumped.isoformat(timespec="milliseconds").replace("+00:00", "Z")


def who() -> str:
    """The author of an entry: a person's identity, never the operating-system user.
    ``COMMISSION_USER`` when set (a name the company gives), else the SHA-256 fingerprint of
    this user's signing certificate (``cert:`` and 64 hex digits), else "unknown". A
    PostgreSQL register without either records the database role instead."""
    name = os.environ.get("COMMISSION_USER")
    if name:
        return name
    fp = identity_fingerprint()
    return f"cert:{fp}" if fp else "unknown"


_FINGERPRINT: dict[tuple, str | None] = {}


def identity_fingerprint() -> str | None:
    """SHA-256 of the DER of this user's signing certificate (the PEM decoded with the
    standard library, so no cryptography import on every entry), or None. Worked out
    again only when the certificate file changes (its path, size, inode or time)."""
    from ..paths import config_dir

    path = config_dir() / "identity" / "cert.pem"
    try:
        st = path.stat()
    except OSError:
        return None
    key = (str(path), st.st_ino, st.st_size, st.st_mtime_ns, st.st_ctime_ns)
    if key not in _FINGERPRINT:
        _FINGERPRINT.clear()
        _FINGERPRINT[key] = _fingerprint_of(path)
    return _FINGERPRINT[key]


def _fingerprint_of(path: Path) -> str | None:
    import base64

    try:
        pem = path.read_text(encoding="ascii")
    except (OSError, UnicodeDecodeError):
        return None
    body = pem.split("-----BEGIN CERTIFICATE-----", 1)[-1].split("-----END", 1)[0]
    try:
        der = base64.b64decode("".join(body.split()), validate=True)
    except ValueError:
        return None
    return hashlib.sha256(der).hexdigest() if der else None


@dataclass(frozen=True)
class Job:
    id: int
    short_id: str
    uuid: str
    created_at: str
    created_by: str
    details: dict[str, str]
    checklist_id: str
    checklist_version: str
    checklist_sha256: str
    checklist_text: str
    checklist_source: str
    original: dict[str, str] = field(default_factory=dict)  # details before any amendment
    imported: str = ""  # '' made here; 'verified' or 'unverified' when imported from a record
    # an imported job: the record's own verdicts {"check_logic", "program", "verdicts"}
    recorded: dict[str, Any] = field(default_factory=dict)
    # a revisit job: the baseline it is compared with (see commission.baseline); {} otherwise
    baseline: dict[str, Any] = field(default_factory=dict)
    record_sha256: str = ""  # an imported job: the SHA-256 of the record it came from

    @property
    def unverified(self) -> bool:
        return self.imported == "unverified"

    def as_json(self) -> dict[str, Any]:
        return {
            "id": self.short_id,
            "uuid": self.uuid,
            "created_at": self.created_at,
            "created_by": self.created_by,
            **self.details,
            "checklist": {
                "id": self.checklist_id,
                "version": self.checklist_version,
                "sha256": self.checklist_sha256,
                "source": self.checklist_source,
            },
        }


@dataclass(frozen=True)
class Entry:
    id: int
    uuid: str
    item_id: str
    action: str  # answer | skip | na | detail
    raw: str
    value: Any
    unit_typed: str | None
    instrument_id: int | None
    at: str
    by: str
    supersedes: int | None
    host: str = ""  # the device id of the register it was typed into ('' or a host name
    #                 in entries made before schema 7)
    read_with: dict[str, Any] | None = None  # export profile a file was read with
    carried: str | None = None  # baseline record's SHA-256 when carried from it (a revisit)


@dataclass(frozen=True)
class Instrument:
    id: int
    serial: str
    make: str
    model: str
    calibration_due: str  # ISO date
    added_at: str
    accuracy: str = ""  # the maker's statement, e.g. "±(0.5 % + 2 digits)"; "" = none stated
    accuracy_read_as: str = ""  # "bound" or "k2" (see commission.accuracy)

    def overdue_note(self, today: str | None = None) -> str | None:
        """One line when the calibration due date has passed (today as an ISO date)."""
        from datetime import date

        today = today or date.today().isoformat()
        if self.calibration_due >= today:
            return None
        return (f"instrument {self.serial}: calibration was due {self.calibration_due}; "
                "readings taken with it are marked review until it is calibrated")

    def as_json(self) -> dict[str, Any]:
        data = {
            "serial": self.serial,
            "make": self.make,
            "model": self.model,
            "calibration_due": self.calibration_due,
        }
        if self.accuracy:  # only when stated, so records without it keep their shape
            data["accuracy"] = {"text": self.accuracy, "read_as": self.accuracy_read_as}
        return data

    def parsed_accuracy(self):
        """The stated accuracy parsed (commission.accuracy.Accuracy), or None if none."""
        if not self.accuracy:
            return None
        from ..accuracy import parse_accuracy

        return parse_accuracy(self.accuracy, self.accuracy_read_as)


class EngineShared:
    """What both engines (this module's Register and postgres.PostgresRegister) do the
    same way, written once over the primitives each engine has: close, add_entry,
    _entries, instrument_by_serial and export_profile_json."""

    def __exit__(self, *exc: object) -> None:
        self.close()

    def amend(self, job: Job, changes: dict[str, str], by: str | None = None) -> list[Entry]:
        out = []
        for key, value in changes.items():
            if key not in DETAIL_FIELDS:
                raise UserError(f"{key}: not a job detail ({', '.join(DETAIL_FIELDS)})")
            if job.details.get(key) == value:
                continue
            out.append(self.add_entry(job, f"job.{key}", "detail", value, value, by=by))
        return out

    def entries(self, job: Job) -> list[Entry]:
        """Every entry of a job, oldest first by (entry time, UUID), so the last of an item
        is current on every engine and after entries from other devices came in."""
        return self._entries(job.id)

    def export_profile(self, serial: str):
        """The export profile of an instrument as ReadSettings; none saved is a one-line
        error naming the command that saves one."""
        from ..analyses import ReadSettings, SettingsError

        inst = self.instrument_by_serial(serial)
        data = self.export_profile_json(inst.id)
        if data is None:
            raise UserError(f"instrument '{serial}': has no export profile; save one with "
                            f"'commission instruments profile {serial} --columns ...'")
        try:
            return ReadSettings.from_json(data)
        except SettingsError as exc:
            raise UserError(f"instrument '{serial}': stored export profile: {exc}") from None


@dataclass
class Register(EngineShared):
    path: Path
    create: bool = True
    read_only: bool = field(default=False, init=False)  # this user cannot write the file
    _db: sqlite3.Connection | None = field(default=None, init=False, repr=False)
    _batch: bool = field(default=False, init=False, repr=False)
    _device: str | None = field(default=None, init=False, repr=False)

    # -- opening and closing -------------------------------------------------
    def __enter__(self) -> Register:
        if self._db is None:
            self.open()
        return self

    def open(self) -> None:
        if not self.path.exists():
            if not self.create:
                raise RegisterError(f"{self.path}: no register here (make one with "
                                    "'commission new' or give --register)")
            try:
                self.path.parent.mkdir(parents=True, exist_ok=True)
            except OSError as exc:
                raise RegisterError(f"{self.path.parent}: cannot create ({exc.strerror})") from None
        elif self.path.is_dir():
            raise RegisterError(f"{self.path}: is a folder; --register needs a file path")
        elif not _writable(self.path):
            self._db = self._open_read_only()
            self.read_only = True
            self._migrate()
            return
        try:
            db = sqlite3.connect(self.path, isolation_level=None, timeout=10)
            db.execute("PRAGMA busy_timeout = 10000")
            db.execute("PRAGMA journal_mode = WAL")
            db.execute("PRAGMA synchronous = FULL")
            db.execute("PRAGMA foreign_keys = ON")
        except sqlite3.DatabaseError as exc:
            raise RegisterError(f"{self.path}: not a usable register ({exc})") from None
        self._db = db
        self._migrate()

    def _open_read_only(self) -> sqlite3.Connection:
        """Read a register this user cannot write, writing nothing. WAL reading needs the
        -shm file; when it is missing and cannot be made (a read-only folder) and no -wal
        holds entries not yet in the file, the file alone is the whole register."""
        uri = self.path.resolve().as_uri()
        wal = self.path.with_name(self.path.name + "-wal")
        tries = [uri + "?mode=ro"]
        if not wal.exists() or wal.stat().st_size == 0:
            tries.append(uri + "?mode=ro&immutable=1")
        problem: sqlite3.Error | None = None
        for target in tries:
            db = None
            try:
                db = sqlite3.connect(target, uri=True, isolation_level=None, timeout=10)
                db.execute("PRAGMA busy_timeout = 10000")
                db.execute("SELECT count(*) FROM sqlite_master").fetchone()
                return db
            except sqlite3.Error as exc:
                problem = exc
                if db is not None:
                    db.close()
        raise RegisterError(f"{self.path}: the register is read-only for this user and cannot "
                            f"be read ({problem}); open it as its owner") from None

    def close(self) -> None:
        if self._db is None:
            return
        # If another process holds the register, its own exit checkpoints.
        with contextlib.suppress(sqlite3.Error):
            self._db.execute("PRAGMA wal_checkpoint(TRUNCATE)")
        self._db.close()
        self._db = None

    @property
    def location(self) -> str:
        return str(self.path)

    def schema_version(self) -> int:
        return int(self.db.execute("PRAGMA user_version").fetchone()[0])

    def walk_lock(self, job: Job, take_over: bool = False):
        """One walk per job: an OS file lock beside the register, released by the OS if the
        process dies."""
        from .lock import JobLock

        local = JobLock(self.path, job.uuid, job.short_id)
        url = self.setting("company_register") if not self.read_only else None
        if not url:
            return local
        from .lease import LaptopWalk

        return LaptopWalk(local, self, job, url, take_over=take_over)

    @property
    def db(self) -> sqlite3.Connection:
        if self._db is None:
            self.open()
        assert self._db is not None
        return self._db

    def _migrate(self) -> None:
        db = self.db
        try:
            version = db.execute("PRAGMA user_version").fetchone()[0]
        except sqlite3.DatabaseError as exc:
            raise RegisterError(f"{self.path}: not a register ({exc})") from None
        if version > SCHEMA_VERSION:
            raise RegisterError(
                f"{self.path}: made by a newer release (schema {version}; this one reads "
                f"up to {SCHEMA_VERSION}); upgrade commission"
            )
        if version < SCHEMA_VERSION and self.read_only:
            raise RegisterError(
                f"{self.path}: made by an older release (schema {version}) and read-only for "
                "this user; open it once with write access so it can be upgraded"
            )
        for step in range(version + 1, SCHEMA_VERSION + 1):
            try:
                db.execute("BEGIN IMMEDIATE")
                for statement in _statements(MIGRATIONS[step]):
                    db.execute(statement)
                db.execute(f"PRAGMA user_version = {step}")
                db.execute("COMMIT")
            except sqlite3.Error as exc:
                if db.in_transaction:
                    db.execute("ROLLBACK")
                raise RegisterError(f"{self.path}: cannot prepare the register ({exc})") from None

    def _write(self, sql: str, args: tuple[Any, ...] = ()) -> sqlite3.Cursor:
        try:
            return self.db.execute(sql, args)
        except sqlite3.OperationalError as exc:
            raise _cannot_write(self.path, exc) from None

    # -- jobs ----------------------------------------------------------------
    def create_job(self, checklist, details: dict[str, str], by: str | None = None,
                   baseline: dict[str, Any] | None = None) -> Job:
        """``checklist`` is a :class:`commission.checklist.Loaded`; ``baseline`` makes it a
        revisit job compared with that baseline (commission.baseline)."""
        # After this device joined a company register, its ids start with the device's
        # prefix (unique in the company): 6 characters, never equal to another device's.
        prefix = self.setting("short_id_prefix") or ""
        for _ in range(20):
            short = prefix + "".join(secrets.choice(_ALPHABET) for _ in range(4 if prefix else 5))
            if not self.db.execute("SELECT 1 FROM jobs WHERE short_id = ?", (short,)).fetchone():
                break
        return self.insert_job(
            short_id=short,
            uuid=str(uuidlib.uuid4()),
            created_at=now_iso(),
            created_by=by or who(),
            details=details,
            checklist=checklist,
            baseline=baseline,
        )

    def insert_job(self, *, short_id, uuid, created_at, created_by, details, checklist,
                   imported: str = "", recorded: dict[str, Any] | None = None,
                   baseline: dict[str, Any] | None = None, record_sha256: str = "") -> Job:
        d = {k: details.get(k) or "" for k in DETAIL_FIELDS}
        with self._transaction():
            cur = self._write(
                "INSERT INTO jobs (short_id, uuid, created_at, created_by, "
                + ", ".join(DETAIL_FIELDS) + ", checklist_id,"
                " checklist_version, checklist_sha256, checklist_text, checklist_source,"
                " imported, recorded, baseline, record_sha256) VALUES ("
                + ",".join("?" * (4 + len(DETAIL_FIELDS) + 9)) + ")",
                (short_id, uuid, created_at, created_by, *(d[k] for k in DETAIL_FIELDS),
                 checklist.checklist.id, checklist.checklist.version, checklist.sha256,
                 checklist.text, checklist.name, imported,
                 json.dumps(recorded, ensure_ascii=False) if recorded else "",
                 json.dumps(baseline, ensure_ascii=False, sort_keys=True) if baseline else "",
                 record_sha256),
            )
        return self.job(cur.lastrowid)

    def job(self, job_id: int) -> Job:
        row = self.db.execute("SELECT * FROM jobs WHERE id = ?", (job_id,)).fetchone()
        return self._job(row)

    def _job(self, row: tuple) -> Job:
        cols = [c[1] for c in self.db.execute("PRAGMA table_info(jobs)")]
        r = dict(zip(cols, row, strict=True))
        details = {k: r[k] for k in DETAIL_FIELDS}
        original = dict(details)
        for e in self._entries(r["id"], "AND action = 'detail'"):
            details[e.item_id.removeprefix("job.")] = e.value
        return Job(r["id"], r["short_id"], r["uuid"], r["created_at"], r["created_by"], details,
                   r["checklist_id"], r["checklist_version"], r["checklist_sha256"],
                   r["checklist_text"], r["checklist_source"], original,
                   r.get("imported") or "",
                   json.loads(r["recorded"]) if r.get("recorded") else {},
                   json.loads(r["baseline"]) if r.get("baseline") else {},
                   r.get("record_sha256") or "")

    def find_job(self, ref: str) -> Job:
        ref = ref.strip()
        row = self.db.execute("SELECT * FROM jobs WHERE short_id = ? OR uuid = ?",
                              (ref.upper(), ref.lower())).fetchone()
        if row is None and len(ref) >= 8 and all(c in "0123456789abcdef-" for c in ref.lower()):
            # A UUID prefix, compared literally (no LIKE wildcards from what was typed).
            rows = self.db.execute("SELECT * FROM jobs WHERE substr(uuid, 1, ?) = ?",
                                   (len(ref), ref.lower())).fetchall()
            row = rows[0] if len(rows) == 1 else None
        if row is None:
            known = [r[0] for r in self.db.execute(
                "SELECT short_id FROM jobs ORDER BY id DESC LIMIT 5")]
            hint = f" (recent: {', '.join(known)})" if known else " (the register has no jobs)"
            raise UserError(f"job '{ref}': not in {self.path}{hint}")
        return self._job(row)

    def has_job(self, *, uuid: str | None = None, short_id: str | None = None) -> bool:
        row = self.db.execute("SELECT 1 FROM jobs WHERE uuid = ? OR short_id = ?",
                              (uuid, short_id)).fetchone()
        return row is not None

    def has_entry(self, uuid: str) -> bool:
        return self.db.execute("SELECT 1 FROM entries WHERE uuid = ?", (uuid,)).fetchone() \
            is not None

    def jobs(self) -> list[Job]:
        return [self._job(r) for r in self.db.execute("SELECT * FROM jobs ORDER BY id")]

    # -- entries -------------------------------------------------------------
    def add_entry(
        self,
        job: Job,
        item_id: str,
        action: str,
        raw: str,
        value: Any = None,
        unit_typed: str | None = None,
        instrument_id: int | None = None,
        by: str | None = None,
        at: str | None = None,
        uuid: str | None = None,
        host: str | None = None,
        read_with: dict[str, Any] | None = None,
        carried: str | None = None,
    ) -> Entry:
        """Append one entry and commit it before returning."""
        device = self.device_id() if host is None else host
        with self._transaction():
            prev = self.db.execute(
                "SELECT id FROM entries WHERE job_id = ? AND item_id = ? ORDER BY id DESC LIMIT 1",
                (job.id, item_id),
            ).fetchone()
            if at is None:
                last = self.db.execute("SELECT max(at) FROM entries WHERE job_id = ?",
                                       (job.id,)).fetchone()[0]
                at = later_than(last)
            cur = self._write(
                "INSERT INTO entries (uuid, job_id, item_id, action, raw, value_json, unit_typed,"
                " instrument_id, at, by, supersedes, host, read_with, carried)"
                " VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?,?)",
                (uuid or str(uuidlib.uuid4()), job.id, item_id, action, raw,
                 json.dumps(value, ensure_ascii=False), unit_typed, instrument_id,
                 at, by or who(), prev[0] if prev else None,
                 device,
                 json.dumps(read_with, sort_keys=True) if read_with else None,
                 carried),
            )
        return self._entry_by_id(cur.lastrowid)

    def _entry_by_id(self, entry_id: int) -> Entry:
        row = self.db.execute(
            f"SELECT {_ENTRY_COLUMNS} FROM entries WHERE id = ?", (entry_id,)).fetchone()
        return _entry(row)

    def _entries(self, job_id: int, where: str = "") -> list[Entry]:
        rows = self.db.execute(
            f"SELECT {_ENTRY_COLUMNS} FROM entries WHERE job_id = ? {where}"
            " ORDER BY at, uuid",
            (job_id,))
        return [_entry(r) for r in rows]

    # -- instruments ---------------------------------------------------------
    def add_instrument(self, serial: str, make: str, model: str,
                       calibration_due: str, accuracy: str = "",
                       accuracy_read_as: str = "") -> Instrument:
        if self.db.execute("SELECT 1 FROM instruments WHERE serial = ?", (serial,)).fetchone():
            raise UserError(f"instrument '{serial}': already registered")
        with self._transaction():
            cur = self._write(
                "INSERT INTO instruments (serial, make, model, calibration_due, added_at,"
                " accuracy, accuracy_read_as) VALUES (?,?,?,?,?,?,?)",
                (serial, make, model, calibration_due, now_iso(), accuracy, accuracy_read_as))
        return self.instrument(cur.lastrowid)

    def instrument(self, instrument_id: int) -> Instrument:
        row = self.db.execute("SELECT * FROM instruments WHERE id = ?", (instrument_id,)).fetchone()
        return Instrument(*row)

    def instruments(self) -> list[Instrument]:
        return [Instrument(*r) for r in self.db.execute("SELECT * FROM instruments ORDER BY id")]

    def instrument_by_serial(self, serial: str) -> Instrument:
        row = self.db.execute("SELECT * FROM instruments WHERE serial = ?", (serial,)).fetchone()
        if row is None:
            known = ", ".join(i.serial for i in self.instruments()) or "none yet"
            raise UserError(f"instrument '{serial}': not registered (registered: {known}; "
                            "add it with 'commission instruments add')")
        return Instrument(*row)

    def instrument_in_use(self, job: Job) -> Instrument | None:
        """The instrument the job's walk stamps on measured readings, if one was chosen."""
        row = self.db.execute("SELECT instrument_id FROM job_instrument WHERE job_id = ?",
                              (job.id,)).fetchone()
        return self.instrument(row[0]) if row and row[0] is not None else None

    def set_instrument_in_use(self, job: Job, instrument: Instrument | None) -> None:
        with self._transaction():
            self._write(
                "INSERT INTO job_instrument (job_id, instrument_id, at) VALUES (?,?,?)"
                " ON CONFLICT(job_id) DO UPDATE SET instrument_id = excluded.instrument_id,"
                " at = excluded.at", (job.id, instrument.id if instrument else None, now_iso()))

    # -- export profiles -----------------------------------------------------
    def set_export_profile(self, serial: str, profile: dict[str, Any]) -> Instrument:
        """Save (or replace) how files of this instrument are read."""
        inst = self.instrument_by_serial(serial)
        with self._transaction():
            self._write("INSERT INTO export_profiles (instrument_id, profile_json, updated_at)"
                        " VALUES (?,?,?) ON CONFLICT(instrument_id) DO UPDATE SET"
                        " profile_json = excluded.profile_json, updated_at = excluded.updated_at",
                        (inst.id, json.dumps(profile, sort_keys=True), now_iso()))
        return inst

    def export_profile_json(self, instrument_id: int) -> dict[str, Any] | None:
        """The stored export profile of an instrument, or None."""
        row = self.db.execute("SELECT profile_json FROM export_profiles WHERE instrument_id = ?",
                              (instrument_id,)).fetchone()
        return json.loads(row[0]) if row else None

    # -- files and photos ----------------------------------------------------
    def put_file(self, path: Path) -> tuple[str, int]:
        """Store a file's bytes by SHA-256, streamed in 1 MiB chunks. Returns (sha256, bytes)."""
        digest = hashlib.sha256()
        size = 0
        provisional = "partial-" + uuidlib.uuid4().hex
        try:
            handle = path.open("rb")
        except OSError as exc:
            raise UserError(f"{path}: cannot read ({exc.strerror})") from None
        with handle, self._transaction():
            seq = 0
            while chunk := handle.read(CHUNK):
                digest.update(chunk)
                size += len(chunk)
                self._write("INSERT INTO blob_chunks (blob, seq, data) VALUES (?,?,?)",
                            (provisional, seq, chunk))
                seq += 1
            sha = digest.hexdigest()
            if self.db.execute("SELECT 1 FROM blobs WHERE sha256 = ?", (sha,)).fetchone():
                self._write("DELETE FROM blob_chunks WHERE blob = ?", (provisional,))
            else:
                self._write("UPDATE blob_chunks SET blob = ? WHERE blob = ?", (sha, provisional))
                self._write("INSERT INTO blobs (sha256, bytes, added_at) VALUES (?,?,?)",
                            (sha, size, now_iso()))
        return sha, size

    def read_blob(self, sha256: str) -> Iterator[bytes]:
        """The stored bytes, chunk by chunk (never whole in memory)."""
        seq = 0
        while True:
            row = self.db.execute("SELECT data FROM blob_chunks WHERE blob = ? AND seq = ?",
                                  (sha256, seq)).fetchone()
            if row is None:
                return
            yield row[0]
            seq += 1

    def has_blob(self, sha256: str) -> bool:
        row = self.db.execute("SELECT 1 FROM blobs WHERE sha256 = ?", (sha256,)).fetchone()
        return row is not None

    # -- backup --------------------------------------------------------------
    def backup(self, dest: Path) -> None:
        """A consistent copy, taken with SQLite's online backup (safe during a walk)."""
        if dest.exists():
            raise UserError(f"{dest}: already exists; choose a new file name")
        try:
            target = sqlite3.connect(dest)
        except sqlite3.Error as exc:
            raise UserError(f"{dest}: cannot create ({exc})") from None
        try:
            self.db.backup(target)
            target.execute("PRAGMA journal_mode = DELETE")
        except sqlite3.Error as exc:
            target.close()
            dest.unlink(missing_ok=True)
            raise RegisterError(f"{dest}: backup failed ({exc})") from None
        target.close()

    # -- device --------------------------------------------------------------
    def device_id(self) -> str:
        """This register's random device id ('dev-' and 16 hex digits), made on first use.
        Records name the computer an entry was typed on by it, never by its host name."""
        if self._device is None:
            row = self.db.execute("SELECT value FROM settings WHERE key = 'device_id'").fetchone()
            if row is None:
                made = "dev-" + secrets.token_hex(8)
                with self._transaction():
                    self._write("INSERT OR IGNORE INTO settings (key, value) VALUES "
                                "('device_id', ?)", (made,))
                row = self.db.execute(
                    "SELECT value FROM settings WHERE key = 'device_id'").fetchone()
            self._device = row[0]
        return self._device


    def list_jobs(self, *, status: str | None = None, installer: str | None = None,
                  due: str | None = None, page: int = 1, size: int = 100
                  ) -> tuple[list[tuple[Job, str | None, bool]], int]:
        """One page of jobs (oldest first) with the cached status and whether it is
        current (see ``status_cache``); filters run in the database. ``due``: a next
        inspection on or before this ISO date. ``size`` 0: every job.

        ``installer`` matches the job's current installer name whole (not a start of
        it), with spaces around the given name dropped and the letters A-Z in either
        case; other letters must match exactly. Both engines fold only A-Z (SQLite's
        NOCASE collation; PostgreSQL's lower() under the "C" collation, whatever the
        server's locale), so a name matches alike on both. A company register also
        matches the database role the job is assigned to, the same way."""
        from ..status_cache import check_logic_version

        where, args = ["1 = 1"], []
        if status:
            where.append("s.status = ?")
            args.append(status)
        if installer:  # matched as on PostgreSQL (see the docstring)
            where.append("h.installer = ? COLLATE NOCASE")
            args.append(installer.strip())
        if due:
            where.append("h.next_inspection != '' AND h.next_inspection <= ?")
            args.append(due)
        base = (" FROM jobs j JOIN job_heads h ON h.job_id = j.id LEFT JOIN job_status s"
                " ON s.job_id = j.id WHERE " + " AND ".join(where))
        total = self.db.execute("SELECT count(*)" + base, args).fetchone()[0]
        limit = f" LIMIT {int(size)} OFFSET {int(size) * (max(page, 1) - 1)}" if size else ""
        rows = self.db.execute(
            "SELECT j.id, s.status, s.last_entry = h.last_entry AND s.checklist_sha256 ="
            " j.checklist_sha256 AND s.check_logic = ?" + base + " ORDER BY j.id" + limit,
            [check_logic_version(), *args]).fetchall()
        return [(self.job(r[0]), r[1], bool(r[2])) for r in rows], total

    def remember_status(self, job: Job, last_entry: str, status: str) -> None:
        """Cache a status derived from the entries up to ``last_entry`` (a cache: a
        register this user cannot write simply keeps the old one)."""
        from ..status_cache import check_logic_version

        if self.read_only:
            return
        with contextlib.suppress(RegisterError), self._transaction():
            self._write(
                "INSERT INTO job_status (job_id, last_entry, checklist_sha256, check_logic,"
                " status, derived_at) VALUES (?,?,?,?,?,?) ON CONFLICT(job_id) DO UPDATE SET"
                " last_entry = excluded.last_entry, checklist_sha256 ="
                " excluded.checklist_sha256, check_logic = excluded.check_logic,"
                " status = excluded.status, derived_at = excluded.derived_at",
                (job.id, last_entry, job.checklist_sha256, check_logic_version(), status,
                 now_iso()))

    # -- sync (see register/sync.py) ------------------------------------------
    def who(self) -> str:
        return who()

    def setting(self, key: str) -> str | None:
        row = self.db.execute("SELECT value FROM settings WHERE key = ?", (key,)).fetchone()
        return row[0] if row else None

    def set_setting(self, key: str, value: str) -> None:
        with self._transaction():
            self._write("INSERT INTO settings (key, value) VALUES (?, ?) ON CONFLICT(key)"
                        " DO UPDATE SET value = excluded.value", (key, value))

    def entry_index(self, job: Job) -> dict[str, str]:
        """{entry UUID: item id} of a job's entries."""
        return dict(self.db.execute("SELECT uuid, item_id FROM entries WHERE job_id = ?",
                                    (job.id,)).fetchall())

    def entry_rows(self, job: Job, uuids: list[str]) -> list[tuple]:
        """Entries as portable rows (``sync.ENTRY_FIELDS``: the instrument by serial, value
        and profile as their stored JSON text), in (entry time, UUID) order."""
        out: list[tuple] = []
        for start in range(0, len(uuids), 500):
            part = uuids[start:start + 500]
            out += self.db.execute(
                "SELECT e.uuid, e.item_id, e.action, e.raw, e.value_json, e.unit_typed,"
                " i.serial, e.at, e.by, e.host, e.read_with, e.carried FROM entries e LEFT JOIN"
                " instruments i ON i.id = e.instrument_id WHERE e.job_id = ? AND e.uuid IN ("
                + ",".join("?" * len(part)) + ")", (job.id, *part)).fetchall()
        return sorted(out, key=lambda r: (r[7], r[0]))

    def insert_entries(self, job: Job, rows: list[tuple]) -> int:
        """Add portable entry rows to a job, skipping any UUID already here (a union);
        one transaction. Returns how many were new."""
        serials = {i.serial: i.id for i in self.instruments()}
        with self._transaction():
            cur = self.db.executemany(
                "INSERT INTO entries (uuid, job_id, item_id, action, raw, value_json,"
                " unit_typed, instrument_id, at, by, host, read_with, carried)"
                " VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?) ON CONFLICT(uuid) DO NOTHING",
                [(r[0], job.id, r[1], r[2], r[3], r[4], r[5], serials.get(r[6] or ""), r[7],
                  r[8], r[9], r[10], r[11]) for r in rows])
            return cur.rowcount  # rows inserted (the triggers' own changes not counted)

    def insert_entry_batches(self, job: Job, batches: Iterable[list[tuple]],
                             before: Callable[[list[tuple]], None] | None = None
                             ) -> Iterator[int]:
        """Batches of portable rows, each one transaction (``insert_entries``), yielding
        each batch's count of new entries once committed; ``before(rows)`` runs before a
        batch is written (sync stores there the files it names)."""
        for rows in batches:
            if before:
                before(rows)
            yield self.insert_entries(job, rows)

    def job_row(self, job: Job) -> dict[str, Any]:
        row = self.db.execute("SELECT * FROM jobs WHERE id = ?", (job.id,)).fetchone()
        cols = [c[1] for c in self.db.execute("PRAGMA table_info(jobs)")]
        return {k: v for k, v in zip(cols, row, strict=True) if k != "id"}

    def put_stream(self, chunks: Iterator[bytes]) -> tuple[str, int]:
        """Store bytes arriving chunk by chunk (another register's blob) by SHA-256."""
        import tempfile

        with tempfile.NamedTemporaryFile(prefix="commission-sync-") as tmp:
            for chunk in chunks:
                tmp.write(chunk)
            tmp.flush()
            return self.put_file(Path(tmp.name))

    def conflicts(self, job: Job | None = None) -> list[dict[str, str]]:
        """Items changed on two devices while apart (``job`` None: every job)."""
        sql = ("SELECT job_uuid, item_id, entry_uuids, flagged_at, confirmed_by, confirmed_at"
               " FROM conflicts")
        rows = (self.db.execute(sql + " WHERE job_uuid = ? ORDER BY flagged_at, item_id",
                                (job.uuid,)) if job else
                self.db.execute(sql + " ORDER BY flagged_at, item_id"))
        return [dict(zip(CONFLICT_FIELDS, r, strict=True)) for r in rows]

    def add_conflicts(self, rows: list[dict[str, str]]) -> None:
        """Union of conflict flags; a confirmation on either side is kept."""
        with self._transaction():
            for c in rows:
                self._write(
                    "INSERT INTO conflicts (job_uuid, item_id, entry_uuids, flagged_at,"
                    " confirmed_by, confirmed_at) VALUES (?,?,?,?,?,?)"
                    " ON CONFLICT(job_uuid, item_id, entry_uuids) DO UPDATE SET"
                    " confirmed_by = excluded.confirmed_by, confirmed_at = excluded.confirmed_at"
                    " WHERE conflicts.confirmed_at = '' AND excluded.confirmed_at != ''",
                    tuple(c[k] for k in CONFLICT_FIELDS))

    # -- helpers -------------------------------------------------------------
    def _transaction(self):
        return _Tx(self)

    @contextlib.contextmanager
    def batch(self) -> Iterator[None]:
        """One transaction around many writes: all of them are kept, or none."""
        with self._transaction():
            self._batch = True
            try:
                yield
            finally:
                self._batch = False


class _Tx:
    def __init__(self, reg: Register):
        self.reg = reg

    def __enter__(self) -> None:
        self.nested = self.reg._batch
        if self.nested:
            return  # inside Register.batch(): its transaction commits or rolls back
        if self.reg.read_only:
            raise RegisterError(f"{self.reg.path}: cannot write: the register is read-only for "
                                "this user; nothing was changed")
        try:
            self.reg.db.execute("BEGIN IMMEDIATE")
        except sqlite3.OperationalError as exc:
            raise _cannot_write(self.reg.path, exc) from None

    def __exit__(self, exc_type, exc, tb) -> None:
        if self.nested:
            return
        db = self.reg.db
        if exc_type is None:
            try:
                db.execute("COMMIT")
            except sqlite3.OperationalError as err:
                # A failed COMMIT may already have rolled back (e.g. a disk I/O error).
                _rollback(db)
                raise _cannot_write(self.reg.path, err) from None
        else:
            _rollback(db)


def _rollback(db: sqlite3.Connection) -> None:
    if db.in_transaction:
        with contextlib.suppress(sqlite3.Error):
            db.execute("ROLLBACK")


def _writable(path: Path) -> bool:
    """Can this user write the register? WAL also makes files beside it."""
    return os.access(path, os.W_OK) and os.access(path.parent, os.W_OK | os.X_OK)


def _cannot_write(path: Path, exc: sqlite3.Error) -> RegisterError:
    name = getattr(exc, "sqlite_errorname", "") or ""
    if name.startswith("SQLITE_READONLY"):
        why = "the register is read-only"
    elif name == "SQLITE_FULL":
        why = "the disk is full"
    elif name.startswith("SQLITE_IOERR"):
        why = f"the disk refused the write ({exc}; full, or a file size limit?)"
    else:
        why = str(exc)
    return RegisterError(f"{path}: cannot write: {why}; nothing was changed")


def _entry(row: tuple) -> Entry:
    return Entry(row[0], row[1], row[2], row[3], row[4],
                 json.loads(row[5]) if row[5] is not None else None,
                 row[6], row[7], row[8], row[9], row[10], row[11],
                 json.loads(row[12]) if len(row) > 12 and row[12] else None,
                 row[13] if len(row) > 13 else None)


def _statements(script: str) -> list[str]:
    """Split a migration script into statements (triggers hold inner semicolons)."""
    out, buf = [], []
    for line in script.strip().splitlines():
        if line.strip().startswith("--"):
            continue
        buf.append(line)
        joined = "\n".join(buf).strip()
        if joined.endswith(";") and sqlite3.complete_statement(joined):
            out.append(joined)
            buf = []
    if "\n".join(buf).strip():
        out.append("\n".join(buf).strip())
    return out
