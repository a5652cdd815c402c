"""Shared helpers for the CSV readers: decoding, header, column lookup, bad-row search."""

from __future__ import annotations

import math
import os
import re
from dataclasses import dataclass

import numpy as np

from commission.captures import CaptureError

_DELIMITERS = (",", ";", "\t")
_COMMENT = "#"


@dataclass(frozen=True)
class TextTable:
    """A CSV file whose header has been read; the body is read from ``path`` on demand.

    Attributes
    ----------
    source : str
        Path as given, for messages.
    path : str
        Path to open.
    names : tuple of str
        Column names as written in the header (stripped of spaces and quotes).
    delimiter : str
        Field separator found in the header.
    header_line : int
        1-based line number of the header.
    encoding : str
        Text encoding of the file.
    """

    source: str
    path: str
    names: tuple[str, ...]
    delimiter: str
    header_line: int
    encoding: str

    def body_lines(self):
        """(line number, text) of every data line, skipping blanks and comments."""
        with open(self.path, encoding=self.encoding, errors="replace", newline=None) as fh:
            for k, line in enumerate(fh, start=1):
                if k <= self.header_line:
                    continue
                stripped = line.strip()
                if stripped and not stripped.startswith(_COMMENT):
                    yield k, line.rstrip("\r\n")


_HEAD_BYTES = 1 << 16


def read_table(path, *, expected):
    """Read the header of a text CSV, after checking that the file is text at all.

    Only the first 64 KiB are read here; the body is parsed by the caller straight from the
    file. ``expected`` describes the columns for the messages, e.g. "time_s, voltage_v".
    """
    source = os.fspath(path)
    try:
        with open(source, "rb") as fh:
            head = fh.read(_HEAD_BYTES)
            size = os.fstat(fh.fileno()).st_size
    except FileNotFoundError:
        raise CaptureError(f"{source}: no such file") from None
    except IsADirectoryError:
        raise CaptureError(f"{source}: is a directory, not a CSV file") from None
    except OSError as exc:
        raise CaptureError(f"{source}: cannot be read ({exc.strerror})") from None
    if size == 0 or (size <= len(head) and not head.strip()):
        raise CaptureError(
            f"{source}: the file is empty; expected a header line ({expected}) and one row "
            "per reading"
        )
    _reject_binary(source, head)
    encoding = _encoding(head, complete=size <= len(head))
    text = head.decode(encoding, errors="replace")
    if encoding == "utf-8-sig":
        text = text.lstrip("\ufeff")
    header = None
    header_line = 0
    lines = re.split(r"\r\n|\r|\n", text)
    if size > len(head):
        lines = lines[:-1]  # the last line may be cut off
    for number, raw in enumerate(lines, start=1):
        line = raw.strip()
        if line and not line.startswith(_COMMENT):
            header, header_line = line, number
            break
    if header is None:
        raise CaptureError(
            f"{source}: holds no header line (only comments or blank lines); expected a "
            f"header line ({expected}) and one row per reading"
        )
    delimiter = max(_DELIMITERS, key=header.count)
    if header.count(delimiter) == 0:
        delimiter = ","
    names = tuple(_clean(n) for n in header.split(delimiter))
    return TextTable(source, source, names, delimiter, header_line, encoding)


def _encoding(head, *, complete):
    try:
        head.decode("utf-8")
    except UnicodeDecodeError as exc:
        # a multi-byte character cut at the end of the sample is not an error
        if complete or exc.start < len(head) - 3:
            return "cp1252"
    return "utf-8-sig"


