"""commission analyse capture|heating|soak|regulation

Each command reads one instrument file, runs the model from ``commission.physics`` over it
and prints every figure with its unit and its source (or ``--json``, SI units). The exit code
is 0 whenever the analysis ran, whatever the verdict, and 2 on bad input (one line on
stderr naming the file and what is accepted). numpy, the physics and the readers are
imported inside the commands so that ``commission --help`` stays fast.
"""

import math
import sys
import textwrap
from contextlib import contextmanager
from typing import Annotated, Any

import typer

from .common import JsonOpt, emit_json, friendly

WIDTH = 80
SIGN_CONVENTION = (
    "Sign convention: positive power = import from the grid, for a clamp on the incoming "
    "line conductor with its arrow pointing into the premises."
)
AUDIO_INPUT_WARNING = (
    "An AC-coupled (audio) input shifts the phase at mains frequency, which spoils the "
    "angle between voltage and current and so the clamp verdict: record with an isolated "
    "measurement front end with its own rated, DC-coupled inputs. Never connect mains to "
    "an audio input."
)
SAFETY = ("Mains work can kill: isolate and prove dead, competent and licensed persons only; "
          "local wiring rules come first.")

# Sources shown beside the figures.
SRC_1459 = "IEEE 1459-2010"
SRC_4_7 = "IEC 61000-4-7 (from memory)"
SRC_CLASS_A = "IEC 61000-3-2 Class A Table 1 (from memory)"
SRC_IAPWS = "IAPWS-95"
SRC_LUMPED = "lumped first-order model, Incropera"

# Examples of --columns, per kind of file.
CAPTURE_COLUMNS = "voltage_v=U1,current_a=I1,time_s=t"
TEMP_COLUMNS = "temp_c=T1,time_s=t"
GRID_COLUMNS = "grid_w=P_grid,time_s=t"

# Heating verdict defaults live with the check (checks/heating.py), shared by both.
HEATING_BAND = (0.85, 1.10)  # common practice (same band as the checklist's heating check)
HEATING_FILL_TEMP_C = 15.0  # common practice: cold mains water (from memory)

app = typer.Typer(
    help="Check measured files against the physics: waveform captures, heating, heatsink "
    "soak, regulation. Figures come with units and sources; --json gives SI units. "
    "Exit 0 when the analysis ran (whatever the verdict), 2 on bad input.\n\n"
    + AUDIO_INPUT_WARNING + "\n\n" + SAFETY,
    no_args_is_help=True,
)


# -- shared helpers ------------------------------------------------------------------------

_READER_MAPPING_HINT = "map other names with a column mapping, e.g. voltage_v=U1"


@contextmanager
def _bad_input(source: str, columns_example: str):
    """Turn the readers' CaptureError and the physics' ValueError into one-line UserErrors;
    the readers' generic hint on column mappings becomes this command's option."""
    from ..captures import CaptureError
    from ..errors import UserError

    try:
        yield
    except CaptureError as exc:
        text = str(exc).replace(_READER_MAPPING_HINT,
                                f"map other names with --columns, e.g. {columns_example}")
        raise UserError(_one_line(text)) from None
    except ValueError as exc:
        raise UserError(_one_line(f"{source}: {exc}")) from None


def _one_line(text: str) -> str:
    return " ".join(text.split())


def _number(text: str | None, option: str, hint: str, *, positive: bool = False,
            minimum: float | None = None, maximum: float | None = None) -> float | None:
    """Parse an option's number; None stays None. Errors name the option and the form."""
    from ..errors import UserError

    if text is None:
        return None
    try:
        value = float(text.strip())
    except ValueError:
        raise UserError(f"{option}: {text!r} is not a number; give {hint}") from None
    if not math.isfinite(value):
        raise UserError(f"{option}: {text!r} is not a finite number; give {hint}")
    if positive and value <= 0:
        raise UserError(f"{option}: must be greater than zero; give {hint}")
    if minimum is not None and value < minimum:
        raise UserError(f"{option}: {value:g} is below {minimum:g}; give {hint}")
    if maximum is not None and value > maximum:
        raise UserError(f"{option}: {value:g} is above {maximum:g}; give {hint}")
    return value


def _required(value, option: str, hint: str):
    from ..errors import UserError

    if value is None:
        raise UserError(f"{option} is required: {hint}")
    return value


def _mapping(text: str | None, example: str) -> dict[str, str] | None:
    """``a=B,c=D`` -> {"a": "B", "c": "D"}."""
    from ..errors import UserError

    if text is None:
        return None
    out: dict[str, str] = {}
    for part in text.split(","):
        key, sep, name = (s.strip() for s in part.partition("="))
        if not (sep and key and name):
            raise UserError(f"--columns: {part.strip()!r} is not NAME=HEADER; write e.g. "
                            f"{example}")
        out[key] = name
    return out


def _finite(x: Any) -> Any:
    """NaN and infinity are not JSON: they become null."""
    if isinstance(x, float) and not math.isfinite(x):
        return None
    return x


def _warn(text: str) -> None:
    for line in textwrap.wrap(f"warning: {text}", WIDTH, subsequent_indent="  "):
        typer.echo(line, err=True)


class _Progress:
    """A percentage on stderr, only when stderr is a terminal."""

    def __init__(self, label: str) -> None:
        self.label = label if len(label) <= 60 else "…" + label[-59:]
        self.on = hasattr(sys.stderr, "isatty") and sys.stderr.isatty()
        self._shown = -1

    def say(self, text: str) -> None:
        if self.on:
            sys.stderr.write(f"\r{self.label + ': ' + text:<{WIDTH - 1}}")
            sys.stderr.flush()

    def fraction(self, done: float) -> None:
        pct = int(100 * done)
        if pct != self._shown:
            self._shown = pct
            self.say(f"{pct:3d} %")

    def close(self) -> None:
        if self.on:
            sys.stderr.write("\r" + " " * (WIDTH - 1) + "\r")
            sys.stderr.flush()


