"""Property-based: bad input everywhere ends in a one-line refusal, never another exception.

Targets, each run in-process with hypothesis and its example count printed:

* random mutations of the shipped checklist through ``commission.checklist.parse``: each
  validates, or fails with problems formatted ``FILE:LINE: ITEM-ID: message``;
* waveform captures (CSV and WAV) and the three kinds of log through the readers in
  ``commission.captures`` and on into the physics: only ``CaptureError`` from a reader and
  ``ValueError`` from the physics;
* answers files through ``commission walk JOB --answers FILE``: exit 0 or 2.

The reading parser has its own fuzz (tests/test_units_fuzz.py). Mutations are derived from
real files by cheap line edits, so each example costs milliseconds.
"""

from __future__ import annotations

import io
import math
import os
import re
import tempfile
import wave
from collections import Counter
from contextlib import contextmanager
from pathlib import Path
from unittest import mock

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from conftest import CHECKLIST, DEMO

# Every test here runs thousands of examples: the fast suite (-m 'not slow') leaves them to CI.
pytestmark = pytest.mark.slow

FAST = settings(deadline=None, database=None, suppress_health_check=list(HealthCheck))
# About a minute for the file on a laptop; COMMISSION_FUZZ_SCALE=10 for a deeper run.
SCALE = float(os.environ.get("COMMISSION_FUZZ_SCALE", "1"))
CHECKLIST_EXAMPLES = int(1500 * SCALE)
CAPTURE_EXAMPLES = int(1200 * SCALE)
WAV_EXAMPLES = int(1000 * SCALE)
LOG_EXAMPLES = int(1200 * SCALE)
ANSWERS_EXAMPLES = int(800 * SCALE)


def _report(capsys, target: str, seen: Counter, detail: str = "") -> None:
    with capsys.disabled():
        extra = f" ({detail})" if detail else ""
        print(f"\n[fuzz] {target}: {seen['examples']} examples{extra}")


# --------------------------------------------------------------------------- line edits

JUNK = ["", " ", "~", "null", "[]", "{}", "-1", "0", "1e999", "-1e999", ".nan", ".inf", "yes",
        "no", "'", '"', "{", "[", "]", "}", "&a", "*a", "*nope", "&a x", "!!binary AAAA",
        "!!int x", "!!float x", "!!str", "!!map", "!!python/object/apply:os.system [true]",
        "\t", "\tx", "é", "Ω", "\x00", "\x07", "\x85", "\u2028", "\ufeff", "---", "...",
        "? x", ": x", "- - -", "%YAML 1.1", "@x", "`x`", "|", ">", "|-\n  a", "0x1F", "0o17",
        "2024-01-01", "12:30", "<<: *a", "{a: 1, a: 2}", "[a, b", '"a\\nb"', "'a''b'",
        "x" * 300, "NaN", "inf", "-0", "1,5", "1.5.5", "１２", "−5", "true", "False", "on",
        "=", "#", "# comment", "a: b: c", "- x", "-", "key:", '"\\u0000"', '"\\x85"']


