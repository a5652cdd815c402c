"""The demo's 10-minute supply-voltage capture, made when the demo runs (never shipped).

Invented: Larch House's supply at about 236 V with the small steps of the household's own
appliances (a kettle, a fridge starting) a few times a minute, and the phase-angle diverter
regulating smoothly, so the flicker is well under the limit. Deterministic (a fixed seed).
"""

from __future__ import annotations

import math
import wave
from pathlib import Path

RATE_HZ = 2000
FULL_SCALE_V = 500.0  # the demo front end's volts at full scale (the checklist's default)
MINUTES = 10.5


def write_capture(path: Path, seed: int = 20261202) -> Path:
    import numpy as np

    rng = np.random.default_rng(seed)
    n = int(MINUTES * 60 * RATE_HZ)
    t = np.arange(n) / RATE_HZ
    envelope = np.full(n, 236.0)
    # appliance steps: ~3 a minute, 0.2-0.5 % each, lasting seconds to a minute
    for _ in range(int(MINUTES * 3)):
        start = rng.uniform(0, MINUTES * 60)
        length = rng.uniform(2, 60)
        depth = rng.uniform(0.002, 0.005)
        envelope[(t >= start) & (t < start + length)] *= 1 - depth
    envelope *= 1 + 0.001 * np.sin(2 * math.pi * t / 170.0)  # slow drift of the network
    v = math.sqrt(2) * envelope * np.sin(2 * math.pi * 50.0 * t)
    codes = np.round(v / FULL_SCALE_V * 32767).astype("<i2")
    with wave.open(str(path), "wb") as w:
        w.setnchannels(1)
        w.setsampwidth(2)
        w.setframerate(RATE_HZ)
        w.writeframes(codes.tobytes())
    return path
