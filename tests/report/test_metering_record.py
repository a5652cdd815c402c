"""The demo record shows the new sections as a reader sees them: pages read back with
pdftotext (poppler) and the chart frame found by pdfplumber in the drawn PDF, not in our
chart code."""

from __future__ import annotations

import subprocess

import pytest

from conftest import need_tool


def _text(pdf) -> str:
    need_tool("pdftotext")
    return subprocess.run(["pdftotext", "-layout", str(pdf), "-"], capture_output=True,
                          text=True, check=True).stdout


def test_demo_record_shows_metering_chart_flicker_and_accuracies(demo_record):
    text = _text(demo_record)
    flat = " ".join(text.split())
    # the metering chart, drawn with its class limits and the correction advice
    assert "Diverter metering against the reference" in flat
    assert "+2 % class" in flat and "multiply the calibration by 0.988" in flat
    # the flicker result from the 10-minute capture made when the demo ran
    assert "supply-voltage.wav" in flat and "Pst 0.23" in flat
    # every instrument says its stated accuracy or that none applied
    assert "power: ±(0.5 % + 2 W) (read as U at k = 2)" in flat
    assert "none stated: no uncertainty applied" in flat
    # the guard band interval on a protection reading
    assert "reading 0.58 ± " in flat and "ILAC-G8" in flat
    # the homeowner is told what the boost percentages mean on this diverter
    assert "The boost percentages: on this diverter a forced setting means a share of time" \
        in flat


@pytest.mark.slow
def test_metering_chart_marks_lie_inside_its_frame(demo_record):
    """pdfplumber: the page holding the metering chart has a plot frame, and the marks drawn
    in the plot area (the points) sit inside it."""
    import pdfplumber

    with pdfplumber.open(demo_record) as pdf:
        page = next(p for p in pdf.pages
                    if "Diverter metering against the reference" in (p.extract_text() or ""))
        frames = [r for r in page.rects if r["width"] > 200 and r["height"] > 80]
        assert frames, "no chart frame drawn"
        dots = [c for c in page.curves if c["width"] < 6 and c["height"] < 6]
        assert len(dots) >= 4  # four operating points (and any other chart's marks)

        def inside(c, f):
            return (f["x0"] - 1 <= c["x0"] and c["x1"] <= f["x1"] + 1
                    and f["top"] - 1 <= c["top"] and c["bottom"] <= f["bottom"] + 1)

        for c in dots:  # every mark sits inside a plot frame drawn on the page
            assert any(inside(c, f) for f in frames), c
