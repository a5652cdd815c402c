"""Logs in CSV: heating and heatsink-soak temperatures, and grid power during regulation.

Every log has a header line and one row per reading. Time is either ``time_s`` (seconds,
any origin) or ``timestamp`` (ISO 8601, e.g. ``2024-06-01T12:00:05`` or with ``Z`` or an
offset such as ``+02:00``); ``time_s`` wins when both are present. Times come back as
seconds from the first reading. Temperature logs carry ``temp_c``; regulation logs carry
``grid_w`` (positive = import) and optionally ``diverter_w``. Other names can be mapped with
``columns={"temp_c": "T1"}``. Lines starting with '#' are comments.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from datetime import datetime

import numpy as np

from commission.captures import CaptureError
from commission.captures._text import TextTable, read_table, resolve_columns

_MIN_ROWS = {"heating": 3, "soak": 6, "regulation": 2}


@dataclass(frozen=True, eq=False)
class TemperatureLog:
    """A temperature log.

    Attributes
    ----------
    source : str
        File it came from.
    time_s : numpy.ndarray
        Seconds from the first reading [s].
    temp_c : numpy.ndarray
        Temperatures [degC].
    start : datetime or None
        Timestamp of the first reading, when the log had timestamps.
    """

    source: str
    time_s: np.ndarray
    temp_c: np.ndarray
    start: datetime | None


@dataclass(frozen=True, eq=False)
class GridPowerLog:
    """A grid-power log of regulation in automatic mode.

    Attributes
    ----------
    source : str
        File it came from.
    time_s : numpy.ndarray
        Seconds from the first reading [s].
    grid_w : numpy.ndarray
        Grid power, positive = import [W].
    diverter_w : numpy.ndarray or None
        Power sent to the element, when logged [W].
    start : datetime or None
        Timestamp of the first reading, when the log had timestamps.
    """

    source: str
    time_s: np.ndarray
    grid_w: np.ndarray
    diverter_w: np.ndarray | None
    start: datetime | None


def read_heating_log(path, *, columns=None):
    """Read a heating log: ``time_s`` or ``timestamp``, and ``temp_c``.

    Parameters
    ----------
    path : str or os.PathLike
        CSV file.
    columns : dict, optional
        Canonical name -> header name in the file.

    Returns
    -------
    TemperatureLog

    Raises
    ------
    CaptureError
        Empty file, header only, missing columns, a bad value (the line is named), times
        that do not increase, or fewer than 3 readings.
    """
    return _temperature_log(path, "heating", columns)


def read_soak_log(path, *, columns=None):
    """Read a heatsink soak log: ``time_s`` or ``timestamp``, and ``temp_c``.

    Parameters
    ----------
    path : str or os.PathLike
        CSV file.
    columns : dict, optional
        Canonical name -> header name in the file.

    Returns
    -------
    TemperatureLog

    Raises
    ------
    CaptureError
        As :func:`read_heating_log`, with at least 6 readings.
    """
    return _temperature_log(path, "soak", columns)


def read_regulation_log(path, *, columns=None):
    """Read a regulation log: ``time_s`` or ``timestamp``, ``grid_w``, optional ``diverter_w``.

    Parameters
    ----------
    path : str or os.PathLike
        CSV file.
    columns : dict, optional
        Canonical name -> header name in the file.

    Returns
    -------
    GridPowerLog

    Raises
    ------
    CaptureError
        Empty file, header only, missing columns, a bad value (the line is named), times
        that do not increase, or fewer than 2 readings.
    """
    table = read_table(path, expected="time_s or timestamp, grid_w[, diverter_w]")
    time_key, found = _find_time_and(table, ("grid_w",), ("diverter_w",), columns)
    rows = _rows(table, found, time_key, "regulation")
    time_s, start = rows.pop(time_key)
    return GridPowerLog(table.source, time_s, rows["grid_w"], rows.get("diverter_w"), start)


def _temperature_log(path, kind, columns):
    table = read_table(path, expected="time_s or timestamp, temp_c")
    time_key, found = _find_time_and(table, ("temp_c",), (), columns)
    rows = _rows(table, found, time_key, kind)
    time_s, start = rows.pop(time_key)
    return TemperatureLog(table.source, time_s, rows["temp_c"], start)


def _find_time_and(table, wanted, optional, columns):
    """Column indices of the time column (``time_s`` preferred) and the wanted ones."""
    found = resolve_columns(table, wanted, optional=("time_s", "timestamp", *optional),
                            mapping=columns)
    if "time_s" in found:
        found.pop("timestamp", None)
        return "time_s", found
    if "timestamp" in found:
        return "timestamp", found
    shown = ", ".join(repr(n) for n in table.names)
    raise CaptureError(
        f"{table.source}: line {table.header_line}: no time column; the header has {shown}, "
        f"expected 'time_s' (seconds) or 'timestamp' (ISO 8601) besides "
        f"{', '.join(repr(w) for w in wanted)}"
    )


def _rows(table: TextTable, found, time_key, kind):
    """Parse the used columns row by row; return canonical name -> array (time: (s, start))."""
    names = {canon: table.names[k] for canon, k in found.items()}
    width = max(found.values()) + 1
    values: dict[str, list[float]] = {canon: [] for canon in found if canon != time_key}
    stamps: list[datetime] = []
    times: list[float] = []
    lines: list[int] = []
    for line_no, line in table.body_lines():
        fields = line.split(table.delimiter)
        if len(fields) < width:
            raise CaptureError(
                f"{table.source}: line {line_no}: {len(fields)} field(s) but the header has "
                f"{len(table.names)}; every row needs a value in each column"
            )
        for canon, k in found.items():
            text = fields[k].strip().strip('"').strip()
            if canon == "timestamp":
                stamps.append(_parse_timestamp(table.source, line_no, names[canon], text))
                continue
            number = _parse_number(table.source, line_no, names[canon], text)
            if canon == "time_s":
                times.append(number)
            else:
                values[canon].append(number)
        lines.append(line_no)
    if not lines:
        raise CaptureError(f"{table.source}: has a header but no data rows; expected one row per "
                           "reading")
    need = _MIN_ROWS[kind]
    if len(lines) < need:
        raise CaptureError(f"{table.source}: only {len(lines)} reading(s); a {kind} log needs at "
                           f"least {need}")
    start = None
    if time_key == "timestamp":
        aware = {s.tzinfo is not None for s in stamps}
        if len(aware) > 1:
            raise CaptureError(f"{table.source}: column {names['timestamp']!r} mixes times with "
                               "and without a UTC offset; use one form throughout")
        start = stamps[0]
        t = np.array([(s - start).total_seconds() for s in stamps])
    else:
        t = np.array(times)
        t = t - t[0]
    steps = np.diff(t)
    if np.any(steps <= 0):
        k = int(np.flatnonzero(steps <= 0)[0]) + 1
        raise CaptureError(
            f"{table.source}: line {lines[k]}, column {names[time_key]!r}: the time does not "
            "increase; rows must be in time order with no repeated times"
        )
    out: dict[str, object] = {time_key: (t, start)}
    for canon, vals in values.items():
        out[canon] = np.array(vals)
    return out


def _parse_number(source, line_no, name, text):
    if not text:
        raise CaptureError(f"{source}: line {line_no}, column {name!r}: empty value; expected a "
                           "number")
    try:
        value = float(text)
    except ValueError:
        raise CaptureError(f"{source}: line {line_no}, column {name!r}: {text[:30]!r} is not a "
                           "number (use '.' as the decimal point)") from None
    if not math.isfinite(value):
        raise CaptureError(f"{source}: line {line_no}, column {name!r}: {text!r} is not a finite "
                           "number; remove or repair that reading")
    return value


def _parse_timestamp(source, line_no, name, text):
    try:
        return datetime.fromisoformat(text)
    except ValueError:
        raise CaptureError(f"{source}: line {line_no}, column {name!r}: {text[:40]!r} is not an "
                           "ISO 8601 time such as 2024-06-01T12:00:05 or "
                           "2024-06-01T12:00:05+02:00") from None
