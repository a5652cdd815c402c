"""A large plain CSV parsed in two processes: always the rows of one ``numpy.loadtxt`` call
over the whole file (the reference), or None so that the caller parses it in one pass.

The size threshold is lowered so that small files exercise the split; the processor count
is taken as two, as on the machines this targets (fork works on one processor too).
"""

from __future__ import annotations

import os

import numpy as np
import pytest
from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st

from commission.captures import CaptureError, _halves, read_capture_csv

pytestmark = pytest.mark.skipif(not _halves.ENABLED, reason="the split needs fork (Linux)")

OPTIONS = dict(comments="#", ndmin=2, dtype=float, quotechar='"')
DEFAULT_MIN_BYTES = _halves.MIN_BYTES


@pytest.fixture(autouse=True)
def _small_files_split(monkeypatch):
    monkeypatch.setattr(_halves, "MIN_BYTES", 0)
    monkeypatch.setattr(_halves, "_processors", lambda: 2)


def _one_pass(path, skiprows, delimiter=",", usecols=(0, 1, 2), encoding="utf-8-sig"):
    return np.loadtxt(path, skiprows=skiprows, delimiter=delimiter, usecols=list(usecols),
                      encoding=encoding, **OPTIONS)


def _halves_of(path, skiprows, delimiter=",", usecols=(0, 1, 2), encoding="utf-8-sig"):
    return _halves.loadtxt_in_halves(
        path, skiprows=skiprows,
        options=dict(delimiter=delimiter, usecols=list(usecols), encoding=encoding, **OPTIONS))


def _rows(n, seed=3):
    rng = np.random.default_rng(seed)
    t = np.arange(n) / 1000.0
    return [f"{t[k]:.4f},{rng.normal(0, 300):.3f},{rng.normal(0, 10):.4f}" for k in range(n)]


def _write(tmp_path, text, name="c.csv"):
    path = tmp_path / name
    path.write_bytes(text.encode("utf-8"))
    return path


@pytest.mark.parametrize("newline", ["\n", "\r\n"])
@pytest.mark.parametrize("trailing", [True, False])
def test_same_rows_as_one_pass(tmp_path, newline, trailing):
    text = newline.join(["time_s,voltage_v,current_a", *_rows(3000)])
    path = _write(tmp_path, text + (newline if trailing else ""))
    got = _halves_of(path, 1)
    assert got is not None
    want = _one_pass(path, 1)
    assert got.shape == want.shape == (3000, 3)
    assert np.array_equal(got, want)


def test_metadata_lines_above_the_header_and_a_subset_of_columns(tmp_path):
    rows = [f"{r},7,x" for r in _rows(2000)]  # two more columns, one of them not a number
    path = _write(tmp_path, "Logger;FE-2\nSerial 00412\ntime_s,voltage_v,current_a,n,s\n"
                  + "\n".join(rows) + "\n")
    got = _halves_of(path, 3, usecols=(0, 2, 3))
    assert got is not None
    assert np.array_equal(got, _one_pass(path, 3, usecols=(0, 2, 3)))


def test_blank_and_comment_lines_in_the_second_half_are_the_childs_own(tmp_path):
    rows = _rows(2000)
    rows[1800:1800] = ["", "# a note", "", "#"]
    path = _write(tmp_path, "t,v,i\n" + "\n".join(rows) + "\n")
    got = _halves_of(path, 1)
    assert got is not None
    assert np.array_equal(got, _one_pass(path, 1))
    assert got.shape[0] == 2000


def test_a_second_half_of_shorter_lines_than_the_first(tmp_path):
    """More rows after the split than the first half's line length suggests."""
    long = [f"{k:.9f},{k * 2:.9f},{k * 3:.9f}" for k in range(1000)]
    short = [f"{k % 10},{k % 7},{k % 3}" for k in range(6000)]
    path = _write(tmp_path, "t,v,i\n" + "\n".join(long + short) + "\n")
    got = _halves_of(path, 1)
    assert got is not None
    assert np.array_equal(got, _one_pass(path, 1))
    assert got.shape == (7000, 3)
    assert all(got[:, k].flags.c_contiguous for k in range(3))


@pytest.mark.parametrize("odd", ["", "# note", '"1.0",2,3', "\r"])
def test_a_line_that_would_shift_the_split_means_one_pass(tmp_path, odd):
    rows = _rows(2000)
    rows.insert(100, odd)
    path = _write(tmp_path, "t,v,i\n" + "\n".join(rows) + "\n")
    assert _halves_of(path, 1) is None