def _row(label: str, value: str, source: str) -> list[str]:
    """``  label      value unit  source``; the source moves below when it does not fit."""
    head = f"  {label:<20}{value:>16}  "
    if len(head) + len(source) <= WIDTH:
        return [head + source]
    return [head.rstrip()] + textwrap.wrap(source, WIDTH, initial_indent=" " * 8,
                                          subsequent_indent=" " * 8)


def _para(text: str, indent: str = "") -> list[str]:
    return textwrap.wrap(text, WIDTH, initial_indent=indent, subsequent_indent=indent + "  ")


def _verdict_lines(verdict: str, reason: str) -> list[str]:
    return _para(f"verdict: {verdict}: {reason}")


def _print(lines: list[str]) -> None:
    typer.echo("\n".join(lines))


# -- capture -------------------------------------------------------------------------------

def _looks_like_wav(path: str) -> bool:
    if path.lower().endswith((".wav", ".wave")):
        return True
    try:
        with open(path, "rb") as fh:
            return fh.read(4) == b"RIFF"
    except OSError:
        return False  # the CSV reader gives the message


def _channels(text: str | None) -> tuple[int, int]:
    from ..errors import UserError

    if text is None:
        return 1, 2
    parts = [p.strip() for p in text.split(",")]
    try:
        v, i = (int(p) for p in parts)
    except ValueError:
        raise UserError(f"--channels: {text!r} is not VOLTAGE,CURRENT; give two channel "
                        "numbers counted from 1, e.g. 1,2 (the default) or 2,1") from None
    if v < 1 or i < 1 or v == i:
        raise UserError(f"--channels: {text!r}: give two different channel numbers counted "
                        "from 1, voltage first, e.g. 1,2")
    return v, i


CAPTURE_HELP = (
    "Analyse a voltage and current capture: RMS, power, power factors, THD, harmonics "
    "against IEC 61000-3-2 Class A, direction of power flow and the clamp orientation."
    "\n\n"
    "Copes with 50 and 60 Hz, frequency off nominal or drifting, sampling not locked to the "
    "mains, DC offset, and a capture that starts and ends mid-cycle; at least two whole "
    "cycles are needed. The clamp verdict is only meaningful with a mostly resistive load "
    "and the diverter off or at full output."
    "\n\n"
    "Three-phase CSV (voltage_l1_v, optionally voltage_l2_v and voltage_l3_v; current_1_a "
    "to current_3_a, clamp k meant for Lk; optionally current_n_a): per-phase figures, phase "
    "sequence, voltage unbalance, neutral current, the net total and where each clamp is. "
    "With one voltage the sequence is assumed L1-L2-L3 and said so."
    "\n\n" + SIGN_CONVENTION + "\n\n" + AUDIO_INPUT_WARNING
)


