"""The embedded record: one strict, versioned schema, its builder, reader and verifier.

Every part of the program that writes or reads the record embedded in a handover PDF
does it through this package (see DEVELOPERS.md, "The record schema")."""

from .build import ATTACH_LIMIT, RECORD_NAME, BuiltRecord, build, file_name, verdict_snapshot
from .content import (
    ChecklistVerdict,
    ContentResult,
    FilesFromPdf,
    entries_from_record,
    read_record,
    verify_content,
)
from .schema import (
    FORMAT,
    FORMAT_V1,
    FORMAT_V2,
    READABLE,
    AnyRecord,
    Record,
    RecordV1,
    RecordV2,
    SigningInfo,
    StampBox,
    parse,
)
from .strictjson import RecordError, canonical, loads, record_hash
from .text import safe

parse_record = read_record

__all__ = [
    "ATTACH_LIMIT", "FORMAT", "FORMAT_V1", "FORMAT_V2", "READABLE", "RECORD_NAME", "AnyRecord",
    "BuiltRecord", "ChecklistVerdict", "ContentResult", "FilesFromPdf", "Record", "RecordError",
    "RecordV1", "RecordV2", "SigningInfo", "StampBox", "build", "canonical", "entries_from_record",
    "file_name", "loads", "parse", "parse_record", "read_record", "record_hash", "safe",
    "verdict_snapshot", "verify_content",
]
