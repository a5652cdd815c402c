"""Three-phase waveform captures in CSV: one or three voltages, one to three clamp currents.

Columns, as for the single-phase files with the phase in the name: ``time_s`` (unless the
sample rate is given), ``voltage_l1_v`` (or ``voltage_v``), optionally ``voltage_l2_v`` and
``voltage_l3_v`` (both or neither), ``current_1_a`` (or ``current_a``) for clamp 1, which
belongs on L1, optionally ``current_2_a``, ``current_3_a`` and a measured neutral
``current_n_a``. Other header names are mapped with ``columns={"voltage_l1_v": "U1", ...}``.
Currents are positive into the premises (clamp arrow towards the premises).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from commission.captures import CaptureError
from commission.captures._text import (
    clipping_warning,
    first_nonfinite,
    line_of_row,
    read_table,
    resolve_columns,
)
from commission.captures.csv_capture import _load_numbers, check_two_cycles
from commission.physics.waveform import sample_rate_from_times

VOLTAGES = ("voltage_l1_v", "voltage_l2_v", "voltage_l3_v")
CURRENTS = ("current_1_a", "current_2_a", "current_3_a")
NEUTRAL = "current_n_a"
_ALIASES = {"voltage_v": "voltage_l1_v", "current_a": "current_1_a"}
_EXPECTED = ("time_s (or a sample rate), voltage_l1_v [voltage_l2_v voltage_l3_v], "
             "current_1_a [current_2_a current_3_a] [current_n_a]")


@dataclass(frozen=True, eq=False)
class ThreePhaseCapture:
    """Samples of one or three voltages and one to three currents read from a file.

    Attributes
    ----------
    source : str
        File the samples came from.
    sample_rate_hz : float
        Sampling rate [Hz].
    start_time_s : float
        Time of the first sample [s].
    voltages_v : tuple of numpy.ndarray
        L1 (and L2, L3) line-to-neutral voltages [V].
    currents_a : tuple of numpy.ndarray
        Clamp 1 (and 2, 3) currents, positive into the premises [A].
    neutral_a : numpy.ndarray or None
        Measured neutral current [A].
    columns : dict of str to str
        Canonical name -> header name used.
    warnings : tuple of str
    """

    source: str
    sample_rate_hz: float
    start_time_s: float
    voltages_v: tuple[np.ndarray, ...]
    currents_a: tuple[np.ndarray, ...]
    neutral_a: np.ndarray | None
    columns: dict[str, str]
    warnings: tuple[str, ...]


def read_threephase_capture_csv(path, *, sample_rate_hz=None, columns=None, name=None):
    """Read a capture of one or three voltages and one to three currents from CSV.

    Parameters
    ----------
    path : str or os.PathLike
    sample_rate_hz : float, optional
        Sampling rate [Hz]; a ``time_s`` column is then not needed.
    columns : dict, optional
        Canonical name -> header name in the file (an export profile's mapping too).
    name : str, optional
        The file's name for messages, when ``path`` is a temporary copy.

    Returns
    -------
    ThreePhaseCapture

    Raises
    ------
    CaptureError
        Missing or half-given columns, non-numeric values (the line is named), uneven
        times, a channel zero throughout, fewer than two mains cycles.
    """
    if sample_rate_hz is not None and not float(sample_rate_hz) > 0:
        raise CaptureError(f"sample rate must be positive, got {sample_rate_hz!r}")
    table = read_table(path, expected=_EXPECTED, name=name)
    mapping = {_ALIASES.get(k, k): v for k, v in (columns or {}).items()}
    header = {n.lower() for n in table.names}
    for alias, canon in _ALIASES.items():
        if canon not in mapping and canon not in header and alias in header:
            mapping[canon] = alias
    if sample_rate_hz is not None:
        mapping.pop("time_s", None)
    wanted = ("voltage_l1_v", "current_1_a") if sample_rate_hz is not None else (
        "time_s", "voltage_l1_v", "current_1_a")
    optional = ("voltage_l2_v", "voltage_l3_v", "current_2_a", "current_3_a", NEUTRAL)
    found = resolve_columns(table, wanted, optional=optional, mapping=mapping,
                            alternatives=None if sample_rate_hz is not None
                            else {"time_s": "a sample rate"},
                            example="voltage_l1_v=U1,current_1_a=I1")
    if ("voltage_l2_v" in found) != ("voltage_l3_v" in found):
        have = "voltage_l2_v" if "voltage_l2_v" in found else "voltage_l3_v"
        raise CaptureError(f"{table.source}: has {have} but not the other phase voltage; give "
                           "one voltage (L1) or all three (voltage_l1_v, voltage_l2_v, "
                           "voltage_l3_v)")
    if "current_3_a" in found and "current_2_a" not in found:
        raise CaptureError(f"{table.source}: has current_3_a but no current_2_a; number the "
                           "clamps 1, 2, 3 as they are meant for L1, L2, L3")
    keys = [k for k in ("time_s", *VOLTAGES, *CURRENTS, NEUTRAL) if k in found]
    names = [found[k].name for k in keys]
    data = _load_numbers(table, [found[k].index for k in keys], names)
    if data.shape[0] == 0:
        raise CaptureError(f"{table.source}: has a header but no data rows; expected one row "
                           f"per sample ({_EXPECTED})")
    first_nonfinite(table, [data[:, k] for k in range(len(keys))], names)
    raw = {k: data[:, n] for n, k in enumerate(keys)}
    col = {k: found[k].convert(v) for k, v in raw.items()}  # units in the header, by pint
    if sample_rate_hz is None:
        times = col["time_s"]
        steps = np.diff(times)
        if np.any(steps <= 0):
            row = int(np.flatnonzero(steps <= 0)[0]) + 1
            raise CaptureError(
                f"{table.source}: line {line_of_row(table, row)}, column {names[0]!r}: the "
                "time does not increase; rows must be in time order, one per sample")
        try:
            rate, start = sample_rate_from_times(times)
        except ValueError as exc:
            raise CaptureError(f"{table.source}: column {names[0]!r}: {exc}") from None
    else:
        rate, start = float(sample_rate_hz), 0.0
    shown = dict(zip(keys, names, strict=True))
    for k in VOLTAGES:
        if k in col and not np.any(col[k]):
            raise CaptureError(f"{table.source}: column {shown[k]!r} is zero in every row: no "
                               "voltage was captured; check that channel and its scale")
    currents = [k for k in CURRENTS if k in col]
    if not any(np.any(col[k]) for k in currents):
        raise CaptureError(f"{table.source}: every current column is zero in every row: no "
                           "current was captured; check the clamps, their channels and scales")
    check_two_cycles(table.source, rate, col["voltage_l1_v"], col["voltage_l1_v"].size)
    warnings = tuple(w for k in keys if k != "time_s"
                     for w in [clipping_warning(table.source, shown[k], raw[k])] if w)
    return ThreePhaseCapture(
        source=table.source, sample_rate_hz=rate, start_time_s=start,
        voltages_v=tuple(col[k] for k in VOLTAGES if k in col),
        currents_a=tuple(col[k] for k in CURRENTS if k in col),
        neutral_a=col.get(NEUTRAL), columns=shown, warnings=warnings)


PHASE_POWER = ("grid_l1_w", "grid_l2_w", "grid_l3_w")


@dataclass(frozen=True, eq=False)
class PhasePowerLog:
    """A regulation log with the grid power of each phase and/or their sum.

    Attributes
    ----------
    source : str
    time_s : numpy.ndarray
        Seconds from the first reading [s].
    phase_w : dict of str to numpy.ndarray
        ``'L1'``... -> grid power of that phase, positive = import [W] (the phases logged).
    total_w : numpy.ndarray or None
        The logged sum over the phases, positive = net import [W].
    """

    source: str
    time_s: np.ndarray
    phase_w: dict[str, np.ndarray]
    total_w: np.ndarray | None

    def net_w(self) -> np.ndarray | None:
        """The sum over the phases: logged, or added up when all three phases are logged."""
        if self.total_w is not None:
            return self.total_w
        if len(self.phase_w) == 3:
            return self.phase_w["L1"] + self.phase_w["L2"] + self.phase_w["L3"]
        return None


def read_phase_power_log(path, *, columns=None, name=None):
    """Read a regulation log with ``grid_l1_w``, ``grid_l2_w``, ``grid_l3_w`` and/or
    ``grid_w`` (the sum), and ``time_s`` or ``timestamp``.

    Raises
    ------
    CaptureError
        No power column, a bad value (the line is named), times that do not increase.
    """
    from commission.captures.logs import _find_time_and, _rows

    table = read_table(path, expected="time_s or timestamp, grid_l1_w grid_l2_w grid_l3_w "
                       "and/or grid_w", name=name)
    time_key, found = _find_time_and(table, (), (*PHASE_POWER, "grid_w"), columns,
                                     "grid_l1_w=P1")
    if not any(k in found for k in (*PHASE_POWER, "grid_w")):
        shown = ", ".join(repr(n) for n in table.names)
        raise CaptureError(f"{table.source}: line {table.header_line}: no grid power column; "
                           f"the header has {shown}, expected grid_l1_w, grid_l2_w, grid_l3_w "
                           "(per phase) and/or grid_w (their sum)")
    rows, _ = _rows(table, found, time_key, "regulation", None, None)
    time_s, _ = rows.pop(time_key)
    phases = {f"L{n + 1}": rows[k] for n, k in enumerate(PHASE_POWER) if k in rows}
    return PhasePowerLog(table.source, time_s, phases, rows.get("grid_w"))
