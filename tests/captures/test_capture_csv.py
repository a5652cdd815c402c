"""CSV waveform reader: values as written (numpy.savetxt / hand-written files are the
reference) and one-line errors naming file and line."""

import math

import numpy as np
import pytest

from commission.captures import CaptureError, read_capture_csv

RATE = 5000.0


def _wave(n=2500, f=50.0):
    t = np.arange(n) / RATE
    v = 325.0 * np.sin(2 * np.pi * f * t + 0.2)
    i = 12.0 * np.sin(2 * np.pi * f * t - 0.3)
    return t, v, i


def _write(path, header, rows, fmt="%.6f", delimiter=","):
    with open(path, "w", newline="") as fh:
        fh.write(header + "\n")
        np.savetxt(fh, rows, fmt=fmt, delimiter=delimiter)
    return path


def test_reads_time_voltage_current(tmp_path):
    """Values as numpy.savetxt wrote them; rate from the time column."""
    t, v, i = _wave()
    p = _write(tmp_path / "c.csv", "time_s,voltage_v,current_a", np.column_stack([t, v, i]))
    cap = read_capture_csv(p)
    assert cap.sample_rate_hz == pytest.approx(RATE, rel=1e-9)
    assert np.allclose(cap.voltage_v, v, atol=1e-6)
    assert np.allclose(cap.current_a, i, atol=1e-6)
    assert cap.warnings == ()
    assert cap.duration_s == pytest.approx(0.5)


def test_rate_instead_of_time_and_column_mapping(tmp_path):
    """Issue 3: --rate instead of time_s, --columns mapping, ';' separator; values as written."""
    _, v, i = _wave()
    p = _write(tmp_path / "c.csv", "I1;extra;U1", np.column_stack([i, v * 0, v]), delimiter=";")
    cap = read_capture_csv(p, sample_rate_hz=RATE,
                           columns={"voltage_v": "U1", "current_a": "I1", "time_s": "t"})
    assert np.allclose(cap.voltage_v, v, atol=1e-6)
    assert np.allclose(cap.current_a, i, atol=1e-6)
    assert cap.start_time_s == 0.0


def test_raw_counts_scale_and_offset(tmp_path):
    """value = (raw - offset) * scale, e.g. a 12-bit converter centred on 2048."""
    t, v, i = _wave()
    raw_v = np.round(v / 0.2 + 2048)
    raw_i = np.round(i / 0.01 + 2048)
    p = _write(tmp_path / "raw.csv", "time_s,voltage_v,current_a",
               np.column_stack([t, raw_v, raw_i]), fmt=["%.6f", "%d", "%d"])
    cap = read_capture_csv(p, voltage_scale=0.2, voltage_offset=2048, current_scale=0.01,
                           current_offset=2048)
    assert np.allclose(cap.voltage_v, v, atol=0.1 + 1e-9)
    assert np.allclose(cap.current_a, i, atol=0.005 + 1e-9)
    assert cap.warnings == ()  # an unclipped 12-bit sine is not flagged


def test_clipped_converter_readings_warn(tmp_path):
    """A 12-bit reading held at its top code for a share of each cycle is flagged (issue 3)."""
    t, v, i = _wave()
    raw_v = np.clip(np.round(v / 0.2 + 2048), 0, 2048 + 1400)  # top rail at 3448
    p = _write(tmp_path / "clip.csv", "time_s,voltage_v,current_a",
               np.column_stack([t, raw_v, i]), fmt="%.6f")
    cap = read_capture_csv(p, voltage_scale=0.2, voltage_offset=2048)
    assert len(cap.warnings) == 1
    assert "clipping" in cap.warnings[0] and "voltage_v" in cap.warnings[0]


def test_comments_crlf_and_quoted_header(tmp_path):
    """Logger preamble comments, CRLF line ends and a quoted header; values as written."""
    t, v, i = _wave()
    body = "".join(f"{a:.6f},{b:.4f},{c:.4f}\r\n" for a, b, c in zip(t, v, i, strict=True))
    p = tmp_path / "c.csv"
    p.write_bytes(("# logger X, serial 123\r\n\r\n\"time_s\",\"voltage_v\",\"current_a\"\r\n"
                   + body).encode())
    cap = read_capture_csv(p)
    assert cap.voltage_v.size == t.size
    assert cap.voltage_v[10] == pytest.approx(v[10], abs=1e-4)


# --- errors: one line each, naming the file and what is accepted -------------------------

def _error(path, **kw):
    with pytest.raises(CaptureError) as exc:
        read_capture_csv(path, **kw)
    msg = str(exc.value)
    assert "\n" not in msg
    assert str(path) in msg
    return msg


def test_empty_file(tmp_path):
    """Issue 3: an empty file is a one-line error."""
    p = tmp_path / "e.csv"
    p.write_text("")
    assert "empty" in _error(p)


def test_header_only(tmp_path):
    """Issue 3: a header with no rows is a one-line error."""
    p = tmp_path / "h.csv"
    p.write_text("time_s,voltage_v,current_a\n")
    assert "no data rows" in _error(p)


