"""Moved: the record lives in :mod:`commission.record` (one strict, versioned schema).
This module re-exports it for code that still imports it from here."""

from ..record import (  # noqa: F401
    ATTACH_LIMIT,
    FORMAT,
    RECORD_NAME,
    BuiltRecord,
    build,
    canonical,
    entries_from_record,
    record_hash,
    verdict_snapshot,
)