@app.command(help=CAPTURE_HELP, short_help="Waveform capture: power, harmonics, clamp.")
@friendly
def capture(
    file: Annotated[str, typer.Argument(
        metavar="FILE", show_default=False,
        help="CSV (header; time_s or --rate; voltage_v, current_a) or two-channel PCM WAV "
        "from a data logger or isolated measurement front end.")],
    expect: Annotated[str | None, typer.Option(
        "--expect", metavar="import|export", show_default=False,
        help="Direction of power flow at the moment of the capture; judges the clamp.")] = None,
    rate: Annotated[str | None, typer.Option(
        "--rate", metavar="HZ", show_default=False,
        help="CSV: sample rate, when there is no time_s column.")] = None,
    columns: Annotated[str | None, typer.Option(
        "--columns", metavar="MAP", show_default=False,
        help="CSV: map other header names, e.g. voltage_v=U1,current_a=I1,time_s=t.")] = None,
    v_scale: Annotated[str | None, typer.Option(
        "--v-scale", metavar="X", show_default=False,
        help="CSV: volts per raw unit, value = (raw - offset) x scale (default 1). "
        "WAV: volts at full scale (required).")] = None,
    v_offset: Annotated[str | None, typer.Option(
        "--v-offset", metavar="RAW", show_default=False,
        help="CSV: raw reading at zero volts (default 0).")] = None,
    i_scale: Annotated[str | None, typer.Option(
        "--i-scale", metavar="X", show_default=False,
        help="CSV: amperes per raw unit (default 1). WAV: amperes at full scale "
        "(required).")] = None,
    i_offset: Annotated[str | None, typer.Option(
        "--i-offset", metavar="RAW", show_default=False,
        help="CSV: raw reading at zero amperes (default 0).")] = None,
    channels: Annotated[str | None, typer.Option(
        "--channels", metavar="V,I", show_default=False,
        help="WAV: channel numbers of voltage and current, from 1 (default 1,2).")] = None,
    windows: Annotated[bool, typer.Option(
        "--windows", help="Also give V, I and P of every ~200 ms window "
        "(10 cycles at 50 Hz, 12 at 60 Hz).")] = False,
    load: Annotated[str | None, typer.Option(
        "--load", metavar="all|one|unknown", show_default=False,
        help="Three-phase CSV (voltage_l1_v..., current_1_a...): what ran during the "
        "capture, to place the clamps (default all: load on every phase).")] = None,
    as_json: JsonOpt = False,
) -> None:
    """Analyse a voltage and current capture (help text: CAPTURE_HELP)."""
    from ..errors import UserError
    from . import analyse_3ph

    if expect is not None and expect.strip().lower() not in ("import", "export"):
        raise UserError(f"--expect: {expect!r} is not accepted; give import or export")
    expected = None if expect is None else expect.strip().lower()
    if load is not None and load.strip().lower() not in analyse_3ph.LOAD_WORDS:
        raise UserError(f"--load: {load!r} is not accepted; give all, one or unknown")
    wav = _looks_like_wav(file)
    if not wav and analyse_3ph.looks_three_phase(file):
        for option, given in (("--v-scale", v_scale), ("--v-offset", v_offset),
                              ("--i-scale", i_scale), ("--i-offset", i_offset),
                              ("--channels", channels)):
            if given is not None:
                raise UserError(f"{option}: not available for three-phase captures; give the "
                                "values in volts and amperes")
        if windows:
            raise UserError("--windows: not available for three-phase captures")
        analyse_3ph.run(file, rate=_number(rate, "--rate", "the sample rate in hertz, e.g. "
                                           "10000", positive=True),
                        columns=_mapping(columns, analyse_3ph.COLUMNS_EXAMPLE),
                        load=(load or "all").strip().lower(), expect=expected or "import",
                        as_json=as_json)
        return
    if load is not None:
        raise UserError(f"--load: applies to three-phase captures only; {file} has no "
                        "per-phase columns (voltage_l1_v, current_1_a, ...)")
    if wav:
        for option, given in (("--rate", rate), ("--columns", columns),
                              ("--v-offset", v_offset), ("--i-offset", i_offset)):
            if given is not None:
                raise UserError(f"{option}: applies to CSV captures only; {file} is a WAV "
                                "file, which carries its own sample rate and channel order "
                                "(choose channels with --channels V,I)")
        if v_scale is None or i_scale is None:
            raise UserError(f"{file}: WAV samples are fractions of full scale; give --v-scale "
                            "(volts at full scale) and --i-scale (amperes at full scale) of "
                            "the measurement front end")
        result, notes = _analyse_wav(
            file, _number(v_scale, "--v-scale", "the volts at full scale, e.g. 500"),
            _number(i_scale, "--i-scale", "the amperes at full scale, e.g. 50"),
            _channels(channels))
        notes = (*notes, AUDIO_INPUT_WARNING)
    else:
        if channels is not None:
            raise UserError("--channels: applies to WAV captures only; for a CSV map the "
                            "columns with --columns voltage_v=U1,current_a=I1")
        hint = "a number, e.g. 0.5"
        result, notes = _analyse_csv(
            file,
            rate=_number(rate, "--rate", "the sample rate in hertz, e.g. 10000",
                         positive=True),
            columns=_mapping(columns, CAPTURE_COLUMNS),
            v_scale=_number(v_scale, "--v-scale", hint) if v_scale is not None else 1.0,
            v_offset=_number(v_offset, "--v-offset", hint) if v_offset is not None else 0.0,
            i_scale=_number(i_scale, "--i-scale", hint) if i_scale is not None else 1.0,
            i_offset=_number(i_offset, "--i-offset", hint) if i_offset is not None else 0.0,
        )
    for note in notes:
        _warn(note)
    data = _capture_json(result, expected, windows)
    if as_json:
        emit_json(data)
    else:
        _print(_capture_text(file, result, data, windows))


def _analyse_csv(file, *, rate, columns, v_scale, v_offset, i_scale, i_offset):
    from ..captures import read_capture_csv
    from ..errors import UserError
    from ..physics.waveform import CaptureAccumulator

    if v_scale == 0 or i_scale == 0:
        raise UserError("--v-scale and --i-scale must not be zero: every reading would "
                        "become zero")
    progress = _Progress(file)
    try:
        with _bad_input(file, CAPTURE_COLUMNS):
            progress.say("reading")
            cap = read_capture_csv(file, sample_rate_hz=rate, columns=columns,
                                   voltage_scale=v_scale, voltage_offset=v_offset,
                                   current_scale=i_scale, current_offset=i_offset)
            progress.say("analysing")
            acc = CaptureAccumulator(cap.sample_rate_hz, start_time_s=cap.start_time_s)
            acc.add(cap.voltage_v, cap.current_a)
            result = acc.result()
    finally:
        progress.close()
    return result, (*cap.warnings, *_irregular_note(file, result))


def _analyse_wav(file, v_full, i_full, chans):
    from ..captures import open_capture_wav
    from ..errors import UserError
    from ..physics.waveform import CaptureAccumulator

    if v_full == 0 or i_full == 0:
        raise UserError("--v-scale and --i-scale must not be zero (volts and amperes at full "
                        "scale)")
    progress = _Progress(file)
    try:
        with _bad_input(file, CAPTURE_COLUMNS):
            stream = open_capture_wav(file, voltage_full_scale_v=v_full,
                                      current_full_scale_a=i_full, voltage_channel=chans[0],
                                      current_channel=chans[1])
            acc = CaptureAccumulator(stream.sample_rate_hz)
            done = 0
            for v, i in stream:  # chunked: an hour-long file stays in bounded memory
                acc.add(v, i)
                done += v.size
                progress.fraction(done / stream.frames)
            progress.say("analysing")
            result = acc.result()
    finally:
        progress.close()
    return result, (*stream.warnings, *_irregular_note(file, result))


def _irregular_note(file, result):
    if not result.irregular_cycles:
        return ()
    return (f"{file}: {result.irregular_cycles} irregular mains cycle(s) (glitches or dropouts "
            "in the voltage) and the windows around them were left out",)


