"""Regenerate the three-phase demo's files (invented data for the demo only).

    python -m commission.demo.threephase.generate

Site: Quarry Lodge, a made-up farmhouse on a 230/400 V three-phase supply with a 9.6 kWp
three-phase array, a 300 L cylinder with one 2.5 kW element per phase and a diverter that
regulates the sum of the phases (the meter nets them). The numbers are ours, chosen to be
plausible; they are not measurements of any real installation.
"""

from __future__ import annotations

import math
from pathlib import Path

HERE = Path(__file__).resolve().parent / "files"

RATE_HZ = 5000.0
SECONDS = 0.4
F_HZ = 50.02
# Phase voltages (RMS, angle against L1) with a slight unbalance [V], [deg].
VOLTS = ((233.0, 0.0), (229.0, -119.4), (235.0, 120.8))
ELEMENT_OHM = 21.4  # each of the three elements, warm enough to read 21.4 ohm
THIRD_HARMONIC = 0.015  # of the fundamental, in every phase voltage


def _noise(seed: int):
    """A small deterministic pseudo-random sequence in -1...1 (a 32-bit LCG)."""
    x = seed
    while True:
        x = (1664525 * x + 1013904223) % 2**32
        yield x / 2**31 - 1.0


def capture() -> str:
    """Forced full output on every phase with the PV isolated (import on every phase); a
    fridge (150 W, cos phi 0.8 lagging) runs on L2."""
    rows = ["time_s,voltage_l1_v,voltage_l2_v,voltage_l3_v,current_1_a,current_2_a,"
            "current_3_a"]
    noise = _noise(7)
    for n in range(int(RATE_HZ * SECONDS)):
        t = n / RATE_HZ
        w = 2 * math.pi * F_HZ * t
        v = []
        for rms, deg in VOLTS:
            a = w + math.radians(deg)
            v.append(math.sqrt(2) * rms * (math.cos(a) + THIRD_HARMONIC * math.cos(3 * a)))
        i = [x / ELEMENT_OHM for x in v]
        rms2, deg2 = VOLTS[1]
        i[1] += math.sqrt(2) * (150.0 / (0.8 * rms2)) * math.cos(
            w + math.radians(deg2) - math.acos(0.8))
        v = [x + 0.2 * next(noise) for x in v]
        i = [x + 0.01 * next(noise) for x in i]
        rows.append(f"{t:.6f}," + ",".join(f"{x:.2f}" for x in v) + ","
                    + ",".join(f"{x:.3f}" for x in i))
    return "\n".join(rows) + "\n"


def regulation() -> str:
    """Ten minutes in automatic mode, one reading every 2 s: the inverter exports on every
    phase, the diverter holds the sum near zero (the meter nets the phases)."""
    rows = ["time_s,grid_l1_w,grid_l2_w,grid_l3_w"]
    noise = _noise(11)
    for n in range(300):
        t = 2.0 * n
        base = (-420.0, 610.0, -205.0)  # the house loads sit mostly on L2
        wobble = [25.0 * next(noise) for _ in range(3)]
        slow = 15.0 * math.sin(2 * math.pi * t / 97.0)
        p = [b + w_ + (slow if k == 0 else 0.0) for k, (b, w_) in enumerate(zip(base, wobble,
                                                                                   strict=True))]
        rows.append(f"{t:.0f}," + ",".join(f"{x:.1f}" for x in p))
    return "\n".join(rows) + "\n"


def main() -> None:
    HERE.mkdir(exist_ok=True)
    (HERE / "clamp-capture-3ph.csv").write_text(capture(), encoding="utf-8")
    (HERE / "regulation-3ph.csv").write_text(regulation(), encoding="utf-8")


if __name__ == "__main__":
    main()
