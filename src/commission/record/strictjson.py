"""Canonical JSON for the record, and a reader that refuses what a record never holds.

Writing: sorted keys, UTF-8, compact separators, no NaN: the same data always gives the
same bytes, and the record hash is the SHA-256 of those bytes.

Reading a record made elsewhere: before anything is built from the bytes, the nesting
depth is counted (strings taken out first), so a deeply nested document never reaches
the parser's recursion; duplicate keys are refused (JSON leaves their meaning to the
reader, RFC 8259 §4, so two readers could see two different records); NaN and the
infinities are refused (they are not JSON at all, RFC 8259 §6).
"""

from __future__ import annotations

import hashlib
import json
import math
import re
from typing import Any

from ..errors import UserError

MAX_RECORD_BYTES = 32 * 1024 * 1024  # the record itself, without attached files
MAX_DEPTH = 16  # the deepest real record is 5 levels (verdicts[n].measured.value)

_STRINGS = re.compile(r'"(?:[^"\\]|\\.)*"', re.DOTALL)
_BRACKETS = re.compile(r"[\[\]{}]")


class RecordError(UserError):
    """The embedded record cannot be accepted; one line naming the field."""

    def __init__(self, message: str):
        super().__init__(f"record {message}")


def canonical(data: Any) -> bytes:
    return json.dumps(data, sort_keys=True, ensure_ascii=False, separators=(",", ":"),
                      allow_nan=False).encode("utf-8")


def record_hash(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def _depth(text: str) -> int:
    deepest = depth = 0
    for match in _BRACKETS.finditer(_STRINGS.sub('""', text)):
        if match.group(0) in "[{":
            depth += 1
            if depth > deepest:
                deepest = depth
                if deepest > MAX_DEPTH:
                    return deepest
        else:
            depth -= 1
    return deepest


def _no_constant(name: str) -> Any:
    raise RecordError(f"holds {name}: not a number JSON allows (NaN and infinities are "
                      "refused)")


def _float(text: str) -> float:
    value = float(text)
    if math.isinf(value):
        raise RecordError(f"holds the number {text[:40]}, which overflows to infinity "
                          "(NaN and infinities are refused)")
    return value


def _pairs(pairs: list[tuple[str, Any]]) -> dict[str, Any]:
    out: dict[str, Any] = {}
    for key, value in pairs:
        if key in out:
            shown = key if len(key) <= 40 else key[:40] + "…"
            from .text import safe

            raise RecordError(f"field '{safe(shown)}': duplicate key (a record never repeats "
                              "a key)")
        out[key] = value
    return out


def loads(payload: bytes) -> Any:
    """Parse record bytes; RecordError (one line) for anything a record never holds."""
    if len(payload) > MAX_RECORD_BYTES:
        raise RecordError(f"is {len(payload)} bytes; records up to {MAX_RECORD_BYTES} bytes "
                          "are read")
    try:
        text = payload.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise RecordError(f"is not UTF-8 text (byte {exc.start})") from None
    depth = _depth(text)
    if depth > MAX_DEPTH:
        raise RecordError(f"is nested more than {MAX_DEPTH} levels deep (accepted: up to "
                          f"{MAX_DEPTH})")
    try:
        return json.loads(text, object_pairs_hook=_pairs, parse_constant=_no_constant,
                          parse_float=_float)
    except RecordError:
        raise
    except (ValueError, RecursionError) as exc:
        raise RecordError(f"is not valid JSON ({str(exc).splitlines()[0][:80]})") from None