def _capture_json(r, expect, windows: bool) -> dict[str, Any]:
    from ..physics.harmonic_limits import class_a_limits
    from ..physics.waveform import classify_clamp

    clamp = classify_clamp(r.phase_deg, expect)
    limits = class_a_limits()
    harmonics = []
    for order, i_rms in zip(r.harmonic_orders, r.i_harmonics_a, strict=True):
        limit = limits[order]
        harmonics.append({
            "order": order,
            "i_rms": i_rms,
            "class_a_limit_a": limit,
            "within": None if i_rms is None else bool(i_rms <= limit),
        })
    data: dict[str, Any] = {
        "frequency_hz": r.frequency_hz,
        "cycles": r.cycles,
        "v_rms": r.v_rms,
        "i_rms": r.i_rms,
        "p_w": r.p_w,
        "s_va": r.s_va,
        "power_factor": r.power_factor,
        "displacement_pf": _finite(r.displacement_pf),
        "phase_deg": _finite(r.phase_deg),
        "thd_v_pct": _finite(r.thd_v_pct),
        "thd_i_pct": _finite(r.thd_i_pct),
        "direction": r.direction,
        "clamp": {"verdict": clamp.verdict, "reason": clamp.reason},
        "harmonics": harmonics,
        "class_a_within": all(h["within"] for h in harmonics if h["within"] is not None),
    }
    if windows:
        data["windows"] = [
            {"start_s": s, "v_rms": v, "i_rms": i, "p_w": p}
            for s, v, i, p in zip(r.window_start_s, r.window_v_rms, r.window_i_rms,
                                  r.window_p_w, strict=True)
        ]
    return data


def _fmt(x: float | None, spec: str, unit: str) -> str:
    if x is None or (isinstance(x, float) and not math.isfinite(x)):
        return "n/a"
    text = f"{x:{spec}}"
    if float(text) == 0.0:  # no "-0.0" for a value that rounds to zero
        text = f"{0.0:{spec}}"
    return f"{text} {unit}".rstrip()


def _capture_text(file: str, r, data: dict[str, Any], windows: bool) -> list[str]:
    lines = _para(f"{file}: {r.cycles} whole mains cycles in {r.windows} window(s) of "
                  f"{r.window_cycles} cycles, sampled at {r.sample_rate_hz:g} Hz")
    thd_src = f"{SRC_4_7}, h 2-{r.thd_max_order}"
    lines += _row("frequency", _fmt(r.frequency_hz, ".3f", "Hz"),
                  SRC_4_7)
    lines += _row("voltage", _fmt(r.v_rms, ".1f", "V rms"), SRC_1459)
    lines += _row("current", _fmt(r.i_rms, ".3f", "A rms"), SRC_1459)
    lines += _row("active power P", _fmt(r.p_w, "+.1f", "W"), SRC_1459 + ", sign below")
    lines += _row("apparent power S", _fmt(r.s_va, ".1f", "VA"), SRC_1459)
    lines += _row("power factor P/S", _fmt(r.power_factor, ".3f", ""), SRC_1459)
    lines += _row("displacement PF", _fmt(data["displacement_pf"], ".3f", ""),
                  SRC_1459 + ", fundamentals")
    lines += _row("phase of I1 to V1", _fmt(data["phase_deg"], "+.1f", "deg"),
                  "+ = current leads; " + SRC_1459)
    lines += _row("THD voltage", _fmt(data["thd_v_pct"], ".2f", "%"), thd_src)
    lines += _row("THD current", _fmt(data["thd_i_pct"], ".2f", "%"), thd_src)
    lines += _row("direction", r.direction,
                  "sign of P; threshold our default")
    lines += _para(SIGN_CONVENTION)
    lines.append("")
    lines += _para(f"clamp: {data['clamp']['verdict']}: {data['clamp']['reason']} "
                   "(phasors 120 deg apart, any power-systems textbook; 45 deg band our "
                   "default)")
    lines.append("")
    lines += _para("Harmonic currents, RMS average over the windows, " + SRC_4_7 + "; "
                   "limits " + SRC_CLASS_A + "; a type-test limit for equipment up to 16 A, "
                   "indicative for a site capture. Shown: orders 3-13 and any order at 5 % "
                   "of its limit or more; all orders in --json.")
    lines.append(f"  {'order':>5}  {'current':>12}  {'Class A limit':>14}  within")
    for h in data["harmonics"]:
        order, i_rms, limit = h["order"], h["i_rms"], h["class_a_limit_a"]
        if i_rms is None:
            continue
        if not (order in (3, 5, 7, 9, 11, 13) or i_rms >= 0.05 * limit):
            continue
        lines.append(f"  {order:>5}  {i_rms:>10.3f} A  {limit:>12.3f} A  "
                     f"{'yes' if h['within'] else 'NO'}")
    beyond = [h["order"] for h in data["harmonics"] if h["i_rms"] is None]
    if beyond:
        lines += _para(f"  orders {beyond[0]}-{beyond[-1]}: above the Nyquist limit of the "
                       "sampling, not analysed")
    lines += _para(f"all orders within Class A: {'yes' if data['class_a_within'] else 'no'}")
    if windows:
        lines.append("")
        lines += _para("Per window (" + SRC_1459 + "; windows " + SRC_4_7 + "):")
        lines.append(f"  {'start':>10}  {'voltage':>12}  {'current':>12}  {'power P':>12}")
        for w in data["windows"]:
            lines.append(f"  {w['start_s']:>8.3f} s  {w['v_rms']:>6.1f} V rms  "
                         f"{w['i_rms']:>6.3f} A rms  {w['p_w']:>+10.1f} W")
    return lines


# -- heating -------------------------------------------------------------------------------

def _band(text: str | None) -> tuple[float, float]:
    from ..errors import UserError

    if text is None:
        return HEATING_BAND
    parts = text.split(",")
    try:
        lo, hi = (float(p.strip()) for p in parts)
    except ValueError:
        raise UserError(f"--band: {text!r} is not LOW,HIGH; give two ratios of measured to "
                        "expected rate, e.g. 0.85,1.10 (the default)") from None
    if not (math.isfinite(lo) and math.isfinite(hi) and 0 < lo < hi):
        raise UserError(f"--band: {text!r}: LOW must be above zero and below HIGH, e.g. "
                        "0.85,1.10")
    return lo, hi


