"""The reader layer shared by every CSV reader: chosen by content, never by file name.

From the first 64 KiB of a file it finds

* the field separator and the decimal mark (``,`` with ``.``; ``;`` or tab with ``.`` or
  ``,``) by how the lines split into numbers;
* the header line: the last line that is not data just above the first data line; the
  lines above it (an instrument's model, serial, settings) are kept as ``notes``;
* the unit of each column from its header, in the usual spellings (``U [V]``, ``P (kW)``,
  ``temp_F``, ``t/ms``, ``Time [min]``), converted to SI with pint (temperatures to °C).

The body is then parsed by ``numpy.loadtxt`` in one pass where it can be (the fast path for
large captures); a log's rows are read one by one so that every bad value names its line and
column. Every problem is a :class:`CaptureError` with one line naming the file, the line or
column, and what would be accepted.
"""

from __future__ import annotations

import math
import os
import re
from dataclasses import dataclass, field
from functools import lru_cache

import numpy as np

from commission.captures import CaptureError

_DELIMITERS = (";", "\t", ",")
_COMMENT = "#"
_HEAD_BYTES = 1 << 16
_VALUEY = re.compile(r"[\s\d.,:+\-/TZ]*\d[\s\d.,:+\-/TZeE]*")
_DECIMAL_COMMA = re.compile(r"^[+-]?\d*,\d+([eE][+-]?\d+)?$")
_NUMBER = re.compile(r"^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$")


@dataclass(frozen=True)
class TextTable:
    """A CSV file whose layout has been read; the body is read from ``path`` on demand.

    Attributes
    ----------
    source : str
        Name of the file for messages (the name the person gave, never a temporary copy).
    path : str
        Path to open.
    names : tuple of str
        Column names as written in the header (stripped of spaces and quotes).
    delimiter : str
        Field separator.
    header_line : int
        1-based line number of the header.
    encoding : str
        Text encoding of the file.
    decimal : str
        Decimal mark of the numbers, '.' or ','.
    notes : tuple of str
        Lines above the header (an instrument's metadata), kept for the record.
    """

    source: str
    path: str
    names: tuple[str, ...]
    delimiter: str
    header_line: int
    encoding: str
    decimal: str = "."
    notes: tuple[str, ...] = field(default=())

    def body_lines(self):
        """(line number, text) of every data line, skipping blanks and comments."""
        with open(self.path, encoding=self.encoding, errors="replace", newline=None) as fh:
            for k, line in enumerate(fh, start=1):
                if k <= self.header_line:
                    continue
                stripped = line.strip()
                if stripped and not stripped.startswith(_COMMENT):
                    yield k, line.rstrip("\r\n")

    def number(self, text: str) -> float:
        """A field as a float, with this file's decimal mark (ValueError if it is not one)."""
        if self.decimal == ",":
            text = text.replace(",", ".")
        return float(text)

    @property
    def dialect(self) -> str:
        """The separator and decimal mark in words, for messages."""
        sep = {";": "semicolon", "\t": "tab", ",": "comma"}[self.delimiter]
        return f"{sep}-separated, decimal {'comma' if self.decimal == ',' else 'point'}"


def read_table(path, *, expected, name=None):
    """Read the layout of a text CSV, after checking that the file is text at all.

    Only the first 64 KiB are read here; the body is parsed by the caller straight from the
    file. ``expected`` describes the columns for the messages, e.g. "time_s, voltage_v";
    ``name`` is the file's name for messages when ``path`` is a temporary copy.
    """
    path_text = os.fspath(path)
    source = name or path_text
    try:
        with open(path_text, "rb") as fh:
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
    lines = re.split(r"\r\n|\r|\n", text)
    if size > len(head):
        lines = lines[:-1]  # the last line may be cut off
    numbered = [(k, raw.strip()) for k, raw in enumerate(lines, start=1)]
    content = [(k, s) for k, s in numbered if s and not s.startswith(_COMMENT)]
    if not content:
        raise CaptureError(
            f"{source}: holds no header line (only comments or blank lines); expected a "
            f"header line ({expected}) and one row per reading"
        )
    delimiter, decimal, width = _dialect(content)
    header_at = _header_index(content, delimiter, width)
    header_line, header = content[header_at]
    if header.count(delimiter) == 0 and delimiter != ",":
        delimiter, decimal = ",", "."
    notes = tuple(s.lstrip("#").strip() for k, s in numbered
                  if k < header_line and s.lstrip("#").strip())
    names = tuple(_clean(n) for n in _split(header, delimiter))
    return TextTable(source, path_text, names, delimiter, header_line, encoding, decimal,
                     notes)