def test_a_lone_cr_in_the_header_means_one_pass(tmp_path):
    path = _write(tmp_path, "Logger FE-2\rt,v,i\n" + "\n".join(_rows(2000)) + "\n")
    assert _halves_of(path, 2) is None


def test_below_the_threshold_or_disabled_means_one_pass(tmp_path, monkeypatch):
    path = _write(tmp_path, "t,v,i\n" + "\n".join(_rows(2000)) + "\n")
    monkeypatch.setattr(_halves, "MIN_BYTES", os.path.getsize(path) + 1)
    assert _halves_of(path, 1) is None
    monkeypatch.setattr(_halves, "MIN_BYTES", 0)
    monkeypatch.setattr(_halves, "_processors", lambda: 1)
    assert _halves_of(path, 1) is None


def test_no_fork_means_one_pass(tmp_path, monkeypatch):
    path = _write(tmp_path, "t,v,i\n" + "\n".join(_rows(2000)) + "\n")

    def refused():
        raise BlockingIOError(11, "Resource temporarily unavailable")

    monkeypatch.setattr(_halves.os, "fork", refused)
    before = len(os.listdir("/proc/self/fd"))
    assert _halves_of(path, 1) is None
    assert len(os.listdir("/proc/self/fd")) == before  # the pipe was closed


@pytest.mark.parametrize("where", [10, 1990])
def test_a_bad_value_in_either_half_is_named_by_the_one_pass(tmp_path, monkeypatch, where):
    rows = _rows(2000)
    rows[where] = rows[where].replace(",", ",1.2.3,", 1).rsplit(",", 1)[0]
    path = _write(tmp_path, "time_s,voltage_v,current_a\n" + "\n".join(rows) + "\n")
    assert _halves_of(path, 1) is None  # the child's or the parent's parse failed
    with pytest.raises(CaptureError) as split:
        read_capture_csv(path)
    monkeypatch.setattr(_halves, "ENABLED", False)
    with pytest.raises(CaptureError) as one:
        read_capture_csv(path)
    assert split.value.message == one.value.message
    assert f"line {where + 2}" in one.value.message


def test_a_capture_reads_the_same_split_or_not(tmp_path, monkeypatch):
    n = 20000
    t = np.arange(n) / 10000.0
    v = 325.0 * np.sin(2 * np.pi * 50.0 * t)
    i = 12.0 * np.sin(2 * np.pi * 50.0 * t - 0.1)
    lines = [f"{a:.4f},{b:.3f},{c:.4f}" for a, b, c in zip(t, v, i, strict=True)]
    path = _write(tmp_path, "time [s],U [V],I [A]\r\n" + "\r\n".join(lines))
    calls = []
    real = _halves.loadtxt_in_halves
    monkeypatch.setattr(_halves, "loadtxt_in_halves",
                        lambda *a, **k: calls.append(1) or real(*a, **k))
    split = read_capture_csv(path)
    assert calls, "the split was not tried"
    monkeypatch.setattr(_halves, "ENABLED", False)
    whole = read_capture_csv(path)
    assert split.sample_rate_hz == whole.sample_rate_hz
    assert np.array_equal(split.voltage_v, whole.voltage_v)
    assert np.array_equal(split.current_a, whole.current_a)


def test_a_decimal_comma_export_reads_the_same_by_name_or_in_memory(tmp_path, monkeypatch):
    """A large ';' / decimal-comma export is converted into a temporary copy parsed by name
    (and split); a small one is parsed from memory: the same samples either way, and the
    copy is gone afterwards."""
    import tempfile

    n = 20000
    t = np.arange(n) / 10000.0
    v = 325.0 * np.sin(2 * np.pi * 50.0 * t)
    i = 12.0 * np.sin(2 * np.pi * 50.0 * t - 0.1)
    lines = [f"{a:.4f};{b:.3f};{c:.4f}".replace(".", ",")
             for a, b, c in zip(t, v, i, strict=True)]
    path = _write(tmp_path, "Logger;FE-2\ntime [s];U [V];I [A]\n" + "\n".join(lines) + "\n")
    mine = f"commission-files-{os.getpid()}-"

    def copies():
        return {n for n in os.listdir(tempfile.gettempdir()) if n.startswith(mine)}

    before = copies()
    calls = []
    real = _halves.loadtxt_in_halves
    monkeypatch.setattr(_halves, "loadtxt_in_halves",
                        lambda *a, **k: calls.append(a[0]) or real(*a, **k))
    by_name = read_capture_csv(path)
    assert calls and calls[0] != str(path), "the converted copy was not parsed by name"
    assert copies() == before
    monkeypatch.setattr(_halves, "MIN_BYTES", os.path.getsize(path) + 1)
    in_memory = read_capture_csv(path)
    assert np.array_equal(by_name.voltage_v, in_memory.voltage_v)
    assert np.array_equal(by_name.current_a, in_memory.current_a)
    assert by_name.sample_rate_hz == in_memory.sample_rate_hz
    assert by_name.notes == in_memory.notes
    assert np.allclose(by_name.voltage_v[:3], v[:3], atol=5e-4)


