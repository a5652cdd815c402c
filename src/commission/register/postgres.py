"""The PostgreSQL register: a company's shared register (psycopg 3, imported here only).

Same protocol and the same rows as the SQLite engine (``store.py``); what differs is what
a shared server needs: the connection's secrets come from libpq's own places (PGPASSFILE,
a service file, the environment), never from the command line or the record, so a URL
with a password in it is refused; entries are append-only by trigger and by privileges;
a job's walk is held by a lease row with an expiry.
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import secrets
import uuid as uuidlib
from collections.abc import Callable, Iterable, Iterator
from pathlib import Path
from typing import Any

from ..errors import UserError
from .pg_schema import PG_MIGRATIONS, PG_SCHEMA_VERSION
from .store import (
    _ALPHABET,
    CHUNK,
    CONFLICT_FIELDS,
    DETAIL_FIELDS,
    EngineShared,
    Entry,
    Instrument,
    Job,
    RegisterError,
    now_iso,
)
from .store import who as _who

_ENTRY_COLS = ("id, uuid, item_id, action, raw, value_json, unit_typed, instrument_id, at, by,"
               " supersedes, host, read_with, carried")
_INSTRUMENT_COLS = ("id, serial, make, model, calibration_due, added_at, accuracy,"
                    " accuracy_read_as")
_JOB_COLS = ("id, short_id, uuid, created_at, created_by, " + ", ".join(DETAIL_FIELDS)
             + ", checklist_id, checklist_version, checklist_sha256, checklist_text,"
             " checklist_source, imported, recorded, baseline, record_sha256")


# add_entry's one statement (see there). An entry time not in this register's own format
# (never written by commission) is passed by, as ``later_than`` does.
_ADD_ENTRY = (
    "INSERT INTO entries (uuid, job_id, item_id, action, raw, value_json, unit_typed,"
    " instrument_id, at, by, supersedes, host, read_with, carried)"
    " SELECT %(uuid)s, %(job)s, %(item)s, %(action)s, %(raw)s, %(value)s, %(unit)s,"
    " %(instrument)s::bigint,"
    " CASE WHEN %(at)s::text IS NOT NULL THEN %(at)s::text"
    " WHEN l.last IS NULL OR %(now)s::text > l.last"
    " OR l.last !~ '^[0-9]{4}-[0-9]{2}-[0-9]{2}T[0-9]{2}:[0-9]{2}:[0-9]{2}(\\.[0-9]+)?Z$'"
    " THEN %(now)s::text"
    " ELSE to_char((l.last::timestamptz + interval '1 millisecond') AT TIME ZONE 'UTC',"
    " 'YYYY-MM-DD\"T\"HH24:MI:SS.MS\"Z\"') END,"
    " %(by)s, p.id, %(host)s, %(read_with)s, %(carried)s"
    " FROM (SELECT max(at) AS last FROM entries WHERE job_id = %(job)s) l"
    " LEFT JOIN LATERAL (SELECT id FROM entries WHERE job_id = %(job)s AND item_id = %(item)s"
    " ORDER BY at DESC, uuid DESC LIMIT 1) p ON true"
    f" RETURNING {_ENTRY_COLS}")


# A sync's rows (sync.ENTRY_FIELDS: the instrument by serial) and their INSERT from the
# session's sync_in table: a union by UUID, the instrument's id looked up here.
_PORTABLE = ("uuid", "item_id", "action", "raw", "value_json", "unit_typed", "serial", "at",
             "by", "host", "read_with", "carried")
_SYNC_NEW = (
    "INSERT INTO entries (uuid, job_id, item_id, action, raw, value_json, unit_typed,"
    " instrument_id, at, by, host, read_with, carried)"
    " SELECT s.uuid, %s, s.item_id, s.action, s.raw, s.value_json, s.unit_typed, i.id, s.at,"
    " s.by, s.host, s.read_with, s.carried FROM sync_in s"
    " LEFT JOIN instruments i ON i.serial = s.serial")
# Rows that may already be here: each one's UUID is looked up first (a speculative insert:
# about a quarter more server time than _SYNC_NEW on 10,000 entries). A sync sends only what
# the register lacked when it looked, so it tries _SYNC_NEW first and falls back to this
# when another sync got some of them there meanwhile.
_SYNC_INSERT = _SYNC_NEW + " ON CONFLICT (uuid) DO NOTHING"


def _password_in(url: str) -> bool:
    from urllib.parse import parse_qs, urlsplit

    parts = urlsplit(url)
    return bool(parts.password) or "password" in {k.lower() for k in parse_qs(parts.query)}


class PostgresRegister(EngineShared):
    """A register on a PostgreSQL server, reached by a ``postgresql://`` URL."""

    def __init__(self, url: str, create: bool = True, connect_timeout: int | None = None):
        from . import redact

        if _password_in(url):
            raise UserError(f"{redact(url)}: a password may not be given in the register URL "
                            "(it would stay in shell history and process lists); put it in "
                            "PGPASSFILE (~/.pgpass) or a service file")
        self.url = url
        self.connect_timeout = connect_timeout
        self.location = redact(url)
        self.create = create
        self.read_only = False
        self._conn: Any = None
        self._device: str | None = None
        self._role: str | None = None
        self.hook: Any = None  # tests: called inside transactions, to cut the connection there

    # -- opening, closing, migrations ----------------------------------------
    def __enter__(self) -> PostgresRegister:
        if self._conn is None:
            self.open()
        return self

    def open(self) -> None:
        import psycopg

        try:
            extra = ({"connect_timeout": self.connect_timeout} if self.connect_timeout
                     else {})
            self._conn = psycopg.connect(self.url, autocommit=True,
                                         application_name="commission", **extra)
        except psycopg.Error as exc:
            why = " ".join(str(exc).split())[:200]
            raise RegisterError(f"{self.location}: cannot connect ({why})") from None
        self._migrate()

    def close(self) -> None:
        self._role = None
        if self._conn is not None:
            with contextlib.suppress(Exception):
                self._conn.close()
            self._conn = None

    @property
    def conn(self):
        if self._conn is None:
            self.open()
        return self._conn

    def _x(self, sql: str, args: tuple | list = ()):
        """Execute one statement; a server refusal becomes one line naming the register."""
        import psycopg

        try:
            return self.conn.execute(sql, args or None)
        except psycopg.errors.InsufficientPrivilege as exc:
            raise RegisterError(f"{self.location}: not allowed for this database role "
                                f"({_first_line(exc)}); nothing was changed") from None
        except psycopg.errors.RaiseException as exc:
            raise RegisterError(f"{self.location}: refused ({_first_line(exc)}); nothing "
                                "was changed") from None
        except psycopg.OperationalError as exc:
            raise RegisterError(f"{self.location}: the connection failed "
                                f"({_first_line(exc)}); nothing unconfirmed was kept") from None

    def schema_version(self) -> int:
        row = self._x("SELECT version FROM commission_schema").fetchone()
        return int(row[0])

    def _migrate(self) -> None:
        with self._tx():
            # one migrating client at a time (the key is arbitrary but fixed)
            self._x("SELECT pg_advisory_xact_lock(7351001)")
            exists = self._x("SELECT to_regclass('commission_schema')").fetchone()[0]
            if exists is None:
                if not self.create:
                    raise RegisterError(f"{self.location}: no register in this database "
                                        "(make one with 'commission new' or check the URL)")
                self._x("CREATE TABLE commission_schema (version INTEGER NOT NULL)")
                self._x("INSERT INTO commission_schema VALUES (0)")
            version = self.schema_version()
            if version > PG_SCHEMA_VERSION:
                raise RegisterError(f"{self.location}: made by a newer release (schema "
                                    f"{version}; this one reads up to {PG_SCHEMA_VERSION}); "
                                    "upgrade commission")
            for step in range(version + 1, PG_SCHEMA_VERSION + 1):
                self._x(PG_MIGRATIONS[step])
                self._x("UPDATE commission_schema SET version = %s", (step,))

    @contextlib.contextmanager
    def batch(self) -> Iterator[None]:
        """One transaction around many writes: all of them are kept, or none."""
        with self._tx():
            yield

    @contextlib.contextmanager
    def _tx(self) -> Iterator[None]:
        """A transaction (a savepoint inside batch()); a connection lost on its way in or
        out (the COMMIT) becomes one line: nothing unconfirmed was kept."""
        import psycopg

        try:
            with self.conn.transaction():
                yield
        except psycopg.errors.InsufficientPrivilege as exc:
            raise RegisterError(f"{self.location}: not allowed for this database role "
                                f"({_first_line(exc)}); nothing was changed") from None
        except psycopg.OperationalError as exc:
            raise RegisterError(f"{self.location}: the connection failed "
                                f"({_first_line(exc)}); nothing unconfirmed was kept") from None

    # -- device ----------------------------------------------------------------
    def device_id(self) -> str:
        """The id this server register uses for entries typed into it directly."""
        if self._device is None:
            row = self._x("SELECT value FROM settings WHERE key = 'device_id'").fetchone()
            if row is None:
                self._x("INSERT INTO settings (key, value) VALUES ('device_id', %s)"
                        " ON CONFLICT DO NOTHING", ("dev-" + secrets.token_hex(8),))
                row = self._x("SELECT value FROM settings WHERE key = 'device_id'").fetchone()
            self._device = row[0]
        return self._device

    def join(self, device_id: str) -> str:
        """The short-id prefix of a device, given the first time it joins (two letters of
        the short-id alphabet, never reused)."""
        with self._tx():
            self._x("SELECT pg_advisory_xact_lock(7351002)")  # one prefix at a time
            row = self._x("SELECT prefix FROM devices WHERE device_id = %s",
                          (device_id,)).fetchone()
            if row:
                return row[0]
            used = {r[0] for r in self._x("SELECT prefix FROM devices")}
            free = [a + b for a in _ALPHABET for b in _ALPHABET if a + b not in used]
            if not free:
                raise RegisterError(f"{self.location}: every device prefix is taken")
            prefix = free[0]
            self._x("INSERT INTO devices (device_id, prefix, joined_at) VALUES (%s, %s, %s)",
                    (device_id, prefix, now_iso()))
            return prefix

    def who(self) -> str:
        """The author: the person's identity (see ``store.who``), else the database role."""
        name = _who()
        if name != "unknown":
            return name
        return "role:" + self.role()

    # -- jobs ------------------------------------------------------------------
    def create_job(self, checklist, details: dict[str, str], by: str | None = None,
                   baseline: dict[str, Any] | None = None) -> Job:
        import psycopg

        prefix = self.join(self.device_id())
        for _ in range(20):
            short = prefix + "".join(secrets.choice(_ALPHABET) for _ in range(4))
            try:
                return self.insert_job(short_id=short, uuid=str(uuidlib.uuid4()),
                                       created_at=now_iso(), created_by=by or self.who(),
                                       details=details, checklist=checklist,
                                       baseline=baseline)
            except psycopg.errors.UniqueViolation:
                continue
        raise RegisterError(f"{self.location}: no free short id under prefix {prefix}")

    def insert_job(self, *, short_id, uuid, created_at, created_by, details, checklist,
                   imported: str = "", recorded: dict[str, Any] | None = None,
                   assigned_to: str = "", baseline: dict[str, Any] | None = None,
                   record_sha256: str = "") -> Job:
        d = {k: details.get(k) or "" for k in DETAIL_FIELDS}
        cols = ("short_id, uuid, created_at, created_by, " + ", ".join(DETAIL_FIELDS)
                + ", checklist_id, checklist_version, checklist_sha256, checklist_text,"
                " checklist_source, imported, recorded, assigned_to, baseline, record_sha256")
        with self._tx():
            row = self.conn.execute(
                f"INSERT INTO jobs ({cols}) VALUES ("
                + ",".join(["%s"] * (4 + len(DETAIL_FIELDS) + 10)) + ") RETURNING id",
                (short_id, uuid, created_at, created_by, *(d[k] for k in DETAIL_FIELDS),
                 checklist.checklist.id, checklist.checklist.version, checklist.sha256,
                 checklist.text, checklist.name, imported,
                 json.dumps(recorded, ensure_ascii=False) if recorded else "",
                 assigned_to or self.role(),
                 json.dumps(baseline, ensure_ascii=False, sort_keys=True) if baseline else "",
                 record_sha256)).fetchone()
        return self.job(row[0])

    def job(self, job_id: int) -> Job:
        row = self._x(f"SELECT {_JOB_COLS} FROM jobs WHERE id = %s", (job_id,)).fetchone()
        return self._job(row)

    def _job(self, row: tuple, amended: list[tuple[str, str]] | None = None) -> Job:
        names = [c.strip() for c in _JOB_COLS.split(",")]
        r = dict(zip(names, row, strict=True))
        details = {k: r[k] for k in DETAIL_FIELDS}
        original = dict(details)
        if amended is None:
            amended = [(e.item_id, json.dumps(e.value))
                       for e in self._entries(r["id"], "AND action = 'detail'")]
        for item, value in amended:
            details[item.removeprefix("job.")] = json.loads(value) if value else None
        return Job(r["id"], r["short_id"], r["uuid"], r["created_at"], r["created_by"], details,
                   r["checklist_id"], r["checklist_version"], r["checklist_sha256"],
                   r["checklist_text"], r["checklist_source"], original,
                   r["imported"] or "", json.loads(r["recorded"]) if r["recorded"] else {},
                   json.loads(r["baseline"]) if r["baseline"] else {},
                   r["record_sha256"] or "")

    def find_job(self, ref: str) -> Job:
        ref = ref.strip()
        row = self._x(f"SELECT {_JOB_COLS} FROM jobs WHERE short_id = %s OR uuid = %s",
                      (ref.upper(), ref.lower())).fetchone()
        if row is None and len(ref) >= 8 and all(c in "0123456789abcdef-" for c in ref.lower()):
            rows = self._x(f"SELECT {_JOB_COLS} FROM jobs WHERE left(uuid, %s) = %s LIMIT 2",
                           (len(ref), ref.lower())).fetchall()
            row = rows[0] if len(rows) == 1 else None
        if row is None:
            known = [r[0] for r in self._x("SELECT short_id FROM jobs ORDER BY id DESC LIMIT 5")]
            hint = f" (recent: {', '.join(known)})" if known else " (the register has no jobs)"
            raise UserError(f"job '{ref}': not in {self.location}{hint}")
        return self._job(row)

    def has_job(self, *, uuid: str | None = None, short_id: str | None = None) -> bool:
        return self._x("SELECT 1 FROM jobs WHERE uuid = %s OR short_id = %s",
                       (uuid, short_id)).fetchone() is not None

    def jobs(self) -> list[Job]:
        return [self._job(r) for r in self._x(f"SELECT {_JOB_COLS} FROM jobs ORDER BY id")]

    # -- entries ---------------------------------------------------------------
    def add_entry(self, job: Job, item_id: str, action: str, raw: str, value: Any = None,
                  unit_typed: str | None = None, instrument_id: int | None = None,
                  by: str | None = None, at: str | None = None, uuid: str | None = None,
                  host: str | None = None, read_with: dict[str, Any] | None = None,
                  carried: str | None = None) -> Entry:
        device = self.device_id() if host is None else host
        # One statement, so one round trip in its own transaction: the entry this one
        # supersedes and the job's last entry time are looked up by the server as it
        # inserts. The time is ``later_than`` (store.py) worked out there: now (this
        # device's clock), or one millisecond after the job's last entry when the clock
        # has not moved past it.
        row = self._x(_ADD_ENTRY, {
            "uuid": uuid or str(uuidlib.uuid4()), "job": job.id, "item": item_id,
            "action": action, "raw": raw, "value": json.dumps(value, ensure_ascii=False),
            "unit": unit_typed, "instrument": instrument_id, "at": at, "now": now_iso(),
            "by": by or self.who(), "host": device,
            "read_with": json.dumps(read_with, sort_keys=True) if read_with else None,
            "carried": carried}).fetchone()
        return _entry(row)

    def _entries(self, job_id: int, where: str = "") -> list[Entry]:
        rows = self._x(f"SELECT {_ENTRY_COLS} FROM entries WHERE job_id = %s {where}"
                       " ORDER BY at, uuid", (job_id,))
        return [_entry(r) for r in rows]

    def has_entry(self, uuid: str) -> bool:
        return self._x("SELECT 1 FROM entries WHERE uuid = %s", (uuid,)).fetchone() is not None

    # -- instruments -------------------------------------------------------------
    def add_instrument(self, serial: str, make: str, model: str, calibration_due: str,
                       accuracy: str = "", accuracy_read_as: str = "") -> Instrument:
        with self._tx():
            row = self._x(
                "INSERT INTO instruments (serial, make, model, calibration_due, added_at,"
                " accuracy, accuracy_read_as) VALUES (%s,%s,%s,%s,%s,%s,%s)"
                " ON CONFLICT (serial) DO NOTHING RETURNING id",
                (serial, make, model, calibration_due, now_iso(), accuracy,
                 accuracy_read_as)).fetchone()
        if row is None:
            raise UserError(f"instrument '{serial}': already registered")
        return self.instrument(row[0])

    def instrument(self, instrument_id: int) -> Instrument:
        row = self._x(f"SELECT {_INSTRUMENT_COLS} FROM instruments WHERE id = %s",
                      (instrument_id,)).fetchone()
        return Instrument(*row)

    def instruments(self) -> list[Instrument]:
        return [Instrument(*r) for r in
                self._x(f"SELECT {_INSTRUMENT_COLS} FROM instruments ORDER BY id")]

    def instrument_by_serial(self, serial: str) -> Instrument:
        row = self._x(f"SELECT {_INSTRUMENT_COLS} FROM instruments WHERE serial = %s",
                      (serial,)).fetchone()
        if row is None:
            known = ", ".join(i.serial for i in self.instruments()) or "none yet"
            raise UserError(f"instrument '{serial}': not registered (registered: {known}; "
                            "add it with 'commission instruments add')")
        return Instrument(*row)

    def instrument_in_use(self, job: Job) -> Instrument | None:
        row = self._x("SELECT instrument_id FROM job_instrument WHERE job_id = %s",
                      (job.id,)).fetchone()
        return self.instrument(row[0]) if row and row[0] is not None else None

    def set_instrument_in_use(self, job: Job, instrument: Instrument | None) -> None:
        self._x("INSERT INTO job_instrument (job_id, instrument_id, at) VALUES (%s,%s,%s)"
                " ON CONFLICT (job_id) DO UPDATE SET instrument_id = excluded.instrument_id,"
                " at = excluded.at", (job.id, instrument.id if instrument else None, now_iso()))

    def set_export_profile(self, serial: str, profile: dict[str, Any]) -> Instrument:
        inst = self.instrument_by_serial(serial)
        self._x("INSERT INTO export_profiles (instrument_id, profile_json, updated_at)"
                " VALUES (%s,%s,%s) ON CONFLICT (instrument_id) DO UPDATE SET"
                " profile_json = excluded.profile_json, updated_at = excluded.updated_at",
                (inst.id, json.dumps(profile, sort_keys=True), now_iso()))
        return inst

    def export_profile_json(self, instrument_id: int) -> dict[str, Any] | None:
        row = self._x("SELECT profile_json FROM export_profiles WHERE instrument_id = %s",
                      (instrument_id,)).fetchone()
        return json.loads(row[0]) if row else None

    # -- files -------------------------------------------------------------------
    def put_file(self, path: Path) -> tuple[str, int]:
        """Store a file's bytes by SHA-256, streamed in 1 MiB chunks."""
        try:
            handle = path.open("rb")
        except OSError as exc:
            raise UserError(f"{path}: cannot read ({exc.strerror})") from None
        with handle:
            return self.put_stream(iter(lambda: handle.read(CHUNK), b""))

    def put_stream(self, chunks: Iterator[bytes]) -> tuple[str, int]:
        digest = hashlib.sha256()
        size = 0
        provisional = "partial-" + uuidlib.uuid4().hex
        with self._tx():
            for seq, chunk in enumerate(chunks):
                digest.update(chunk)
                size += len(chunk)
                self._x("INSERT INTO blob_chunks (blob, seq, data) VALUES (%s,%s,%s)",
                        (provisional, seq, chunk))
                if self.hook:
                    self.hook("inside file")
            sha = digest.hexdigest()
            if self.has_blob(sha):
                self._x("DELETE FROM blob_chunks WHERE blob = %s", (provisional,))
            else:
                self._x("UPDATE blob_chunks SET blob = %s WHERE blob = %s", (sha, provisional))
                self._x("INSERT INTO blobs (sha256, bytes, added_at) VALUES (%s,%s,%s)",
                        (sha, size, now_iso()))
        return sha, size

    def read_blob(self, sha256: str) -> Iterator[bytes]:
        seq = 0
        while True:
            row = self._x("SELECT data FROM blob_chunks WHERE blob = %s AND seq = %s",
                          (sha256, seq)).fetchone()
            if row is None:
                return
            yield bytes(row[0])
            seq += 1

    def has_blob(self, sha256: str) -> bool:
        return self._x("SELECT 1 FROM blobs WHERE sha256 = %s", (sha256,)).fetchone() is not None


    def list_jobs(self, *, status: str | None = None, installer: str | None = None,
                  due: str | None = None, page: int = 1, size: int = 100
                  ) -> tuple[list[tuple[Job, str | None, bool]], int]:
        """One page of jobs (oldest first) with the cached status and whether it is
        current (see ``status_cache``); filters run in the database. ``due``: a next
        inspection on or before this ISO date. ``size`` 0: every job."""
        from ..status_cache import check_logic_version

        where, args = ["true"], []
        if status:
            where.append("s.status = %s")
            args.append(status)
        if installer:  # as on SQLite (Register.list_jobs): lower() under "C" folds A-Z
            where.append('(lower(h.installer COLLATE "C") = lower(%s COLLATE "C")'
                         ' OR lower(j.assigned_to COLLATE "C") = lower(%s COLLATE "C"))')
            args += [installer.strip(), installer.strip()]
        if due:
            where.append("h.next_inspection != '' AND h.next_inspection <= %s")
            args.append(due)
        base = (" FROM jobs j JOIN job_heads h ON h.job_id = j.id LEFT JOIN job_status s"
                " ON s.job_id = j.id WHERE " + " AND ".join(where))
        # without a filter, the count needs no join (row-level security still applies)
        total = self._x("SELECT count(*)" + (base if args else " FROM jobs"),
                        args).fetchone()[0]
        limit = f" LIMIT {int(size)} OFFSET {int(size) * (max(page, 1) - 1)}" if size else ""
        rows = self._x(
            "SELECT j.id, s.status, coalesce(s.last_entry = h.last_entry AND"
            " s.checklist_sha256 = j.checklist_sha256 AND s.check_logic = %s, false)"
            + base + " ORDER BY j.id" + limit, [check_logic_version(), *args]).fetchall()
        jobs = self._jobs_by_ids([r[0] for r in rows])
        return [(jobs[r[0]], r[1], bool(r[2])) for r in rows], total

    def _jobs_by_ids(self, ids: list[int]) -> dict[int, Job]:
        """Jobs with their amended details in two queries (a page of `jobs`)."""
        details: dict[int, list[tuple[str, str]]] = {}
        for job_id, item, value in self._x(
                "SELECT job_id, item_id, value_json FROM entries WHERE job_id = ANY(%s)"
                " AND action = 'detail' ORDER BY at, uuid", (ids,)):
            details.setdefault(job_id, []).append((item, value))
        out = {}
        for row in self._x(f"SELECT {_JOB_COLS} FROM jobs WHERE id = ANY(%s)", (ids,)):
            out[row[0]] = self._job(row, details.get(row[0], []))
        return out

    def remember_status(self, job: Job, last_entry: str, status: str) -> None:
        from ..status_cache import check_logic_version

        with contextlib.suppress(RegisterError):
            self._x(
                "INSERT INTO job_status (job_id, last_entry, checklist_sha256, check_logic,"
                " status, derived_at) VALUES (%s,%s,%s,%s,%s,%s) ON CONFLICT (job_id) DO"
                " UPDATE SET last_entry = excluded.last_entry, checklist_sha256 ="
                " excluded.checklist_sha256, check_logic = excluded.check_logic,"
                " status = excluded.status, derived_at = excluded.derived_at",
                (job.id, last_entry, job.checklist_sha256, check_logic_version(), status,
                 now_iso()))

    # -- sync (see register/sync.py) ------------------------------------------------
    def setting(self, key: str) -> str | None:
        row = self._x("SELECT value FROM settings WHERE key = %s", (key,)).fetchone()
        return row[0] if row else None

    def entry_index(self, job: Job) -> dict[str, str]:
        return dict(self._x("SELECT uuid, item_id FROM entries WHERE job_id = %s",
                            (job.id,)).fetchall())

    def entry_rows(self, job: Job, uuids: list[str]) -> list[tuple]:
        rows = self._x(
            "SELECT e.uuid, e.item_id, e.action, e.raw, e.value_json, e.unit_typed, i.serial,"
            " e.at, e.by, e.host, e.read_with, e.carried FROM entries e LEFT JOIN instruments i"
            " ON i.id = e.instrument_id WHERE e.job_id = %s AND e.uuid = ANY(%s)"
            " ORDER BY e.at, e.uuid", (job.id, list(uuids))).fetchall()
        return [tuple(r) for r in rows]

    def insert_entries(self, job: Job, rows: list[tuple]) -> int:
        """Add portable entry rows (a union by UUID) in one transaction, through COPY into
        a temporary table, so a sync costs about what a bulk COPY costs."""
        with self._tx(), self.conn.cursor() as cur:
            self._copy_in(cur, rows)
            cur.execute(_SYNC_INSERT, (job.id,))
            return cur.rowcount

    def _copy_in(self, cur, rows: list[tuple]) -> None:
        """The rows into this session's ``sync_in`` (emptied at every commit)."""
        cur.execute("CREATE TEMP TABLE IF NOT EXISTS sync_in (uuid TEXT, item_id TEXT,"
                    " action TEXT, raw TEXT, value_json TEXT, unit_typed TEXT, serial TEXT,"
                    " at TEXT, by TEXT, host TEXT, read_with TEXT, carried TEXT)"
                    " ON COMMIT DELETE ROWS")
        with cur.copy(f"COPY sync_in ({', '.join(_PORTABLE)}) FROM STDIN") as copy:
            for r in rows:
                copy.write_row(r)
        if self.hook:
            self.hook("inside entries")

    def insert_entry_batches(self, job: Job, batches: Iterable[list[tuple]],
                             before: Callable[[list[tuple]], None] | None = None
                             ) -> Iterator[int]:
        """Add batches of portable rows, each batch one transaction (a union by UUID, as
        ``insert_entries``), yielding each batch's count of new entries once it is
        committed. ``before(rows)`` runs before a batch is sent, outside any transaction
        (sync stores there the files the batch names).

        Pipelined: a batch's rows go up by COPY; its INSERT and COMMIT are then sent
        without waiting, and the next batch is read from ``batches`` (the laptop's
        register) while the server inserts; the results are collected after that read.
        A batch is therefore either committed whole or not at all, as before; only the
        waiting overlaps. The INSERT expects new UUIDs (what the register lacked when
        sync looked); if one arrived meanwhile, the batch is rolled back and sent again
        skipping those (``insert_entries``)."""
        import psycopg

        if (self.conn.info.transaction_status != psycopg.pq.TransactionStatus.IDLE
                or not psycopg.Pipeline.is_supported()):  # inside batch(): no overlap
            for rows in batches:
                if before:
                    before(rows)
                yield self.insert_entries(job, rows)
            return
        source = iter(batches)
        rows = next(source, None)
        while rows is not None:
            if before:
                before(rows)
            read: list = []  # [next batch or None, the exception reading it or None]
            try:
                with self.conn.cursor() as cur:
                    cur.execute("BEGIN")
                    self._copy_in(cur, rows)
                    with self.conn.pipeline():
                        cur.execute(_SYNC_NEW, (job.id,))
                        self.conn.execute("COMMIT")
                        read = _read_next(source)  # while the server works
                    added = cur.rowcount
            except psycopg.errors.UniqueViolation:  # some arrived meanwhile: skip those
                # (the refusal may come back before the next batch was read)
                self._rollback()
                added = self.insert_entries(job, rows)
            except psycopg.Error as exc:
                self._rollback()
                raise _register_error(self.location, exc) from None
            except BaseException:  # (a test's hook, an interrupt): nothing of it kept
                self._rollback()
                raise
            yield added
            following, failed = read or _read_next(source)
            if failed is not None:  # raised after this batch's outcome
                raise failed
            rows = following

    def _rollback(self) -> None:
        import psycopg

        with contextlib.suppress(psycopg.Error):
            if (self._conn is not None and not self._conn.closed and
                    self._conn.info.transaction_status != psycopg.pq.TransactionStatus.IDLE):
                self._conn.execute("ROLLBACK")

    def job_row(self, job: Job) -> dict[str, Any]:
        with self._tx(), self.conn.cursor() as cur:
            cur.execute("SELECT * FROM jobs WHERE id = %s", (job.id,))
            names = [d.name for d in cur.description]
            row = cur.fetchone()
        return {k: v for k, v in zip(names, row, strict=True) if k not in ("id", "assigned_to")}

    def assign(self, job: Job, role: str) -> None:
        """The office assigns a job to an installer (their database role)."""
        done = self._x("UPDATE jobs SET assigned_to = %s WHERE id = %s", (role, job.id))
        if done.rowcount != 1:
            raise RegisterError(f"{self.location}: job {job.short_id} cannot be assigned by "
                                "this database role (the office assigns jobs)")

    def jobs_assigned(self, role: str) -> list[Job]:
        return [self._job(r) for r in self._x(
            f"SELECT {_JOB_COLS} FROM jobs WHERE assigned_to = %s ORDER BY id", (role,))]

    def role(self) -> str:
        """The database role of this connection (asked once)."""
        if self._role is None:
            self._role = self._x("SELECT session_user").fetchone()[0]
        return self._role

    def conflicts(self, job: Job | None = None) -> list[dict[str, str]]:
        sql = ("SELECT job_uuid, item_id, entry_uuids, flagged_at, confirmed_by, confirmed_at"
               " FROM conflicts")
        rows = (self._x(sql + " WHERE job_uuid = %s ORDER BY flagged_at, item_id",
                        (job.uuid,)) if job else
                self._x(sql + " ORDER BY flagged_at, item_id"))
        return [dict(zip(CONFLICT_FIELDS, r, strict=True)) for r in rows]

    def add_conflicts(self, rows: list[dict[str, str]]) -> None:
        with self._tx():
            for c in rows:
                self._x(
                    "INSERT INTO conflicts (job_uuid, item_id, entry_uuids, flagged_at,"
                    " confirmed_by, confirmed_at) VALUES (%s,%s,%s,%s,%s,%s)"
                    " ON CONFLICT (job_uuid, item_id, entry_uuids) DO UPDATE SET"
                    " confirmed_by = excluded.confirmed_by, confirmed_at = excluded.confirmed_at"
                    " WHERE conflicts.confirmed_at = '' AND excluded.confirmed_at != ''",
                    tuple(c[k] for k in CONFLICT_FIELDS))

    # -- locks and copies --------------------------------------------------------
    def walk_lock(self, job: Job, take_over: bool = False):
        from .lease import Lease

        return Lease(self, job, take_over=take_over)

    def backup(self, dest: Path) -> None:
        raise UserError(f"{self.location}: a company register is backed up on its server "
                        "(pg_dump); 'commission backup' copies a register file")


