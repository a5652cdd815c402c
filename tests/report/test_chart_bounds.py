"""Charts fit: every mark drawn in a chart (lines, curves, bars) lies inside its plot frame,
read back from the drawn PDF with pdfplumber (an independent PDF reader), not from the chart
code's own ranges. Checked on the demo record and on charts drawn from the files the
analysis tests generate (their own generators, with the parameters those tests use). The
demo's pages are rendered to PNG with pdftoppm and checked for blank half-pages."""

from __future__ import annotations

import importlib.util
import subprocess
from pathlib import Path
from types import SimpleNamespace

import pytest

from conftest import DEMO, ROOT, need_tool

FRAME = (0x8A / 255, 0x96 / 255, 0xA3 / 255)
DATA = [tuple(int(h[k:k + 2], 16) / 255 for k in (1, 3, 5)) for h in
        ("#1f5f99", "#c8641e", "#1d2a36", "#6f7b87", "#b9c3cc", "#a12b2b")]


def _same(colour, ref) -> bool:
    return colour is not None and len(colour) == 3 and \
        all(abs(a - b) < 0.003 for a, b in zip(colour, ref, strict=True))


def _is_data(obj) -> bool:
    stroke = obj.get("stroke") and any(_same(obj.get("stroking_color"), c) for c in DATA)
    fill = obj.get("fill") and any(_same(obj.get("non_stroking_color"), c) for c in DATA)
    return bool(stroke or fill)


def _check_pdf(path: Path) -> tuple[int, int]:
    """(frames, marks) found; fails on any data mark outside every frame."""
    import pdfplumber

    frames_n = marks_n = 0
    with pdfplumber.open(path) as pdf:
        for page in pdf.pages:
            frames = [r for r in page.rects if r.get("stroke")
                      and _same(r.get("stroking_color"), FRAME)]
            marks = [o for o in page.lines + page.curves + page.rects if _is_data(o)]
            frames_n += len(frames)
            marks_n += len(marks)
            tol = 0.8  # half a line width
            for m in marks:
                inside = any(m["x0"] >= f["x0"] - tol and m["x1"] <= f["x1"] + tol and
                             m["top"] >= f["top"] - tol and m["bottom"] <= f["bottom"] + tol
                             for f in frames)
                assert inside, (f"{path.name} page {page.page_number}: mark at x "
                                f"{m['x0']:.1f}–{m['x1']:.1f}, y {m['top']:.1f}–"
                                f"{m['bottom']:.1f} outside every plot frame")
    return frames_n, marks_n


def test_demo_charts_fit_their_frames(demo_record):
    frames, marks = _check_pdf(demo_record)
    assert frames >= 6  # harmonics, waveform (2 plots), heating run, heating log, soak
    assert marks > 50