def _reject_binary(source, data):
    head = data[:4096]
    if b"\x00" in head:
        where = head.index(b"\x00")
        raise CaptureError(
            f"{source}: is not a text CSV file (binary data at byte {where}); "
            "export the capture as CSV text, or give a WAV file"
        )
    control = sum(1 for b in head if b < 32 and b not in (9, 10, 13))
    if control > max(2, len(head) // 100):
        raise CaptureError(
            f"{source}: is not a text CSV file (it holds binary control bytes); export the "
            "capture as CSV text"
        )


def _clean(name):
    return name.strip().strip('"').strip("'").strip()


def resolve_columns(table, wanted, *, optional=(), mapping=None, alternatives=None):
    """Find the column index of each wanted name.

    Parameters
    ----------
    table : TextTable
    wanted : sequence of str
        Canonical names that must be present.
    optional : sequence of str
        Canonical names used when present.
    mapping : dict, optional
        Canonical name -> name in the file header.
    alternatives : dict, optional
        Canonical name -> alternative canonical name that can stand in for it, for the
        message only (e.g. "time_s" -> "a sample rate").

    Returns
    -------
    dict of str to int
        Canonical name -> column index, for every wanted and present optional name.
    """
    mapping = dict(mapping or {})
    allowed = set(wanted) | set(optional)
    unknown = sorted(set(mapping) - allowed)
    if unknown:
        raise CaptureError(
            f"{table.source}: column mapping names {', '.join(repr(u) for u in unknown)}; "
            f"accepted keys are {', '.join(sorted(allowed))}"
        )
    lookup = {}
    for k, name in enumerate(table.names):
        lookup.setdefault(name, k)
        lookup.setdefault(name.lower(), k)
    found = {}
    missing = []
    for canon in (*wanted, *optional):
        target = mapping.get(canon, canon)
        k = lookup.get(target, lookup.get(target.lower()))
        if k is None:
            if canon in wanted:
                missing.append(f"{target!r}" if target == canon else f"{target!r} (for {canon})")
            elif canon in mapping:
                missing.append(f"{target!r} (for {canon})")
        else:
            found[canon] = k
    if missing:
        shown = ", ".join(repr(n) for n in table.names) or "none"
        alt = ""
        if alternatives:
            alt = "; " + "; ".join(f"instead of {a!r} give {b}" for a, b in alternatives.items())
        need = ", ".join(repr(w) for w in wanted)
        raise CaptureError(
            f"{table.source}: line {table.header_line}: missing "
            f"{'column' if len(missing) == 1 else 'columns'} {', '.join(missing)}; "
            f"the header has {shown}, expected {need}{alt}; map other names with a column "
            "mapping, e.g. voltage_v=U1"
        )
    return found


def bad_row_message(table, indices, names, *, what="a number"):
    """Scan the body for the first row that does not parse; return a message or None.

    ``indices`` are the column positions to check and ``names`` their names for messages.
    """
    width = max(indices) + 1
    for line_no, line in table.body_lines():
        fields = line.split(table.delimiter)
        if len(fields) < width:
            return (f"{table.source}: line {line_no}: {len(fields)} field(s) but the header "
                    f"has {len(table.names)}; every row needs a value in each column")
        for k, name in zip(indices, names, strict=True):
            text = _clean(fields[k])
            if not text:
                return (f"{table.source}: line {line_no}, column {name!r}: empty value; "
                        f"expected {what}")
            try:
                value = float(text)
            except ValueError:
                return (f"{table.source}: line {line_no}, column {name!r}: {text[:30]!r} is "
                        f"not {what} (use '.' as the decimal point)")
            if not math.isfinite(value):
                return (f"{table.source}: line {line_no}, column {name!r}: {text!r} is not a "
                        "finite number; remove or repair that reading")
    return None


def line_of_row(table, row):
    """1-based file line number of data row ``row`` (0-based)."""
    for k, (line_no, _) in enumerate(table.body_lines()):
        if k == row:
            return line_no
    return table.header_line + row + 1


def first_nonfinite(table, columns, names):
    """Raise CaptureError naming the first row holding NaN or inf in any given column."""
    for values, name in zip(columns, names, strict=True):
        bad = np.flatnonzero(~np.isfinite(values))
        if bad.size:
            row = int(bad[0])
            raise CaptureError(
                f"{table.source}: line {line_of_row(table, row)}, column {name!r}: not a "
                "finite number (NaN or infinity); remove or repair that reading"
            )


def clipping_warning(source, name, values):
    """Warning text when many samples sit exactly at the extreme values (converter rails).

    Heuristic for files without known rails: an unclipped sine from a converter of a few
    hundred codes or more spends well under 2 % of its samples at its exact peak code,
    whereas a clipped one sits there for a large share of each cycle.
    """
    if values.size < 50:
        return None
    notes = []
    for label, extreme in (("top", values.max()), ("bottom", values.min())):
        count = int(np.count_nonzero(values == extreme))
        if count >= max(3, 0.02 * values.size):
            notes.append(f"{count} at the {label} value {extreme:g}")
    if not notes:
        return None
    return (f"{source}: column {name!r} has {' and '.join(notes)} "
            f"({values.size} samples): the converter was probably clipping, so peaks, RMS and "
            "harmonics read low; reduce the gain or use a larger range")