def _read_next(source: Iterator[list[tuple]]) -> list:
    """[the next batch or None at the end, None] or [None, what reading it raised]."""
    try:
        return [next(source, None), None]
    except BaseException as exc:
        return [None, exc]


def _register_error(location: str, exc: BaseException) -> RegisterError:
    """A server refusal or a lost connection as one line naming the register."""
    import psycopg

    if isinstance(exc, psycopg.errors.InsufficientPrivilege):
        return RegisterError(f"{location}: not allowed for this database role "
                             f"({_first_line(exc)}); nothing was changed")
    if isinstance(exc, psycopg.errors.RaiseException):
        return RegisterError(f"{location}: refused ({_first_line(exc)}); nothing was changed")
    if isinstance(exc, psycopg.OperationalError):
        return RegisterError(f"{location}: the connection failed ({_first_line(exc)}); "
                             "nothing unconfirmed was kept")
    return RegisterError(f"{location}: {_first_line(exc)}; nothing unconfirmed was kept")


def _first_line(exc: BaseException) -> str:
    return (str(exc).strip().splitlines() or [type(exc).__name__])[0][:200]


def _entry(row: tuple) -> Entry:
    return Entry(row[0], row[1], row[2], row[3], row[4],
                 json.loads(row[5]) if row[5] is not None else None,
                 row[6], row[7], row[8], row[9], row[10], row[11],
                 json.loads(row[12]) if row[12] else None,
                 row[13] if len(row) > 13 else None)