_LINE_END = st.sampled_from(["\n", "\r\n", "\r"])
_EXTRA = st.sampled_from(["", "# c", "  ", "1,2", '"3",4,5', "x,y,z"])


@settings(max_examples=80, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(data=st.data())
def test_split_or_one_pass_never_differ(tmp_path, data):
    """Any mix of line ends, blank, comment, short, quoted and bad lines: the split gives
    exactly the one-pass rows, or None (the one pass then decides, error or not)."""
    n = data.draw(st.integers(4, 400), label="rows")
    lines = _rows(n, seed=n)
    for _ in range(data.draw(st.integers(0, 3), label="odd lines")):
        lines.insert(data.draw(st.integers(0, len(lines)), label="at"), data.draw(_EXTRA))
    ends = [data.draw(_LINE_END, label="end") if k % 97 == 0 else "\n"
            for k in range(len(lines))]
    body = "".join(line + end for line, end in zip(lines, ends, strict=True))
    if data.draw(st.booleans(), label="cut last newline"):
        body = body.rstrip("\r\n")
    path = _write(tmp_path, "t,v,i\n" + body)
    got = _halves_of(path, 1)
    try:
        want = _one_pass(path, 1)
    except ValueError:
        assert got is None
        event("one pass: error")
        return
    event(f"split: {'none' if got is None else 'used'}")
    if got is not None:
        assert got.shape == want.shape
        assert np.array_equal(got, want)


def test_the_command_on_a_large_capture_reports_what_one_pass_gives(tmp_path):
    """The console entry point (one BLAS thread, the default threshold) on a 3 MB capture,
    split in two processes, prints the same figures as the library reading it in one
    pass in this process."""
    import json
    import subprocess
    import sys

    from commission.analyses import CaptureSettings, analyse_capture

    n = 120_000  # 12 s at 10 kS/s, about 3 MB
    t = np.arange(n) / 10000.0
    rng = np.random.default_rng(11)
    v = 325.0 * np.sin(2 * np.pi * 50.01 * t) + rng.normal(0, 0.3, n)
    i = 9.0 * np.sin(2 * np.pi * 50.01 * t - 0.2) + rng.normal(0, 0.01, n)
    path = tmp_path / "big.csv"
    with path.open("w") as fh:
        fh.write("time_s,voltage_v,current_a\n")
        np.savetxt(fh, np.column_stack([t, v, i]), fmt=("%.4f", "%.3f", "%.4f"), delimiter=",")
    assert os.path.getsize(path) > DEFAULT_MIN_BYTES
    assert _halves_of(path, 1) is not None  # the file is one the split takes
    env = {k: v for k, v in os.environ.items() if not k.startswith("COMMISSION_")}
    env.update(COMMISSION_HOME=str(tmp_path / "home"),
               COMMISSION_REGISTER=str(tmp_path / "r.sqlite3"))
    run = subprocess.run(
        [sys.executable, "-c", "from commission.cli.app import run; run()",
         "analyse", "capture", str(path), "--json"],
        capture_output=True, text=True, env=env, timeout=120)
    assert run.returncode == 0, run.stderr
    printed = json.loads(run.stdout)
    with pytest.MonkeyPatch.context() as mp:
        mp.setattr(_halves, "ENABLED", False)
        one_pass = analyse_capture(path, CaptureSettings()).as_json()
    for key in ("cycles", "sample_rate_hz", "v_rms", "i_rms", "p_w", "frequency_hz"):
        assert printed[key] == one_pass[key], key
