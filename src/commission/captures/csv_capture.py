"""Waveform captures in CSV: a header line, then one row per sample.

Columns ``voltage_v`` and ``current_a``, and ``time_s`` unless the sample rate is given, or
names with units (``U [V]``, ``I (mA)``, ``t/ms``); other names are mapped with
``columns={"voltage_v": "U1", ...}``; extra columns are ignored. Raw converter counts become
values by ``value = (raw - offset) * scale``. Separator, decimal mark and metadata lines
above the header are found from the content (see ``_text``); lines starting with '#' are
comments.

The numbers are parsed by ``numpy.loadtxt`` in one pass (a large plain file in two halves
at once, see ``_halves``); only when that fails is the file scanned again line by line to
name the first bad row.
"""

from __future__ import annotations

import io
import os
import warnings
from dataclasses import dataclass

import numpy as np

from commission.captures import CaptureError, _halves
from commission.captures._text import (
    bad_row_message,
    clipping_warning,
    first_nonfinite,
    line_of_row,
    read_table,
    resolve_columns,
)
from commission.physics.waveform import even_rate_from_times, fit_mains_sine

MAINS_MIN_HZ = 40.0  # lowest mains frequency the analysis searches (physics.waveform)

_EXPECTED = "time_s (or a sample rate), voltage_v, current_a"


@dataclass(frozen=True, eq=False)
class WaveformCapture:
    """Samples of voltage and current read from a file.

    Attributes
    ----------
    source : str
        File the samples came from.
    sample_rate_hz : float
        Sampling rate [Hz].
    start_time_s : float
        Time of the first sample (0 when only a rate was given) [s].
    voltage_v : numpy.ndarray
        Voltage samples [V].
    current_a : numpy.ndarray
        Current samples, positive into the premises [A].
    warnings : tuple of str
        Non-fatal findings, e.g. clipped converter readings.
    notes : tuple of str
        Lines above the header (the instrument's own metadata).
    """

    source: str
    sample_rate_hz: float
    start_time_s: float
    voltage_v: np.ndarray
    current_a: np.ndarray
    warnings: tuple[str, ...]
    notes: tuple[str, ...] = ()

    @property
    def duration_s(self):
        """Length of the capture, samples / rate [s]."""
        return self.voltage_v.size / self.sample_rate_hz


def read_capture_csv(path, *, sample_rate_hz=None, columns=None, voltage_scale=1.0,
                     voltage_offset=0.0, current_scale=1.0, current_offset=0.0, name=None):
    """Read a waveform capture from CSV.

    Parameters
    ----------
    path : str or os.PathLike
        CSV file.
    sample_rate_hz : float, optional
        Sampling rate [Hz]; when given, a ``time_s`` column is not needed (and ignored).
    columns : dict, optional
        Canonical name (``time_s``, ``voltage_v``, ``current_a``) -> header name in the file.
    voltage_scale, current_scale : float, default 1
        Volts [V] and amperes [A] per raw unit (after the header's own unit, if any).
    voltage_offset, current_offset : float, default 0
        Raw reading at zero volts and zero amperes, in raw units.
    name : str, optional
        The file's name for messages, when ``path`` is a temporary copy.

    Returns
    -------
    WaveformCapture

    Raises
    ------
    CaptureError
        Empty file, header only, missing columns, a non-numeric or non-finite value (the
        line is named), uneven or non-increasing times, fewer than two mains cycles, no
        voltage or no current.
    """
    if sample_rate_hz is not None and not float(sample_rate_hz) > 0:
        raise CaptureError(f"sample rate must be positive, got {sample_rate_hz!r}")
    if voltage_scale == 0 or current_scale == 0:
        raise CaptureError("a scale of zero would turn every reading into zero")
    table = read_table(path, expected=_EXPECTED, name=name)
    wanted = ("voltage_v", "current_a") if sample_rate_hz is not None else (
        "time_s", "voltage_v", "current_a")
    found = resolve_columns(table, wanted, mapping=_without_time(columns, sample_rate_hz),
                            alternatives=None if sample_rate_hz is not None
                            else {"time_s": "a sample rate"})
    cols = [found[w] for w in wanted]
    names = [c.name for c in cols]
    data = _load_numbers(table, [c.index for c in cols], names)
    if data.shape[0] == 0:
        raise CaptureError(
            f"{table.source}: has a header but no data rows; expected one row per sample "
            f"({_EXPECTED})"
        )
    if not np.isfinite(data).all():  # one pass over all columns; then find the first
        first_nonfinite(table, [data[:, k] for k in range(len(wanted))], names)
    # contiguous copies of the columns: every later pass over them is faster
    raw_v = np.ascontiguousarray(data[:, wanted.index("voltage_v")])
    raw_i = np.ascontiguousarray(data[:, wanted.index("current_a")])

    if sample_rate_hz is None:
        times = cols[0].convert(data[:, 0])
        del data
        not_later = times[1:] <= times[:-1]
        if np.any(not_later):
            row = int(np.flatnonzero(not_later)[0]) + 1
            raise CaptureError(
                f"{table.source}: line {line_of_row(table, row)}, column {names[0]!r}: the "
                "time does not increase; rows must be in time order, one per sample"
            )
        del not_later
        try:
            rate, start = even_rate_from_times(times)
        except ValueError as exc:
            raise CaptureError(f"{table.source}: column {names[0]!r}: {exc}") from None
        del times
    else:
        del data
        rate, start = float(sample_rate_hz), 0.0

    warnings = tuple(w for w in (clipping_warning(table.source, names[-2], raw_v),
                                 clipping_warning(table.source, names[-1], raw_i)) if w)
    vcol, icol = found["voltage_v"], found["current_a"]
    voltage = vcol.convert(_linear(raw_v, voltage_offset, voltage_scale))
    current = icol.convert(_linear(raw_i, current_offset, current_scale))
    check_capture_samples(table.source, rate, voltage, current,
                          voltage_name=names[-2], current_name=names[-1])
    return WaveformCapture(table.source, rate, start, voltage, current, warnings,
                           table.notes)