def _edit_lines(lines: list[str], ops, pool: list[str]) -> list[str]:
    """Apply line edits. Each op is (kind, i, j, payload); i and j are any integers."""
    out = list(lines)
    for kind, i, j, payload in ops:
        if not out:
            out = [payload + "\n"]
            continue
        i %= len(out)
        j %= len(out)
        line = out[i]
        body = line.rstrip("\r\n")
        end = line[len(body):]
        indent = body[: len(body) - len(body.lstrip(" "))]
        if kind == "delete":
            del out[i]
        elif kind == "duplicate":
            out.insert(i, line)
        elif kind == "move":
            out.insert(j, out.pop(i))
        elif kind == "value":  # change the value after "key:", or the whole line
            head, sep, _ = body.partition(": ")
            out[i] = (f"{head}: {payload}" if sep else f"{indent}{payload}") + end
        elif kind == "borrow":  # a value taken from another line of the same file
            head, sep, _ = body.partition(": ")
            value = pool[j % len(pool)] if pool else payload
            out[i] = (f"{head}: {value}" if sep else body + value) + end
        elif kind == "key":
            _, sep, rest = body.partition(":")
            out[i] = f"{indent}{payload}{sep}{rest}{end}"
        elif kind == "insert":
            out.insert(i, f"{indent}{payload}\n")
        elif kind == "indent":
            out[i] = ("  " + line) if j % 2 else line[min(2, len(indent)):]
        elif kind == "cut":  # cut this line short and drop everything after it
            out = out[:i] + [body[: j % (len(body) + 1)]]
        elif kind == "crlf":
            out[i] = body + "\r\n"
        elif kind == "field":  # CSV: change one comma-separated field
            fields = body.split(",")
            fields[j % len(fields)] = payload
            out[i] = ",".join(fields) + end
        elif kind == "drop-field":
            fields = body.split(",")
            del fields[j % len(fields)]
            out[i] = ",".join(fields) + end
        elif kind == "delimiter":
            out[i] = body.replace(",", payload[:1] or ";") + end
    return out


def _ops(kinds, payloads, max_ops=5, min_ops=1):
    return st.lists(st.tuples(st.sampled_from(kinds), st.integers(0, 10**6),
                              st.integers(0, 10**6), payloads), min_size=min_ops,
                    max_size=max_ops)


PAYLOAD = st.one_of(st.sampled_from(JUNK), st.text(max_size=12))


# --------------------------------------------------------------------------- checklist

NAME = "mutant.yaml"
BASE_TEXT = CHECKLIST.read_text(encoding="utf-8")
BASE_LINES = BASE_TEXT.splitlines(keepends=True)
VALUES = sorted({line.partition(": ")[2].strip() for line in BASE_LINES if ": " in line}
                - {""})
PROBLEM = re.compile(rf"^{re.escape(NAME)}:(\d+): (.+?): (.+)$")
LINE_BREAKS = re.compile("\r\n|[\r\n\x85\u2028\u2029]")


def test_checklist_mutations(capsys):
    from commission.checklist import ChecklistError, parse
    from commission.checks import CHECKS

    parse(BASE_TEXT, NAME, checks=CHECKS)  # the control: the shipped file itself validates
    seen: Counter = Counter()
    kinds = ["delete", "duplicate", "move", "value", "borrow", "key", "insert", "indent",
             "cut", "crlf"]

    @settings(FAST, max_examples=CHECKLIST_EXAMPLES)
    @given(ops=_ops(kinds, PAYLOAD))
    def mutate(ops):
        text = "".join(_edit_lines(BASE_LINES, ops, VALUES))
        seen["examples"] += 1
        try:
            loaded = parse(text, NAME, checks=CHECKS)
        except ChecklistError as exc:
            seen["refused"] += 1
            last = len(LINE_BREAKS.split(text)) + 1
            assert exc.problems
            assert str(exc) == "\n".join(str(p) for p in exc.problems)
            for p in exc.problems:
                line = str(p)
                assert "\n" not in line and "\r" not in line, repr(line)
                m = PROBLEM.match(line)
                assert m, repr(line)
                assert isinstance(p.line, int) and 1 <= p.line <= last, (p.line, last)
                assert p.item.strip() and p.message.strip(), repr(line)
            return
        seen["valid"] += 1
        assert loaded.checklist.items() and len(loaded.sha256) == 64

    mutate()
    _report(capsys, "checklist mutations", seen,
            f"{seen['valid']} still valid, {seen['refused']} refused as FILE:LINE: ITEM: msg")
    assert seen["valid"] and seen["refused"]  # both outcomes were exercised


# --------------------------------------------------------------------------- captures

RATE = 2000.0


def _capture_lines(n: int = 200) -> list[str]:
    t = np.arange(n) / RATE
    v = 325.0 * np.sin(2 * np.pi * 50.0 * t)
    i = 10.0 * np.sin(2 * np.pi * 50.0 * t - 0.3)
    return ["time_s,voltage_v,current_a\n"] + [f"{a:.6f},{b:.3f},{c:.4f}\n"
                                                for a, b, c in zip(t, v, i, strict=True)]


