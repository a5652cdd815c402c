"""Logs in CSV: heating and heatsink-soak temperatures, and grid power during regulation.

Every log has a header line and one row per reading; separator, decimal mark, metadata
lines above the header and units in the header are found by the reader layer (``_text``).
Time is either a number of seconds (``time_s``, or any time column with a unit: ``t/ms``,
``Time [min]``) or a ``timestamp``:

* ISO 8601 (``2024-06-01T12:00:05``, ``2024-06-01 12:00``, with ``Z`` or ``+02:00``);
* day-first or month-first dates (``01.06.2024 12:00:05``, ``06/13/2024 08:00``): the
  order is read from the file when a day above 12 shows it, and never guessed otherwise
  (give ``time_format``, e.g. ``%d/%m/%Y %H:%M:%S``);
* any form given as ``time_format`` (``datetime.strptime`` codes).

Naive local times are placed on the clock with ``tz`` (an IANA zone such as
``Europe/London``); a naive log that jumps by one hour (a clock change) without ``tz`` is
refused, with ``tz`` it is corrected and the correction is reported: never silent.
Times come back as seconds from the first reading. Temperature logs carry ``temp_c`` (and may
carry ``ambient_c``); regulation logs carry ``grid_w`` (positive = import) and optionally
``diverter_w``. Lines starting with '#' are comments.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field
from datetime import UTC, datetime, timedelta

import numpy as np

from commission.captures import CaptureError
from commission.captures._text import TextTable, read_table, resolve_columns

_MIN_ROWS = {"heating": 3, "soak": 6, "regulation": 2}
_DMY = re.compile(r"^(\d{1,2})([./-])(\d{1,2})\2(\d{2,4})([ T]+)(\d{1,2}):(\d{2})(?::(\d{2})"
                  r"(?:[.,](\d+))?)?$")
_HOUR_S = 3600.0


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
    ambient_c : numpy.ndarray or None
        Logged ambient temperature, when the log has an ambient column [degC].
    notes : tuple of str
        Metadata lines above the header.
    findings : tuple of str
        What the reader noticed and corrected (a clock change) or could not (a time gap).
    units : dict
        Canonical column -> the unit its header stated (converted to SI), for the record.
    """

    source: str
    time_s: np.ndarray
    temp_c: np.ndarray
    start: datetime | None
    ambient_c: np.ndarray | None = None
    notes: tuple[str, ...] = ()
    findings: tuple[str, ...] = ()
    units: dict = field(default_factory=dict)


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
    notes: tuple[str, ...] = ()
    findings: tuple[str, ...] = ()
    units: dict = field(default_factory=dict)


def read_heating_log(path, *, columns=None, time_format=None, tz=None, name=None):
    """Read a heating log: a time column (seconds or timestamps) and ``temp_c``.

    Parameters
    ----------
    path : str or os.PathLike
        CSV file.
    columns : dict, optional
        Canonical name -> header name in the file.
    time_format : str, optional
        ``strptime`` form of the timestamps, when they are not ISO 8601.
    tz : str, optional
        IANA time zone of naive local timestamps (e.g. ``Europe/Paris``).
    name : str, optional
        The file's name for messages, when ``path`` is a temporary copy.

    Returns
    -------
    TemperatureLog

    Raises
    ------
    CaptureError
        Empty file, header only, missing columns, a bad value (the line is named), times
        that do not increase, a clock change without a zone, or fewer than 3 readings.
    """
    return _temperature_log(path, "heating", columns, time_format, tz, name)


def read_soak_log(path, *, columns=None, time_format=None, tz=None, name=None):
    """Read a heatsink soak log: time, ``temp_c`` and optionally ``ambient_c``.

    Parameters and errors as :func:`read_heating_log`, with at least 6 readings.
    """
    return _temperature_log(path, "soak", columns, time_format, tz, name)


