"""Regulation log: grid power held in the installer's dead band in automatic mode.

Default rule (common practice; the factor 3 is our default): pass when |mean| <= D and the
95th percentile of |grid| <= 3·D. The settling band is the dead band itself, for the
command, the check and the chart alike.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from commission.analyses import (
    FAIL,
    PASS,
    Analysis,
    ReadSettings,
    SettingsError,
    reader_findings,
    with_findings,
)

DEFAULT_HOLD_S = 10.0  # our default: time in the band that counts as settled
SPREAD_FACTOR = 3.0  # our default: 95 % of |grid| within 3 D

SRC_REGULATION = ("common practice: grid power held in the installer's dead band "
                  "(mean within ±D, 95 % of readings within ±3·D)")
SIGN = "positive power = import"


@dataclass(frozen=True)
class RegulationSettings:
    dead_band_w: float
    hold_s: float = DEFAULT_HOLD_S


def judge_stats(stats, dead_band_w: float) -> tuple[str, str]:
    """The rule on a log's statistics (physics.regulation.RegulationStats): (verdict,
    reason). Pass when |mean| <= D and the 95th percentile of |grid| <= 3 D."""
    d = float(dead_band_w)
    if not d > 0:
        raise SettingsError("the dead band must be greater than zero, e.g. 50 W")
    mean_ok = abs(stats.mean_grid_w) <= d
    spread_ok = stats.p95_abs_grid_w <= SPREAD_FACTOR * d
    shown = (f"mean grid {stats.mean_grid_w:+.0f} W (dead band ±{d:.0f} W), 95 % of readings "
             f"within ±{stats.p95_abs_grid_w:.0f} W (allowed {SPREAD_FACTOR * d:.0f} W)")
    if mean_ok and spread_ok:
        return PASS, shown
    problems = []
    if not mean_ok:
        side = "importing" if stats.mean_grid_w > 0 else "exporting"
        problems.append(f"the mean is outside the dead band ({side}: check the clamp, the "
                        "dead band setting and that surplus was available)")
    if not spread_ok:
        problems.append("the reading swings widely (hunting or slow response: check the "
                        "control settings)")
    return FAIL, f"{shown}; " + "; ".join(problems)


def analyse_regulation(path, settings: RegulationSettings, read: ReadSettings | None = None,
                       *, name: str | None = None) -> Analysis:
    """Read a grid-power log and judge how well the diverter held the dead band."""
    from commission.captures import read_regulation_log
    from commission.physics import regulation

    read = read or ReadSettings()
    d = float(settings.dead_band_w)
    if not d > 0:
        raise SettingsError("the dead band must be greater than zero, e.g. 50 W")
    log = read_regulation_log(path, columns=read.columns, time_format=read.time_format,
                              tz=read.tz, name=name)
    stats = regulation.grid_statistics(log.time_s, log.grid_w, diverter_w=log.diverter_w,
                                       settling_band_w=d, settling_hold_s=settings.hold_s)
    verdict, shown = judge_stats(stats, d)
    settle = (f"; settled {stats.settling_s:.0f} s after the largest step"
              if stats.settling_s is not None else "")
    reason = (f"{shown} ({SIGN}); exported {stats.exported_wh:.1f} Wh, imported "
              f"{stats.imported_wh:.1f} Wh{settle}")
    findings = reader_findings(log)
    verdict, reason = with_findings(verdict, reason, findings)
    figures: dict[str, Any] = {
        "mean_grid_w": stats.mean_grid_w,
        "p95_abs_grid_w": stats.p95_abs_grid_w,
        "exported_wh": stats.exported_wh,
        "imported_wh": stats.imported_wh,
        "settling_s": stats.settling_s,
        "dead_band_w": d,
        "duration_s": stats.duration_s,
        "samples": stats.samples,
        "largest_step_w": stats.largest_step_w,
        "step_time_s": stats.step_time_s,
        "settling_band_w": stats.settling_band_w,
        "settling_hold_s": settings.hold_s,
        "mean_diverter_w": stats.mean_diverter_w,
        "diverted_wh": stats.diverted_wh,
    }
    step = max(1, log.time_s.size // 400)
    chart = {"time_s": [float(x) for x in log.time_s[::step]],
             "grid_w": [float(x) for x in log.grid_w[::step]],
             "dead_band_w": d}
    return Analysis("regulation", log.source, figures, findings, verdict, reason,
                    SRC_REGULATION, chart, read, log.notes,
                    (round(stats.mean_grid_w, 1), "W"), {"unit": "W", "min": -d, "max": d},
                    raw=stats)