CAPTURE = _capture_lines()
CSV_KINDS = ["delete", "duplicate", "move", "insert", "cut", "crlf", "field", "field",
             "field", "drop-field", "delimiter", "key"]
CSV_PAYLOAD = st.one_of(st.sampled_from(
    ["nan", "NaN", "inf", "-inf", "", " ", "abc", "1e400", "1,5", '"3"', "0", "-0", "#",
     "0x10", "\x00", "\xff", "time_s", "voltage_v", "current_a", "1e-300", "9" * 40]),
    st.text(max_size=8))


@contextmanager
def _scratch():
    with tempfile.TemporaryDirectory(prefix="commission-fuzz-") as folder:
        yield Path(folder)


def _file_bytes(lines: list[str], shape: str, blob: bytes) -> bytes:
    """The mutated lines, or one of the whole-file shapes a broken instrument gives."""
    text = "".join(lines)
    if shape == "header-only":
        text = "".join(lines[:1])
    elif shape == "one-column":
        text = "".join(line.split(",")[0].rstrip("\r\n") + "\n" for line in lines)
    elif shape == "no-header":
        text = "".join(lines[1:])
    elif shape == "binary":
        return blob
    elif shape == "binary-tail":
        return text.encode("utf-8") + blob
    elif shape == "cp1252":
        return text.replace("time_s", "zeit_°s").encode("cp1252", errors="replace")
    elif shape == "bom":
        return b"\xef\xbb\xbf" + text.encode("utf-8")
    elif shape == "empty":
        return b""
    return text.encode("utf-8", errors="surrogatepass")


SHAPES = st.sampled_from(["lines"] * 6 + ["header-only", "one-column", "no-header", "binary",
                                          "binary-tail", "cp1252", "bom", "empty"])


def test_capture_csv_files_and_physics(capsys):
    from commission.captures import CaptureError, read_capture_csv
    from commission.physics.waveform import analyse

    seen: Counter = Counter()
    with _scratch() as folder:
        path = folder / "capture.csv"

        @settings(FAST, max_examples=CAPTURE_EXAMPLES)
        @given(ops=_ops(CSV_KINDS, CSV_PAYLOAD, max_ops=3, min_ops=0), shape=SHAPES,
               blob=st.binary(max_size=300),
               rate=st.sampled_from([None, None, RATE, 0.5, 1e9]),
               columns=st.sampled_from([None, {"voltage_v": "current_a"}, {"bogus": "x"},
                                        {"time_s": "voltage_v"}]))
        def read(ops, shape, blob, rate, columns):
            path.write_bytes(_file_bytes(_edit_lines(CAPTURE, ops, []), shape, blob))
            seen["examples"] += 1
            try:
                cap = read_capture_csv(path, sample_rate_hz=rate, columns=columns)
            except CaptureError as exc:
                seen["refused"] += 1
                assert str(exc).strip() and "\n" not in str(exc), repr(str(exc))
                return
            assert cap.voltage_v.size == cap.current_a.size > 0
            assert math.isfinite(cap.sample_rate_hz) and cap.sample_rate_hz > 0
            try:
                result = analyse(cap.sample_rate_hz, cap.voltage_v, cap.current_a)
            except ValueError as exc:
                seen["physics refused"] += 1
                assert str(exc).strip()
                return
            seen["analysed"] += 1
            assert math.isfinite(result.v_rms) and math.isfinite(result.p_w)

        read()
    _report(capsys, "capture CSV files -> reader -> physics", seen,
            f"{seen['refused']} refused by the reader, {seen['physics refused']} by the "
            f"physics, {seen['analysed']} analysed")
    assert seen["refused"] and seen["analysed"]


