"""Heating, soak and regulation log readers: values as written in hand-made files (the
reference), ISO 8601 times as Python's datetime reads them, one-line errors naming the line."""

import numpy as np
import pytest

from commission.captures import (
    CaptureError,
    read_heating_log,
    read_regulation_log,
    read_soak_log,
)


def test_heating_log_with_time_s(tmp_path):
    """Issue 3 heating log: time_s and temp_c as written; time from the first reading."""
    p = tmp_path / "h.csv"
    p.write_text("time_s,temp_c\n100,20.0\n160,20.5\n220,21.1\n")
    log = read_heating_log(p)
    assert np.allclose(log.time_s, [0, 60, 120])
    assert np.allclose(log.temp_c, [20.0, 20.5, 21.1])
    assert log.start is None


def test_timestamps_with_offsets_and_z(tmp_path):
    """ISO 8601 with a UTC offset: 12:00:00+02:00 is 10:00:00Z."""
    p = tmp_path / "h.csv"
    p.write_text("timestamp;temp_c\n2024-06-01T12:00:00+02:00;30\n"
                 "2024-06-01T10:01:00Z;31\n2024-06-01T10:02:30Z;32.5\n")
    log = read_heating_log(p)
    assert np.allclose(log.time_s, [0, 60, 150])
    assert log.start.utcoffset().total_seconds() == 7200


def test_time_s_wins_over_timestamp_and_mapping(tmp_path):
    """time_s is preferred over timestamp; a column mapping selects other names."""
    p = tmp_path / "s.csv"
    rows = "\n".join(f"2024-01-01T00:{k:02d}:00,{10 * k},{40 + k}" for k in range(8))
    p.write_text("timestamp,secs,T1\n" + rows + "\n")
    log = read_soak_log(p, columns={"time_s": "secs", "temp_c": "T1"})
    assert np.allclose(log.time_s, np.arange(8) * 10)
    assert np.allclose(log.temp_c, 40 + np.arange(8))


def test_regulation_log_with_and_without_diverter(tmp_path):
    """Issue 3 regulation log: grid_w and the optional diverter_w as written."""
    p = tmp_path / "r.csv"
    p.write_text("time_s,grid_w,diverter_w\n0,-20,1500\n1,10,1480\n2,-5,1490\n")
    log = read_regulation_log(p)
    assert np.allclose(log.grid_w, [-20, 10, -5])
    assert np.allclose(log.diverter_w, [1500, 1480, 1490])
    q = tmp_path / "q.csv"
    q.write_text("time_s,grid_w\n0,-20\n1,10\n")
    assert read_regulation_log(q).diverter_w is None


def _error(reader, path, **kw):
    with pytest.raises(CaptureError) as exc:
        reader(path, **kw)
    msg = str(exc.value)
    assert "\n" not in msg and str(path) in msg
    return msg


def test_errors(tmp_path):
    """Issue 3: empty, header only, missing columns, bad values (line named), time order,
    too few rows, bad and mixed timestamps, binary data."""
    empty = tmp_path / "e.csv"
    empty.write_text("\n\n")
    assert "empty" in _error(read_heating_log, empty)
    header = tmp_path / "h.csv"
    header.write_text("time_s,temp_c\n")
    assert "no data rows" in _error(read_heating_log, header)
    no_time = tmp_path / "nt.csv"
    no_time.write_text("when,temp_c\n1,2\n")
    msg = _error(read_heating_log, no_time)
    assert "no time column" in msg and "'when'" in msg
    no_temp = tmp_path / "ntemp.csv"
    no_temp.write_text("time_s,T\n1,2\n")
    assert "temp_c" in _error(read_heating_log, no_temp)
    bad = tmp_path / "bad.csv"
    bad.write_text("time_s,temp_c\n0,20\n60,twenty\n120,21\n")
    msg = _error(read_heating_log, bad)
    assert "line 3" in msg and "'twenty'" in msg
    nan = tmp_path / "nan.csv"
    nan.write_text("time_s,temp_c\n0,20\n60,nan\n120,21\n")
    assert "line 3" in _error(read_heating_log, nan)
    back = tmp_path / "back.csv"
    back.write_text("time_s,grid_w\n0,1\n5,2\n5,3\n")
    assert "line 4" in _error(read_regulation_log, back)
    few = tmp_path / "few.csv"
    few.write_text("time_s,temp_c\n0,20\n60,21\n120,22\n")
    assert "at least 6" in _error(read_soak_log, few)
    stamp = tmp_path / "stamp.csv"
    stamp.write_text("timestamp,temp_c\n2024-06-01 10:00,20\nyesterday,21\n2024-06-01 10:02,22\n")
    assert "line 3" in _error(read_heating_log, stamp)
    mixed = tmp_path / "mixed.csv"
    mixed.write_text("timestamp,temp_c\n2024-06-01T10:00:00,20\n2024-06-01T10:01:00Z,21\n"
                     "2024-06-01T10:02:00,22\n")
    assert "UTC offset" in _error(read_heating_log, mixed)
    junk = tmp_path / "junk.csv"
    junk.write_bytes(b"\x00\x01\x02" * 100)
    assert "not a text CSV" in _error(read_regulation_log, junk)