def read_regulation_log(path, *, columns=None, time_format=None, tz=None, name=None):
    """Read a regulation log: time, ``grid_w`` (positive = import), optional ``diverter_w``.

    Parameters and errors as :func:`read_heating_log`, with at least 2 readings.
    """
    table = read_table(path, expected="time_s or timestamp, grid_w[, diverter_w]", name=name)
    time_key, found = _find_time_and(table, ("grid_w",), ("diverter_w",), columns,
                                     "grid_w=P_grid")
    rows, findings = _rows(table, found, time_key, "regulation", time_format, tz)
    time_s, start = rows.pop(time_key)
    return GridPowerLog(table.source, time_s, rows["grid_w"], rows.get("diverter_w"), start,
                        table.notes, findings, _units(found))


def _units(found):
    return {canon: col.unit for canon, col in found.items() if col.unit}


def _temperature_log(path, kind, columns, time_format, tz, name):
    table = read_table(path, expected="time_s or timestamp, temp_c", name=name)
    time_key, found = _find_time_and(table, ("temp_c",), ("ambient_c",), columns,
                                     "temp_c=T1")
    rows, findings = _rows(table, found, time_key, kind, time_format, tz)
    time_s, start = rows.pop(time_key)
    return TemperatureLog(table.source, time_s, rows["temp_c"], start, rows.get("ambient_c"),
                          table.notes, findings, _units(found))


def _find_time_and(table, wanted, optional, columns, example="temp_c=T1"):
    """Columns of the time (seconds preferred) and of the wanted ones."""
    found = resolve_columns(table, wanted, optional=("time_s", "timestamp", *optional),
                            mapping=columns, example=example + ",time_s=t")
    if "time_s" in found:
        found.pop("timestamp", None)
        return "time_s", found
    if "timestamp" in found:
        return "timestamp", found
    for k, name in enumerate(table.names):  # a "Date"/"Time" column of timestamps
        low = name.lower()
        if k not in {c.index for c in found.values()} and any(
                w in low for w in ("time", "date", "zeit", "heure", "stamp")):
            from commission.captures._text import Column

            found["timestamp"] = Column(k, name, None)
            return "timestamp", found
    shown = ", ".join(repr(n) for n in table.names)
    raise CaptureError(
        f"{table.source}: line {table.header_line}: no time column; the header has {shown}, "
        f"expected 'time_s' (seconds), a time with its unit ('t/ms', 'Time [min]') or "
        f"'timestamp' (ISO 8601) besides {', '.join(repr(w) for w in wanted)}"
    )


def _rows(table: TextTable, found, time_key, kind, time_format, tz):
    """Parse the used columns row by row; canonical name -> array (time: (s, start))."""
    names = {canon: col.name for canon, col in found.items()}
    width = max(col.index for col in found.values()) + 1
    values: dict[str, list[float]] = {canon: [] for canon in found if canon != time_key}
    stamps: list[str] = []
    times: list[float] = []
    lines: list[int] = []
    for line_no, line in table.body_lines():
        fields = line.split(table.delimiter)
        if len(fields) < width:
            raise CaptureError(
                f"{table.source}: line {line_no}: {len(fields)} field(s) but the header has "
                f"{len(table.names)}; every row needs a value in each column"
            )
        for canon, col in found.items():
            text = fields[col.index].strip().strip('"').strip()
            if canon == "timestamp":
                stamps.append(text)
                continue
            number = _parse_number(table, line_no, names[canon], text)
            if canon == "time_s":
                times.append(number)
            else:
                values[canon].append(number)
        lines.append(line_no)
    if not lines:
        raise CaptureError(f"{table.source}: has a header but no data rows; expected one row per "
                           "reading")
    start = None
    findings: list[str] = []
    if time_key == "timestamp":
        t, start, notes = timestamps_to_seconds(table.source, names["timestamp"], stamps,
                                                lines, time_format=time_format, tz=tz)
        findings += notes
    else:
        t = found["time_s"].convert(np.array(times))
        t = t - t[0]
    need = _MIN_ROWS[kind]
    if len(lines) < need:
        raise CaptureError(f"{table.source}: only {len(lines)} reading(s); a {kind} log needs at "
                           f"least {need}")
    steps = np.diff(t)
    if np.any(steps <= 0):
        k = int(np.flatnonzero(steps <= 0)[0]) + 1
        raise CaptureError(
            f"{table.source}: line {lines[k]}, column {names[time_key]!r}: the time does not "
            "increase; rows must be in time order with no repeated times"
        )
    if steps.size >= 3:
        typical = float(np.median(steps))
        gaps = np.flatnonzero(steps > 5.0 * typical)
        if gaps.size:
            k = int(gaps[0])
            findings.append(
                f"time gap: {steps[k]:.0f} s without readings before line {lines[k + 1]} "
                f"(readings are every {typical:g} s); {gaps.size} gap(s) in all")
    out: dict[str, object] = {time_key: (t, start)}
    for canon, vals in values.items():
        out[canon] = found[canon].convert(np.array(vals))
    return out, tuple(findings)