def _wav(channels: int, width: int, rate: int, frames: int) -> bytes:
    t = np.arange(frames) / max(rate, 1)
    full = float(2 ** (8 * width - 1) - 1)
    signals = [0.8 * np.sin(2 * np.pi * 50 * t), 0.3 * np.sin(2 * np.pi * 50 * t - 0.2),
               0.1 * np.sin(2 * np.pi * 150 * t)][:channels]
    data = np.stack(signals, axis=1) * full if signals else np.zeros((frames, 0))
    codes = np.round(data).astype(np.int64)
    if width == 1:
        raw = (codes + 128).astype(np.uint8).tobytes()
    elif width == 3:
        c = codes.astype("<i4").view(np.uint8).reshape(-1, 4)[:, :3]
        raw = c.tobytes()
    else:
        raw = codes.astype({2: "<i2", 4: "<i4"}[width]).tobytes()
    buf = io.BytesIO()
    with wave.open(buf, "wb") as w:
        w.setnchannels(channels)
        w.setsampwidth(width)
        w.setframerate(rate)
        w.writeframes(raw)
    return buf.getvalue()


def test_capture_wav_files_and_physics(capsys):
    from commission.captures import CaptureError, read_capture_wav
    from commission.physics.waveform import analyse

    seen: Counter = Counter()
    with _scratch() as folder:
        path = folder / "capture.wav"

        @settings(FAST, max_examples=WAV_EXAMPLES)
        @given(channels=st.sampled_from([2, 2, 3, 1]), width=st.sampled_from([1, 2, 3, 4]),
               shape=st.sampled_from([(4000, 500), (8000, 500), (1000, 100), (50, 100),
                                      (1, 10), (8000, 0), (8000, 1), (8000, 30)]),
               damage=st.sampled_from(["none", "none", "none", "cut", "flip", "junk"]),
               at=st.integers(0, 3000), values=st.binary(min_size=1, max_size=200),
               chans=st.sampled_from([(1, 2), (1, 2), (2, 1), (3, 2), (1, 1), (0, 2)]))
        def read(channels, width, shape, damage, at, values, chans):
            data = bytearray(_wav(channels, width, *shape))
            if damage == "cut":  # truncated: the logger was unplugged
                data = data[:at]
            elif damage == "flip":  # damaged header or data
                for k, value in enumerate(values[:4]):
                    data[(at + 7 * k) % len(data)] = value
            elif damage == "junk":  # not a WAV file at all
                data = bytearray(values)
            path.write_bytes(bytes(data))
            seen["examples"] += 1
            try:
                cap = read_capture_wav(path, voltage_full_scale_v=400.0,
                                       current_full_scale_a=50.0, voltage_channel=chans[0],
                                       current_channel=chans[1])
            except CaptureError as exc:
                seen["refused"] += 1
                assert str(exc).strip() and "\n" not in str(exc), repr(str(exc))
                return
            try:
                analyse(cap.sample_rate_hz, cap.voltage_v, cap.current_a)
            except ValueError:
                seen["physics refused"] += 1
                return
            seen["analysed"] += 1

        read()
    _report(capsys, "capture WAV files -> reader -> physics", seen,
            f"{seen['refused']} refused by the reader, {seen['physics refused']} by the "
            f"physics, {seen['analysed']} analysed")
    assert seen["refused"] and seen["analysed"]


def _log_lines(kind: str, stamps: bool) -> list[str]:
    n = 40
    t = np.arange(n) * 30.0
    if stamps:
        times = [f"2024-06-01T12:{int(s) // 60:02d}:{int(s) % 60:02d}+02:00" for s in t]
    else:
        times = [f"{s:.1f}" for s in t]
    if kind == "regulation":
        g = 400.0 * np.exp(-t / 200.0)
        head = ("timestamp" if stamps else "time_s") + ",grid_w,diverter_w\n"
        return [head] + [f"{a},{b:.1f},{1500 - b:.1f}\n" for a, b in zip(times, g, strict=True)]
    temp = 60.0 - 45.0 * np.exp(-t / 900.0)
    head = ("timestamp" if stamps else "time_s") + ",temp_c\n"
    return [head] + [f"{a},{b:.2f}\n" for a, b in zip(times, temp, strict=True)]