HEATING_HELP = (
    "Does the water heat as fast as the element's power predicts?\n\n"
    "Fits the heating rate over the steady part of the log (warm-up and a final plateau "
    "left out), compares it with P/(m cp) (mass at filling, cp at the mean temperature, "
    "IAPWS-95; lumped energy balance, Incropera) and infers the power delivered to the "
    "water. pass inside the band; fail below it; review above it, or when the log is too "
    "short or noisy to say."
)


@app.command(help=HEATING_HELP, short_help="Heating log: measured against expected rate.")
@friendly
def heating(
    log: Annotated[str, typer.Argument(
        metavar="LOG", show_default=False,
        help="CSV with time_s (seconds) or timestamp (ISO 8601), and temp_c.")],
    volume_l: Annotated[str | None, typer.Option(
        "--volume-l", metavar="LITRES", show_default=False,
        help="Water volume the element heats [L] (required).")] = None,
    power_w: Annotated[str | None, typer.Option(
        "--power-w", metavar="WATTS", show_default=False,
        help="Element power [W] (required): from its cold resistance at the measured "
        "voltage, U^2/R, else the nameplate.")] = None,
    band: Annotated[str | None, typer.Option(
        "--band", metavar="LOW,HIGH", show_default=False,
        help="Accepted ratio of measured to expected rate (default 0.85,1.10, common "
        "practice).")] = None,
    fill_temp_c: Annotated[str | None, typer.Option(
        "--fill-temp-c", metavar="DEGC", show_default=False,
        help="Water temperature at filling, fixes the mass (default 15, cold mains water, "
        "common practice).")] = None,
    columns: Annotated[str | None, typer.Option(
        "--columns", metavar="MAP", show_default=False,
        help="Map other header names, e.g. temp_c=T1,time_s=t.")] = None,
    as_json: JsonOpt = False,
) -> None:
    """Command body; the help text is HEATING_HELP."""
    volume = _required(_number(volume_l, "--volume-l", "the water volume in litres, e.g. "
                               "200", positive=True),
                       "--volume-l", "give the water volume the element heats, in litres")
    power = _required(_number(power_w, "--power-w", "the element power in watts, e.g. 2400",
                              positive=True),
                      "--power-w", "give the element power in watts (U^2/R, else nameplate)")
    lo, hi = _band(band)
    fill = _number(fill_temp_c, "--fill-temp-c", "the filling temperature in degC, e.g. 15",
                   minimum=0.0, maximum=100.0)
    fill = HEATING_FILL_TEMP_C if fill is None else fill
    mapping = _mapping(columns, TEMP_COLUMNS)

    from ..captures import read_heating_log
    from ..checks.heating import assess_heating_log

    with _bad_input(log, TEMP_COLUMNS):
        data_log = read_heating_log(log, columns=mapping)
        judged = assess_heating_log(data_log.time_s, data_log.temp_c, power_w=power,
                                    volume_l=volume, fill_temp_c=fill, band=(lo, hi))
    fit, expected, ratio = judged.fit, judged.expected_k_per_h, judged.ratio
    verdict, reason = judged.verdict, judged.reason
    mass, delivered, cp = judged.mass_kg, judged.delivered_w, judged.cp_j_per_kg_k
    span_s = fit.fit_end_s - fit.fit_start_s
    data = {
        "rate_k_per_h": fit.rate_k_per_h,
        "expected_rate_k_per_h": expected,
        "delivered_power_w": delivered,
        "ratio": ratio,
        "verdict": verdict,
        "reason": reason,
        "power_w": power,
        "volume_l": volume,
        "fill_temp_c": fill,
        "mass_kg": mass,
        "cp_j_per_kg_k": cp,
        "band": [lo, hi],
        "start_temp_c": fit.start_temp_c,
        "end_temp_c": fit.end_temp_c,
        "mean_temp_c": fit.mean_temp_c,
        "minutes": span_s / 60.0,
        "fit_start_s": fit.fit_start_s,
        "fit_end_s": fit.fit_end_s,
        "points": fit.points,
        "rate_stderr_k_per_h": fit.rate_stderr_k_per_h,
        "residual_rms_k": fit.residual_rms_k,
        "warmup_dropped_s": fit.warmup_dropped_s,
        "plateau_from_s": fit.plateau_from_s,
    }
    if as_json:
        emit_json(data)
        return
    lines = _para(f"{log}: fitted {fit.fit_start_s / 60:.1f} to {fit.fit_end_s / 60:.1f} min "
                  f"({fit.points} readings; warm-up of {fit.warmup_dropped_s / 60:.1f} min "
                  "left out" + (f", plateau from {fit.plateau_from_s / 60:.1f} min left out)"
                                if fit.plateau_from_s is not None else ")"))
    lines += _row("start temperature", _fmt(fit.start_temp_c, ".1f", "°C"), "fitted line")
    lines += _row("end temperature", _fmt(fit.end_temp_c, ".1f", "°C"), "fitted line")
    lines += _row("time", _fmt(span_s / 60.0, ".1f", "min"), "fitted span")
    lines += _row("measured rate", _fmt(fit.rate_k_per_h, ".2f", "K/h"),
                  f"least squares, ±{fit.rate_stderr_k_per_h:.2f} K/h (1 s.e.)")
    lines += _row("water mass", _fmt(mass, ".1f", "kg"),
                  f"{volume:g} L x density at {fill:g} °C, {SRC_IAPWS}")
    lines += _row("heat capacity cp", _fmt(cp, ".0f", "J/(kg K)"),
                  f"at mean {fit.mean_temp_c:.1f} °C, {SRC_IAPWS}")
    lines += _row("expected rate", _fmt(expected, ".2f", "K/h"),
                  f"{power:g} W / (m cp), Incropera; {SRC_IAPWS}")
    lines += _row("delivered power", _fmt(delivered, ".0f", "W"), "rate x m x cp, Incropera")
    lines += _row("ratio", _fmt(ratio, ".3f", ""), f"band {lo:g}-{hi:g}, common practice")
    lines += _verdict_lines(verdict, reason)
    _print(lines)


