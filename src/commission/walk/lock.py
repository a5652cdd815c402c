"""Moved: the walk lock belongs to the register (``Register.walk_lock``)."""

from ..register.lock import JobLock

__all__ = ["JobLock"]
