"""Fixtures for the periodic-inspection tests: the demo's signed record as a baseline."""

from __future__ import annotations

import hashlib
import json
import subprocess
from pathlib import Path

import pytest
from tests.conftest import need_tool


def detach_record(pdf: Path, folder: Path) -> bytes:
    """The embedded record's bytes, taken out with poppler's pdfdetach (an outside tool)."""
    need_tool("pdfdetach")
    listing = subprocess.run(["pdfdetach", "-list", str(pdf)], capture_output=True,
                             text=True).stdout
    names = [line.split(": ", 1)[1] for line in listing.splitlines()[1:]]
    n = names.index("commission-record.json") + 1
    target = folder / "record.json"
    subprocess.run(["pdfdetach", "-save", str(n), "-o", str(target), str(pdf)], check=True)
    return target.read_bytes()


def canonical_sha256(payload: bytes) -> str:
    """SHA-256 over canonical JSON (sorted keys, UTF-8, compact), computed here with the
    standard library alone."""
    data = json.loads(payload)
    text = json.dumps(data, sort_keys=True, ensure_ascii=False, separators=(",", ":"))
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


@pytest.fixture
def baseline(demo_record):
    """(record PDF, the installer's certificate) of the demo's signed handover record."""
    return demo_record, demo_record.parent / "identity" / "cert.pem"