# -- soak ----------------------------------------------------------------------------------

SOAK_HELP = (
    "Will the heatsink stay below its limit once it has fully warmed up?\n\n"
    "Fits T(t) = T_inf - (T_inf - T0) exp(-t/tau) (lumped first-order model, Incropera) "
    "with a 95 % interval, scales the steady rise to the worst ambient and supply, and "
    "fails a soak that will overheat later even when every logged value is still below "
    "the limit. Optional junction estimate from datasheet values (give all five junction "
    "options together)."
)


@app.command(help=SOAK_HELP, short_help="Heatsink soak: predicted steady state against the limit.")
@friendly
def soak(
    log: Annotated[str, typer.Argument(
        metavar="LOG", show_default=False,
        help="CSV with time_s or timestamp, and temp_c (heatsink), logged at full output "
        "with the enclosure closed.")],
    ambient_c: Annotated[str | None, typer.Option(
        "--ambient-c", metavar="DEGC", show_default=False,
        help="Ambient temperature during the soak [degC] (required).")] = None,
    limit_c: Annotated[str | None, typer.Option(
        "--limit-c", metavar="DEGC", show_default=False,
        help="Highest permissible heatsink temperature [degC] (required; from the "
        "diverter's documentation).")] = None,
    worst_ambient_c: Annotated[str | None, typer.Option(
        "--worst-ambient-c", metavar="DEGC", show_default=False,
        help="Highest ambient the site will see, e.g. a loft in summer (default: the soak "
        "ambient).")] = None,
    rise_factor: Annotated[str | None, typer.Option(
        "--rise-factor", metavar="F", show_default=False,
        help="Factor on the temperature rise for the worst supply (default 1.0; about "
        "1.15-1.20 for +10 % voltage, our estimate from the loss model).")] = None,
    load_current_a: Annotated[str | None, typer.Option(
        "--load-current-a", metavar="A", show_default=False,
        help="Junction estimate: RMS load current at full output [A].")] = None,
    vt0_v: Annotated[str | None, typer.Option(
        "--vt0-v", metavar="V", show_default=False,
        help="Junction estimate: datasheet threshold voltage V_T0 [V].")] = None,
    rt_ohm: Annotated[str | None, typer.Option(
        "--rt-ohm", metavar="OHM", show_default=False,
        help="Junction estimate: datasheet slope resistance r_T [ohm].")] = None,
    rth_jc: Annotated[str | None, typer.Option(
        "--rth-jc-k-per-w", metavar="K/W", show_default=False,
        help="Junction estimate: datasheet Rth junction-case, full cycle [K/W].")] = None,
    rth_cs: Annotated[str | None, typer.Option(
        "--rth-cs-k-per-w", metavar="K/W", show_default=False,
        help="Junction estimate: Rth case-heatsink of the interface [K/W].")] = None,
    columns: Annotated[str | None, typer.Option(
        "--columns", metavar="MAP", show_default=False,
        help="Map other header names, e.g. temp_c=T1,time_s=t.")] = None,
    as_json: JsonOpt = False,
) -> None:
    """Command body; the help text is SOAK_HELP."""
    from ..errors import UserError

    hint = "a temperature in degC, e.g. 25"
    ambient = _required(_number(ambient_c, "--ambient-c", hint), "--ambient-c",
                        "give the ambient temperature during the soak, in degC")
    limit = _required(_number(limit_c, "--limit-c", hint), "--limit-c",
                      "give the highest permissible heatsink temperature, in degC")
    worst = _number(worst_ambient_c, "--worst-ambient-c", hint)
    factor = _number(rise_factor, "--rise-factor", "a factor such as 1.0 or 1.15",
                     positive=True)
    factor = 1.0 if factor is None else factor
    junction_given = {"--load-current-a": load_current_a, "--vt0-v": vt0_v,
                      "--rt-ohm": rt_ohm, "--rth-jc-k-per-w": rth_jc,
                      "--rth-cs-k-per-w": rth_cs}
    chosen = [k for k, v in junction_given.items() if v is not None]
    if chosen and len(chosen) < len(junction_given):
        missing = [k for k, v in junction_given.items() if v is None]
        raise UserError(f"junction estimate: also give {', '.join(missing)} (all five "
                        "junction options together, from the datasheet)")
    junction_values = {k: _number(v, k, "a non-negative number from the datasheet",
                                  minimum=0.0, maximum=1e6)
                       for k, v in junction_given.items()} if chosen else None
    mapping = _mapping(columns, TEMP_COLUMNS)

    from ..captures import read_soak_log
    from ..physics import thermal

    with _bad_input(log, TEMP_COLUMNS):
        data_log = read_soak_log(log, columns=mapping)
        fit = thermal.fit_first_order(data_log.time_s, data_log.temp_c)
        prediction = thermal.predict_worst_case(fit, ambient, worst_ambient_c=worst,
                                                rise_factor=factor)
        judged = thermal.soak_verdict(fit, prediction, limit)
    data: dict[str, Any] = {
        "t_inf_c": fit.t_inf_c,
        "t_inf_ci_c": [_finite(x) for x in fit.t_inf_ci_c],
        "tau_s": fit.tau_s,
        "predicted_max_c": prediction.predicted_max_c,
        "predicted_max_ci_c": [_finite(x) for x in prediction.predicted_max_ci_c],
        "fit_rmse_k": fit.rmse_k,
        "verdict": judged.verdict,
        "reason": judged.reason,
        "t0_c": fit.t0_c,
        "rise_k": prediction.rise_k,
        "max_logged_c": fit.max_logged_c,
        "limit_c": limit,
        "ambient_c": ambient,
        "worst_ambient_c": ambient if worst is None else worst,
        "rise_factor": factor,
        "points": fit.points,
        "duration_s": fit.duration_s,
        "time_constants_covered": fit.time_constants_covered,
    }
    if junction_values is not None:
        current = junction_values["--load-current-a"]
        loss = thermal.conduction_loss_w(thermal.full_conduction_i_avg_a(current), current,
                                         junction_values["--vt0-v"],
                                         junction_values["--rt-ohm"])
        rth = (junction_values["--rth-jc-k-per-w"], junction_values["--rth-cs-k-per-w"])
        data["device_loss_w"] = loss
        data["junction_c"] = thermal.junction_temperature_c(prediction.predicted_max_c, loss,
                                                            *rth)
        data["junction_ci_c"] = [
            _finite(thermal.junction_temperature_c(x, loss, *rth))
            for x in prediction.predicted_max_ci_c
        ]
    if as_json:
        emit_json(data)
        return
    lo, hi = fit.t_inf_ci_c
    plo, phi = prediction.predicted_max_ci_c
    lines = _para(f"{log}: {fit.points} readings over {fit.duration_s / 60:.1f} min, "
                  f"{fit.time_constants_covered:.1f} time constants; fitted T(t) = T_inf - "
                  "(T_inf - T0) exp(-t/tau) by least squares (Bates & Watts)")
    lines += _row("start T0", _fmt(fit.t0_c, ".1f", "°C"), SRC_LUMPED)
    lines += _row("steady state T_inf", _fmt(fit.t_inf_c, ".1f", "°C"), SRC_LUMPED)
    lines += _row("95 % interval", f"{lo:.1f} to {hi:.1f} °C",
                  "Student t, Abramowitz & Stegun 26.7")
    lines += _row("time constant tau", _fmt(fit.tau_s, ".0f", "s"), SRC_LUMPED)
    lines += _row("fit RMSE", _fmt(fit.rmse_k, ".2f", "K"),
                  f"trusted up to {thermal.DEFAULT_MAX_RMSE_K:g} K, our default")
    lines += _row("highest logged", _fmt(fit.max_logged_c, ".1f", "°C"), "the log")
    lines += _row("worst ambient", _fmt(data["worst_ambient_c"], ".1f", "°C"),
                  "given" if worst is not None else "soak ambient (none given)")
    lines += _row("rise factor", _fmt(factor, ".2f", ""),
                  ("given" if rise_factor is not None else "default")
                  + "; 1.15-1.20 at +10 % V, estimate")
    lines += _row("predicted maximum", _fmt(prediction.predicted_max_c, ".1f", "°C"),
                  "Tamb,worst + F(Tinf - Tamb), Incropera")
    lines += _row("95 % interval", f"{plo:.1f} to {phi:.1f} °C", "as for T_inf")
    lines += _row("limit", _fmt(limit, ".1f", "°C"), "given (--limit-c)")
    if "junction_c" in data:
        lines += _row("device loss", _fmt(data["device_loss_w"], ".1f", "W"),
                      "V_T0 I_avg + r_T I_rms^2, datasheet")
        lines += _row("junction estimate", _fmt(data["junction_c"], ".1f", "°C"),
                      "T_hs + P (Rth j-c + Rth c-s), datasheet")
    lines += _verdict_lines(judged.verdict, judged.reason)
    _print(lines)


