"""Flicker severity of a voltage capture, and the flicker a burst-fire diverter would cause.

``analyse_flicker`` reads a voltage capture of 10 minutes or more and runs the IEC 61000-4-15
flickermeter of :mod:`commission.physics.flicker`; ``predict_burst_fire`` synthesises the
supply voltage of a burst-fire element on the site's loop impedance (or the IEC TR 60725
reference impedance) and runs the same meter. Both return one result object that the
command, the check and the record read.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from functools import lru_cache
from typing import Any

SRC_FLICKER = ("IEC 61000-4-15:2010 flickermeter (our implementation, verified against the "
               "Ed.2 rectangular-change table); limit Pst ≤ 1.0 IEC 61000-3-3 (from memory)")
SRC_PREDICT = ("burst-fire voltage synthesised on the loop impedance (IEC TR 60725 reference "
               "0.40 + j0.25 Ω when none was measured) through the IEC 61000-4-15 "
               "flickermeter; limit IEC 61000-3-3 (from memory)")
REMEDIES = ("usual remedies: a finer cycle pattern or phase-angle control at part output "
            "(the maker's setting), a smaller element or one split in stages, or a "
            "lower-impedance supply; a weak supply is a question for the network operator")
DEFAULT_FRACTIONS = (0.1, 0.25, 0.5, 0.75, 0.9)


@dataclass(frozen=True)
class FlickerAnalysis:
    source_name: str
    pst: tuple[float, ...]
    pinst_max: float
    duration_s: float
    mains_hz: int
    sample_rate_hz: float
    limit: float
    warnings: tuple[str, ...] = ()

    @property
    def pst_max(self) -> float:
        return max(self.pst)

    @property
    def verdict(self) -> str:
        return "pass" if self.pst_max <= self.limit else "fail"

    @property
    def reason(self) -> str:
        windows = len(self.pst)
        base = (f"Pst {self.pst_max:.2f} (highest of {windows} ten-minute window"
                f"{'s' if windows > 1 else ''})")
        if self.pst_max <= self.limit:
            return f"{base} ≤ {self.limit:g}"
        return f"{base} exceeds {self.limit:g}: lights on this supply flicker visibly; {REMEDIES}"

    def as_json(self) -> dict[str, Any]:
        return {"kind": "flicker", "file": self.source_name, "pst": list(self.pst),
                "pst_max": self.pst_max, "pinst_max": self.pinst_max,
                "duration_s": self.duration_s, "mains_hz": self.mains_hz,
                "sample_rate_hz": self.sample_rate_hz, "limit_pst": self.limit,
                "verdict": self.verdict, "reason": self.reason, "source": SRC_FLICKER,
                "warnings": list(self.warnings)}


def mains_frequency_hz(voltage, fs_hz: float) -> int:
    """50 or 60, from the spectral peak of the first seconds (never assumed)."""
    import numpy as np

    n = int(min(len(voltage), 10 * fs_hz))
    seg = np.asarray(voltage[:n], dtype=float)
    seg = seg - seg.mean()
    spec = np.abs(np.fft.rfft(seg * np.hanning(n)))
    freqs = np.fft.rfftfreq(n, 1.0 / fs_hz)
    band = (freqs > 40) & (freqs < 70)
    if not np.any(band) or spec[band].max() <= 0:
        raise ValueError("no mains frequency found between 40 and 70 Hz")
    peak = float(freqs[band][np.argmax(spec[band])])
    for f in (50, 60):
        if abs(peak - f) <= 2.0:
            return f
    raise ValueError(f"the mains frequency reads {peak:.1f} Hz; 50 or 60 Hz is needed")


def flicker_of_samples(voltage, fs_hz: float, *, name: str = "capture", limit: float = 1.0,
                       warnings: tuple[str, ...] = ()) -> FlickerAnalysis:
    from ..physics import flicker as fl

    mains = mains_frequency_hz(voltage, fs_hz)
    res = fl.flicker_severity(voltage, fs_hz, mains)
    return FlickerAnalysis(name, res.pst, res.pinst_max, res.duration_s, mains, fs_hz, limit,
                           warnings)


def analyse_flicker(path, *, voltage_full_scale_v: float, channel: int = 1,
                    limit: float = 1.0, name: str | None = None) -> FlickerAnalysis:
    """Pst of a PCM WAV voltage capture (one channel, volts at full scale given)."""
    import os

    from ..captures import CaptureError
    from ..captures.wav_capture import read_voltage_wav

    label = name or os.path.basename(os.fspath(path))
    rate, voltage, warnings = read_voltage_wav(path, voltage_full_scale_v=voltage_full_scale_v,
                                               channel=channel)
    try:
        return flicker_of_samples(voltage, rate, name=label, limit=limit, warnings=warnings)
    except ValueError as exc:
        raise CaptureError(f"{label}: {exc}") from None


@dataclass(frozen=True)
class BurstFirePrediction:
    power_w: float
    impedance_ohm: complex
    impedance_is_reference: bool
    supply_v: float
    step_pct: float  # relative voltage change when the element switches [%]
    pst_by_fraction: dict[float, float] = field(default_factory=dict)
    limit: float = 1.0
    period_cycles: int | None = None

    @property
    def pst_max(self) -> float:
        return max(self.pst_by_fraction.values())

    @property
    def worst_fraction(self) -> float:
        return max(self.pst_by_fraction, key=lambda k: self.pst_by_fraction[k])

    @property
    def verdict(self) -> str:
        return "pass" if self.pst_max <= self.limit else "fail"

    def impedance_text(self) -> str:
        z = self.impedance_ohm
        what = "reference impedance" if self.impedance_is_reference else "measured loop"
        return f"{what} {z.real:.2f} + j{z.imag:.2f} Ω"

    @property
    def reason(self) -> str:
        base = (f"{self.power_w / 1000:g} kW switched in whole cycles on the "
                f"{self.impedance_text()} steps the voltage {self.step_pct:.1f} %; predicted "
                f"Pst {self.pst_max:.2f} at {self.worst_fraction * 100:g} % output")
        if self.pst_max <= self.limit:
            return f"{base} ≤ {self.limit:g}"
        return f"{base}, over {self.limit:g}: {REMEDIES}"

    def as_json(self) -> dict[str, Any]:
        return {"kind": "flicker_prediction", "power_w": self.power_w,
                "impedance_ohm": [self.impedance_ohm.real, self.impedance_ohm.imag],
                "impedance_is_reference": self.impedance_is_reference,
                "supply_v": self.supply_v, "step_pct": self.step_pct,
                "pst_by_fraction": {f"{k:g}": v for k, v in self.pst_by_fraction.items()},
                "pst_max": self.pst_max, "limit_pst": self.limit, "verdict": self.verdict,
                "reason": self.reason, "source": SRC_PREDICT,
                "period_cycles": self.period_cycles}


def predict_burst_fire(power_w: float, impedance_ohm: complex | None = None, *,
                       supply_v: float = 230.0, mains_hz: int = 50,
                       fractions: tuple[float, ...] = DEFAULT_FRACTIONS,
                       period_cycles: int | None = None,
                       limit: float = 1.0) -> BurstFirePrediction:
    """Predicted Pst of a burst-fire element at each output fraction (worst one judged)."""
    from ..physics import flicker as fl

    if not (math.isfinite(power_w) and power_w > 0):
        raise ValueError("element power must be a positive number of watts")
    reference = impedance_ohm is None
    z = fl.REFERENCE_IMPEDANCE_OHM if reference else complex(impedance_ohm)
    values = {float(f): fl.predict_burst_fire_pst(power_w, z, f, period_cycles=period_cycles,
                                                   supply_v=supply_v, mains_hz=mains_hz)
              for f in fractions}
    step = 100.0 * fl.relative_voltage_change(power_w, z, supply_v)
    return BurstFirePrediction(power_w, z, reference, supply_v, step, values, limit,
                               period_cycles)


@lru_cache(maxsize=64)
def cached_burst_fire(power_w: float, impedance_ohm: complex | None, supply_v: float,
                      period_cycles: int | None, limit: float) -> BurstFirePrediction:
    """:func:`predict_burst_fire`, remembered: a pure function of its arguments, asked again
    each time a job's verdicts are derived."""
    return predict_burst_fire(power_w, impedance_ohm, supply_v=supply_v,
                              period_cycles=period_cycles, limit=limit)
