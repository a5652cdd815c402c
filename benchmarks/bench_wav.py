"""An hour-long two-channel 10 kS/s 16-bit WAV (about 144 MB) through
``commission analyse capture``: peak memory, and the progress bar.

The command runs as a child with its stderr on a pseudo-terminal (so it shows its progress
as a person would see it); the child's own peak resident set comes from ``os.wait4``. The
baseline is the same command on a one-minute file made the same way: memory that does not
grow with the length of the file is what reading in chunks means. The time of the hour is
shown against a bare chunked read of the same file (``wave`` + ``numpy``, sum of squares
per channel), for information.
"""

from __future__ import annotations

import json
import re
import sys
import wave
from pathlib import Path

import numpy as np

from ._common import Context, Figure, checked, run_child, stopwatch

LIMIT_MB = 300.0
RATE_HZ = 10_000
V_FULL, I_FULL = 500.0, 50.0  # volts and amperes at full scale of the invented front end
CHUNK_S = 30

BARE_READ = '''\
import sys
import wave

import numpy as np

with wave.open(sys.argv[1], "rb") as w:
    ch = w.getnchannels()
    total = np.zeros(ch)
    while True:
        raw = w.readframes(1 << 16)
        if not raw:
            break
        x = np.frombuffer(raw, dtype="<i2").astype(float).reshape(-1, ch)
        total += np.einsum("ij,ij->j", x, x)
print(total)
'''


def write_capture_wav(path: Path, seconds: float, rate_hz: int = RATE_HZ) -> int:
    """Two channels (voltage, current) of 16-bit PCM written in 30 s chunks; bytes."""
    n = int(round(seconds * rate_hz))
    rng = np.random.default_rng(7)
    f = 50.01
    with wave.open(str(path), "wb") as w:
        w.setnchannels(2)
        w.setsampwidth(2)
        w.setframerate(rate_hz)
        for start in range(0, n, CHUNK_S * rate_hz):
            k = np.arange(start, min(n, start + CHUNK_S * rate_hz))
            ph = 2 * np.pi * f * (k / rate_hz)
            v = 325.0 * np.sin(ph) + 3.0 * np.sin(3 * ph + 0.4)
            i = 9.0 * np.sin(ph - 0.05) + 0.6 * np.sin(3 * ph) + 0.3 * np.sin(5 * ph)
            frames = np.empty((k.size, 2), dtype="<i2")
            frames[:, 0] = np.round(v / V_FULL * 32767 + rng.normal(0, 2, k.size))
            frames[:, 1] = np.round(i / I_FULL * 32767 + rng.normal(0, 2, k.size))
            w.writeframes(frames.tobytes())
    return path.stat().st_size


def run(ctx: Context) -> list[Figure]:
    seconds = 600.0 if ctx.quick else 3600.0
    big = ctx.scratch / "capture-long.wav"
    small = ctx.scratch / "capture-1min.wav"
    with stopwatch() as made:
        size = write_capture_wav(big, seconds)
    ctx.say(f"wrote {big.name}: {seconds / 60:g} min, 2 channels, 16-bit, {RATE_HZ} S/s, "
            f"{size / 1e6:.0f} MB in {made[0]:.1f} s")
    write_capture_wav(small, 60.0)
    env = ctx.child_env()
    argv = [*ctx.cli, "analyse", "capture", "--v-scale", str(V_FULL), "--i-scale", str(I_FULL),
            "--json"]
    checked(run_child([*argv, str(small)], env=env), "1 min WAV")  # warm the caches
    one = checked(run_child([*argv, str(small)], env=env, stderr_tty=True, measure_rss=True),
                  "1 min WAV")
    hour = checked(run_child([*argv, str(big)], env=env, stderr_tty=True, measure_rss=True),
                   "long WAV")
    bare_script = ctx.scratch / "bare_wav_read.py"
    bare_script.write_text(BARE_READ, encoding="utf-8")
    bare = checked(run_child([sys.executable, str(bare_script), str(big)], env=env,
                             measure_rss=True), "bare WAV read")
    label = f"{seconds / 60:g} min WAV ({size / 1e6:.0f} MB)"
    mem = Figure(f"{label}: peak RSS", hour.max_rss_mb or 0.0, one.max_rss_mb or 0.0, "MB",
                 LIMIT_MB, "measured", baseline_name="same command, 1 min WAV")
    result = json.loads(hour.out)
    mem.detail.append(f"analysed {result['cycles']} cycles, {result['frequency_hz']:.3f} Hz, "
                      f"P {result['p_w']:.0f} W; exit {hour.code}")
    mem.detail.append(_progress(hour.err))
    speed = Figure(f"{label}: analyse time", hour.seconds, bare.seconds, "s", None, None,
                   baseline_name="bare chunked read, same file")
    speed.detail.append(f"{seconds / hour.seconds:.0f} s of capture per second; the bare "
                        f"read peaks at {bare.max_rss_mb:.0f} MB")
    return [mem, speed]


def _progress(tty_text: str) -> str:
    """What the person saw on the terminal: the percentages shown."""
    shown = sorted({int(p) for p in re.findall(r"(\d+) %", tty_text)})
    if not shown:
        return "progress bar: NOT shown on the terminal"
    words = "analysing" in tty_text
    return (f"progress bar on a terminal: yes, {len(shown)} steps from {shown[0]} % to "
            f"{shown[-1]} %{', then analysing' if words else ''} (stderr on a pty)")