def _load_analysis_tests():
    spec = importlib.util.spec_from_file_location(
        "analysis_tests", ROOT / "tests" / "cli" / "test_analyse.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def _draw(tmp_path: Path, name: str, drawn) -> Path:
    from reportlab.graphics import renderPDF

    from commission.report.pdf import register_fonts

    register_fonts()
    assert drawn is not None, name
    out = tmp_path / f"{name}.pdf"
    renderPDF.drawToFile(drawn[0], str(out))
    return out


def _data(path=None, value=None, inputs=None, params=None, expected=None, measured=None,
          analysis=None):
    from commission.report.chartdata import ChartInput

    # a file's chart is drawn from the analysis its check made (commission.analyses)
    result = SimpleNamespace(expected=expected, measured=measured, analysis=analysis)
    return ChartInput(result, value, path, inputs or {}, params or {})


@pytest.mark.slow
def test_analysis_files_charts_fit_their_frames(tmp_path):
    """Every heating log, soak log and capture the analysis tests write, drawn as the record
    draws it, keeps every mark in its frame."""
    import numpy as np

    from commission import analyses
    from commission.checks.registry import Expected, Measured
    from commission.report import chartdata

    a = _load_analysis_tests()
    rate = 12.0
    heating = [("h", dict(rate_k_per_h=rate, hours=30.0 / rate)),
               ("h40", dict(rate_k_per_h=10.0, hours=1.0, start_c=40.0)),
               ("weak", dict(rate_k_per_h=0.6 * rate, hours=2.0)),
               ("flat", dict(rate_k_per_h=0.0, hours=2.0, noise_k=0.05, seed=3)),
               ("fast", dict(rate_k_per_h=1.3 * rate, hours=1.5)),
               ("noisy", dict(rate_k_per_h=0.88 * rate, hours=1.5, noise_k=2.0, seed=7))]
    checked = 0
    for name, kw in heating:
        path, _, _ = a._heating_log(tmp_path / f"{name}.csv", **kw)
        made = analyses.analyse_heating(path, analyses.HeatingSettings(power_w=2400.0,
                                                                        volume_l=200.0))
        drawn = chartdata.CHARTS["heating_log"](_data(
            path, {"name": path.name}, params={"band_low": 0.85},
            expected=Expected("K/h", min=0.85 * rate, max=1.15 * rate), analysis=made))
        assert _check_pdf(_draw(tmp_path, name, drawn))[1] > 0
        checked += 1
    for name, kw in [("s", {}), ("s25", dict(covered=2.5)), ("hot", dict(tinf=115.0,
                     tau=1200.0, covered=1.0)), ("s3", dict(covered=3.0)),
                     ("short", dict(covered=0.1, step=10.0, noise=0.3))]:
        path, _, _ = a._soak_log(tmp_path / f"{name}.csv", **kw)
        made = analyses.analyse_soak(path, analyses.SoakSettings(limit_c=85.0, ambient_c=25.0))
        drawn = chartdata.CHARTS["heatsink_soak"](_data(
            path, {"name": path.name}, inputs={"limit": 85.0},
            measured=Measured(95.0, "°C"), analysis=made))
        if drawn is None:
            continue
        assert _check_pdf(_draw(tmp_path, f"soak-{name}", drawn))[1] > 0
        checked += 1
    for name, sign in (("r", 1.0), ("rev", -1.0)):
        t, v, i = a._sine_capture()
        path = a._write_csv(tmp_path / f"{name}.csv", ("time_s", "voltage_v", "current_a"),
                            t, v, sign * np.asarray(i))
        made = analyses.analyse_capture(path, analyses.CaptureSettings(expect="import"))
        drawn = chartdata.CHARTS["clamp_capture"](_data(path, {"name": path.name},
                                                        analysis=made))
        assert _check_pdf(_draw(tmp_path, f"cap-{name}", drawn))[1] > 0
        checked += 1
    for r_ohm, u in ((18.9, 236.0), (52.9, 230.0), (10.0, 253.0)):
        drawn = chartdata.CHARTS["harmonic_emission"](_data(
            value="phase angle", inputs={"cold_resistance": r_ohm, "supply_voltage": u}))
        assert _check_pdf(_draw(tmp_path, f"harm-{r_ohm}", drawn))[1] > 0
        checked += 1
    for start, end in ((31.2, 44.9), (55.0, 54.0)):
        drawn = chartdata.CHARTS["heating_rate"](_data(
            value=end, inputs={"start_temp": start, "minutes": 2700.0},
            params={"band_low": 0.85}, expected=Expected("K/h", min=15.0, max=20.0)))
        assert _check_pdf(_draw(tmp_path, f"run-{start}", drawn))[1] > 0
        checked += 1
    assert checked >= 15


def _blank_lower_half(png: Path) -> bool:
    from PIL import Image

    img = Image.open(png).convert("L")
    w, h = img.size
    top, bottom = int(h * 0.06), int(h * 0.94)  # between the running header and footer
    middle = (top + bottom) // 2
    px = img.load()
    for y in range(middle, bottom):
        if any(px[x, y] < 200 for x in range(int(w * 0.05), int(w * 0.95))):
            return False
    return True


def test_demo_has_no_blank_half_pages(demo_record, tmp_path):
    """pdftoppm renders every page; none has an empty lower half, except the last page and
    a page followed by a section that starts on a new page (the homeowner's pages)."""
    need_tool("pdftoppm")
    need_tool("pdftotext")
    subprocess.run(["pdftoppm", "-png", "-r", "30", str(demo_record), str(tmp_path / "p")],
                   check=True, timeout=120)
    pngs = sorted(tmp_path.glob("p-*.png"), key=lambda p: int(p.stem.split("-")[1]))
    texts = subprocess.run(["pdftotext", str(demo_record), "-"], capture_output=True,
                           text=True, check=True).stdout.split("\f")
    assert len(pngs) >= 8
    blank = []
    for n, png in enumerate(pngs):
        if n == len(pngs) - 1:
            continue
        following = texts[n + 1]
        starts_new = "For the homeowner" in following.split("Keep this page")[0] or \
            "Whom to call:" in texts[n]
        if _blank_lower_half(png) and not starts_new:
            blank.append(n + 1)
    assert blank == [], f"pages with an empty lower half: {blank}"


@pytest.mark.parametrize("check", ["heating_log", "heatsink_soak", "clamp_capture",
                                   "harmonic_emission", "heating_rate"])
def test_every_chart_is_keyed_by_a_registered_check(check):
    """Chart drawers are keyed by check names that the check registry knows."""
    from commission.checks import CHECKS
    from commission.report.chartdata import CHARTS

    assert check in CHARTS and check in CHECKS


def test_demo_files_exist():
    assert (DEMO / "files" / "heatsink-soak.csv").is_file()


def test_the_bounds_check_sees_a_mark_outside(tmp_path):
    """Negative control: a line drawn past its frame is caught."""
    import pytest as _pytest
    from reportlab.graphics import renderPDF
    from reportlab.graphics.shapes import Drawing, Line, Rect

    from commission.report import charts

    d = Drawing(200, 100)
    d.add(Rect(10, 10, 100, 50, fillColor=None, strokeColor=charts.FRAME))
    d.add(Line(20, 20, 150, 30, strokeColor=charts.BLUE))  # runs past the right edge
    out = tmp_path / "bad.pdf"
    renderPDF.drawToFile(d, str(out))
    with _pytest.raises(AssertionError, match="outside every plot frame"):
        _check_pdf(out)
