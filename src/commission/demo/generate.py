"""Regenerate the demo scenario's files (invented data for the demo only).

    python -m commission.demo.generate

Site: Larch House, a made-up bungalow with a 4.2 kWp array, a 150 L cylinder and a
2.85 kW element. The numbers are ours, chosen to be plausible; they are not
measurements of any real installation.
"""

from __future__ import annotations

import math
import struct
import zlib
from pathlib import Path

HERE = Path(__file__).resolve().parent / "files"


def _png(path: Path, width: int, height: int, pixel) -> None:
    rows = b"".join(
        b"\x00" + b"".join(bytes(pixel(x, y)) for x in range(width)) for y in range(height)
    )

    def chunk(kind: bytes, data: bytes) -> bytes:
        body = kind + data
        return struct.pack(">I", len(data)) + body + struct.pack(">I", zlib.crc32(body))

    header = struct.pack(">IIBBBBB", width, height, 8, 2, 0, 0, 0)
    path.write_bytes(b"\x89PNG\r\n\x1a\n" + chunk(b"IHDR", header)
                     + chunk(b"IDAT", zlib.compress(rows, 9)) + chunk(b"IEND", b""))


def main() -> None:
    HERE.mkdir(exist_ok=True)
    # Three plain pictures standing in for the site photos.
    light, dark, orange, yellow = (250, 250, 250), (30, 30, 30), (230, 120, 20), (250, 220, 0)

    def arrow(x: int, y: int) -> tuple[int, int, int]:
        return orange if abs(y - 32) < 4 or (x > 70 and abs(y - 32) < 90 - x) else light

    _png(HERE / "nameplate.png", 96, 64, lambda x, y: (200, 200, 190) if 8 < y < 56 else dark)
    _png(HERE / "clamp-arrow.png", 96, 64, arrow)
    _png(HERE / "labels.png", 96, 64, lambda x, y: yellow if (x // 12 + y // 12) % 2 else dark)

    # Clamp capture: element at full output, importing, 50.02 Hz, 5 kS/s, 0.4 s.
    rate, f, u, p = 5000.0, 50.02, 231.0, 2790.0
    i_rms = p / u
    lines = ["time_s,voltage_v,current_a"]
    for n in range(int(0.4 * rate)):
        t = n / rate
        v = u * math.sqrt(2) * math.sin(2 * math.pi * f * t + 0.3)
        i = i_rms * math.sqrt(2) * math.sin(2 * math.pi * f * t + 0.3) + 0.02 * math.sin(n * 1.7)
        lines.append(f"{t:.6f},{v:.3f},{i:.4f}")
    (HERE / "clamp-capture.csv").write_text("\n".join(lines) + "\n")

    # Heatsink soak: first-order rise from 24 °C towards 61 °C, τ = 14 min, 60 min log.
    lines = ["time_s,temp_c"]
    for n in range(0, 3601, 30):
        t = float(n)
        temp = 61.0 - (61.0 - 24.0) * math.exp(-t / 840.0) + 0.15 * math.sin(n / 47.0)
        lines.append(f"{t:.0f},{temp:.2f}")
    (HERE / "heatsink-soak.csv").write_text("\n".join(lines) + "\n")

    # Heating run: 2.95 kW into 150 L (about 16.9 K/h), logged each minute for 45 minutes,
    # with a slow start while the element's own mass warms up.
    lines = ["time_s,temp_c"]
    for n in range(0, 46):
        t = n * 60.0
        rise = 16.9 / 3600.0 * max(0.0, t - 90.0 * (1 - math.exp(-t / 90.0)))
        lines.append(f"{t:.0f},{31.2 + rise + 0.05 * math.sin(n * 1.3):.2f}")
    (HERE / "heating-run.csv").write_text("\n".join(lines) + "\n")

    # Automatic mode: grid power held near zero after a cloud passes at 300 s.
    lines = ["time_s,grid_w,diverter_w"]
    for n in range(0, 901, 5):
        step = 900.0 * math.exp(-(n - 300) / 20.0) if n >= 300 else 0.0
        grid = 12.0 * math.sin(n / 9.0) + step
        lines.append(f"{n},{grid:.1f},{max(0.0, 1800.0 - step):.1f}")
    (HERE / "regulation.csv").write_text("\n".join(lines) + "\n")


if __name__ == "__main__":
    main()
