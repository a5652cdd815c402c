"""Charts for the record, keyed by check name.

A checklist item asks for a chart with ``report: {chart: true}``; the chart drawn is the
one registered here under the name of the item's check, fed by the item's own answer
and the check's inputs by input name. This module never names an item: any checklist
whose items carry these checks gets the same charts. A drawer returns None where its
data is missing (no file recorded, a file that cannot be read). A recorded file's chart
is drawn from the chart data of the analysis its check made (``Result.analysis``, from
:mod:`commission.analyses`): the file is never read or fitted a second way here.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from . import charts


@dataclass(frozen=True)
class ChartInput:
    result: Any  # checks.evaluate.Result of the item carrying the check
    value: Any  # the item's own answer (None when unanswered)
    path: Path | None  # local copy of the item's file, when its answer is a recorded file
    inputs: dict[str, Any]  # the check's inputs by name: answers, constants; None unanswered
    params: dict[str, Any]  # the check's parameters with the checklist's overrides

    def number(self, name: str) -> float | None:
        try:
            return float(self.inputs.get(name))  # type: ignore[arg-type]
        except (TypeError, ValueError):
            return None


Drawn = tuple[Any, str]  # (reportlab Drawing, caption)
CHARTS: dict[str, Callable[[ChartInput], Drawn | None]] = {}


def chart(check_name: str):
    def register(fn: Callable[[ChartInput], Drawn | None]):
        CHARTS[check_name] = fn
        return fn
    return register


def chart_input(c, result) -> ChartInput | None:
    """What a chart drawer needs, from the item's answer and its check's inputs."""
    from ..checks import CHECKS

    item = result.item
    if item.check is None or result.entry is None or result.entry.action != "answer":
        return None
    value = result.entry.value
    path = None
    if isinstance(value, dict) and "sha256" in value:
        path = c.state.files.path(value["sha256"])
        if path is None:
            return None
    inputs: dict[str, Any] = {}
    for name, spec in item.check.inputs.items():
        if isinstance(spec, str):
            other = c.result(spec)
            ok = other is not None and other.entry is not None and \
                other.entry.action == "answer" and other.applicable
            inputs[name] = other.entry.value if ok else None
        else:
            inputs[name] = spec["const"] if isinstance(spec, dict) else spec
    definition = CHECKS.get(item.check.name)
    params = {k: p.default for k, p in definition.params.items()} if definition else {}
    params.update(item.check.params)
    return ChartInput(result, value, path, inputs, params)


def chart_flowables(c) -> list[Any]:
    from reportlab.platypus import KeepTogether, Paragraph, Spacer

    out: list[Any] = []
    for result in c.results:
        if not result.item.report.chart or result.item.check is None:
            continue
        draw = CHARTS.get(result.item.check.name)
        data = chart_input(c, result) if draw else None
        if draw is None or data is None:
            continue
        drawn = draw(data)
        if drawn is None:
            continue
        drawing, caption = drawn
        out.append(KeepTogether([
            Paragraph(f"{result.item.prompt} <font size=8 color='#55606b'>"
                      f"({result.item.id})</font>", c.st["h2k"]),
            drawing, Paragraph(caption, c.st["small"]), Spacer(1, 8)]))
    return out


def _thin(points: list[tuple[float, float]], most: int = 400) -> list[tuple[float, float]]:
    return points if len(points) <= most else points[:: len(points) // most + 1]


def _expected_rate(result, params: dict[str, Any]) -> float:
    """The predicted heating rate behind a heating verdict: its band's lower bound divided
    by the band's lower factor (the check's parameter)."""
    return result.expected.min / float(params.get("band_low", 0.85))


SIGN_NOTE = ("Sign convention: positive current and power = import (clamp on the incoming "
             "line, arrow into the premises).")


def _analysis(data: ChartInput, kind: str):
    """The analysis the item's check made of its file (commission.analyses): the chart
    shows exactly what the verdict was based on, never a second reading of the file."""
    a = getattr(data.result, "analysis", None)
    return a if a is not None and a.kind == kind and a.chart else None


@chart("clamp_capture")
def _waveform(data: ChartInput) -> Drawn | None:
    a = _analysis(data, "capture")
    if a is None:
        return None
    ch = a.chart
    return (charts.waveform(ch["time_s"], ch["voltage_v"], ch["current_a"], SIGN_NOTE),
            ch["caption"])


@chart("clamp_phase_capture")
def _phasors(data: ChartInput) -> Drawn | None:
    """The per-phase table of a three-phase capture and the phasor diagram of its
    fundamentals, from the same analysis object the check judged."""
    if data.path is None:
        return None
    from ..analyses.threephase import SIGN_CONVENTION, SRC_PER_PHASE, analyse_threephase_capture
    from ..captures import CaptureError
    from ..checks.threephase import clamp_load

    try:
        load = clamp_load(str(data.inputs.get("load") or "all"))
        r = analyse_threephase_capture(
            data.path, load=load, expect=str(data.inputs.get("expect") or "import"),
            tolerance_deg=float(data.params.get("tolerance_deg", 20.0)),
            min_current_fraction=float(data.params.get("min_current_fraction", 0.1)))
    except (CaptureError, ValueError):
        return None
    a = r.figures

    def num(x: float | None, spec: str) -> str:
        if x is None or not math.isfinite(x):
            return "—"
        return format(0.0 if spec.endswith(".0f") and abs(x) < 0.5 else x, spec)

    rows = [["clamp / phase", "V rms", "I rms", "P", "Q1", "PF", "cos φ1", "THD V", "THD I"],
            ["", "V", "A", "W", "var", "", "", "%", "%"]]
    for c in a.clamps:
        rows.append([f"{c.clamp} / {c.phase}" + ("" if c.voltage_measured else " *"),
                     num(c.v_rms, ".1f"), num(c.i_rms, ".2f"), num(c.p_w, "+.0f"),
                     num(c.q1_var, "+.0f"), num(c.power_factor, ".3f"),
                     num(c.displacement_pf, ".3f"), num(c.thd_v_pct, ".1f"),
                     num(c.thd_i_pct, ".1f")])
    rows.append(["net total", "", "", num(a.p_total_w, "+.0f"), "", "", "", "", ""])
    volts = [(f"V{k + 1}", abs(z), math.degrees(math.atan2(z.imag, z.real)),
              a.voltages_measured == 3 or k == 0) for k, z in enumerate(a.voltage_phasors)]
    amps = [(f"I{c.clamp}", abs(c.current_phasor),
             math.degrees(math.atan2(c.current_phasor.imag, c.current_phasor.real)))
            for c in a.clamps]
    notes = [SIGN_CONVENTION,
             "Fundamental phasors (RMS), angles against V1; voltages and currents each to "
             "their own scale."]
    if not a.sequence_measured:
        notes.append("One voltage captured: V2 and V3 inferred at -120° and +120° "
                     "(sequence L1-L2-L3 assumed).")
    drawing = charts.phasor_diagram(volts, amps, notes, rows)
    seq = (f"sequence {a.sequence} measured" if a.sequence_measured
           else "sequence L1-L2-L3 assumed (one voltage)")
    unb = "" if r.unbalance_pct is None else f", voltage unbalance u2 {r.unbalance_pct:.2f} %"
    caption = (f"Per phase: {SRC_PER_PHASE}; {seq}{unb}; neutral "
               f"{abs(a.neutral_phasor):.2f} A fundamental (sum of the phase currents). "
               "* = phase voltage inferred from L1.")
    return drawing, caption


@chart("harmonic_emission")
def _harmonics(data: ChartInput) -> Drawn | None:
    from ..physics import phase_control
    from ..physics.harmonic_limits import class_a_limit_a

    r, u = data.number("cold_resistance"), data.number("supply_voltage")
    if r is None or u is None or r <= 0 or data.value != "phase angle":
        return None
    alpha = float(phase_control.firing_angle_for_fraction(0.5))
    spectrum = phase_control.current_spectrum(u, r, alpha)
    pairs = [(h, x) for h, x in zip(spectrum.orders, spectrum.harmonic_rms_a, strict=True)
             if 3 <= h <= 21]
    return (charts.harmonics([h for h, _ in pairs], [x for _, x in pairs],
                             [class_a_limit_a(h) for h, _ in pairs],
                             f"Predicted harmonic currents at half power (α "
                             f"{math.degrees(alpha):.0f}°), {r:g} Ω at {u:g} V"),
            "Odd harmonics from the phase-control model (Rashid, from memory) against IEC "
            "61000-3-2 Class A Table 1 (from memory). A type-test limit, indicative on site.")


@chart("heating_rate")
def _heating_run(data: ChartInput) -> Drawn | None:
    start, seconds, end = data.number("start_temp"), data.number("minutes"), \
        _float(data.value)
    expected = data.result.expected
    if None in (start, seconds, end) or expected is None or expected.min is None:
        return None
    minutes = seconds / 60.0
    if minutes <= 0:
        return None
    rate = _expected_rate(data.result, data.params)
    measured = [(0.0, start), (minutes, end)]
    predicted = [(0.0, start), (minutes, start + rate * minutes / 60.0)]
    return (charts.temperature_curve(
        [("measured", measured, charts.BLUE, False),
         ("expected", predicted, charts.GREY, False)], [], "time [min]",
        "Heating run at full output"),
        f"Measured {(end - start) / minutes * 60:.1f} K/h against {rate:.1f} K/h expected "
        "(P/(m·cp), IAPWS-95 water properties).")


@chart("heating_log")
def _heating_log(data: ChartInput) -> Drawn | None:
    a = _analysis(data, "heating")
    if a is None:
        return None
    ch = a.chart
    return (charts.temperature_curve(
        [("logged", _thin(ch["logged"]), charts.BLUE, True),
         ("fitted", ch["fitted"], charts.INK, False),
         ("expected", ch["expected"], charts.GREY, False)],
        [], "time [min]", "Heating run at full output (temperature log)"), ch["caption"])


@chart("heatsink_soak")
def _soak(data: ChartInput) -> Drawn | None:
    a = _analysis(data, "soak")
    if a is None:
        return None
    ch = a.chart
    hlines = [(f"predicted max {ch['predicted_max_c']:.1f} °C", float(ch["predicted_max_c"]),
               charts.ORANGE),
              (f"limit {ch['limit_c']:g} °C", float(ch["limit_c"]), charts.RED)]
    return (charts.temperature_curve(
        [("logged", _thin(ch["logged"]), charts.BLUE, True),
         ("fitted model", ch["model"], charts.INK, False)],
        hlines, "time [min]", "Heatsink soak at full output, enclosure closed"), ch["caption"])


def _float(value: Any) -> float | None:
    try:
        return float(value)
    except (TypeError, ValueError):
        return None


@chart("metering_accuracy")
def _metering(data: ChartInput) -> Drawn | None:
    """The diverter's grid power against the reference instrument's, point by point."""
    from ..physics.metering import class_limit_pct

    pairs = [(data.number(f"{n}_reference"), data.number(f"{n}_shown")) for n in ("p1", "p2",
                                                                              "p4")]
    pairs.append((data.number("p3_reference"), _float(data.value)))
    points = [(ref, 100.0 * (shown - ref) / abs(ref)) for ref, shown in pairs
              if ref is not None and shown is not None and ref != 0]
    if len(points) < 2:
        return None
    cls = str(data.params.get("accuracy_class", "2")).strip()
    try:
        limit = class_limit_pct(cls, 1.0, 1.0)
    except ValueError:
        limit = None
    caption = (f"Each point is the diverter's displayed grid power against the reference "
               f"instrument's, as (diverter − reference)/|reference|; dashed red: the "
               f"IEC 62053-21 class {cls} limit at unity power factor (from memory, a field "
               "guide). Result: " + data.result.reason)
    return (charts.metering(points, limit, "Diverter metering against the reference"),
            caption)


def trend_flowables(c) -> list[Any]:
    """A revisit over three or more visits: each repeated reading's trend against its
    limit (commission.checks.change.trend_of computed it; nothing is fitted here)."""
    from reportlab.platypus import KeepTogether, Paragraph, Spacer

    from ..checks.change import years_between

    out: list[Any] = []
    for result in c.results:
        change = getattr(result, "change", None)
        t = change.trend if change is not None else None
        if not t:
            continue
        origin = t["origin"]
        points = [(years_between(origin, at), v) for at, v in t["points"]]
        log = t["scale"] == "log"
        crossing = None
        if t["crossing"]:
            crossing = years_between(origin, f"{t['crossing']}T00:00:00Z")
        unit = change.unit or ""
        drawing = charts.trend(points, (t["intercept"], t["slope_per_year"]), t["limit"],
                               crossing, log, unit, f"{change.what} over {len(points)} visits")
        if t["crossing"]:
            when = f"at this rate it would reach its limit {t['limit']:g} {unit} about " \
                   f"{t['crossing']}"
        else:
            when = "at this rate it is not heading for its limit"
        rate = (f"{math.exp(t['slope_per_year']):.3g} times a year" if log
                else f"{t['slope_per_year']:+.3g} {unit} a year")
        caption = (f"Readings of the first visit ({origin[:10]}) onwards; trend {rate}; "
                   f"{when}. Projection: {t['basis']} (insulation falls by a factor a year, "
                   "other readings by an amount a year). A projection, not a prediction: "
                   "the next visit tells.")
        out.append(KeepTogether([
            Paragraph(f"Trend: {result.item.prompt} <font size=8 color='#55606b'>"
                      f"({result.item.id})</font>", c.st["h2k"]),
            drawing, Paragraph(caption, c.st["small"]), Spacer(1, 8)]))
    return out