# -- regulation ----------------------------------------------------------------------------

REGULATION_HELP = (
    "Does the diverter hold the grid reading in its dead band?\n\n"
    "Mean and 95th percentile of |grid|, energy still exported and imported, and the "
    "settling time after the largest step. Default rule: pass when |mean| <= D and the "
    "95th percentile of |grid| <= 3 D (common practice; the factor 3 is our default)."
    "\n\n" + SIGN_CONVENTION
)


@app.command(help=REGULATION_HELP, short_help="Regulation log: grid power against the dead band.")
@friendly
def regulation(
    log: Annotated[str, typer.Argument(
        metavar="LOG", show_default=False,
        help="CSV with time_s or timestamp, grid_w (positive = import) and optionally "
        "diverter_w, logged in automatic mode with surplus available.")],
    dead_band_w: Annotated[str | None, typer.Option(
        "--dead-band-w", metavar="W", show_default=False,
        help="Dead band D of the controller [W] (required; e.g. 50, common practice). "
        "Also the band for the settling time.")] = None,
    hold_s: Annotated[str | None, typer.Option(
        "--settle-hold-s", metavar="S", show_default=False,
        help="How long the reading must stay in the band to count as settled (default 10 s, "
        "our default).")] = None,
    columns: Annotated[str | None, typer.Option(
        "--columns", metavar="MAP", show_default=False,
        help="Map other header names, e.g. grid_w=P_grid,time_s=t.")] = None,
    as_json: JsonOpt = False,
) -> None:
    """Command body; the help text is REGULATION_HELP."""
    dead = _required(_number(dead_band_w, "--dead-band-w", "the dead band in watts, e.g. 50",
                             positive=True),
                     "--dead-band-w", "give the controller's dead band in watts, e.g. 50")
    hold = _number(hold_s, "--settle-hold-s", "a time in seconds, e.g. 10", minimum=0.0,
                   maximum=1e9)
    mapping = _mapping(columns, GRID_COLUMNS)

    from ..captures import read_regulation_log
    from ..physics import regulation as reg

    hold = reg.DEFAULT_SETTLING_HOLD_S if hold is None else hold
    with _bad_input(log, GRID_COLUMNS):
        data_log = read_regulation_log(log, columns=mapping)
        stats = reg.grid_statistics(data_log.time_s, data_log.grid_w,
                                    diverter_w=data_log.diverter_w, settling_band_w=dead,
                                    settling_hold_s=hold)
        judged = reg.regulation_verdict(stats, dead)
    data = {
        "mean_grid_w": stats.mean_grid_w,
        "p95_abs_grid_w": stats.p95_abs_grid_w,
        "exported_wh": stats.exported_wh,
        "imported_wh": stats.imported_wh,
        "settling_s": stats.settling_s,
        "verdict": judged.verdict,
        "reason": judged.reason,
        "dead_band_w": dead,
        "duration_s": stats.duration_s,
        "samples": stats.samples,
        "largest_step_w": stats.largest_step_w,
        "step_time_s": stats.step_time_s,
        "settling_band_w": stats.settling_band_w,
        "settling_hold_s": hold,
        "mean_diverter_w": stats.mean_diverter_w,
        "diverted_wh": stats.diverted_wh,
    }
    if as_json:
        emit_json(data)
        return
    lines = _para(f"{log}: {stats.samples} readings over {stats.duration_s / 60:.1f} min")
    lines += _row("mean grid power", _fmt(stats.mean_grid_w, "+.1f", "W"),
                  f"time mean; dead band ±{dead:g} W given")
    lines += _row("95th pct of |grid|", _fmt(stats.p95_abs_grid_w, ".1f", "W"),
                  f"allowed {3 * dead:g} W (3 D), our default")
    lines += _row("exported", _fmt(stats.exported_wh, ".1f", "Wh"),
                  "integral of the readings (trapezoid)")
    lines += _row("imported", _fmt(stats.imported_wh, ".1f", "Wh"),
                  "integral of the readings (trapezoid)")
    lines += _row("largest step", _fmt(stats.largest_step_w, "+.0f", "W"),
                  f"at {stats.step_time_s:.0f} s")
    settled = ("not settled" if stats.settling_s is None
               else _fmt(stats.settling_s, ".0f", "s"))
    lines += _row("settling time", settled,
                  f"into ±{dead:g} W for {hold:g} s (Ogata)")
    if stats.mean_diverter_w is not None:
        lines += _row("mean diverted power", _fmt(stats.mean_diverter_w, ".1f", "W"),
                      "time mean of diverter_w")
        lines += _row("diverted", _fmt(stats.diverted_wh, ".1f", "Wh"),
                      "integral of diverter_w (trapezoid)")
    lines += _para(SIGN_CONVENTION)
    lines += _verdict_lines(judged.verdict, judged.reason + " (common practice)")
    _print(lines)