def _split(line: str, delimiter: str) -> list[str]:
    return line.split(delimiter)


def _is_value(text: str) -> bool:
    return bool(_VALUEY.fullmatch(_clean(text)))


def _dialect(content):
    """(delimiter, decimal mark, fields per data line) that make most lines numbers."""
    tail = [s for _, s in content[-40:]]
    best = None
    for delimiter in _DELIMITERS:
        counts: dict[int, int] = {}
        for s in tail:
            n = s.count(delimiter) + 1
            counts[n] = counts.get(n, 0) + 1
        width = max(counts, key=lambda n: (counts[n], n))
        if width < 2:
            continue
        rows = [_split(s, delimiter) for s in tail if s.count(delimiter) + 1 == width]
        fields = [_clean(f) for r in rows for f in r]
        valuey = sum(1 for f in fields if _is_value(f)) / max(1, len(fields))
        share = len(rows) / len(tail)
        key = (round(valuey * share, 2), width)
        if best is None or key > best[0]:
            decimal = "."
            if delimiter != "," and any(_DECIMAL_COMMA.match(f) for f in fields):
                decimal = ","
            best = (key, delimiter, decimal, width)
    if best is None:
        return ",", ".", 1
    return best[1], best[2], best[3]


def _header_index(content, delimiter, width):
    """Index in ``content`` of the header line."""

    def data(k):
        s = content[k][1]
        parts = _split(s, delimiter)
        return len(parts) == width and all(_is_value(p) for p in parts)

    # Metadata lines only come above the header, and the header is the first line that is
    # not data with a data line right below it.
    for k in range(len(content) - 1):
        if not data(k) and data(k + 1):
            return k
    return 0


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


# -- column names and their units ------------------------------------------------------------

# Canonical column -> (pint unit the values are stored in, the quantity's dimension words).
CANONICAL = {
    "time_s": "s",
    "voltage_v": "V",
    "current_a": "A",
    "temp_c": "degC",
    "ambient_c": "degC",
    "grid_w": "W",
    "diverter_w": "W",
    # three-phase captures and logs (captures/threephase_csv.py)
    "voltage_l1_v": "V", "voltage_l2_v": "V", "voltage_l3_v": "V",
    "current_1_a": "A", "current_2_a": "A", "current_3_a": "A", "current_n_a": "A",
    "grid_l1_w": "W", "grid_l2_w": "W", "grid_l3_w": "W",
}
_UNIT_IN_BRACKETS = re.compile(r"^(.*?)\s*[\[(]\s*([^\])]+?)\s*[\])]\s*$")
_UNIT_AFTER_SLASH = re.compile(r"^(.*?)\s*/\s*([A-Za-z°µ]+)$")
_UNIT_SUFFIX = re.compile(r"^(.*?)[_ ]([A-Za-z°µ]+)$")
# Unit spellings seen in headers -> pint spelling. Suffixes (temp_F, grid_kw) are read
# case-insensitively through this table only, so that "_c" is °C and never coulomb.
_HEADER_UNITS = {
    "s": "s", "sec": "s", "ms": "ms", "us": "us", "µs": "us", "min": "min", "h": "hour",
    "v": "V", "mv": "mV", "kv": "kV", "a": "A", "ma": "mA", "ka": "kA",
    "w": "W", "kw": "kW", "mw": "MW",
    "c": "degC", "°c": "degC", "degc": "degC", "f": "degF", "°f": "degF", "degf": "degF",
    "k": "kelvin",
}
_DIMENSION_OF = {"s": "time", "ms": "time", "us": "time", "min": "time", "hour": "time",
                 "V": "voltage", "mV": "voltage", "kV": "voltage",
                 "A": "current", "mA": "current", "kA": "current",
                 "W": "power", "kW": "power", "MW": "power",
                 "degC": "temperature", "degF": "temperature", "kelvin": "temperature"}
