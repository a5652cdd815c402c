"""Gather the data for the record's charts from the job's readings and files.

Charts are drawn only where the data exists: a clamp capture (waveform and its
harmonics), the element's resistance (predicted harmonics at half power), the
heating run, and the heatsink soak log.
"""

from __future__ import annotations

import math
from typing import Any

from . import charts


def _file(c, item_id: str):
    r = c.result(item_id)
    if r is None or r.entry is None or r.entry.action != "answer":
        return None
    value = r.entry.value
    if not isinstance(value, dict) or "sha256" not in value:
        return None
    return c.state.files.path(value["sha256"]), value


def _reading(c, item_id: str) -> float | None:
    r = c.result(item_id)
    if r is None or r.entry is None or r.entry.action != "answer":
        return None
    try:
        return float(r.entry.value)
    except (TypeError, ValueError):
        return None


def _expected_rate(result) -> float:
    """The predicted heating rate behind a heating verdict: its band's lower bound divided
    by the band's lower factor (the check's parameter, 0.85 by default)."""
    params = result.item.check.params if result.item.check else {}
    return result.expected.min / float(params.get("band_low", 0.85))


def chart_flowables(c) -> list[Any]:
    from reportlab.platypus import KeepTogether, Paragraph, Spacer

    out: list[Any] = []

    def add(drawing, caption: str) -> None:
        out.append(KeepTogether([drawing, Paragraph(caption, c.st["small"]), Spacer(1, 8)]))

    found = _file(c, "clamp.capture")
    if found and found[0] is not None and not found[1]["name"].lower().endswith(".wav"):
        from ..captures import CaptureError, read_capture_csv
        from ..physics.waveform import analyse

        try:
            cap = read_capture_csv(found[0])
            a = analyse(cap.sample_rate_hz, cap.voltage_v, cap.current_a)
        except (CaptureError, ValueError):
            a = None
        if a is not None:
            n = min(len(cap.voltage_v), int(round(3 * cap.sample_rate_hz / a.frequency_hz)))
            step = max(1, n // 600)
            t = [k / cap.sample_rate_hz for k in range(0, n, step)]
            v = [float(x) for x in cap.voltage_v[:n:step]]
            i = [float(x) for x in cap.current_a[:n:step]]
            add(charts.waveform(t, v, i, "Sign convention: positive current and power = import "
                                "(clamp on the incoming line, arrow into the premises)."),
                f"Clamp capture, three cycles: P {a.p_w:+.0f} W, φ1 {a.phase_deg:+.1f}°, "
                f"{a.frequency_hz:.2f} Hz (IEEE 1459-2010; DFT per IEC 61000-4-7).")

    add_harmonics(c, add)

    if add_heating_log(c, add):
        add_soak(c, add)
        return out
    start, end = _reading(c, "water.heat.start"), _reading(c, "water.heat.end")
    seconds = _reading(c, "water.heat.minutes")
    heat = c.result("water.heat.end")
    if None not in (start, end, seconds) and heat is not None and heat.expected is not None \
            and heat.expected.min is not None:
        minutes = seconds / 60.0
        expected_rate = _expected_rate(heat)
        measured = [(0.0, start), (minutes, end)]
        predicted = [(0.0, start), (minutes, start + expected_rate * minutes / 60.0)]
        add(charts.temperature_curve(
            [("measured", measured, charts.BLUE, False),
             ("expected from rating", predicted, charts.GREY, False)],
            [], "time [min]", "Heating run at full output"),
            f"Measured {(end - start) / minutes * 60:.1f} K/h against {expected_rate:.1f} K/h "
            "expected (P/(m·cp), IAPWS-95 water properties).")

    add_soak(c, add)
    return out


def add_harmonics(c, add) -> None:
    from ..physics import phase_control
    from ..physics.harmonic_limits import class_a_limit_a

    r = _reading(c, "element.cold_resistance")
    u = _reading(c, "supply.voltage")
    mode = c.result("install.diverter.control")
    if r is None or u is None or r <= 0 or mode is None or mode.entry is None:
        return
    if mode.entry.value != "phase angle":
        return
    alpha = float(phase_control.firing_angle_for_fraction(0.5))
    spectrum = phase_control.current_spectrum(u, r, alpha)
    pairs = [(h, x) for h, x in zip(spectrum.orders, spectrum.harmonic_rms_a, strict=True)
             if 3 <= h <= 21]
    add(charts.harmonics([h for h, _ in pairs], [x for _, x in pairs],
                         [class_a_limit_a(h) for h, _ in pairs],
                         f"Predicted harmonic currents at half power (α "
                         f"{math.degrees(alpha):.0f}°), {r:g} Ω at {u:g} V"),
        "Odd harmonics from the phase-control model (Rashid, from memory) against IEC 61000-3-2 "
        "Class A Table 1 (from memory). A type-test limit, indicative on site.")


def add_heating_log(c, add) -> bool:
    """The heating log with its fitted line and the rate the element's power predicts."""
    found = _file(c, "water.heat.log")
    judged_item = c.result("water.heat.log")
    if not found or found[0] is None or judged_item is None or judged_item.expected is None:
        return False
    from ..captures import CaptureError, read_heating_log
    from ..physics import water

    try:
        log = read_heating_log(found[0])
        fit = water.fit_heating_rate(log.time_s, log.temp_c)
    except (CaptureError, ValueError):
        return False
    expected_rate = _expected_rate(judged_item)
    t_min = [float(x) / 60.0 for x in log.time_s]
    logged = list(zip(t_min, [float(x) for x in log.temp_c], strict=True))
    if len(logged) > 400:
        logged = logged[:: len(logged) // 400 + 1]
    t0, t1 = fit.fit_start_s / 60.0, fit.fit_end_s / 60.0
    fitted = [(t0, fit.start_temp_c), (t1, fit.end_temp_c)]
    predicted = [(t0, fit.start_temp_c), (t1, fit.start_temp_c + expected_rate * (t1 - t0) / 60)]
    add(charts.temperature_curve(
        [("logged", logged, charts.BLUE, True), ("fitted", fitted, charts.INK, False),
         ("expected", predicted, charts.GREY, False)],
        [], "time [min]", "Heating run at full output (temperature log)"),
        f"Fitted {fit.rate_k_per_h:.1f} K/h over the steady part against {expected_rate:.1f} "
        "K/h expected from the element's power (P/(m·cp), IAPWS-95 water properties).")
    return True


def add_soak(c, add) -> None:
    found = _file(c, "heatsink.soak_log")
    if not found or found[0] is None:
        return
    from ..captures import CaptureError, read_soak_log
    from ..physics import thermal

    try:
        log = read_soak_log(found[0])
        fit = thermal.fit_first_order(log.time_s, log.temp_c)
    except (CaptureError, ValueError):
        return
    t = [float(x) / 60.0 for x in log.time_s]
    logged = list(zip(t, [float(x) for x in log.temp_c], strict=True))
    if len(logged) > 400:
        logged = logged[:: len(logged) // 400 + 1]
    span = max(t) * 1.6
    curve = [(x, fit.t_inf_c - (fit.t_inf_c - fit.t0_c) * math.exp(-x * 60.0 / fit.tau_s))
             for x in [span * k / 80 for k in range(81)]]
    limit = _reading(c, "heatsink.limit")
    soak = c.result("heatsink.soak_log")
    hlines = []
    if soak is not None and soak.measured is not None:
        hlines.append((f"predicted max {soak.measured.value:.1f} °C",
                       float(soak.measured.value), charts.ORANGE))
    if limit is not None:
        hlines.append((f"limit {limit:g} °C", limit, charts.RED))
    add(charts.temperature_curve(
        [("logged", logged, charts.BLUE, True), ("fitted model", curve, charts.INK, False)],
        hlines, "time [min]", "Heatsink soak at full output, enclosure closed"),
        f"First-order fit (Incropera, lumped capacitance): T∞ {fit.t_inf_c:.1f} °C "
        f"({fit.t_inf_ci_c[0]:.1f}–{fit.t_inf_ci_c[1]:.1f} °C, 95 %), τ {fit.tau_s / 60:.1f} "
        "min; the predicted maximum is scaled to the worst ambient.")
