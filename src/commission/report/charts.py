"""Charts for the record, drawn with reportlab's own graphics (no image files).

Each function takes plain numbers and returns a Drawing; the caller decides what
data is available. Every axis is ranged from all the data it shows, with a margin,
so no mark falls outside its plot; each plot is outlined by a frame in its own
colour (``FRAME``), which the tests find in the drawn PDF to check that every mark
lies inside it. A legend names only what is drawn. Text is 8 pt or larger.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

from reportlab.graphics.charts.barcharts import VerticalBarChart
from reportlab.graphics.charts.lineplots import LinePlot
from reportlab.graphics.shapes import Circle, Drawing, Line, Polygon, Rect, String
from reportlab.graphics.widgets.markers import makeMarker
from reportlab.lib import colors

FONT = "CommSans"
SIZE = 8  # no text below 8 pt, on paper or on screen
INK = colors.HexColor("#1d2a36")
BLUE = colors.HexColor("#1f5f99")
ORANGE = colors.HexColor("#c8641e")
GREY = colors.HexColor("#6f7b87")
LIGHT = colors.HexColor("#b9c3cc")
RED = colors.HexColor("#a12b2b")
FRAME = colors.HexColor("#8a96a3")  # plot frames only: the bounds test looks for it
AXIS = colors.HexColor("#a7b1bb")
GRID = colors.HexColor("#e3e7eb")
WIDTH, HEIGHT = 470, 170


def nice_range(values: Sequence[float], margin: float = 0.04, floor_zero: bool = False
               ) -> tuple[float, float, float]:
    """Axis minimum, maximum and tick step covering ``values`` with a margin each side;
    ticks fall on round numbers (1, 2, 2.5 or 5 times a power of ten), the ends need not."""
    finite = [float(v) for v in values if math.isfinite(float(v))]
    lo, hi = (min(finite), max(finite)) if finite else (0.0, 1.0)
    if floor_zero:
        lo = min(lo, 0.0)
    if hi - lo < 1e-12:
        pad = abs(hi) * 0.1 or 1.0
        lo, hi = lo - pad, hi + pad
    span = hi - lo
    if not (floor_zero and lo == 0.0):
        lo -= span * margin
    hi += span * margin
    raw = (hi - lo) / 6
    power = 10 ** math.floor(math.log10(raw))
    step = next(m * power for m in (1, 2, 2.5, 5, 10) if m * power >= raw)
    return lo, hi, step


def _drawing(width: float, height: float) -> Drawing:
    d = Drawing(width, height)
    # the renderer's initial state names this font instead of the unembedded Helvetica
    d.__dict__["initialFontName"] = FONT
    return d


def _frame(d: Drawing, x: float, y: float, w: float, h: float) -> None:
    d.add(Rect(x, y, w, h, fillColor=None, strokeColor=FRAME, strokeWidth=0.6))


def _plot(x0: float, y0: float, w: float, h: float) -> LinePlot:
    lp = LinePlot()
    lp.x, lp.y, lp.width, lp.height = x0, y0, w, h
    for axis in (lp.xValueAxis, lp.yValueAxis):
        axis.labels.fontName = FONT
        axis.labels.fontSize = SIZE
        axis.strokeColor = AXIS
    lp.xValueAxis.visibleGrid = False
    lp.yValueAxis.gridStrokeColor = GRID
    lp.yValueAxis.visibleGrid = True
    return lp


def _ranges(lp: LinePlot, xs: Sequence[float], ys: Sequence[float],
            x_exact: bool = False) -> None:
    if x_exact:
        lo, hi = min(xs), max(xs)
        step = nice_range([lo, hi], margin=0)[2]
    else:
        lo, hi, step = nice_range(xs)
    lp.xValueAxis.valueMin, lp.xValueAxis.valueMax = lo, hi
    lp.xValueAxis.valueSteps = _ticks(lo, hi, step)
    lo, hi, step = nice_range(ys)
    lp.yValueAxis.valueMin, lp.yValueAxis.valueMax = lo, hi
    lp.yValueAxis.valueSteps = _ticks(lo, hi, step)


def _ticks(lo: float, hi: float, step: float) -> list[float]:
    first = math.ceil(lo / step) * step
    n = int(math.floor((hi - first) / step + 1e-9)) + 1
    return [first + k * step for k in range(max(n, 0))]


def _label(d: Drawing, x: float, y: float, text: str, size: float = SIZE,
           anchor: str = "start", colour=INK) -> None:
    d.add(String(x, y, text, fontName=FONT, fontSize=max(size, SIZE), fillColor=colour,
                 textAnchor=anchor))


def waveform(t_s: Sequence[float], v: Sequence[float], i: Sequence[float],
             note: str) -> Drawing:
    """A few cycles of voltage and current, on two stacked plots sharing time; the sign
    convention (``note``) sits under the plots."""
    d = _drawing(WIDTH, HEIGHT + 50)
    t_ms = [x * 1000 for x in t_s]
    top = _plot(50, 132, WIDTH - 65, 70)
    top.data = [list(zip(t_ms, v, strict=True))]
    top.lines[0].strokeColor = BLUE
    top.xValueAxis.labels.visible = False
    _ranges(top, t_ms, v, x_exact=True)
    bottom = _plot(50, 44, WIDTH - 65, 70)
    bottom.data = [list(zip(t_ms, i, strict=True))]
    bottom.lines[0].strokeColor = ORANGE
    _ranges(bottom, t_ms, i, x_exact=True)
    for plot in (top, bottom):
        d.add(plot)
        _frame(d, plot.x, plot.y, plot.width, plot.height)
    _label(d, top.x, top.y + top.height + 4, "voltage [V]", colour=BLUE)
    _label(d, bottom.x, bottom.y + bottom.height + 5, "current [A]", colour=ORANGE)
    _label(d, 50 + (WIDTH - 65) / 2, 20, "time [ms]", anchor="middle")
    _label(d, 2, 2, note)
    return d


def harmonics(orders: Sequence[int], currents: Sequence[float], limits: Sequence[float],
              title: str) -> Drawing:
    """Harmonic currents (bars) beside the Class A limits (light bars)."""
    d = _drawing(WIDTH, HEIGHT + 30)
    bc = VerticalBarChart()
    bc.x, bc.y, bc.width, bc.height = 50, 35, WIDTH - 65, HEIGHT - 45
    bc.data = [list(currents), list(limits)]
    bc.categoryAxis.categoryNames = [str(h) for h in orders]
    bc.bars[0].fillColor = ORANGE
    bc.bars[1].fillColor = LIGHT
    bc.bars.strokeColor = None
    lo, hi, step = nice_range([*currents, *limits], floor_zero=True)
    bc.valueAxis.valueMin, bc.valueAxis.valueMax = 0, hi
    bc.valueAxis.valueSteps = _ticks(0, hi, step)
    bc.valueAxis.visibleGrid = True
    bc.valueAxis.gridStrokeColor = GRID
    for axis in (bc.categoryAxis, bc.valueAxis):
        axis.labels.fontName = FONT
        axis.labels.fontSize = SIZE
        axis.strokeColor = AXIS
    d.add(bc)
    _frame(d, bc.x, bc.y, bc.width, bc.height)
    _label(d, 2, HEIGHT + 18, title)
    _label(d, 2, HEIGHT + 5, "current [A]")
    _label(d, 120, HEIGHT + 5, "■ this installation", colour=ORANGE)
    _label(d, 225, HEIGHT + 5, "■ Class A limit", colour=GREY)
    _label(d, bc.x + bc.width / 2, 12, "harmonic order", anchor="middle")
    return d


def temperature_curve(series: list[tuple[str, Sequence[tuple[float, float]], object, bool]],
                      hlines: list[tuple[str, float, object]], x_label: str,
                      title: str) -> Drawing:
    """Temperature against time: logged points (dots), fitted or expected lines, and
    horizontal limits (dashed, labelled at the right)."""
    d = _drawing(WIDTH, HEIGHT + 40)
    drawn = [(label, list(points), colour, dots) for label, points, colour, dots in series
             if len(points) >= (1 if dots else 2)]
    lp = _plot(50, 35, WIDTH - 165, HEIGHT - 35)
    lp.data = [points for _, points, _, _ in drawn]
    ys = [y for _, pts, _, _ in drawn for _, y in pts] + [y for _, y, _ in hlines]
    xs = [x for _, pts, _, _ in drawn for x, _ in pts]
    _ranges(lp, xs, ys)
    for n, (_, _, colour, dots) in enumerate(drawn):
        if dots:
            lp.lines[n].symbol = makeMarker("Circle", size=1.8, fillColor=colour,
                                            strokeColor=colour)
            lp.lines[n].strokeWidth = 0.01
            lp.lines[n].strokeColor = None
        else:
            lp.lines[n].strokeColor = colour
            lp.lines[n].strokeWidth = 1.2
            if colour is GREY:  # expected: dashed and drawn last, visible over a fit
                lp.lines[n].strokeDashArray = [5, 3]
                lp.lines[n].strokeWidth = 1.6
    d.add(lp)
    _frame(d, lp.x, lp.y, lp.width, lp.height)
    span = lp.yValueAxis.valueMax - lp.yValueAxis.valueMin
    for label, y, colour in hlines:
        yy = lp.y + (y - lp.yValueAxis.valueMin) / span * lp.height
        d.add(Line(lp.x, yy, lp.x + lp.width, yy, strokeColor=colour, strokeWidth=0.8,
                   strokeDashArray=[3, 2]))
        _label(d, lp.x + lp.width + 4, yy - 3, label, colour=colour)
    legend_x = 130.0  # the legend names only the series drawn, in a row above the plot
    for label, _, colour, dots in drawn:
        text = ("• " if dots else "— ") + label
        _label(d, legend_x, HEIGHT + 12, text, colour=colour)
        legend_x += 12 + 4.6 * len(text)
    _label(d, 2, HEIGHT + 28, title)
    _label(d, 2, HEIGHT + 12, "temperature [°C]")
    _label(d, lp.x + lp.width / 2, 10, x_label, anchor="middle")
    return d


def metering(points: Sequence[tuple[float, float]], limit_pct: float | None,
             title: str) -> Drawing:
    """The diverter's reading against the reference: error of each point [%] against the
    reference power [W], with the accuracy class limits as dashed lines."""
    d = _drawing(WIDTH, HEIGHT + 40)
    lp = _plot(50, 35, WIDTH - 165, HEIGHT - 35)
    pts = [(float(x), float(y)) for x, y in points]
    lp.data = [pts]
    ys = [y for _, y in pts] + ([limit_pct, -limit_pct] if limit_pct else [0.0])
    _ranges(lp, [x for x, _ in pts] + [0.0], ys)
    lp.lines[0].symbol = makeMarker("Circle", size=3.5, fillColor=ORANGE, strokeColor=ORANGE)
    lp.lines[0].strokeWidth = 0.01
    lp.lines[0].strokeColor = None
    d.add(lp)
    _frame(d, lp.x, lp.y, lp.width, lp.height)
    span = lp.yValueAxis.valueMax - lp.yValueAxis.valueMin
    hlines = [("0 %", 0.0, GREY)]
    if limit_pct:
        hlines += [(f"+{limit_pct:g} % class", limit_pct, RED),
                   (f"−{limit_pct:g} % class", -limit_pct, RED)]
    for label, y, colour in hlines:
        yy = lp.y + (y - lp.yValueAxis.valueMin) / span * lp.height
        d.add(Line(lp.x, yy, lp.x + lp.width, yy, strokeColor=colour, strokeWidth=0.8,
                   strokeDashArray=[3, 2]))
        _label(d, lp.x + lp.width + 4, yy - 3, label, colour=colour)
    _label(d, lp.x + lp.width + 4, HEIGHT + 4, "• diverter reading", colour=ORANGE)
    _label(d, 2, HEIGHT + 28, title)
    _label(d, 2, HEIGHT + 12, "error of the diverter's reading [%]")
    _label(d, lp.x + lp.width / 2, 10, "reference grid power [W] (positive = import)",
           anchor="middle")
    return d


def _arrow(d: Drawing, cx: float, cy: float, length: float, angle_deg: float, colour,
           dashed: bool = False) -> tuple[float, float]:
    """A phasor from (cx, cy): a line with a filled head; returns its tip."""
    a = math.radians(angle_deg)
    x, y = cx + length * math.cos(a), cy + length * math.sin(a)
    d.add(Line(cx, cy, x, y, strokeColor=colour, strokeWidth=1.4,
               strokeDashArray=[3, 2] if dashed else None))
    head = min(7.0, 0.35 * length)
    if head > 1.0:
        left = (x - head * math.cos(a - 0.4), y - head * math.sin(a - 0.4))
        right = (x - head * math.cos(a + 0.4), y - head * math.sin(a + 0.4))
        d.add(Polygon([x, y, *left, *right], fillColor=colour, strokeColor=colour,
                      strokeWidth=0.5))
    return x, y


def phasor_diagram(voltages: Sequence[tuple[str, float, float, bool]],
                   currents: Sequence[tuple[str, float, float]],
                   notes: Sequence[str], table: Sequence[Sequence[str]] = ()) -> Drawing:
    """Fundamental phasors: voltages ``(label, rms_v, angle_deg, measured)`` in blue (dashed
    when inferred), currents ``(label, rms_a, angle_deg)`` in orange, angles against the
    first voltage, counter-clockwise positive (leading). Voltages and currents each have
    their own scale (the longest of each kind fills the circle); ``notes`` (sign
    convention, scales) are printed at the right; ``table`` rows (header first, then a
    units row) are printed above the diagram, the first column left-aligned."""
    import textwrap

    size = 230.0
    row_h = SIZE + 3.5
    top = len(table) * row_h + (8 if table else 0)
    d = _drawing(WIDTH, size + 14 + top)
    x0, y0 = 4.0, 8.0
    if table:
        first, other = 70.0, (WIDTH - 74.0) / max(1, len(table[0]) - 1)
        y = size + 14 + top - row_h
        for n, row in enumerate(table):
            colour = INK if n > 1 else GREY
            for k, cell in enumerate(row):
                if k == 0:
                    _label(d, x0, y, str(cell), colour=colour)
                else:
                    _label(d, x0 + first + k * other, y, str(cell), anchor="end",
                           colour=colour)
            if n == 1:
                d.add(Line(x0, y - 3, WIDTH - 4, y - 3, strokeColor=GRID, strokeWidth=0.6))
            y -= row_h
    cx, cy, r = x0 + size / 2, y0 + size / 2, size / 2 - 36
    for k in (0.5, 1.0):
        d.add(Circle(cx, cy, r * k, fillColor=None, strokeColor=GRID, strokeWidth=0.6))
    d.add(Line(cx - r - 10, cy, cx + r + 10, cy, strokeColor=GRID, strokeWidth=0.6))
    d.add(Line(cx, cy - r - 10, cx, cy + r + 10, strokeColor=GRID, strokeWidth=0.6))
    _frame(d, x0, y0, size, size)
    v_max = max((m for _, m, _, _ in voltages), default=0.0) or 1.0
    shown_i = [(label, m, ang) for label, m, ang in currents
               if m > 0 and math.isfinite(m) and math.isfinite(ang)]
    i_max = max((m for _, m, _ in shown_i), default=0.0) or 1.0
    marks = [(label, m / v_max * r, ang, BLUE, not measured, f"{m:.0f} V")
             for label, m, ang, measured in voltages]
    marks += [(label, m / i_max * 0.7 * r, ang, ORANGE, False, f"{m:.1f} A")
              for label, m, ang in shown_i]
    for label, length, ang, colour, dashed, value in marks:
        x, y = _arrow(d, cx, cy, length, ang, colour, dashed)
        # voltages are labelled beyond their tip, currents beside theirs (a quarter turn
        # clockwise), so a current in phase with its voltage keeps both labels readable
        at = math.radians(ang if colour is BLUE else ang - 90.0)
        lx, ly = x + 8 * math.cos(at), y + 8 * math.sin(at) - SIZE / 3
        anchor = "start" if math.cos(at) > 0.35 else "end" if math.cos(at) < -0.35 else "middle"
        ly = min(max(ly, y0 + 3), y0 + size - SIZE - 2)
        d.add(String(lx, ly, f"{label} {value}", fontName=FONT, fontSize=SIZE,
                     fillColor=colour, textAnchor=anchor))
    tx, ty = x0 + size + 14, y0 + size - SIZE
    for note in notes:
        for line in textwrap.wrap(note, 44):
            _label(d, tx, ty, line)
            ty -= SIZE + 2.5
        ty -= 4
    _label(d, tx, y0 + 14, "blue: voltages (dashed: inferred)", colour=BLUE)
    _label(d, tx, y0 + 2, "orange: clamp currents", colour=ORANGE)
    return d


def trend(points: Sequence[tuple[float, float]], fit: tuple[float, float],
          limit: float | None, crossing_years: float | None, log: bool, unit: str,
          title: str) -> Drawing:
    """One repeated reading over the visits: each visit's reading (years from the first
    visit), the least-squares line (in the reading, or in its logarithm when ``log``:
    then the axis is logarithmic) drawn on to where it crosses the limit, the limit dashed.
    ``fit``: (intercept, slope per year) in the plotted quantity (ln of it when ``log``)."""
    d = _drawing(WIDTH, HEIGHT + 40)
    lp = _plot(50, 35, WIDTH - 165, HEIGHT - 35)

    def y_of(v: float) -> float:
        return math.log10(v) if log else v

    a, b = fit
    last = max(x for x, _ in points)
    end = crossing_years if crossing_years is not None and crossing_years > last else last
    end = min(end, last + 30)  # a crossing decades away is shown as heading off the plot
    line_x = [0.0, end]
    line = [(x, (math.exp(a + b * x) if log else a + b * x)) for x in line_x]
    pts = [(float(x), y_of(float(v))) for x, v in points]
    fitted = [(x, y_of(v)) for x, v in line if v > 0 or not log]
    lp.data = [pts, fitted]
    ys = [y for _, y in pts] + [y for _, y in fitted]
    if limit is not None and (limit > 0 or not log):
        ys.append(y_of(limit))
    _ranges(lp, [x for x, _ in pts] + line_x, ys)
    lp.lines[0].symbol = makeMarker("Circle", size=3.5, fillColor=ORANGE, strokeColor=ORANGE)
    lp.lines[0].strokeWidth = 0.01
    lp.lines[0].strokeColor = None
    lp.lines[1].strokeColor = BLUE
    lp.lines[1].strokeWidth = 0.8
    lp.lines[1].strokeDashArray = [3, 2]
    if log:
        lp.yValueAxis.labelTextFormat = lambda v: f"{10 ** v:.3g}"
    d.add(lp)
    _frame(d, lp.x, lp.y, lp.width, lp.height)
    ymin, ymax = lp.yValueAxis.valueMin, lp.yValueAxis.valueMax
    if limit is not None and (limit > 0 or not log):
        yy = lp.y + (y_of(limit) - ymin) / (ymax - ymin) * lp.height
        d.add(Line(lp.x, yy, lp.x + lp.width, yy, strokeColor=RED, strokeWidth=0.8,
                   strokeDashArray=[3, 2]))
        _label(d, lp.x + lp.width + 4, yy - 3, f"limit {limit:g} {unit}", colour=RED)
    # the legend in a row above the plot, clear of the limit's label at the right
    _label(d, lp.x + lp.width, HEIGHT + 12, "- - fitted trend", anchor="end", colour=BLUE)
    _label(d, lp.x + lp.width - 90, HEIGHT + 12, "• reading at each visit", anchor="end",
           colour=ORANGE)
    _label(d, 2, HEIGHT + 28, title)
    _label(d, 2, HEIGHT + 12, f"{unit}{', logarithmic axis' if log else ''}")
    _label(d, lp.x + lp.width / 2, 10, "years since the first visit", anchor="middle")
    return d
