"""One walk per job at a time: an OS file lock, released by the OS if the process dies."""

from __future__ import annotations

import errno
import fcntl
import os
from pathlib import Path

from ..errors import UserError


class JobLock:
    def __init__(self, register: Path, job_uuid: str, short_id: str):
        self.path = register.with_name(register.name + ".locks") / job_uuid
        self.short_id = short_id
        self._fd: int | None = None

    def __enter__(self) -> JobLock:
        try:
            self.path.parent.mkdir(parents=True, exist_ok=True)
            fd = os.open(self.path, os.O_RDWR | os.O_CREAT, 0o600)
        except OSError as exc:
            hint = ""
            if exc.errno in (errno.EACCES, errno.EPERM, errno.EROFS):
                hint = ("; the register's folder is read-only for this user, so nothing can be "
                        "recorded here")
            raise UserError(f"{self.path}: cannot create the walk lock ({exc.strerror}){hint}"
                            ) from None
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except BlockingIOError:
            try:
                holder = os.pread(fd, 32, 0).decode(errors="replace").strip()
            except OSError:
                holder = ""
            os.close(fd)
            who = f" (process {holder})" if holder else ""
            raise UserError(
                f"job {self.short_id} is already open in another walk{who}; finish or stop "
                "that one first"
            ) from None
        os.ftruncate(fd, 0)
        os.pwrite(fd, str(os.getpid()).encode(), 0)
        self._fd = fd
        return self

    def __exit__(self, *exc: object) -> None:
        if self._fd is not None:
            fcntl.flock(self._fd, fcntl.LOCK_UN)
            os.close(self._fd)
            self._fd = None
