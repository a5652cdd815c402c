"""WAV waveform reader against files written with the standard ``wave`` module (the
reference for the sample values), and the chunked stream against the whole-file read."""

import math
import struct

import numpy as np
import pytest

from commission.captures import CaptureError, open_capture_wav, read_capture_wav
from commission.physics.waveform import CaptureAccumulator, analyse

RATE = 10000


def _signals(seconds=1.0, f=50.0):
    t = np.arange(int(RATE * seconds)) / RATE
    v = 0.7 * np.sin(2 * np.pi * f * t + 0.4)  # fractions of full scale
    i = 0.4 * np.sin(2 * np.pi * f * t - 0.1)
    return v, i


def _write(path, channels, width=2, rate=RATE):
    import wave

    data = np.column_stack(channels)
    full = float(1 << (8 * width - 1))
    codes = np.clip(np.round(data * full), -full, full - 1).astype(np.int64)
    if width == 2:
        raw = codes.astype("<i2").tobytes()
    elif width == 3:
        u = (codes & 0xFFFFFF).astype("<u4").view(np.uint8).reshape(-1, 4)[:, :3]
        raw = u.tobytes()
    else:
        raw = codes.astype("<i4").tobytes()
    with wave.open(str(path), "wb") as w:
        w.setnchannels(data.shape[1])
        w.setsampwidth(width)
        w.setframerate(rate)
        w.writeframes(raw)
    return path


@pytest.mark.parametrize("width", [2, 3, 4])
def test_reads_scaled_samples(tmp_path, width):
    """Samples as fractions of full scale times the full-scale value, to within one LSB
    of the PCM codes written by the wave module."""
    v, i = _signals()
    p = _write(tmp_path / "c.wav", [v, i], width=width)
    cap = read_capture_wav(p, voltage_full_scale_v=500.0, current_full_scale_a=50.0)
    lsb = 1.0 / (1 << (8 * width - 1))
    assert cap.sample_rate_hz == RATE
    assert np.allclose(cap.voltage_v, 500.0 * v, atol=500.0 * lsb)
    assert np.allclose(cap.current_a, 50.0 * i, atol=50.0 * lsb)
    assert cap.warnings == ()


def test_channel_selection(tmp_path):
    """Issue 3 --channels: voltage on channel 3, current on channel 1, as written."""
    v, i = _signals()
    p = _write(tmp_path / "c.wav", [i, np.zeros_like(v), v])
    cap = read_capture_wav(p, voltage_full_scale_v=500.0, current_full_scale_a=50.0,
                           voltage_channel=3, current_channel=1)
    assert np.allclose(cap.voltage_v, 500.0 * v, atol=0.02)
    assert np.allclose(cap.current_a, 50.0 * i, atol=0.002)


def test_clipping_at_full_scale_warns(tmp_path):
    """Codes at the PCM rails are reported as clipped (issue 3)."""
    v, i = _signals()
    p = _write(tmp_path / "clip.wav", [np.clip(1.3 * v / 0.7, -1, 1), i])
    cap = read_capture_wav(p, voltage_full_scale_v=500.0, current_full_scale_a=50.0)
    assert len(cap.warnings) == 1 and "voltage" in cap.warnings[0]


def _error(path, **kw):
    kw.setdefault("voltage_full_scale_v", 500.0)
    kw.setdefault("current_full_scale_a", 50.0)
    with pytest.raises(CaptureError) as exc:
        read_capture_wav(path, **kw)
    msg = str(exc.value)
    assert "\n" not in msg and str(path) in msg
    return msg


def test_mono_is_refused(tmp_path):
    """A mono file cannot hold voltage and current."""
    v, _ = _signals()
    assert "1 channel" in _error(_write(tmp_path / "m.wav", [v]))


def test_missing_channel(tmp_path):
    """A channel number beyond the file's channels is refused."""
    v, i = _signals()
    assert "channel 3" in _error(_write(tmp_path / "s.wav", [v, i]), current_channel=3)


def test_no_current(tmp_path):
    """Issue 3: a silent current channel is refused."""
    v, _ = _signals()
    assert "no current" in _error(_write(tmp_path / "z.wav", [v, np.zeros_like(v)]))


def test_fewer_than_two_cycles(tmp_path):
    """Issue 3: 30 ms of 50 Hz is 1.5 cycles: refused."""
    v, i = _signals(seconds=0.03)
    assert "mains cycles" in _error(_write(tmp_path / "short.wav", [v, i]))


def test_junk_and_float_wav(tmp_path):
    """Non-WAV bytes and an IEEE-float WAV (format code 3) give one-line errors."""
    junk = tmp_path / "junk.wav"
    junk.write_bytes(b"this is not a wav file at all" * 10)
    assert "not a readable PCM WAV" in _error(junk)
    # a minimal IEEE-float WAV header (format code 3): the wave module cannot read it
    samples = np.zeros(200, dtype="<f4").tobytes()
    fmt = struct.pack("<HHIIHH", 3, 2, RATE, RATE * 8, 8, 32)
    body = b"WAVE" + b"fmt " + struct.pack("<I", len(fmt)) + fmt
    body += b"data" + struct.pack("<I", len(samples)) + samples
    f = tmp_path / "float.wav"
    f.write_bytes(b"RIFF" + struct.pack("<I", len(body)) + body)
    assert "floating-point" in _error(f)


def test_empty_wav(tmp_path):
    """A WAV file with no frames is refused."""
    assert "no samples" in _error(_write(tmp_path / "e.wav", [np.zeros(0), np.zeros(0)]))


def test_stream_matches_whole_read_and_analysis(tmp_path):
    """Chunked reading fed to the accumulator gives the figures of analyse() on the whole
    file (1e-9 relative), with the same samples."""
    v, i = _signals(seconds=7.3, f=50.02)
    p = _write(tmp_path / "long.wav", [v, i], width=3)
    whole = read_capture_wav(p, voltage_full_scale_v=500.0, current_full_scale_a=50.0)
    stream = open_capture_wav(p, voltage_full_scale_v=500.0, current_full_scale_a=50.0,
                              chunk_frames=4099)
    acc = CaptureAccumulator(stream.sample_rate_hz)
    parts = []
    for cv, ci in stream:
        assert cv.size <= 4099
        parts.append(cv)
        acc.add(cv, ci)
    assert np.array_equal(np.concatenate(parts), whole.voltage_v)
    got = acc.result()
    ref = analyse(whole.sample_rate_hz, whole.voltage_v, whole.current_a)
    for name in ("v_rms", "i_rms", "p_w", "phase_deg", "thd_i_pct", "frequency_hz"):
        assert math.isclose(getattr(got, name), getattr(ref, name), rel_tol=1e-9)
    assert got.v_rms == pytest.approx(500 * 0.7 / math.sqrt(2), rel=5e-3)
    assert stream.frames == v.size and stream.duration_s == pytest.approx(7.3)
