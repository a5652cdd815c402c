"""The job register: one SQLite file holding jobs, append-only entries, instruments
and the files and photos taken on site."""

from .store import Entry, Instrument, Job, Register, RegisterError

__all__ = ["Entry", "Instrument", "Job", "Register", "RegisterError"]
