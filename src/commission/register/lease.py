"""One walk per job across devices on a company register: a lease row with an expiry.

The lease names the device and the person holding it and since when; a second walk is
refused with those. A lease not renewed before it expires (a laptop that died in a loft)
may be taken over, but only when asked for (``take_over=True``, the walk's
``--take-over``), never silently.
"""

from __future__ import annotations

import os
from datetime import UTC, datetime, timedelta

from ..errors import UserError
from .store import now_iso

LEASE_HOURS = float(os.environ.get("COMMISSION_LEASE_HOURS", "12"))


def _iso(t: datetime) -> str:
    return t.astimezone(UTC).isoformat(timespec="milliseconds").replace("+00:00", "Z")


class Lease:
    def __init__(self, reg, job, take_over: bool = False, hours: float | None = None,
                 device: str | None = None):
        self.reg = reg
        self.job = job
        self.device = device  # a laptop walking its own copy names itself
        self.take_over = take_over
        self.hours = LEASE_HOURS if hours is None else hours
        self.held = False

    def __enter__(self) -> Lease:
        reg = self.reg
        device = self.device or reg.device_id()
        now = datetime.now(UTC)
        with reg._tx():
            row = reg._x("SELECT device_id, holder, since, expires FROM leases"
                         " WHERE job_uuid = %s FOR UPDATE", (self.job.uuid,)).fetchone()
            if row is not None and row[0] != device:
                holder, since, expires = row[1], row[2], row[3]
                if expires > _iso(now):
                    raise UserError(f"job {self.job.short_id} is being walked on device {row[0]} "
                                    f"by {holder} since {since} (lease until {expires}); "
                                    "finish or stop that walk first")
                if not self.take_over:
                    raise UserError(f"job {self.job.short_id}: the walk on device {row[0]} by "
                                    f"{holder} since {since} stopped renewing its lease "
                                    f"(expired {expires}); give --take-over to take the job "
                                    "over")
            reg._x("INSERT INTO leases (job_uuid, device_id, holder, since, expires)"
                   " VALUES (%s,%s,%s,%s,%s) ON CONFLICT (job_uuid) DO UPDATE SET"
                   " device_id = excluded.device_id, holder = excluded.holder,"
                   " since = excluded.since, expires = excluded.expires",
                   (self.job.uuid, device, reg.who(), now_iso(),
                    _iso(now + timedelta(hours=self.hours))))
        self.held = True
        return self

    def __exit__(self, *exc: object) -> None:
        if self.held:
            import contextlib

            with contextlib.suppress(Exception):
                self.reg._x("DELETE FROM leases WHERE job_uuid = %s AND device_id = %s",
                            (self.job.uuid, self.device or self.reg.device_id()))
            self.held = False


class LaptopWalk:
    """A walk on a laptop that syncs with a company register: the job's lease is taken on
    the company register as well when it can be reached (a few seconds at most), so two
    devices never walk the same job at once while online. Offline (a loft), the walk goes
    on and says the lease could not be checked; sync still keeps both walks' entries and
    flags what both changed."""

    def __init__(self, local_lock, laptop, job, url: str, take_over: bool = False):
        self.local_lock = local_lock
        self.laptop = laptop
        self.job = job
        self.url = url
        self.take_over = take_over
        self.remote = None
        self.lease: Lease | None = None
        self.note = ""

    def __enter__(self) -> LaptopWalk:
        self.local_lock.__enter__()
        try:
            self._take()
        except BaseException:
            self.local_lock.__exit__(None, None, None)
            raise
        return self

    def _take(self) -> None:
        from . import redact
        from .postgres import PostgresRegister
        from .store import RegisterError

        remote = PostgresRegister(self.url, create=False, connect_timeout=3)
        try:
            remote.open()
        except RegisterError:
            self.note = (f"the company register ({redact(self.url)}) cannot be reached: "
                         "walking offline, the job's lease was not checked")
            return
        if not remote.has_job(uuid=self.job.uuid):
            remote.close()  # not synced yet: nobody else can hold it
            return
        lease = Lease(remote, remote.find_job(self.job.uuid), take_over=self.take_over,
                      device=self.laptop.device_id())
        try:
            lease.__enter__()
        except BaseException:
            remote.close()
            raise
        self.remote, self.lease = remote, lease

    def __exit__(self, *exc: object) -> None:
        try:
            if self.lease is not None:
                self.lease.__exit__(*exc)
            if self.remote is not None:
                self.remote.close()
        finally:
            self.local_lock.__exit__(*exc)
