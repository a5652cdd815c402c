"""Record text on a terminal, and the characters a record's text may hold.

Outside the record package so that listing commands (`jobs`, `due`) and the walk can
use it without loading the record schema (pydantic).

A record comes from someone else's computer: whatever it says is shown with every
control character escaped, so a text answer cannot move the cursor, recolour the
screen, rewrite an earlier line or reverse the reading order (bidi overrides).
"""

from __future__ import annotations

import re

# C0 controls except tab and newline, DEL, and C1 controls (ECMA-48 / ISO 6429).
CONTROL = re.compile(r"[\x00-\x08\x0b-\x1f\x7f-\x9f]")
# Controls of any kind, newline and tab included (for one-line fields).
CONTROL_ANY = re.compile(r"[\x00-\x1f\x7f-\x9f]")
# Unicode bidirectional embeddings, overrides and isolates (Unicode TR #9, table 1) and
# the line/paragraph separators: they change how a terminal lays out what follows.
_LAYOUT = re.compile("[\u200e\u200f\u202a-\u202e\u2066-\u2069\u2028\u2029\ufeff]")


def _escape(match: re.Match[str]) -> str:
    code = ord(match.group(0))
    return f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}"


def safe(text: object) -> str:
    """Text from a record, made safe to print on one terminal line."""
    s = str(text)
    return _LAYOUT.sub(_escape, CONTROL_ANY.sub(_escape, s))


def first_control(text: str, allow_newline: bool) -> str | None:
    """The first control character of ``text`` as an escape (\\x1b), or None."""
    found = (CONTROL if allow_newline else CONTROL_ANY).search(text)
    return _escape(found) if found else None