_ROLE_DIMENSION = {"time_s": "time", "voltage_v": "voltage", "current_a": "current",
                   "temp_c": "temperature", "ambient_c": "temperature", "grid_w": "power",
                   "diverter_w": "power",
                   **{k: "voltage" for k in ("voltage_l1_v", "voltage_l2_v", "voltage_l3_v")},
                   **{k: "current" for k in ("current_1_a", "current_2_a", "current_3_a",
                                             "current_n_a")},
                   **{k: "power" for k in ("grid_l1_w", "grid_l2_w", "grid_l3_w")}}


def header_unit(name: str) -> tuple[str, str | None]:
    """Split a header into its base name and its unit in pint spelling (None if none).

    ``U [V]`` -> ("U", "V"); ``Grid Power (kW)`` -> ("Grid Power", "kW"); ``temp_F`` ->
    ("temp", "degF"); ``t/ms`` -> ("t", "ms"); ``Time [min]`` -> ("Time", "min").
    """
    for pattern in (_UNIT_IN_BRACKETS, _UNIT_AFTER_SLASH, _UNIT_SUFFIX):
        m = pattern.match(name.strip())
        if m:
            unit = _HEADER_UNITS.get(m.group(2).strip().lower().replace("℃", "°c"))
            if unit is not None:
                return m.group(1).strip(), unit
    return name.strip(), None


@lru_cache(maxsize=64)
def si_linear(unit: str, target: str) -> tuple[float, float]:
    """(scale, offset) with value_in_target = raw*scale + offset, from pint (not even
    imported when the unit is already the target)."""
    if unit == target:
        return 1.0, 0.0
    from commission.units import registry

    ureg = registry()
    zero = float(ureg.Quantity(0.0, unit).to(target).m)
    one = float(ureg.Quantity(1.0, unit).to(target).m)
    return one - zero, zero


@dataclass(frozen=True)
class Column:
    """One column used by a reader: where it is and how its values become SI.

    ``value = raw * scale + offset`` (from the header's unit, by pint).
    """

    index: int
    name: str
    unit: str | None
    scale: float = 1.0
    offset: float = 0.0

    def convert(self, values):
        if self.scale == 1.0 and self.offset == 0.0:
            return values
        return values * self.scale + self.offset

    def described(self) -> str:
        return f"{self.name!r}" + (f" ({self.unit})" if self.unit else "")


def _role_guess(base: str, dimension: str) -> str | None:
    low = base.lower()
    if dimension == "time":
        return "time_s"
    if dimension == "voltage":
        return "voltage_v"
    if dimension == "current":
        return "current_a"
    if dimension == "temperature":
        return "ambient_c" if "amb" in low or "room" in low or "air" in low else "temp_c"
    if dimension == "power":
        if any(w in low for w in ("divert", "element", "heater", "triac", "router")):
            return "diverter_w"
        return "grid_w"
    return None