def _linear(raw, offset, scale):
    """``(raw - offset) * scale``; the samples themselves when that changes nothing."""
    if offset == 0 and scale == 1:
        return raw  # x - 0 and x * 1 are x exactly
    return (raw - offset) * scale


def _without_time(columns, sample_rate_hz):
    if not columns:
        return None
    mapping = dict(columns)
    if sample_rate_hz is not None:
        mapping.pop("time_s", None)
    return mapping


def _load_numbers(table, indices, names):
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", UserWarning)  # "input contained no data"
            if table.decimal == ",":
                # Decimal commas: the file is read once into memory with its commas made
                # points (the separator is then ';' or a tab, never ','), as bytes: both
                # encodings read here keep ',' and '.' single bytes that occur in no other
                # character (UTF-8, cp1252), and bytes take a quarter of the memory of a
                # text buffer.
                with open(table.path, "rb") as fh:
                    raw = fh.read().replace(b",", b".")
                data = _converted_by_name(raw, table, indices) \
                    if len(raw) >= _halves.MIN_BYTES else None
                if data is None:
                    source = io.TextIOWrapper(io.BytesIO(raw), encoding=table.encoding,
                                              errors="replace")
                    data = np.loadtxt(source, skiprows=table.header_line,
                                      **_loadtxt_options(table, indices))
            else:
                data = _by_name(table.path, table, indices)
    except ValueError as exc:
        message = bad_row_message(table, indices, names)
        raise CaptureError(message or f"{table.source}: cannot read the numbers ({exc})") from None
    return data


def _loadtxt_options(table, indices, **more):
    """``numpy.loadtxt``'s options for the number columns ``indices`` of ``table``: one
    set for every parse of them (from memory, by name, in two halves)."""
    return dict(delimiter=table.delimiter, usecols=list(indices), comments="#", ndmin=2,
                dtype=float, quotechar='"', **more)


def _by_name(path, table, indices):
    """The numbers of the file at ``path`` (laid out as ``table``), parsed by name: numpy's
    fast path, in two processes where that is exact (``_halves``)."""
    options = _loadtxt_options(table, indices, encoding=table.encoding)
    data = _halves.loadtxt_in_halves(path, skiprows=table.header_line, options=options)
    if data is not None:
        return data
    return np.loadtxt(path, skiprows=table.header_line, **options)


def _converted_by_name(raw, table, indices):
    """A large decimal-comma file's converted text parsed by name, from a private
    temporary copy (numpy reads a text stream line by line, a named file in C: about twice
    as fast), or None when the copy cannot be written. The copy is removed at once; one
    left by a killed process is swept with the register's file copies (same prefix)."""
    import shutil
    import tempfile

    try:
        folder = tempfile.mkdtemp(prefix=f"commission-files-{os.getpid()}-")
    except OSError:
        return None
    try:
        path = os.path.join(folder, "points.csv")
        try:
            with open(path, "wb") as out:
                out.write(raw)
        except OSError:
            return None
        return _by_name(path, table, indices)
    finally:
        shutil.rmtree(folder, ignore_errors=True)


def check_capture_samples(source, rate, voltage, current, *, voltage_name="voltage_v",
                          current_name="current_a"):
    """Checks shared by the CSV and WAV readers: some voltage, some current, two cycles.

    Parameters
    ----------
    source : str
        File name for messages.
    rate : float
        Sampling rate [Hz].
    voltage, current : numpy.ndarray
        Samples [V], [A].
    """
    if not np.any(voltage):
        raise CaptureError(f"{source}: column {voltage_name!r} is zero in every row: no voltage "
                           "was captured; check the voltage channel and its scale")
    if not np.any(current):
        raise CaptureError(f"{source}: column {current_name!r} is zero in every row: no current "
                           "was captured; check the clamp, its channel and its scale")
    check_two_cycles(source, rate, voltage, voltage.size)


def check_two_cycles(source, rate, voltage_head, total_samples):
    """Raise CaptureError unless the capture holds two mains cycles' worth of samples.

    Parameters
    ----------
    source : str
        File name for messages.
    rate : float
        Sampling rate [Hz].
    voltage_head : numpy.ndarray
        The first samples of voltage (half a second is plenty) [V].
    total_samples : int
        Samples in the whole capture [1].
    """
    if total_samples >= 2.0 * rate / MAINS_MIN_HZ:
        return  # two cycles even of the slowest mains accepted; the analysis checks the rest
    try:
        fit = fit_mains_sine(rate, voltage_head)
    except ValueError as exc:
        raise CaptureError(f"{source}: {exc}") from None
    held = total_samples * fit.frequency_hz / rate
    if held < 2.0 - 1e-3:
        raise CaptureError(
            f"{source}: holds {held:.2f} mains cycles ({1000 * total_samples / rate:.1f} ms at "
            f"{fit.frequency_hz:.1f} Hz); capture at least two whole cycles, better 10 or more"
        )