# -- flicker -------------------------------------------------------------------------------

FLICKER_HELP = (
    "Short-term flicker severity Pst of a voltage capture of 10 minutes or more, from a "
    "digital flickermeter after IEC 61000-4-15 (one Pst per complete ten-minute window), "
    "against the IEC 61000-3-3 limit (Pst ≤ 1.0 by default). The capture is a PCM WAV "
    "file from a logger or an isolated measurement front end; give the volts at full "
    "scale with --v-scale. The mains frequency (50 or 60 Hz) is read from the capture."
    "\n\n" + SAFETY
)


@app.command(help=FLICKER_HELP, short_help="Voltage capture: flicker severity Pst.")
@friendly
def flicker(
    file: Annotated[str, typer.Argument(
        metavar="FILE", show_default=False,
        help="PCM WAV voltage capture, 10 minutes or more.")],
    v_scale: Annotated[str | None, typer.Option(
        "--v-scale", metavar="V", show_default=False,
        help="Volts at full scale of the WAV samples (required).")] = None,
    channel: Annotated[str | None, typer.Option(
        "--channel", metavar="N", show_default=False,
        help="Channel holding the voltage, from 1 (default 1).")] = None,
    limit: Annotated[str | None, typer.Option(
        "--limit", metavar="PST", show_default=False,
        help="Pst limit (default 1.0, IEC 61000-3-3, from memory).")] = None,
    as_json: JsonOpt = False,
) -> None:
    """Command body; the help text is FLICKER_HELP."""
    from ..errors import UserError

    full = _required(_number(v_scale, "--v-scale", "the volts at full scale, e.g. 500",
                             positive=True),
                     "--v-scale", "give the volts at full scale of the capture, e.g. 500")
    ch = 1
    if channel is not None:
        try:
            ch = int(channel.strip())
        except ValueError:
            raise UserError(f"--channel: {channel!r} is not a channel number; give 1, 2, …") \
                from None
        if ch < 1:
            raise UserError(f"--channel: {ch} is not a channel number; channels count from 1")
    lim = _number(limit, "--limit", "a Pst value, e.g. 1.0", positive=True, maximum=100.0)
    lim = 1.0 if lim is None else lim

    from ..analyses.flicker import SRC_FLICKER, analyse_flicker

    progress = _Progress(file)
    try:
        with _bad_input(file, "voltage on --channel N"):
            progress.say("reading and filtering")
            result = analyse_flicker(file, voltage_full_scale_v=full, channel=ch, limit=lim)
    finally:
        progress.close()
    for note in result.warnings:
        _warn(note)
    if as_json:
        emit_json(result.as_json())
        return
    lines = _para(f"{file}: {result.duration_s / 60:.1f} min at {result.sample_rate_hz:g} Hz, "
                  f"{result.mains_hz} Hz mains")
    for n, value in enumerate(result.pst, start=1):
        lines += _row(f"Pst window {n}", f"{value:.3f}", "IEC 61000-4-15 (10 min)")
    lines += _row("Pinst maximum", f"{result.pinst_max:.2f}", "instantaneous flicker sensation")
    lines += _para(f"source: {SRC_FLICKER}")
    lines += _verdict_lines(result.verdict, result.reason)
    _print(lines)
