"""A three-phase capture (one or three voltages, one to three clamp currents): read →
:mod:`commission.physics.threephase` → one result object.

``analyse capture`` (text and ``--json``), the ``clamp_phase_capture`` check and the record's
per-phase table and phasor diagram all read the same :class:`ThreePhaseCaptureResult`, made
with the same defaults. Numbers and states only: the words of a verdict and the clamp
instructions are phrased in ``checks/threephase.py``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from ..physics.threephase import ClampPlacement, ThreePhaseAnalysis

SIGN_CONVENTION = (
    "Sign convention: positive power = import from the grid, on each phase and in the sum, "
    "for clamps on the incoming line conductors with their arrows pointing into the premises; "
    "angles against the L1 voltage fundamental, positive leading (counter-clockwise)."
)
SRC_PER_PHASE = "IEEE 1459-2010 per phase; DFT per IEC 61000-4-7 (from memory)"
SRC_UNBALANCE = ("u2 = |V2|/|V1| of the fundamentals, symmetrical components (Fortescue 1918), "
                 "IEC 61000-4-30 5.7.1 (from memory)")
UNBALANCE_LIMIT_PCT = 2.0  # EN 50160 4.2.5, 95 % of 10-minute values (from memory)
SRC_UNBALANCE_LIMIT = "EN 50160 4.2.5 (from memory; a capture is indicative)"
LOADS = ("all", "one", "unknown")


def _finite(x: float | None) -> float | None:
    return None if x is None or not math.isfinite(x) else float(x)


def _polar(z: complex) -> dict[str, float | None]:
    from ..physics.threephase import angle_deg

    return {"rms": abs(z), "angle_deg": angle_deg(z) if abs(z) > 0 else None}


@dataclass(frozen=True)
class ThreePhaseCaptureResult:
    """Figures of a three-phase capture and where its clamps are.

    Attributes
    ----------
    source_name : str
        The file, as named to the person.
    figures : ThreePhaseAnalysis
        Per-clamp and whole-supply figures from the physics.
    placements : tuple of ClampPlacement
        Where each clamp is, for the declared ``load`` and ``expect``.
    load : str
        What ran during the capture: ``'all'``, ``'one'`` or ``'unknown'``.
    expect : str
        ``'import'`` or ``'export'`` on the loaded phases.
    unbalance_limit_pct : float
        EN 50160 limit used for the unbalance figure [%].
    warnings : tuple of str
    """

    source_name: str
    figures: ThreePhaseAnalysis
    placements: tuple[ClampPlacement, ...]
    load: str
    expect: str
    unbalance_limit_pct: float
    warnings: tuple[str, ...] = ()

    @property
    def unbalance_pct(self) -> float | None:
        u = self.figures.unbalance
        return None if u is None else 100.0 * u

    def phasors(self) -> dict[str, Any]:
        """Chart data: fundamental phasors against L1 (voltages, clamp currents)."""
        a = self.figures
        return {
            "voltages": [{"label": f"V{k + 1}" if a.voltages_measured == 3 or k == 0
                          else f"V{k + 1} (assumed)", "rms_v": abs(z),
                          "angle_deg": _polar(z)["angle_deg"]}
                         for k, z in enumerate(a.voltage_phasors)],
            "currents": [{"label": f"I{c.clamp}", "rms_a": abs(c.current_phasor),
                          "angle_deg": _polar(c.current_phasor)["angle_deg"]}
                         for c in a.clamps],
            "sign_convention": SIGN_CONVENTION,
        }

    def per_phase_rows(self) -> list[dict[str, Any]]:
        """One row per clamp, SI units, NaN as None."""
        rows = []
        for c in self.figures.clamps:
            rows.append({
                "clamp": c.clamp, "phase": c.phase, "voltage_measured": c.voltage_measured,
                "v_rms_v": _finite(c.v_rms), "v1_rms_v": _finite(c.v1_rms),
                "thd_v_pct": _finite(c.thd_v_pct), "i_rms_a": _finite(c.i_rms),
                "i1_rms_a": _finite(c.i1_rms), "thd_i_pct": _finite(c.thd_i_pct),
                "p_w": _finite(c.p_w), "q1_var": _finite(c.q1_var), "s_va": _finite(c.s_va),
                "power_factor": _finite(c.power_factor),
                "displacement_pf": _finite(c.displacement_pf),
                "phase_deg": _finite(c.phase_deg),
                "current_angle_deg": _polar(c.current_phasor)["angle_deg"],
                "i_harmonics_a": {str(h): _finite(x) for h, x in
                                  zip(range(2, 41), c.i_harmonics_a, strict=True)
                                  if x is not None},
            })
        return rows

    def as_json(self) -> dict[str, Any]:
        a = self.figures
        return {
            "kind": "capture_three_phase",
            "file": self.source_name,
            "sample_rate_hz": a.sample_rate_hz,
            "frequency_hz": a.frequency_hz,
            "cycles": a.cycles,
            "voltages_captured": a.voltages_measured,
            "currents_captured": len(a.clamps),
            "phase_sequence": a.sequence,
            "phase_sequence_measured": a.sequence_measured,
            "voltage_rms_v": list(a.voltage_rms),
            "line_voltage_rms_v": None if a.line_voltage_rms is None else list(
                a.line_voltage_rms),
            "unbalance_pct": self.unbalance_pct,
            "unbalance_limit_pct": self.unbalance_limit_pct,
            "zero_sequence_pct": None if a.zero_sequence_ratio is None else
            100.0 * a.zero_sequence_ratio,
            "phases": self.per_phase_rows(),
            "neutral": {"fundamental_a": abs(a.neutral_phasor),
                        "computed_rms_a": a.neutral_rms_computed,
                        "measured_rms_a": a.neutral_rms_measured},
            "p_total_w": a.p_total_w,
            "load": self.load,
            "expect": self.expect,
            "clamps": [{"clamp": p.clamp, "state": p.state, "phase": p.phase,
                        "reversed": p.reversed, "angle_deg": _finite(p.angle_deg),
                        "residual_deg": _finite(p.residual_deg),
                        "current_share": p.current_share} for p in self.placements],
            "phasors": self.phasors(),
            "sign_convention": SIGN_CONVENTION,
            "sources": {"per_phase": SRC_PER_PHASE, "unbalance": SRC_UNBALANCE,
                        "unbalance_limit": SRC_UNBALANCE_LIMIT},
            "warnings": list(self.warnings),
        }


def analyse_samples(rate_or_times, voltages_v, currents_a, *, neutral_a=None,
                    name: str = "capture", load: str = "all", expect: str = "import",
                    tolerance_deg: float = 20.0, min_current_fraction: float = 0.1,
                    unbalance_limit_pct: float = UNBALANCE_LIMIT_PCT,
                    warnings: tuple[str, ...] = ()) -> ThreePhaseCaptureResult:
    """The analysis of samples already read (every reader ends here)."""
    from ..physics.threephase import analyse_three_phase, place_clamps

    if load not in LOADS:
        raise ValueError(f"load must be one of {', '.join(LOADS)}, not {load!r}")
    figures = analyse_three_phase(rate_or_times, voltages_v, currents_a, neutral_a=neutral_a)
    placements = place_clamps([c.current_phasor for c in figures.clamps],
                              figures.voltage_phasors, expect=expect, load=load,
                              tolerance_deg=tolerance_deg,
                              min_current_fraction=min_current_fraction)
    return ThreePhaseCaptureResult(name, figures, placements, load, expect,
                                   unbalance_limit_pct, warnings)


def analyse_threephase_capture(path, *, load: str = "all", expect: str = "import",
                               columns: dict[str, str] | None = None,
                               sample_rate_hz: float | None = None, name: str | None = None,
                               tolerance_deg: float = 20.0,
                               min_current_fraction: float = 0.1) -> ThreePhaseCaptureResult:
    """Read a three-phase CSV capture and analyse it.

    Raises
    ------
    CaptureError
        The file cannot be read, or the physics refuses the samples (one line naming the
        file).
    """
    import os

    from ..captures import CaptureError
    from ..captures.threephase_csv import read_threephase_capture_csv

    label = name or os.path.basename(os.fspath(path))
    cap = read_threephase_capture_csv(path, sample_rate_hz=sample_rate_hz, columns=columns,
                                       name=label)
    try:
        return analyse_samples(cap.sample_rate_hz, cap.voltages_v, cap.currents_a,
                               neutral_a=cap.neutral_a, name=label, load=load, expect=expect,
                               tolerance_deg=tolerance_deg,
                               min_current_fraction=min_current_fraction,
                               warnings=cap.warnings)
    except ValueError as exc:
        raise CaptureError(f"{label}: {exc}") from None
