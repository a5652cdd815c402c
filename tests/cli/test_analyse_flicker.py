"""`commission analyse flicker` driven as a user would, on WAV captures built here from the
IEC 61000-4-15 Ed.2 rectangular-change table (CHECKS.md): Pst = 1 ± 5 % at 110 changes/min
of 0.722 %."""

import json
import math
import wave

import numpy as np
import pytest

FS = 2000


def _wav(path, seconds, du_pct, changes_per_min=110, mains=50, channels=1, full=500.0):
    t = np.arange(int(seconds * FS)) / FS
    square = np.where(np.floor(t * changes_per_min / 60.0) % 2 == 0, 1.0, -1.0)
    v = math.sqrt(2) * 230 * (1 + du_pct / 200 * square) * np.sin(2 * math.pi * mains * t)
    codes = np.round(v / full * 32767).astype("<i2")
    frames = np.repeat(codes[:, None], channels, axis=1) if channels > 1 else codes
    with wave.open(str(path), "wb") as w:
        w.setnchannels(channels)
        w.setsampwidth(2)
        w.setframerate(FS)
        w.writeframes(frames.tobytes())
    return path


def test_flicker_of_a_table_point_reads_one(cli, tmp_path):
    """110 changes/min at 0.722 % (Ed.2 table): Pst 1 ± 5 %, verdict pass at the limit 1.05."""
    f = _wav(tmp_path / "v.wav", 600, 0.722)
    r = cli("analyse", "flicker", f, "--v-scale", "500", "--json")
    assert r.exit_code == 0, r.output
    data = json.loads(r.stdout)
    assert data["pst_max"] == pytest.approx(1.0, rel=0.05)
    assert data["mains_hz"] == 50
    text = cli("analyse", "flicker", f, "--v-scale", "500", "--limit", "1.1")
    assert "verdict: pass" in text.stdout and "IEC 61000-4-15" in text.stdout


def test_flicker_over_the_limit_fails_with_remedies(cli, tmp_path):
    """Twice the table step: Pst ≈ 2 > 1, verdict fail with the usual remedies."""
    f = _wav(tmp_path / "v.wav", 600, 1.444, channels=2)
    r = cli("analyse", "flicker", f, "--v-scale", "500", "--channel", "2")
    assert r.exit_code == 0
    assert "verdict: fail" in r.stdout and "remedies" in r.stdout


@pytest.mark.parametrize("args,needle", [
    (["--v-scale", "500"], "at least 10 min"),
    ([], "--v-scale is required"),
    (["--v-scale", "abc"], "--v-scale"),
    (["--v-scale", "500", "--channel", "3"], "channel 3 does not exist"),
])
def test_bad_input_is_one_line_exit_2(cli, tmp_path, args, needle):
    f = _wav(tmp_path / "short.wav", 30, 0.7)
    r = cli("analyse", "flicker", f, *args)
    assert r.exit_code == 2
    assert needle in r.stderr and len(r.stderr.strip().splitlines()) == 1


def test_not_a_wav_is_one_line(cli, tmp_path):
    f = tmp_path / "v.wav"
    f.write_bytes(b"time,voltage\n0,1\n")
    r = cli("analyse", "flicker", f, "--v-scale", "500")
    assert r.exit_code == 2 and "not a readable PCM WAV" in r.stderr
