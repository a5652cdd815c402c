"""Regulation analysis: the common-practice rule, and kW/minute columns against their W/s
twins (references: normal samples with known mean and spread; 1 kW = 1000 W, 1 min = 60 s)."""

from __future__ import annotations

import numpy as np
import pytest

from commission.analyses import RegulationSettings, analyse_regulation


def _write(path, header, t, g):
    path.write_text(header + "\n" + "".join(f"{a:.10f},{b:.10f}\n" for a, b in
                                             zip(t, g, strict=True)))
    return path


def test_rule_pass_exporting_and_hunting(tmp_path):
    """Pass when |mean| <= D and p95 |grid| <= 3 D (common practice), else fail naming why."""
    t = np.arange(0.0, 600.0, 1.0)
    rng = np.random.default_rng(2)
    good = analyse_regulation(_write(tmp_path / "g.csv", "time_s,grid_w", t,
                                     rng.normal(10.0, 30.0, t.size)), RegulationSettings(50.0))
    assert good.verdict == "pass"
    exporting = analyse_regulation(_write(tmp_path / "e.csv", "time_s,grid_w", t,
                                          rng.normal(-120.0, 30.0, t.size)),
                                   RegulationSettings(50.0))
    assert exporting.verdict == "fail" and "exporting" in exporting.reason
    hunting = analyse_regulation(_write(tmp_path / "h.csv", "time_s,grid_w", t,
                                        400.0 * np.sign(np.sin(t))), RegulationSettings(50.0))
    assert hunting.verdict == "fail" and "swings" in hunting.reason


def test_kilowatts_and_minutes_give_the_si_figures(tmp_path):
    """The same log in kW against minutes gives the figures of its W-and-seconds twin."""
    t = np.arange(0.0, 900.0, 5.0)
    g = 900.0 * np.exp(-np.maximum(t - 300.0, 0.0) / 20.0) * (t >= 300) + 12 * np.sin(t / 9)
    si = analyse_regulation(_write(tmp_path / "si.csv", "time_s,grid_w", t, g),
                            RegulationSettings(50.0))
    kw = analyse_regulation(_write(tmp_path / "kw.csv", "Time [min],Grid (kW)", t / 60.0,
                                   g / 1000.0), RegulationSettings(50.0))
    for key in ("mean_grid_w", "p95_abs_grid_w", "exported_wh", "imported_wh", "settling_s"):
        assert kw.figures[key] == pytest.approx(si.figures[key], rel=1e-6, abs=1e-9), key
    assert kw.verdict == si.verdict