LOGS = {(k, s): _log_lines(k, s) for k in ("heating", "soak", "regulation")
        for s in (False, True)}


def _log_physics(kind: str, path, columns) -> str:
    """What `commission analyse heating|soak|regulation` runs on a log (the analyses)."""
    from commission import analyses

    read = analyses.ReadSettings(columns=columns)
    if kind == "heating":
        return analyses.analyse_heating(path, analyses.HeatingSettings(
            power_w=3000.0, volume_l=150.0), read).verdict
    if kind == "soak":
        return analyses.analyse_soak(path, analyses.SoakSettings(
            limit_c=80.0, ambient_c=25.0, worst_ambient_c=40.0), read).verdict
    return analyses.analyse_regulation(path, analyses.RegulationSettings(50.0), read).verdict


def test_log_files_and_physics(capsys):
    from commission.captures import (
        CaptureError,
        read_heating_log,
        read_regulation_log,
        read_soak_log,
    )

    readers = {"heating": read_heating_log, "soak": read_soak_log,
               "regulation": read_regulation_log}
    seen: Counter = Counter()
    with _scratch() as folder:
        path = folder / "log.csv"

        @settings(FAST, max_examples=LOG_EXAMPLES)
        @given(kind=st.sampled_from(sorted(readers)), stamps=st.booleans(),
               ops=_ops(CSV_KINDS, max_ops=3, min_ops=0, payloads=st.one_of(
                   CSV_PAYLOAD, st.sampled_from([
                       "2024-13-01T00:00:00", "2024-06-01T12:00:00Z", "2024-06-01", "12:00",
                       "2024-06-01T12:00:00+99:00", "timestamp", "temp_c", "grid_w"]))),
               shape=SHAPES, blob=st.binary(max_size=200),
               columns=st.sampled_from([None, {"temp_c": "grid_w"}, {"nope": "x"}]))
        def read(kind, stamps, ops, shape, blob, columns):
            lines = _edit_lines(LOGS[(kind, stamps)], ops, [])
            path.write_bytes(_file_bytes(lines, shape, blob))
            seen["examples"] += 1
            try:
                log = readers[kind](path, columns=columns)
            except CaptureError as exc:
                seen["refused"] += 1
                assert str(exc).strip() and "\n" not in str(exc), repr(str(exc))
                return
            assert log.time_s.size and np.all(np.diff(log.time_s) > 0)
            try:
                verdict = _log_physics(kind, path, columns)
            except ValueError:
                seen["physics refused"] += 1
                return
            seen["judged"] += 1
            assert verdict in ("pass", "fail", "review")

        read()
    _report(capsys, "heating/soak/regulation logs -> reader -> physics", seen,
            f"{seen['refused']} refused by the reader, {seen['physics refused']} by the "
            f"physics, {seen['judged']} judged")
    assert seen["refused"] and seen["judged"]


# --------------------------------------------------------------------------- answers

@contextmanager
def _fast_cli():
    """CliRunner on the real app, with typer's command tree built once, not per call."""
    import typer.testing
    from typer.main import get_command

    from commission.cli.app import app

    command = get_command(app)
    runner = typer.testing.CliRunner()
    with mock.patch.object(typer.testing, "_get_command", lambda _app: command):
        def invoke(*args):
            result = runner.invoke(app, [str(a) for a in args])
            if result.exception is not None and not isinstance(result.exception, SystemExit):
                raise result.exception
            return result
        yield invoke


@pytest.fixture
def memory_folder(tmp_path):
    """A folder in memory when the machine has one: the register commits (and syncs) every
    answer, and durability is not what this fuzz is about."""
    shm = Path("/dev/shm")
    if shm.is_dir() and os.access(shm, os.W_OK):
        with tempfile.TemporaryDirectory(dir=shm, prefix="commission-fuzz-") as folder:
            yield Path(folder)
    else:
        yield tmp_path