def _parse_number(table, line_no, name, text):
    if not text:
        raise CaptureError(f"{table.source}: line {line_no}, column {name!r}: empty value; "
                           "expected a number")
    try:
        value = table.number(text)
    except ValueError:
        mark = "','" if table.decimal == "," else "'.'"
        raise CaptureError(f"{table.source}: line {line_no}, column {name!r}: {text[:30]!r} is "
                           f"not a number (this file is {table.dialect}: use {mark} as the "
                           "decimal mark)") from None
    if not math.isfinite(value):
        raise CaptureError(f"{table.source}: line {line_no}, column {name!r}: {text!r} is not a "
                           "finite number; remove or repair that reading")
    return value


# -- timestamps ------------------------------------------------------------------------------

def timestamps_to_seconds(source, column, texts, lines, *, time_format=None, tz=None):
    """Seconds from the first timestamp, the first timestamp, and what was corrected.

    Parameters
    ----------
    source, column : str
        File and column names for messages.
    texts : list of str
        The timestamps as written.
    lines : list of int
        Their line numbers.
    time_format : str, optional
        ``strptime`` form; default ISO 8601, or a day-first/month-first date whose order
        the file itself shows.
    tz : str, optional
        IANA zone of naive local times.

    Returns
    -------
    (numpy.ndarray, datetime, list of str)
    """
    zone = _zone(source, tz)
    stamps = _parse_all(source, column, texts, lines, time_format)
    aware = {s.tzinfo is not None for s in stamps}
    if len(aware) > 1:
        raise CaptureError(f"{source}: column {column!r} mixes times with and without a UTC "
                           "offset; use one form throughout")
    notes: list[str] = []
    if aware == {True}:
        start = stamps[0]
        t = np.array([(s - start).total_seconds() for s in stamps])
        return t, start, notes
    naive = np.array([(s - stamps[0]).total_seconds() for s in stamps])
    steps = np.diff(naive)
    typical = float(np.median(np.abs(steps))) if steps.size else 0.0
    jumps = [k for k, d in enumerate(steps)
             if abs(abs(d) - _HOUR_S) <= max(2.0 * typical, 60.0) and abs(d) > 10 * typical]
    if zone is None:
        if jumps:
            k = jumps[0]
            way = "back" if steps[k] < 0 else "forward"
            raise CaptureError(
                f"{source}: line {lines[k + 1]}, column {column!r}: the local time jumps {way} "
                "by one hour (a clock change?); give the time zone (--tz, e.g. Europe/London, "
                "or the instrument's profile) so the times can be corrected")
        return naive, stamps[0], notes
    placed = _place_in_zone(stamps, zone)
    start = placed[0]
    t = np.array([(s - start).total_seconds() for s in placed])
    if jumps:
        k = jumps[0]
        notes.append(f"clock change at line {lines[k + 1]}: local times corrected with the "
                     f"time zone {tz} (the log's own times jump by one hour there)")
    return t, start, notes


