"""The job register: jobs, append-only entries, instruments and the files and photos taken
on site, behind one protocol (``protocol.RegisterEngine``) with two engines: SQLite (one
file; the default, and an installer's working copy) and PostgreSQL (a company's register).

``open_register`` chooses the engine from ``--register`` or ``COMMISSION_REGISTER``: a
``postgresql://`` (or ``postgres://``) URL, or else a file path.
"""

from __future__ import annotations

from pathlib import Path

from .protocol import RegisterEngine
from .store import Entry, Instrument, Job, Register, RegisterError

SQLiteRegister = Register
URL_SCHEMES = ("postgresql://", "postgres://")


def is_url(target: str | Path | None) -> bool:
    return isinstance(target, str) and target.strip().lower().startswith(URL_SCHEMES)


def redact(url: str) -> str:
    """A URL as it may be shown: any password in it replaced by ***."""
    import re

    return re.sub(r"(://[^/:@]*:)[^/@]*@", r"\1***@", url)


def register_target(option: str | Path | None = None) -> str | Path:
    """What the register is: ``--register``, then ``COMMISSION_REGISTER``, then the file in
    the user data directory. A URL stays a string; anything else is a path."""
    import os

    from ..paths import register_path

    for given in (option, os.environ.get("COMMISSION_REGISTER")):
        if given and is_url(str(given)):
            return str(given).strip()
        if given:
            break
    return register_path(option)


def make_register(option: str | Path | None = None, create: bool = True) -> RegisterEngine:
    """The engine for ``option`` (not yet opened)."""
    target = register_target(option)
    if isinstance(target, str):
        from .postgres import PostgresRegister

        return PostgresRegister(target, create=create)
    return Register(target, create=create)


def open_register(option: str | Path | None = None, create: bool = True) -> RegisterEngine:
    """The engine for ``option``, opened (connected and migrated)."""
    reg = make_register(option, create)
    reg.open()
    return reg


__all__ = ["Entry", "Instrument", "Job", "Register", "RegisterEngine", "RegisterError",
           "SQLiteRegister", "is_url", "make_register", "open_register", "register_target"]
