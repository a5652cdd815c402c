"""The reader layer on files shaped as instruments write them.

References: the values as written (numpy / hand-written text), unit conversions done by
hand (1 kW = 1000 W, 1 ms = 1e-3 s, °F = °C·9/5 + 32), Python's zoneinfo (IANA tz
database) for the clock change of Europe/London on 2024-10-27 (02:00 BST -> 01:00 GMT).
"""

from __future__ import annotations

import numpy as np
import pytest

from commission.captures import (
    CaptureError,
    read_capture_csv,
    read_heating_log,
    read_regulation_log,
)

RATE = 5000.0


def _wave(n=2500):
    t = np.arange(n) / RATE
    return t, 325.0 * np.sin(2 * np.pi * 50 * t), 12.0 * np.sin(2 * np.pi * 50 * t - 0.3)


def _error(fn, *args, **kw):
    with pytest.raises(CaptureError) as exc:
        fn(*args, **kw)
    msg = str(exc.value)
    assert "\n" not in msg
    return msg


def test_semicolon_decimal_comma_metadata_and_units(tmp_path):
    """A capture exported with ';', decimal commas, three metadata lines above the header
    and units in brackets (ms, V, mA): the values as written, converted to s, V, A; the
    metadata kept as notes."""
    t, v, i = _wave()
    lines = ["Instrument;PQ-Box 7", "Serial;00412", "Export;2024-06-01 10:00",
             "t [ms];U [V];I [mA]"]
    lines += [f"{a * 1000:.4f};{b:.3f};{c * 1000:.2f}".replace(".", ",")
              for a, b, c in zip(t, v, i, strict=True)]
    path = tmp_path / "box.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    cap = read_capture_csv(path)
    assert cap.sample_rate_hz == pytest.approx(RATE, rel=1e-6)
    assert np.allclose(cap.voltage_v, v, atol=1e-3)
    assert np.allclose(cap.current_a, i, atol=1e-5)
    assert cap.notes == ("Instrument;PQ-Box 7", "Serial;00412", "Export;2024-06-01 10:00")


def test_tab_separated_with_kilowatts(tmp_path):
    """A tab-separated regulation log with 'Grid Power (kW)' and 'Diverter (kW)': watts."""
    t = np.arange(0.0, 300.0, 5.0)
    g = 0.02 * np.sin(t / 10.0)
    text = "Time [s]\tGrid Power (kW)\tDiverter (kW)\n" + "".join(
        f"{a:.0f}\t{b:.5f}\t{1.5:.3f}\n" for a, b in zip(t, g, strict=True))
    path = tmp_path / "reg.tsv"
    path.write_text(text)
    log = read_regulation_log(path)
    assert np.allclose(log.grid_w, 1000.0 * np.round(g, 5), atol=1e-9)
    assert np.allclose(log.diverter_w, 1500.0)


def test_day_first_timestamps_read_when_the_file_shows_the_order(tmp_path):
    """'13.06.2024 23:59:00' can only be day-first: the dates across midnight are read as
    13 and 14 June (one minute apart)."""
    rows = ["13.06.2024 23:58:00;40,0", "13.06.2024 23:59:00;40,3", "14.06.2024 00:00:00;40,6",
            "14.06.2024 00:01:00;40,9"]
    path = tmp_path / "day.csv"
    path.write_text("Datum/Zeit;Temp [°C]\n" + "\n".join(rows) + "\n", encoding="utf-8")
    log = read_heating_log(path)
    assert list(log.time_s) == [0.0, 60.0, 120.0, 180.0]
    assert log.start.day == 13 and log.start.month == 6
    assert np.allclose(log.temp_c, [40.0, 40.3, 40.6, 40.9])


def test_ambiguous_dates_are_refused_never_guessed(tmp_path):
    """Every day <= 12: day-first and month-first both parse, so the reader refuses,
    naming file, line, column and the two forms; with --time-format it reads."""
    rows = ["03/04/2024 10:00,40.0", "03/04/2024 10:01,40.3", "03/04/2024 10:02,40.6"]
    path = tmp_path / "amb.csv"
    path.write_text("timestamp,temp_c\n" + "\n".join(rows) + "\n")
    msg = _error(read_heating_log, path)
    assert str(path) in msg and "line 2" in msg and "'timestamp'" in msg
    assert "%d/%m/%Y %H:%M" in msg and "%m/%d/%Y %H:%M" in msg
    log = read_heating_log(path, time_format="%m/%d/%Y %H:%M")
    assert log.start.month == 3 and log.start.day == 4


def _clock_change_log(path):
    """Naive local times of Europe/London across the autumn change: 01:58, 01:59 (BST),
    then 01:00, 01:01 ... (GMT) — one reading a minute throughout."""
    stamps = [f"2024-10-27T00:{m:02d}:00" for m in range(50, 60)]
    stamps += [f"2024-10-27T01:{m:02d}:00" for m in range(0, 60)]  # BST hour
    stamps += [f"2024-10-27T01:{m:02d}:00" for m in range(0, 30)]  # the repeated hour (GMT)
    temps = [30.0 + 0.1 * k for k in range(len(stamps))]
    path.write_text("timestamp,temp_c\n" + "".join(
        f"{s},{x:.2f}\n" for s, x in zip(stamps, temps, strict=True)))
    return path, len(stamps)


def test_naive_clock_change_refused_without_zone_and_corrected_with_it(tmp_path):
    """Without a zone the one-hour jump back is refused (line and column named); with
    --tz Europe/London the times are placed by zoneinfo and run one minute apart (the
    correction is a finding, never silent)."""
    path, n = _clock_change_log(tmp_path / "clock.csv")
    msg = _error(read_heating_log, path)
    assert "line 72" in msg and "clock change" in msg and "--tz" in msg
    log = read_heating_log(path, tz="Europe/London")
    assert np.allclose(np.diff(log.time_s), 60.0)
    assert log.time_s[-1] == 60.0 * (n - 1)
    assert any("clock change" in f for f in log.findings)


def test_time_gap_is_a_finding(tmp_path):
    """A 20-minute hole in a one-minute log is reported with its line."""
    t = np.concatenate([np.arange(0, 600, 60.0), np.arange(1800, 3000, 60.0)])
    path = tmp_path / "gap.csv"
    path.write_text("time_s,temp_c\n" + "".join(f"{a:.0f},{30 + a / 600:.3f}\n" for a in t))
    log = read_heating_log(path)
    assert any("time gap" in f and "line 12" in f for f in log.findings)


@pytest.mark.parametrize("text,needle", [
    ("t [s];T [°C]\n0;20,1\n60;2O,2\n120;20,3\n", "line 3, column 'T [°C]': '2O,2'"),
    ("time_s,grid (V)\n0,1\n5,2\n", "is not a power"),
    ("time_s,T1 [°F],T2 [°F]\n0,70,71\n60,71,72\n120,72,73\n", "temp_c=T1 [°F]"),
])
def test_refusals_name_file_line_column_and_what_is_accepted(tmp_path, text, needle):
    """Each refusal is one line naming the file, the line or column, and what would be
    accepted (decimal mark of this file, a unit of the right kind, a mapping)."""
    path = tmp_path / "bad.csv"
    path.write_text(text, encoding="utf-8")
    reader = read_regulation_log if "grid" in text else read_heating_log
    if "grid" in text:
        msg = _error(reader, path, columns={"grid_w": "grid (V)"})
    else:
        msg = _error(reader, path)
    assert str(path) in msg and needle in msg
