"""The status shown by `jobs`: a cache, never a verdict.

A job's status is derived from its checklist and entries by ``checks.evaluate`` (the walk,
`show`, `report` and `verify` always derive it afresh and never read this cache). What
`jobs` shows is the last status derived, stored with the key it was derived under: the
job's last non-detail entry (entry time and UUID), its checklist's SHA-256 and the
check-logic version. When any of the three has moved on (a new entry synced in, an
upgrade of the checks), `jobs` still shows the last status, marked as not re-derived,
and `jobs --refresh` derives the page it shows. So listing needs neither the unit
library nor the checks, and an upgrade never makes `jobs` slow.
"""

from __future__ import annotations

import re
from functools import cache
from pathlib import Path


@cache
def check_logic_version() -> int:
    """``checks.registry.CHECK_LOGIC_VERSION`` read from the module's text, without
    importing the checks (which load the unit library and every check: most of a second).
    A test holds this equal to the imported constant."""
    text = (Path(__file__).parent / "checks" / "registry.py").read_text(encoding="utf-8")
    found = re.search(r"^CHECK_LOGIC_VERSION = (\d+)\s*$", text, re.M)
    if found is None:  # pragma: no cover - the test below catches it first
        from .checks.registry import CHECK_LOGIC_VERSION

        return CHECK_LOGIC_VERSION
    return int(found.group(1))


def entry_key(at: str, uuid: str) -> str:
    """The order key of an entry: (entry time, UUID) as one comparable text."""
    return f"{at} {uuid}"
