"""The three-phase record: per-phase tables and the phasor diagram, read back from the drawn
PDF with independent tools (pdftotext from poppler; pdfplumber for the chart frames).

References: the demo's own invented figures (233/229/235 V, 2.5 kW elements), closed-form
synthetic captures (resistive loads at textbook phase angles) for the diagram's data.
"""

from __future__ import annotations

import importlib.util
import math
import os
import subprocess
import sys

import pytest

from conftest import ROOT, need_tool


@pytest.fixture(scope="module")
def record3(tmp_path_factory):
    folder = tmp_path_factory.mktemp("demo3") / "run"
    env = {k: v for k, v in os.environ.items() if not k.startswith("COMMISSION_")}
    env["NO_COLOR"] = "1"
    done = subprocess.run([sys.executable, "-m", "commission.cli.app", "demo", "--out",
                           str(folder), "--scenario", "three-phase"], capture_output=True,
                          text=True, env=env, timeout=300)
    assert done.returncode == 0, done.stderr
    return next(folder.glob("record-*.pdf"))


def _bounds():
    spec = importlib.util.spec_from_file_location(
        "chart_bounds", ROOT / "tests" / "report" / "test_chart_bounds.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def _text(pdf) -> str:
    need_tool("pdftotext")
    return subprocess.run(["pdftotext", "-raw", str(pdf), "-"], capture_output=True,
                          text=True, timeout=60).stdout


@pytest.mark.slow
def test_per_phase_tables_one_per_measurement(record3):
    """'Per phase' holds one table per measurement with its L1, L2, L3 rows in order."""
    text = _text(record3)
    block = text[text.index("Per phase\n"):text.index("Every item")]
    for title in ("Voltage, line to neutral", "Voltage, line to line",
                  "Earth fault loop impedance Zs", "Clamp test with a known load",
                  "Element power on its own phase voltage"):
        assert title in block, title
    volts = block[block.index("Voltage, line to neutral"):block.index("Voltage, line to line")]
    starts = [n for n, line in enumerate(volts.splitlines())
              if line.startswith(("L1 ", "L2 ", "L3 "))]
    lines = volts.splitlines()
    rows = [" ".join(lines[a:b]) for a, b in zip(starts, [*starts[1:], len(lines)],
                                                    strict=True)]
    assert [r.split()[0] for r in rows] == ["L1", "L2", "L3"]
    assert "233 V" in rows[0] and "229 V" in rows[1] and "235 V" in rows[2]


@pytest.mark.slow
def test_phasor_diagram_and_capture_table(record3):
    """The capture's per-phase table, the diagram's labels and its stated conventions."""
    flat = " ".join(_text(record3).split())
    assert "1 / L1 233.0 10.89 +2537" in flat
    assert "net total +7720" in flat
    for label in ("V1 233 V", "V2 229 V", "V3 235 V", "I1 10.9 A", "I2 11.4 A", "I3 11.0 A"):
        assert label in flat, label
    assert "positive power = import" in flat and "positive leading (counter- clockwise)" in flat
    assert "sequence L1-L2-L3 measured, voltage unbalance u2 1.18 %" in flat


@pytest.mark.slow
def test_three_phase_charts_fit_their_frames(record3):
    """Every mark of the phasor diagram and the harmonic charts lies in its frame."""
    frames, marks = _bounds()._check_pdf(record3)
    assert frames >= 5 and marks > 20


def test_single_phase_record_has_no_per_phase_section(demo_record):
    """A checklist without per-phase declarations prints no 'Per phase' section."""
    text = _text(demo_record)
    assert "Per phase\n" not in text and "Every item" in text


@pytest.mark.parametrize("voltages", [1, 3])
def test_phasor_chart_from_a_swapped_capture(tmp_path, voltages):
    """A 1 V or 3 V capture with clamps 2 and 3 swapped: drawn inside its frame; with one
    voltage the caption says V2 and V3 were inferred."""
    from commission.report import chartdata

    b = _bounds()
    path = tmp_path / "cap.csv"
    head = ["time_s", *[f"voltage_l{k + 1}_v" for k in range(voltages)],
            "current_1_a", "current_2_a", "current_3_a"]
    lines = [",".join(head)]
    for n in range(2000):
        t = n / 5000
        v = [325.3 * math.cos(2 * math.pi * 50 * t + math.radians(a)) for a in (0, -120, 120)]
        lines.append(",".join(f"{x:.5f}" for x in [t, *v[:voltages], v[0] / 20, v[2] / 25,
                                                    -v[1] / 30]))
    path.write_text("\n".join(lines) + "\n")
    drawn = chartdata.CHARTS["clamp_phase_capture"](b._data(
        path, {"name": "cap.csv"}, inputs={"load": "load on every phase"}))
    assert drawn is not None
    assert ("assumed (one voltage)" in drawn[1]) is (voltages == 1)
    frames, marks = b._check_pdf(b._draw(tmp_path, f"phasors{voltages}", drawn))
    assert frames == 1 and marks >= 12  # 6 arrows: a line and a head each


def test_phase_without_measurement_is_refused(tmp_path, cli):
    """'phase' needs 'measurement': one line naming the file, line and item."""
    text = (ROOT / "checklists" / "diverter-3ph.yaml").read_text(encoding="utf-8")
    old = 'report: {phase: L2, measurement: "Voltage, line to neutral"}'
    assert old in text
    broken = tmp_path / "broken.yaml"
    broken.write_text(text.replace(old, "report: {phase: L2}"), encoding="utf-8")
    result = cli("checklists", "validate", str(broken))
    assert result.exit_code == 2
    assert "supply.l2n" in result.stderr and "'phase' and 'measurement' go together" in \
        result.stderr
