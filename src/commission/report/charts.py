"""Charts for the record, drawn with reportlab's own graphics (no image files).

Each function takes plain numbers and returns a Drawing; the caller decides what
data is available. Every chart carries its units and, where a sign is shown, the
sign convention.
"""

from __future__ import annotations

from collections.abc import Sequence

from reportlab.graphics.charts.barcharts import VerticalBarChart
from reportlab.graphics.charts.lineplots import LinePlot
from reportlab.graphics.shapes import Drawing, Line, String
from reportlab.graphics.widgets.markers import makeMarker
from reportlab.lib import colors

FONT = "CommSans"
INK = colors.HexColor("#1d2a36")
BLUE = colors.HexColor("#1f5f99")
ORANGE = colors.HexColor("#c8641e")
GREY = colors.HexColor("#8894a0")
RED = colors.HexColor("#a12b2b")
WIDTH, HEIGHT = 470, 170


def _plot(x0: float, y0: float, w: float, h: float) -> LinePlot:
    lp = LinePlot()
    lp.x, lp.y, lp.width, lp.height = x0, y0, w, h
    for axis in (lp.xValueAxis, lp.yValueAxis):
        axis.labels.fontName = FONT
        axis.labels.fontSize = 7
        axis.strokeColor = GREY
    lp.xValueAxis.visibleGrid = False
    lp.yValueAxis.gridStrokeColor = colors.HexColor("#e3e7eb")
    lp.yValueAxis.visibleGrid = True
    return lp


def _label(d: Drawing, x: float, y: float, text: str, size: float = 7, anchor: str = "start",
           colour=INK) -> None:
    d.add(String(x, y, text, fontName=FONT, fontSize=size, fillColor=colour, textAnchor=anchor))


def waveform(t_s: Sequence[float], v: Sequence[float], i: Sequence[float],
             note: str) -> Drawing:
    """A few cycles of voltage and current, on two stacked plots sharing time."""
    d = Drawing(WIDTH, HEIGHT + 40)
    t_ms = [x * 1000 for x in t_s]
    top = _plot(45, 122, WIDTH - 60, 68)
    top.data = [list(zip(t_ms, v, strict=True))]
    top.lines[0].strokeColor = BLUE
    top.xValueAxis.labels.visible = False
    bottom = _plot(45, 34, WIDTH - 60, 66)
    bottom.data = [list(zip(t_ms, i, strict=True))]
    bottom.lines[0].strokeColor = ORANGE
    d.add(top)
    d.add(bottom)
    _label(d, 2, 190, "voltage [V]", colour=BLUE)
    _label(d, 2, 100, "current [A]", colour=ORANGE)
    _label(d, WIDTH / 2, 12, "time [ms]", anchor="middle")
    _label(d, 2, 0, note, size=6.5)
    return d


def harmonics(orders: Sequence[int], currents: Sequence[float], limits: Sequence[float],
              title: str) -> Drawing:
    """Harmonic currents (bars) beside the IEC 61000-3-2 Class A limits (grey bars)."""
    d = Drawing(WIDTH, HEIGHT + 20)
    bc = VerticalBarChart()
    bc.x, bc.y, bc.width, bc.height = 45, 35, WIDTH - 60, HEIGHT - 40
    bc.data = [list(currents), list(limits)]
    bc.categoryAxis.categoryNames = [str(h) for h in orders]
    bc.bars[0].fillColor = ORANGE
    bc.bars[1].fillColor = colors.HexColor("#c9d1d9")
    bc.bars.strokeColor = None
    bc.valueAxis.valueMin = 0
    for axis in (bc.categoryAxis, bc.valueAxis):
        axis.labels.fontName = FONT
        axis.labels.fontSize = 7
    d.add(bc)
    _label(d, 2, HEIGHT + 8, title)
    _label(d, 2, HEIGHT - 4, "current [A] (orange: this installation; grey: Class A limit)",
           size=6.5)
    _label(d, WIDTH / 2, 10, "harmonic order", anchor="middle")
    return d


def temperature_curve(series: list[tuple[str, Sequence[tuple[float, float]], object, bool]],
                      hlines: list[tuple[str, float, object]], x_label: str,
                      title: str) -> Drawing:
    """Temperature against time: logged points, fitted/expected lines, horizontal limits."""
    d = Drawing(WIDTH, HEIGHT + 30)
    lp = _plot(45, 35, WIDTH - 150, HEIGHT - 35)
    lp.data = [list(points) for _, points, _, _ in series]
    ys = [y for _, pts, _, _ in series for _, y in pts] + [y for _, y, _ in hlines]
    xs = [x for _, pts, _, _ in series for x, _ in pts]
    lp.yValueAxis.valueMin = min(ys) - 2
    lp.yValueAxis.valueMax = max(ys) + 2
    lp.xValueAxis.valueMin = min(xs)
    lp.xValueAxis.valueMax = max(xs)
    for n, (_, _, colour, dots) in enumerate(series):
        lp.lines[n].strokeColor = colour
        if dots:
            lp.lines[n].symbol = makeMarker("Circle", size=1.8, fillColor=colour,
                                            strokeColor=colour)
            lp.lines[n].strokeWidth = 0.01
            lp.lines[n].strokeColor = colors.transparent
        else:
            lp.lines[n].strokeWidth = 1.2
    d.add(lp)
    span = lp.yValueAxis.valueMax - lp.yValueAxis.valueMin
    for label, y, colour in hlines:
        yy = lp.y + (y - lp.yValueAxis.valueMin) / span * lp.height
        d.add(Line(lp.x, yy, lp.x + lp.width, yy, strokeColor=colour, strokeWidth=0.8,
                   strokeDashArray=[3, 2]))
        _label(d, lp.x + lp.width + 4, yy - 2, label, size=6.5, colour=colour)
    legend_x = WIDTH - 62 * len(series)
    for label, _, colour, dots in series:
        _label(d, legend_x, HEIGHT + 6, ("• " if dots else "— ") + label, size=6.5,
               colour=colour)
        legend_x += 62
    _label(d, 2, HEIGHT + 18, title)
    _label(d, 2, HEIGHT + 6, "temperature [°C]", size=6.5)
    _label(d, lp.x + lp.width / 2, 10, x_label, anchor="middle")
    return d
