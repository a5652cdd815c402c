"""Waveform capture of voltage and clamp current: power, harmonics and the clamp verdict.

The clamp verdict uses all the evidence, in this order (CHECKS.md, "The clamp from a
phase-cut current"):

1. the state the capture was taken in (:data:`CAPTURE_STATES`) says whether import or
   export is expected; a capture taken while the diverter regulates is ``review``;
2. the sign and size of P against its uncertainty, from the cycle-to-cycle spread of the
   capture: a |P| within its expanded uncertainty is ``review``;
3. the angle of the current fundamental against the angle expected from the firing angle
   read from the current itself, φ1(α) (Rashid, closed form): a residual near 0° is
   correct, near 180° reversed, near ±120° another phase, near ±60° another phase and
   reversed, near ±90° a reactive load or a wrong reference.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from commission.analyses import (
    FAIL,
    PASS,
    REVIEW,
    Analysis,
    Finding,
    ReadSettings,
    SettingsError,
    with_findings,
)

# The states a capture can be taken in, and the direction of power flow each expects.
CAPTURE_STATES: dict[str, str | None] = {
    "off, known load, PV at zero": "import",
    "off, PV exporting": "export",
    "full output, PV at zero": "import",
    "forced part output, PV at zero": "import",
    "regulating": None,
}
STATE_WORDS = {  # short forms accepted on the command line
    "off-load": "off, known load, PV at zero",
    "off-export": "off, PV exporting",
    "full": "full output, PV at zero",
    "part": "forced part output, PV at zero",
    "regulating": "regulating",
}

# Our defaults, one place for the command, the check and the chart.
ANGLE_PASS_DEG = 45.0  # |residual| within which the clamp is as expected (our default)
COVERAGE_K = 2.0  # expanded uncertainty of P: k = 2 (about 95 %), JCGM 100 (GUM) 6.2
MIN_SAMPLES_PER_CYCLE = 32  # below this the firing angle is read to worse than 11°
DC_OFFSET_NOTE = 0.02  # |I_dc| above 2 % of I_rms (or |V_dc| above 1 % of V_rms) is named
DC_OFFSET_REVIEW = 0.10  # above 10 % of I_rms it can change the verdict (our default)
HEAD_S = 2.0  # seconds of samples kept for the firing angle and the cycle spread
CHART_CYCLES = 3

SRC_CLAMP = ("sign of P against its cycle-to-cycle uncertainty (GUM, k = 2); angle of the "
             "current fundamental (DFT, IEC 61000-4-7) against φ1(α) of a phase-cut "
             "resistive load (Rashid, from memory); ±45° band our default; power per "
             "IEEE 1459-2010")
SIGN = "positive power = import"
REPEAT = "repeat with the diverter off or at full output"


@dataclass(frozen=True)
class CaptureSettings:
    """What the person declares about the capture.

    ``state``: one of :data:`CAPTURE_STATES` (or a short form of :data:`STATE_WORDS`).
    ``expect``: 'import' or 'export', for a capture whose state is not given (older
    checklists); the state wins when both are given and agree.
    """

    state: str | None = None
    expect: str | None = None

    def direction(self) -> tuple[str | None, bool]:
        """(expected direction or None, regulating?)"""
        state = canonical_state(self.state)
        if self.expect not in (None, "import", "export"):
            raise SettingsError(f"expect: {self.expect!r} is not accepted; give import or "
                                "export")
        if state is None:
            return self.expect, False
        wanted = CAPTURE_STATES[state]
        if self.expect is not None and wanted is not None and self.expect != wanted:
            raise SettingsError(f"the state {state!r} expects {wanted}, not {self.expect}")
        return wanted, state == "regulating"


def canonical_state(text: str | None) -> str | None:
    if text is None:
        return None
    t = " ".join(str(text).strip().split()).lower()
    for state in CAPTURE_STATES:
        if t == state.lower():
            return state
    if t in STATE_WORDS:
        return STATE_WORDS[t]
    accepted = ", ".join(STATE_WORDS)
    raise SettingsError(f"state {text!r} is not one of {accepted} (or the checklist's "
                        "wording)")


def looks_like_wav(path) -> bool:
    """A WAV file by its content (RIFF header), never by its name."""
    try:
        with open(path, "rb") as fh:
            return fh.read(4) == b"RIFF"
    except OSError:
        return False


def _is_file(path) -> bool:
    import os

    return os.path.isfile(path)


def analyse_capture(path, settings: CaptureSettings | None = None,
                    read: ReadSettings | None = None, *, name: str | None = None,
                    progress=None) -> Analysis:
    """Read and analyse a capture, and judge the clamp.

    Parameters
    ----------
    path : str or os.PathLike
        CSV or two-channel PCM WAV (told apart by content).
    settings : CaptureSettings
        The state the capture was taken in.
    read : ReadSettings
        Columns, scales and offsets (CSV), full-scale values and channels (WAV).
    name : str, optional
        The file's name for messages and the result, when ``path`` is a temporary copy.
    progress : callable, optional
        Called with the fraction done while a long WAV is read.

    Returns
    -------
    Analysis

    Raises
    ------
    commission.captures.CaptureError, ValueError
        A file that cannot be read or analysed; the message is one line.
    """
    import numpy as np

    from commission.physics.waveform import CaptureAccumulator

    settings = settings or CaptureSettings()
    read = read or ReadSettings()
    expected_dir, regulating = settings.direction()
    shown_name = name or str(path)
    wav = looks_like_wav(path)
    if not wav and shown_name.lower().endswith((".wav", ".wave")) and _is_file(path):
        from commission.captures import CaptureError

        raise CaptureError(f"{shown_name}: not a readable PCM WAV file (no RIFF header); "
                           "export the capture as 16- or 24-bit PCM WAV, or as CSV")
    if wav:
        from commission.captures import open_capture_wav

        if not (read.v_scale and read.i_scale):
            raise SettingsError(f"{shown_name}: WAV samples are fractions of full scale; give "
                                "the volts and amperes at full scale of the measurement front "
                                "end (--v-scale, --i-scale, or the instrument's profile)")
        stream = open_capture_wav(path, voltage_full_scale_v=read.v_scale,
                                  current_full_scale_a=read.i_scale,
                                  voltage_channel=read.channels[0],
                                  current_channel=read.channels[1], name=shown_name)
        acc = CaptureAccumulator(stream.sample_rate_hz)
        head_v: list[Any] = []
        head_i: list[Any] = []
        kept = 0
        limit = int(HEAD_S * stream.sample_rate_hz)
        done = 0
        for v, i in stream:  # chunked: an hour-long file stays in bounded memory
            acc.add(v, i)
            if kept < limit:
                head_v.append(v[: limit - kept])
                head_i.append(i[: limit - kept])
                kept += head_v[-1].size
            done += v.size
            if progress is not None:
                progress(done / stream.frames)
        result = acc.result()
        hv, hi = np.concatenate(head_v), np.concatenate(head_i)
        raw_warnings, notes, rate = stream.warnings, (), stream.sample_rate_hz
    else:
        from commission.captures import read_capture_csv

        cap = read_capture_csv(path, sample_rate_hz=read.rate_hz, columns=read.columns,
                               voltage_scale=1.0 if read.v_scale is None else read.v_scale,
                               voltage_offset=read.v_offset,
                               current_scale=1.0 if read.i_scale is None else read.i_scale,
                               current_offset=read.i_offset, name=shown_name)
        acc = CaptureAccumulator(cap.sample_rate_hz, start_time_s=cap.start_time_s)
        acc.add(cap.voltage_v, cap.current_a)
        result = acc.result()
        limit = int(HEAD_S * cap.sample_rate_hz)
        hv, hi = cap.voltage_v[:limit], cap.current_a[:limit]
        raw_warnings, notes, rate = cap.warnings, cap.notes, cap.sample_rate_hz
    return _judge(shown_name, result, hv, hi, rate, raw_warnings, notes, settings,
                  expected_dir, regulating, read, wav)


def _judge(name, r, hv, hi, rate, raw_warnings, notes, settings, expected_dir, regulating,
           read, wav) -> Analysis:
    import numpy as np

    from commission.physics import phase_control
    from commission.physics.harmonic_limits import class_a_limits
    from commission.physics.waveform import cycle_powers, dc_removed_power_factor

    period = rate / r.frequency_hz
    whole = int(math.floor(hv.size / period) * period)
    hv_whole, hi_whole = hv[:whole], hi[:whole]
    # P per cycle over the head of the capture, or per window of a long capture
    per_cycle = cycle_powers(rate, hv_whole, hi_whole, r.frequency_hz)
    spread_of = "cycles"
    if r.windows >= 5 and r.windows > per_cycle.size / r.window_cycles:
        per_cycle, spread_of = np.asarray(r.window_p_w), "windows"
    n = int(per_cycle.size)
    u_p = (float(np.std(per_cycle, ddof=1)) / math.sqrt(n)) if n >= 2 else math.inf
    big_u = COVERAGE_K * u_p
    alpha = phase_control.firing_angle_from_current(hi_whole)
    alpha_deg = math.degrees(alpha)
    expected_phi = phase_control.fundamental_phase_deg(alpha)
    phi = r.phase_deg
    pf_ac, v_dc, i_dc = dc_removed_power_factor(hv_whole, hi_whole)

    findings: list[Finding] = []
    for text in raw_warnings:  # the reader names the file; the finding belongs to it already
        findings.append(Finding("clipping", text.removeprefix(f"{name}: ")))
    if r.irregular_cycles:
        findings.append(Finding("irregular_cycles", f"{r.irregular_cycles} irregular mains "
                                "cycle(s) (glitches or dropouts in the voltage); the windows "
                                "around them were left out"))
    if abs(i_dc) > DC_OFFSET_NOTE * r.i_rms or abs(v_dc) > 0.5 * DC_OFFSET_NOTE * r.v_rms:
        findings.append(Finding(
            "dc_offset",
            f"DC offset of {v_dc:+.2f} V and {i_dc:+.3f} A (a clamp or converter offset); power "
            f"factor {r.power_factor:.3f} as measured, {pf_ac:.3f} with the offset removed",
            affects_verdict=abs(i_dc) > DC_OFFSET_REVIEW * r.i_rms))
    if period < MIN_SAMPLES_PER_CYCLE:
        findings.append(Finding(
            "few_samples_per_cycle",
            f"only {period:.0f} samples per mains cycle (at least {MIN_SAMPLES_PER_CYCLE} are "
            "needed to read the firing angle; harmonics above the Nyquist limit are missing)"))
    step = _quantum(hi_whole)
    if step > 0 and np.max(np.abs(hi_whole)) / step < 50:
        findings.append(Finding(
            "coarse_resolution",
            f"the current moves in steps of {step:g} A, under 50 steps to its peak "
            "(resolution too coarse for the angle and harmonics; use a smaller range)"))

    verdict, cause, reason, residual = _clamp(r.p_w, big_u, phi, expected_phi, alpha_deg,
                                              expected_dir, regulating, settings)
    verdict, reason = with_findings(verdict, reason, findings)
    limits = class_a_limits()
    harmonics = []
    for order, i_rms in zip(r.harmonic_orders, r.i_harmonics_a, strict=True):
        limit = limits[order]
        harmonics.append({"order": order, "i_rms": i_rms, "class_a_limit_a": limit,
                          "within": None if i_rms is None else bool(i_rms <= limit)})
    figures: dict[str, Any] = {
        "frequency_hz": r.frequency_hz,
        "cycles": r.cycles,
        "sample_rate_hz": r.sample_rate_hz,
        "v_rms": r.v_rms,
        "i_rms": r.i_rms,
        "p_w": r.p_w,
        "p_uncertainty_w": big_u,
        "p_spread_of": spread_of,
        "p_spread_count": n,
        "s_va": r.s_va,
        "power_factor": r.power_factor,
        "power_factor_dc_removed": pf_ac,
        "dc_offset_v": v_dc,
        "dc_offset_a": i_dc,
        "displacement_pf": r.displacement_pf,
        "phase_deg": phi,
        "firing_angle_deg": alpha_deg,
        "expected_phase_deg": expected_phi,
        "phase_residual_deg": residual,
        "thd_v_pct": r.thd_v_pct,
        "thd_i_pct": r.thd_i_pct,
        "thd_max_order": r.thd_max_order,
        "direction": r.direction,
        "state": canonical_state(settings.state),
        "expected_direction": expected_dir,
        "clamp": {"verdict": verdict, "likely_cause": cause, "reason": reason},
        "harmonics": harmonics,
        "class_a_within": all(h["within"] for h in harmonics if h["within"] is not None),
        "window_count": r.windows,
        "window_cycles": r.window_cycles,
        "irregular_cycles": r.irregular_cycles,
        "wav": wav,
    }
    k = min(hv.size, int(round(CHART_CYCLES * period)))
    stride = max(1, k // 600)
    chart = {"time_s": [j / rate for j in range(0, k, stride)],
             "voltage_v": [float(x) for x in hv[:k:stride]],
             "current_a": [float(x) for x in hi[:k:stride]],
             "caption": (f"Clamp capture, three cycles: P {r.p_w:+.0f} W (±{big_u:.0f} W), "
                         f"φ1 {phi:+.1f}° against {expected_phi:+.1f}° expected at α "
                         f"{alpha_deg:.0f}°, {r.frequency_hz:.2f} Hz (IEEE 1459-2010; DFT per "
                         "IEC 61000-4-7).")}
    expected = ({"unit": "°", "value": "residual within ±45° of φ1(α)"}
                if expected_dir is not None else None)
    return Analysis("capture", name, figures, findings, verdict, reason, SRC_CLAMP, chart,
                    read, tuple(notes), (round(phi, 2) if math.isfinite(phi) else None, "°"),
                    expected, raw=r)


def _quantum(x) -> float:
    """The smallest step between distinct values (the instrument's resolution); 0 when
    fewer than three distinct values. Sorted steps, not ``numpy.unique`` (which loads
    numpy.ma, 15 ms or more of start-up on every capture)."""
    import numpy as np

    steps = np.diff(np.sort(np.asarray(x, dtype=float)))
    steps = steps[steps > 0]
    if steps.size < 2:
        return 0.0
    return float(steps.min())


def _clamp(p, big_u, phi, expected_phi, alpha_deg, expect, regulating, settings):
    """(verdict, likely cause, reason, residual) of the clamp."""
    figures = f"P {p:+.0f} W ± {big_u:.0f} W ({SIGN})"
    if regulating:
        return (REVIEW, "regulating", f"{figures}: taken while the diverter regulates the net "
                "power towards zero, so neither the sign nor the angle means anything; "
                f"{REPEAT}", math.nan)
    if not math.isfinite(phi):
        return (REVIEW, "unknown", f"{figures}: the current has no fundamental, so its angle "
                f"cannot be judged; {REPEAT}", math.nan)
    residual = (phi - expected_phi + 180.0) % 360.0 - 180.0
    angle = (f"φ1 {phi:+.1f}° against {expected_phi:+.1f}° expected for the firing angle "
             f"{alpha_deg:.0f}° read from the current")
    if expect is None:
        flow = "import" if p > 0 else "export"
        return (REVIEW, "no expectation", f"{figures}, {angle}: reads as {flow}; give the state "
                "the capture was taken in to judge the clamp", residual)
    if not (abs(p) > big_u) or not math.isfinite(big_u):
        return (REVIEW, "too small", f"{figures}: |P| is within its uncertainty from the "
                f"cycle-to-cycle spread, so the direction is not known; {REPEAT}", residual)
    reference = 0.0 if expect == "import" else 180.0
    dev = (residual - reference + 180.0) % 360.0 - 180.0
    sign_ok = (p > 0) == (expect == "import")
    other = "export" if expect == "import" else "import"
    if abs(dev) <= ANGLE_PASS_DEG and sign_ok:
        return (PASS, "as expected", f"{figures}, {angle}: power flows as {expect}, as "
                "expected for the stated state", residual)
    if abs(dev) >= 135.0:
        return (FAIL, "reversed", f"{figures}, {angle}: it reads {other} while {expect} was "
                "expected; the clamp is probably reversed (its arrow must point into the "
                "premises)", residual)
    if 105.0 <= abs(dev) < 135.0:
        return (FAIL, "another phase", f"{figures}, {angle}: {abs(dev):.0f}° away from "
                f"{expect}; the clamp and the voltage reference are probably on different "
                "phases", residual)
    if 45.0 < abs(dev) < 75.0:
        return (FAIL, "another phase and reversed", f"{figures}, {angle}: {abs(dev):.0f}° away "
                f"from {expect}; the clamp is probably on another phase than the voltage "
                "reference and also reversed", residual)
    return (REVIEW, "reactive load or wrong reference", f"{figures}, {angle}: {abs(dev):.0f}° "
            f"away from {expect}; almost no active power for its current: a mostly reactive "
            f"load or a wrong voltage reference; {REPEAT} with a known resistive load",
            residual)