def _zone(source, tz):
    if tz is None:
        return None
    from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

    try:
        return ZoneInfo(str(tz))
    except (ZoneInfoNotFoundError, ValueError, OSError):
        raise CaptureError(f"{source}: time zone {tz!r} is not known; give an IANA zone such "
                           "as Europe/London, Europe/Paris or UTC") from None


def _place_in_zone(stamps, zone):
    """Naive local times -> aware times, choosing the repeated hour's fold by order."""

    out = []
    previous = None
    for s in stamps:
        # compared in UTC: within one zone Python compares wall times and ignores the fold
        here = s.replace(tzinfo=zone, fold=0).astimezone(UTC)
        if previous is not None and here <= previous:
            later = s.replace(tzinfo=zone, fold=1).astimezone(UTC)
            if later > previous:
                here = later
        out.append(here)
        previous = here
    return out


def _parse_all(source, column, texts, lines, time_format):
    if time_format is not None:
        out = []
        for text, line in zip(texts, lines, strict=True):
            try:
                out.append(datetime.strptime(text, time_format))
            except ValueError:
                raise CaptureError(f"{source}: line {line}, column {column!r}: {text[:40]!r} "
                                   f"does not match the time format {time_format!r}") from None
        return out
    try:
        return [datetime.fromisoformat(text) for text in texts]
    except ValueError:
        pass
    order = _day_month_order(source, column, texts, lines)
    out = []
    for text, line in zip(texts, lines, strict=True):
        m = _DMY.match(text)
        if m is None:
            if order is None:
                try:
                    out.append(datetime.fromisoformat(text))
                    continue
                except ValueError:
                    pass
            raise CaptureError(f"{source}: line {line}, column {column!r}: {text[:40]!r} is not "
                               "an ISO 8601 time such as 2024-06-01T12:00:05 or "
                               "2024-06-01T12:00:05+02:00; give --time-format for other forms")
        a, b, year = int(m.group(1)), int(m.group(3)), int(m.group(4))
        day, month = (a, b) if order == "day" else (b, a)
        if year < 100:
            year += 2000
        frac = m.group(9) or "0"
        try:
            out.append(datetime(year, month, day, int(m.group(6)), int(m.group(7)),
                                int(m.group(8) or 0))
                       + timedelta(seconds=float("0." + frac)))
        except ValueError:
            raise CaptureError(f"{source}: line {line}, column {column!r}: {text[:40]!r} is not "
                               "a valid date and time") from None
    return out


def _day_month_order(source, column, texts, lines):
    """'day' or 'month' first, from a day above 12 somewhere in the file; never guessed."""
    firsts, seconds = set(), set()
    first_line = None
    for text, line in zip(texts, lines, strict=True):
        m = _DMY.match(text)
        if m is None:
            continue
        first_line = first_line or (line, text)
        firsts.add(int(m.group(1)))
        seconds.add(int(m.group(3)))
    if first_line is None:
        return None
    day_first = any(x > 12 for x in firsts)
    month_first = any(x > 12 for x in seconds)
    if day_first and not month_first:
        return "day"
    if month_first and not day_first:
        return "month"
    line, text = first_line
    sep = _DMY.match(text).group(2)
    rest = "%H:%M:%S" if _DMY.match(text).group(8) else "%H:%M"
    if day_first and month_first:
        raise CaptureError(f"{source}: line {line}, column {column!r}: the dates mix day-first "
                           "and month-first forms; give --time-format")
    raise CaptureError(
        f"{source}: line {line}, column {column!r}: {text[:40]!r} could be day-first or "
        f"month-first (no day above 12 in the file); give --time-format "
        f"'%d{sep}%m{sep}%Y {rest}' (day first) or '%m{sep}%d{sep}%Y {rest}' (month first)")