def test_wrong_columns_lists_found_and_expected(tmp_path):
    """Issue 3: unknown columns; the message lists what was found and what is expected."""
    p = tmp_path / "w.csv"
    p.write_text("t,U,I\n0,1,2\n")
    msg = _error(p)
    assert "'t', 'U', 'I'" in msg and "voltage_v" in msg and "current_a" in msg


def test_one_column(tmp_path):
    """A file with a single column names the missing current column."""
    p = tmp_path / "one.csv"
    p.write_text("voltage_v\n1\n2\n")
    msg = _error(p, sample_rate_hz=RATE)
    assert "current_a" in msg


def test_unknown_mapping_key(tmp_path):
    """A mapping key that is not a known column is refused with the accepted keys."""
    p = tmp_path / "m.csv"
    p.write_text("time_s,voltage_v,current_a\n0,1,2\n")
    assert "accepted keys" in _error(p, columns={"volts": "U1"})


def test_non_numeric_row_names_the_line(tmp_path):
    """Issue 3: a non-numeric row is named by its file line (58 as a text editor counts)."""
    t, v, i = _wave(200)
    lines = ["time_s,voltage_v,current_a"] + [f"{a},{b},{c}" for a, b, c in zip(t, v, i,
                                                                               strict=True)]
    lines[57] = f"{t[56]},oops,{i[56]}"  # file line 58
    p = tmp_path / "n.csv"
    p.write_text("\n".join(lines) + "\n")
    msg = _error(p)
    assert "line 58" in msg and "'voltage_v'" in msg and "oops" in msg


def test_short_row_names_the_line(tmp_path):
    """A row with too few fields is named by its file line."""
    p = tmp_path / "s.csv"
    p.write_text("time_s,voltage_v,current_a\n0,1,2\n0.001,1\n")
    assert "line 3" in _error(p)


def test_nan_row_names_the_line(tmp_path):
    """A NaN reading (data row 121, file line 122) is named by its line and column."""
    t, v, i = _wave(300)
    rows = np.column_stack([t, v, i])
    rows[120, 2] = math.nan
    p = _write(tmp_path / "nan.csv", "time_s,voltage_v,current_a", rows)
    msg = _error(p)
    assert "line 122" in msg and "current_a" in msg


def test_binary_junk(tmp_path):
    """Binary data is refused as not a text CSV file."""
    p = tmp_path / "junk.csv"
    p.write_bytes(bytes(range(256)) * 20)
    assert "not a text CSV" in _error(p)


def test_fewer_than_two_cycles(tmp_path):
    """Issue 3: 150 samples at 5 kS/s of 50 Hz are 1.5 cycles: refused."""
    t, v, i = _wave(150)  # 30 ms at 50 Hz = 1.5 cycles
    p = _write(tmp_path / "short.csv", "time_s,voltage_v,current_a", np.column_stack([t, v, i]))
    assert "1.50 mains cycles" in _error(p)


def test_no_current(tmp_path):
    """Issue 3: an all-zero current column is refused."""
    t, v, _ = _wave()
    p = _write(tmp_path / "z.csv", "time_s,voltage_v,current_a",
               np.column_stack([t, v, np.zeros(t.size)]))
    assert "no current" in _error(p)


def test_time_not_increasing_and_uneven(tmp_path):
    """A repeated time (file line 102) and uneven spacing are refused."""
    t, v, i = _wave()
    t2 = t.copy()
    t2[100] = t2[99]
    p = _write(tmp_path / "back.csv", "time_s,voltage_v,current_a",
               np.column_stack([t2, v, i]))
    assert "line 102" in _error(p)
    t3 = t.copy()
    t3[1000:] += 0.8 / RATE
    p3 = _write(tmp_path / "uneven.csv", "time_s,voltage_v,current_a",
                np.column_stack([t3, v, i]), fmt="%.7f")
    assert "evenly spaced" in _error(p3)


def test_missing_file(tmp_path):
    """A missing file is a one-line error."""
    assert "no such file" in _error(tmp_path / "nope.csv")


def test_large_file_reads_as_numpy_loadtxt_does(tmp_path):
    """A 3 MB file reads to the same voltages as numpy.loadtxt (the outside reference); its
    speed against loadtxt is measured by benchmarks/bench_capture.py, never timed here."""
    n = 100_000
    t = np.arange(n) / 10000.0
    v = 325 * np.sin(2 * np.pi * 50 * t)
    i = 10 * np.sin(2 * np.pi * 50 * t - 0.2)
    p = _write(tmp_path / "big.csv", "time_s,voltage_v,current_a", np.column_stack([t, v, i]),
               fmt=["%.6f", "%.4f", "%.5f"])
    ref = np.loadtxt(p, delimiter=",", skiprows=1)
    cap = read_capture_csv(p)
    assert np.array_equal(cap.voltage_v, ref[:, 1])
    assert np.array_equal(cap.current_a, ref[:, 2])