def resolve_columns(table, wanted, *, optional=(), mapping=None, alternatives=None,
                    example="voltage_v=U1"):
    """Find the column of each wanted canonical name, with its unit.

    A canonical name (``time_s``, ``voltage_v``, ``current_a``, ``temp_c``, ``ambient_c``,
    ``grid_w``, ``diverter_w``, ``timestamp``) is found, in this order: through ``mapping``
    (canonical name -> header name, e.g. from an export profile); as written in the header
    (any case); from a header's unit (``U [V]`` is a voltage, ``Grid Power (kW)`` a grid
    power, ``T amb [°F]`` an ambient temperature), when exactly one column fits.

    Returns
    -------
    dict of str to Column
        Canonical name -> column, for every wanted and every present optional name.
    """
    mapping = dict(mapping or {})
    allowed = set(wanted) | set(optional)
    unknown = sorted(set(mapping) - allowed)
    if unknown:
        raise CaptureError(
            f"{table.source}: column mapping names {', '.join(repr(u) for u in unknown)}; "
            f"accepted keys are {', '.join(sorted(allowed))}"
        )
    lookup: dict[str, int] = {}
    for k, name in enumerate(table.names):
        lookup.setdefault(name, k)
        lookup.setdefault(name.lower(), k)
    units = [header_unit(n) for n in table.names]
    guesses: dict[str, list[int]] = {}
    for k, (base, unit) in enumerate(units):
        if unit is None:
            continue
        role = _role_guess(base, _DIMENSION_OF.get(unit, ""))
        if role is not None:
            guesses.setdefault(role, []).append(k)
    found: dict[str, Column] = {}
    missing = []
    taken: set[int] = set()
    for canon in (*wanted, *optional):
        target = mapping.get(canon, canon)
        k = lookup.get(target, lookup.get(target.lower()))
        if k is None and canon not in mapping:
            options = [j for j in guesses.get(canon, []) if j not in taken]
            if len(options) == 1:
                k = options[0]
            elif len(options) > 1 and canon in wanted:
                shown = ", ".join(repr(table.names[j]) for j in options)
                raise CaptureError(
                    f"{table.source}: line {table.header_line}: several columns could be "
                    f"{canon} ({shown}); say which with a column mapping, e.g. "
                    f"{canon}={table.names[options[0]]}"
                )
        if k is None:
            if canon in wanted:
                missing.append(f"{target!r}" if target == canon else f"{target!r} (for {canon})")
            elif canon in mapping:
                missing.append(f"{target!r} (for {canon})")
            continue
        taken.add(k)
        found[canon] = _column(table, canon, k, units[k][1])
    if missing:
        shown = ", ".join(repr(n) for n in table.names) or "none"
        alt = ""
        if alternatives:
            alt = "; " + "; ".join(f"instead of {a!r} give {b}" for a, b in alternatives.items())
        need = ", ".join(repr(w) for w in wanted)
        raise CaptureError(
            f"{table.source}: line {table.header_line}: missing "
            f"{'column' if len(missing) == 1 else 'columns'} {', '.join(missing)}; "
            f"the header has {shown}, expected {need} (or names with units such as "
            f"'U [V]', 'P (kW)', 'temp_F', 't/ms'){alt}; map other names with a column "
            f"mapping, e.g. {example}"
        )
    return found


def _column(table, canon, k, unit):
    target = CANONICAL.get(canon)
    name = table.names[k]
    if unit is None or target is None:
        return Column(k, name, unit)
    dimension = _DIMENSION_OF.get(unit)
    if dimension != _ROLE_DIMENSION[canon]:
        raise CaptureError(
            f"{table.source}: line {table.header_line}, column {name!r}: its unit {unit} is "
            f"not a {_ROLE_DIMENSION[canon]}, so it cannot stand for {canon}; map another "
            "column or correct the header"
        )
    scale, offset = si_linear(unit, target)
    return Column(k, name, unit, scale, offset)


def bad_row_message(table, indices, names, *, what="a number"):
    """Scan the body for the first row that does not parse; return a message or None.

    ``indices`` are the column positions to check and ``names`` their names for messages.
    """
    width = max(indices) + 1
    mark = "','" if table.decimal == "," else "'.'"
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
                value = table.number(text)
            except ValueError:
                return (f"{table.source}: line {line_no}, column {name!r}: {text[:30]!r} is "
                        f"not {what} (this file is {table.dialect}: use {mark} as the "
                        "decimal mark)")
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