def test_answers_files_through_walk(capsys, new_job, memory_folder, monkeypatch):
    from commission.checklist import load
    from commission.checks import CHECKS

    monkeypatch.setenv("COMMISSION_REGISTER", str(memory_folder / "reg.sqlite3"))
    job = new_job()
    ids = [i.id for _, i in load(CHECKLIST, checks=CHECKS).checklist.items()]
    folder = memory_folder / "answers"
    folder.mkdir()
    # Files an answers file may point at: broken, empty, a folder, a real photo. (Good
    # captures are left out: each evaluation would analyse them again, and the readers and
    # physics have their own fuzz above.)
    (folder / "photo.png").write_bytes((DEMO / "files" / "nameplate.png").read_bytes())
    (folder / "junk.csv").write_bytes(b"\x00\x01binary\xff" * 50)
    (folder / "header.csv").write_text("time_s,voltage_v,current_a\n", encoding="utf-8")
    (folder / "nan.csv").write_text("time_s,temp_c\n0,nan\n1,2\n2,3\n", encoding="utf-8")
    (folder / "empty.csv").write_bytes(b"")
    (folder / "sub").mkdir()
    values = ["231 V", "231", "2 A", "yes", "no", "y", "1", "2", "99", "²", "١", "１", "0",
              "0.43 Ω", "0,43", "-5",
              "1e999", "nan", "inf", "−3 V", "30 mA", "24 ms", "4.2 kWp", "TN-C-S", "TT", "B",
              "16 A", "phase angle", "", "''", "~", "[]", "{}", "[a, b]", "{a: b}",
              "{skip: not today}", "{skip: ''}", "{na: not fitted}", "{na: ''}",
              "{file: junk.csv}", "{file: header.csv}",
              "{file: nan.csv}", "{file: empty.csv}", "{file: sub}", "{file: missing.csv}",
              "{file: ../answers/nan.csv}", "{photo: photo.png}", "{photo: junk.csv}",
              "{text: 231 V, instrument: NOPE}", "{text: [1]}", "{text: 231 V, extra: 1}",
              "{skip: a, na: b}", "junk.csv", "photo.png", "~nosuchuser/x.csv",
              "{file: ~nosuchuser/x.csv}", "{file: " + "x" * 300 + "}", "'x' * 3",
              '"\\u0000"', "&a x", "*a", "!!binary AAAA", "|\n  multi\n  line"]
    keys = ids + ["no.such.item", "", "~", "[x]", "'supply.voltage '", "Supply.Voltage",
                  "supply.voltage\t", "? complex"]
    answers = folder / "answers.yaml"
    seen: Counter = Counter()
    codes: Counter = Counter()

    with _fast_cli() as invoke:
        @settings(FAST, max_examples=ANSWERS_EXAMPLES)
        @given(pairs=st.lists(st.tuples(st.sampled_from(keys),
                                        st.one_of(st.sampled_from(values), PAYLOAD)),
                              max_size=6),
               ops=st.lists(st.tuples(st.sampled_from(["delete", "duplicate", "indent",
                                                       "insert", "cut", "value"]),
                                      st.integers(0, 99), st.integers(0, 99), PAYLOAD),
                            max_size=2),
               raw=st.one_of(st.none(), st.none(), st.none(), st.binary(max_size=80)))
        def walk(pairs, ops, raw):
            lines = [f"{k}: {v}\n" for k, v in pairs]
            if ops:
                lines = _edit_lines(lines, ops, [])
            data = raw if raw is not None else "".join(lines).encode("utf-8", "surrogatepass")
            answers.write_bytes(data)
            seen["examples"] += 1
            result = invoke("walk", job, "--answers", answers)
            codes[result.exit_code] += 1
            assert result.exit_code in (0, 2), result.output
            if result.exit_code == 2:
                assert result.stderr.strip()
            else:
                assert "answers added" in result.stdout

        walk()
        final = invoke("show", job, "--json")
        assert final.exit_code == 0  # the register is still readable after it all
    _report(capsys, "answers files via `commission walk --answers`", seen,
            f"exit 0: {codes[0]}, exit 2: {codes[2]}")
    assert codes[0] and codes[2]
