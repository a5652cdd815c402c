"""commission analyse capture|heating|soak|regulation

Each command parses its options, calls the file kind's analysis in
``commission.analyses`` (the same function, with the same defaults, that the checklist's
checks and the record's charts call) and renders the result: every figure with its unit and
source, the findings and the verdict (or ``--json``, SI units). The exit code is 0 whenever
the analysis ran, whatever the verdict, and 2 on bad input (one line on stderr naming the
file and what is accepted). numpy, the analyses and the readers are imported inside the
commands so that ``commission --help`` stays fast.
"""

import math
import sys
import textwrap
from contextlib import contextmanager
from typing import Annotated, Any

import typer

from .common import JsonOpt, RegisterOpt, emit_json, friendly

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
    from ..analyses import SettingsError
    from ..captures import CaptureError
    from ..errors import UserError

    try:
        yield
    except SettingsError as exc:
        raise UserError(_one_line(str(exc))) from None
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
            room = WIDTH - 3 - len(text)  # a transient line: the file's name gives way
            label = self.label if len(self.label) <= room else "…" + self.label[-(room - 1):]
            sys.stderr.write(f"\r{label + ': ' + text:<{WIDTH - 1}}")
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


# -- reading options, shared -------------------------------------------------------------

TimeFormatOpt = Annotated[str | None, typer.Option(
    "--time-format", metavar="FORMAT", show_default=False,
    help="Form of timestamps that are not ISO 8601, in strptime codes, e.g. "
    "'%d/%m/%Y %H:%M:%S'. Dates whose day and month cannot be told apart need it.")]
TzOpt = Annotated[str | None, typer.Option(
    "--tz", metavar="ZONE", show_default=False,
    help="Time zone of naive local timestamps, e.g. Europe/London; corrects a clock change "
    "inside the log.")]
InstrumentOpt = Annotated[str | None, typer.Option(
    "--instrument", metavar="SERIAL", show_default=False,
    help="Read the file with this instrument's saved export profile (see 'commission "
    "instruments profile'); options given here override it.")]


def _read_settings(*, columns_text, example, instrument, register, time_format=None, tz=None,
                   **extra):
    """ReadSettings from the instrument's profile with the command's options on top."""
    from ..analyses import ReadSettings

    given = ReadSettings(columns=_mapping(columns_text, example), time_format=time_format,
                         tz=tz, **{k: v for k, v in extra.items() if v is not None})
    if instrument is None:
        return given
    from .common import open_register

    with open_register(register, create=False) as reg:
        profile = reg.export_profile(instrument)
    return profile.merged(given)


def _findings_lines(a) -> list[str]:
    lines: list[str] = []
    for f in a.findings:
        mark = "" if f.affects_verdict else " (noted)"
        lines += _para(f"finding{mark}: {f.text}", "")
    for note in a.notes:
        lines += _para(f"file notes: {note}")
    return lines


def _warn_findings(a) -> None:
    for f in a.findings:
        _warn(f"{a.file}: {f.text}")


# -- capture -------------------------------------------------------------------------------

def _channels(text: str | None) -> tuple[int, int] | None:
    from ..errors import UserError

    if text is None:
        return None
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


STATES_HELP = ("off-load (diverter off, known load, PV at zero), off-export (diverter off, PV "
               "exporting), full (full output, PV at zero), part (forced part output, PV at "
               "zero), regulating")

CAPTURE_HELP = (
    "Analyse a voltage and current capture: RMS, power, power factors, THD, harmonics "
    "against IEC 61000-3-2 Class A, direction of power flow and the clamp orientation."
    "\n\n"
    "Copes with 50 and 60 Hz, frequency off nominal or drifting, sampling not locked to the "
    "mains, DC offset, and a capture that starts and ends mid-cycle; at least two whole "
    "cycles are needed. The clamp is judged from the state the capture was taken in "
    f"(--state: {STATES_HELP}): first the sign of P against its cycle-to-cycle "
    "uncertainty, then the angle of the current against the angle expected from the firing "
    "angle seen in the current. A capture taken while regulating is review."
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
        help="CSV (header; time or --rate; voltage and current, units in the header read) or "
        "two-channel PCM WAV from a data logger or isolated measurement front end.")],
    state: Annotated[str | None, typer.Option(
        "--state", metavar="STATE", show_default=False,
        help=f"State the capture was taken in: {STATES_HELP}.")] = None,
    expect: Annotated[str | None, typer.Option(
        "--expect", metavar="import|export", show_default=False,
        help="Direction of power flow at the moment of the capture, when no --state is "
        "given.")] = None,
    rate: Annotated[str | None, typer.Option(
        "--rate", metavar="HZ", show_default=False,
        help="CSV: sample rate, when there is no time column.")] = None,
    columns: Annotated[str | None, typer.Option(
        "--columns", metavar="MAP", show_default=False,
        help="CSV: map other header names, e.g. voltage_v=U1,current_a=I1,time_s=t.")] = None,
    v_scale: Annotated[str | None, typer.Option(
        "--v-scale", metavar="X", show_default=False,
        help="CSV: volts per raw unit, value = (raw - offset) x scale (default 1). "
        "WAV: volts at full scale (required, or in the instrument's profile).")] = None,
    v_offset: Annotated[str | None, typer.Option(
        "--v-offset", metavar="RAW", show_default=False,
        help="CSV: raw reading at zero volts (default 0).")] = None,
    i_scale: Annotated[str | None, typer.Option(
        "--i-scale", metavar="X", show_default=False,
        help="CSV: amperes per raw unit (default 1). WAV: amperes at full scale "
        "(required, or in the instrument's profile).")] = None,
    i_offset: Annotated[str | None, typer.Option(
        "--i-offset", metavar="RAW", show_default=False,
        help="CSV: raw reading at zero amperes (default 0).")] = None,
    channels: Annotated[str | None, typer.Option(
        "--channels", metavar="V,I", show_default=False,
        help="WAV: channel numbers of voltage and current, from 1 (default 1,2).")] = None,
    instrument: InstrumentOpt = None,
    register: RegisterOpt = None,
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
    from ..analyses import CaptureSettings, analyse_capture
    from ..analyses.capture import canonical_state, looks_like_wav

    with _bad_input(file, CAPTURE_COLUMNS):
        try:
            state_name = canonical_state(state)
        except ValueError as exc:
            raise UserError(f"--state: {exc}") from None
        settings = CaptureSettings(state=state_name, expect=expected)
        settings.direction()
    wav = looks_like_wav(file)
    if wav:
        for option, given in (("--rate", rate), ("--columns", columns),
                              ("--v-offset", v_offset), ("--i-offset", i_offset)):
            if given is not None:
                raise UserError(f"{option}: applies to CSV captures only; {file} is a WAV "
                                "file, which carries its own sample rate and channel order "
                                "(choose channels with --channels V,I)")
    elif channels is not None:
        raise UserError("--channels: applies to WAV captures only; for a CSV map the "
                        "columns with --columns voltage_v=U1,current_a=I1")
    hint = "a number, e.g. 0.5"
    if wav:
        vs = _number(v_scale, "--v-scale", "the volts at full scale, e.g. 500")
        is_ = _number(i_scale, "--i-scale", "the amperes at full scale, e.g. 50")
    else:
        vs = _number(v_scale, "--v-scale", hint)
        is_ = _number(i_scale, "--i-scale", hint)
    if vs == 0 or is_ == 0:
        raise UserError("--v-scale and --i-scale must not be zero: every reading would "
                        "become zero")
    read = _read_settings(
        columns_text=columns, example=CAPTURE_COLUMNS, instrument=instrument,
        register=register,
        rate_hz=_number(rate, "--rate", "the sample rate in hertz, e.g. 10000", positive=True),
        v_scale=vs, i_scale=is_,
        v_offset=_number(v_offset, "--v-offset", hint),
        i_offset=_number(i_offset, "--i-offset", hint),
        channels=_channels(channels))
    if load is not None and load.strip().lower() not in analyse_3ph.LOAD_WORDS:
        raise UserError(f"--load: {load!r} is not accepted; give all, one or unknown")
    if not wav and (analyse_3ph.looks_three_phase(file)
                    or analyse_3ph.maps_three_phase(read.columns)):
        for option, given in (("--v-scale", v_scale), ("--v-offset", v_offset),
                              ("--i-scale", i_scale), ("--i-offset", i_offset)):
            if given is not None:
                raise UserError(f"{option}: not available for three-phase captures; give the "
                                "values in volts and amperes (or units in the header)")
        if windows:
            raise UserError("--windows: not available for three-phase captures")
        direction, regulating = settings.direction()
        chosen = (load or ("unknown" if regulating else "all")).strip().lower()
        analyse_3ph.run(file, rate=read.rate_hz, columns=read.columns, load=chosen,
                        expect=direction or "import", as_json=as_json)
        return
    if load is not None:
        raise UserError(f"--load: applies to three-phase captures only; {file} has no "
                        "per-phase columns (voltage_l1_v, current_1_a, ...)")
    if wav and not (read.v_scale and read.i_scale):
        raise UserError(f"{file}: WAV samples are fractions of full scale; give --v-scale "
                        "(volts at full scale) and --i-scale (amperes at full scale) of "
                        "the measurement front end, or --instrument with a saved profile")
    progress = _Progress(file)
    try:
        with _bad_input(file, CAPTURE_COLUMNS):
            progress.say("reading")
            a = analyse_capture(file, settings, read, progress=progress.fraction)
    finally:
        progress.close()
    _warn_findings(a)
    if wav:
        _warn(AUDIO_INPUT_WARNING)
    data = a.as_json()
    r = a.raw
    if windows:
        data["windows"] = [
            {"start_s": s, "v_rms": v, "i_rms": i, "p_w": p}
            for s, v, i, p in zip(r.window_start_s, r.window_v_rms, r.window_i_rms,
                                  r.window_p_w, strict=True)
        ]
    if as_json:
        emit_json(data)
    else:
        _print(_capture_text(file, a, data, windows))


def _fmt(x: float | None, spec: str, unit: str) -> str:
    if x is None or (isinstance(x, float) and not math.isfinite(x)):
        return "n/a"
    text = f"{x:{spec}}"
    if float(text) == 0.0:  # no "-0.0" for a value that rounds to zero
        text = f"{0.0:{spec}}"
    return f"{text} {unit}".rstrip()


def _capture_text(file: str, a, data: dict[str, Any], windows: bool) -> list[str]:
    r = a.raw
    lines = _para(f"{file}: {r.cycles} whole mains cycles in {r.windows} window(s) of "
                  f"{r.window_cycles} cycles, sampled at {r.sample_rate_hz:g} Hz")
    thd_src = f"{SRC_4_7}, h 2-{r.thd_max_order}"
    lines += _row("frequency", _fmt(r.frequency_hz, ".3f", "Hz"), SRC_4_7)
    lines += _row("voltage", _fmt(r.v_rms, ".1f", "V rms"), SRC_1459)
    lines += _row("current", _fmt(r.i_rms, ".3f", "A rms"), SRC_1459)
    lines += _row("active power P", _fmt(r.p_w, "+.1f", "W"), SRC_1459 + ", sign below")
    lines += _row("uncertainty of P", "±" + _fmt(data["p_uncertainty_w"], ".1f", "W"),
                  f"k = 2, spread of {data['p_spread_count']} {data['p_spread_of']} (GUM)")
    lines += _row("apparent power S", _fmt(r.s_va, ".1f", "VA"), SRC_1459)
    lines += _row("power factor P/S", _fmt(r.power_factor, ".3f", ""), SRC_1459)
    lines += _row("PF without DC", _fmt(data["power_factor_dc_removed"], ".3f", ""),
                  SRC_1459 + ", DC offsets removed")
    lines += _row("displacement PF", _fmt(data["displacement_pf"], ".3f", ""),
                  SRC_1459 + ", fundamentals")
    lines += _row("phase of I1 to V1", _fmt(data["phase_deg"], "+.1f", "deg"),
                  "+ = current leads; " + SRC_1459)
    lines += _row("firing angle", _fmt(data["firing_angle_deg"], ".0f", "deg"),
                  "read from the current itself")
    lines += _row("expected phase", _fmt(data["expected_phase_deg"], "+.1f", "deg"),
                  "phi1(alpha), Rashid (from memory)")
    lines += _row("THD voltage", _fmt(data["thd_v_pct"], ".2f", "%"), thd_src)
    lines += _row("THD current", _fmt(data["thd_i_pct"], ".2f", "%"), thd_src)
    lines += _row("direction", r.direction, "sign of P; threshold our default")
    lines += _para(SIGN_CONVENTION)
    lines.append("")
    state = data["state"] or (f"expecting {data['expected_direction']}"
                              if data["expected_direction"] else "no state given")
    lines += _para(f"clamp ({state}): {a.verdict}: {a.reason} (phasors 120 deg apart, any "
                   "power-systems textbook; 45 deg band our default)")
    lines += _findings_lines(a)
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

def _band(text: str | None) -> tuple[float, float] | None:
    from ..errors import UserError

    if text is None:
        return None
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


def _fraction(text: str | None) -> float | None:
    from ..errors import UserError

    if text is None:
        return None
    t = text.strip()
    pct = t.endswith("%")
    value = _number(t.rstrip("%").strip(), "--fraction-above", "a fraction such as 0.8 or 80 %")
    assert value is not None
    if pct or value > 1.0:
        value /= 100.0
    if not 0.0 < value <= 1.0:
        raise UserError(f"--fraction-above: {text!r} is not between 0 and 1 (or 0 and 100 %); "
                        "give the share of the cylinder above the element's lowest point")
    return value


HEATING_HELP = (
    "Does the water heat as fast as the element's power predicts?\n\n"
    "Detects thermostat cycling and fits only the first rising run (warm-up and a plateau "
    "left out), compares it with P/(m cp) for the water the element serves (the share of "
    "the cylinder above it; mass at filling, cp at the mean temperature, IAPWS-95; lumped "
    "energy balance, Incropera) and infers the power delivered to the water. pass inside "
    "the band; fail below it; review above it, or when the log is too short or noisy to "
    "say. Units in the header (°F, minutes, ms) are converted."
)


@app.command(help=HEATING_HELP, short_help="Heating log: measured against expected rate.")
@friendly
def heating(
    log: Annotated[str, typer.Argument(
        metavar="LOG", show_default=False,
        help="CSV with a time column (seconds, or with its unit) or timestamps, and the "
        "water temperature (temp_c, or with its unit).")],
    volume_l: Annotated[str | None, typer.Option(
        "--volume-l", metavar="LITRES", show_default=False,
        help="Cylinder volume [L] (required).")] = None,
    power_w: Annotated[str | None, typer.Option(
        "--power-w", metavar="WATTS", show_default=False,
        help="Element power [W] (required): from its cold resistance at the measured "
        "voltage, U^2/R, else the nameplate.")] = None,
    element_position: Annotated[str | None, typer.Option(
        "--element-position", metavar="POSITION", show_default=False,
        help="Where the element sits (top entry, side entry low, side entry high): sets the "
        "volume it serves by the checklist's default fractions (common practice).")] = None,
    fraction_above: Annotated[str | None, typer.Option(
        "--fraction-above", metavar="F", show_default=False,
        help="Share of the cylinder above the element's lowest point, e.g. 0.8 or 80 % "
        "(wins over --element-position).")] = None,
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
    time_format: TimeFormatOpt = None,
    tz: TzOpt = None,
    instrument: InstrumentOpt = None,
    register: RegisterOpt = None,
    as_json: JsonOpt = False,
) -> None:
    """Command body; the help text is HEATING_HELP."""
    from ..analyses import HeatingSettings, analyse_heating

    volume = _required(_number(volume_l, "--volume-l", "the water volume in litres, e.g. "
                               "200", positive=True),
                       "--volume-l", "give the cylinder volume, in litres")
    power = _required(_number(power_w, "--power-w", "the element power in watts, e.g. 2400",
                              positive=True),
                      "--power-w", "give the element power in watts (U^2/R, else nameplate)")
    fill = _number(fill_temp_c, "--fill-temp-c", "the filling temperature in degC, e.g. 15",
                   minimum=0.0, maximum=100.0)
    given = {"power_w": power, "volume_l": volume, "element_position": element_position,
             "fraction_above": _fraction(fraction_above), "band": _band(band),
             "fill_temp_c": fill}
    settings = HeatingSettings(**{k: v for k, v in given.items() if v is not None})
    read = _read_settings(columns_text=columns, example=TEMP_COLUMNS, instrument=instrument,
                          register=register, time_format=time_format, tz=tz)
    with _bad_input(log, TEMP_COLUMNS):
        a = analyse_heating(log, settings, read)
    _warn_findings(a)
    data = a.as_json()
    if as_json:
        emit_json(data)
        return
    fig = a.figures
    lo, hi = fig["band"]
    plateau = fig["plateau_from_s"]
    lines = _para(f"{log}: fitted {fig['fit_start_s'] / 60:.1f} to {fig['fit_end_s'] / 60:.1f} "
                  f"min ({fig['points']} readings; warm-up of "
                  f"{fig['warmup_dropped_s'] / 60:.1f} min left out"
                  + (f", plateau from {plateau / 60:.1f} min left out)"
                     if plateau is not None else ")"))
    lines += _row("start temperature", _fmt(fig["start_temp_c"], ".1f", "°C"), "fitted line")
    lines += _row("end temperature", _fmt(fig["end_temp_c"], ".1f", "°C"), "fitted line")
    lines += _row("time", _fmt(fig["minutes"], ".1f", "min"), "fitted span")
    lines += _row("measured rate", _fmt(fig["rate_k_per_h"], ".2f", "K/h"),
                  f"least squares, ±{fig['rate_stderr_k_per_h']:.2f} K/h (1 s.e.)")
    lines += _row("volume served", _fmt(fig["served_volume_l"], ".0f", "L"),
                  fig["served_volume_basis"].split("(", 1)[-1].rstrip(")"))
    lines += _row("water mass", _fmt(fig["mass_kg"], ".1f", "kg"),
                  f"volume x density at {fig['fill_temp_c']:g} °C, {SRC_IAPWS}")
    lines += _row("heat capacity cp", _fmt(fig["cp_j_per_kg_k"], ".0f", "J/(kg K)"),
                  f"at mean {fig['mean_temp_c']:.1f} °C, {SRC_IAPWS}")
    lines += _row("expected rate", _fmt(fig["expected_rate_k_per_h"], ".2f", "K/h"),
                  f"{power:g} W / (m cp), Incropera; {SRC_IAPWS}")
    lines += _row("delivered power", _fmt(fig["delivered_power_w"], ".0f", "W"),
                  "rate x m x cp, Incropera")
    lines += _row("ratio", _fmt(fig["ratio"], ".3f", ""), f"band {lo:g}-{hi:g}, common practice")
    lines += _findings_lines(a)
    lines += _verdict_lines(a.verdict, a.reason)
    _print(lines)


# -- soak ----------------------------------------------------------------------------------

SOAK_HELP = (
    "Will the heatsink stay below its limit once it has fully warmed up?\n\n"
    "Fits one time constant, T(t) = T_inf - (T_inf - T0) exp(-t/tau) (lumped first-order "
    "model, Incropera), and two (heatsink and enclosure air), chooses by the structure of "
    "the residuals and BIC, and gives a 95 % interval widened for correlated residuals and "
    "the model uncertainty. Scales the steady rise to the worst ambient and supply (rise "
    "factor, default 1.2 for +10 % voltage), fails a soak that will overheat later even "
    "when every logged value is still below the limit, and asks for a longer log (saying "
    "how much) until it covers three of the slowest time constant. An ambient column in "
    "the log is used. Optional junction estimate from datasheet values (give all five "
    "junction options together)."
)


@app.command(help=SOAK_HELP, short_help="Heatsink soak: predicted steady state against the limit.")
@friendly
def soak(
    log: Annotated[str, typer.Argument(
        metavar="LOG", show_default=False,
        help="CSV with a time column or timestamps, the heatsink temperature (temp_c) and "
        "optionally the ambient (ambient_c), logged at full output with the enclosure "
        "closed.")],
    ambient_c: Annotated[str | None, typer.Option(
        "--ambient-c", metavar="DEGC", show_default=False,
        help="Ambient temperature during the soak [degC] (required unless the log has an "
        "ambient column).")] = None,
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
        help="Factor on the temperature rise for the worst supply (default 1.2: +15-20 % "
        "at +10 % voltage, CHECKS.md; the checklist's parameter).")] = None,
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
        help="Map other header names, e.g. temp_c=T1,ambient_c=T2,time_s=t.")] = None,
    time_format: TimeFormatOpt = None,
    tz: TzOpt = None,
    instrument: InstrumentOpt = None,
    register: RegisterOpt = None,
    as_json: JsonOpt = False,
) -> None:
    """Command body; the help text is SOAK_HELP."""
    from ..analyses import SoakSettings, analyse_soak
    from ..errors import UserError

    hint = "a temperature in degC, e.g. 25"
    ambient = _number(ambient_c, "--ambient-c", hint)
    limit = _required(_number(limit_c, "--limit-c", hint), "--limit-c",
                      "give the highest permissible heatsink temperature, in degC")
    worst = _number(worst_ambient_c, "--worst-ambient-c", hint)
    factor = _number(rise_factor, "--rise-factor", "a factor such as 1.0 or 1.2",
                     positive=True)
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
    read = _read_settings(columns_text=columns, example=TEMP_COLUMNS, instrument=instrument,
                          register=register, time_format=time_format, tz=tz)
    given = {"limit_c": limit, "ambient_c": ambient, "worst_ambient_c": worst,
             "rise_factor": factor}
    settings = SoakSettings(**{k: v for k, v in given.items() if v is not None})
    with _bad_input(log, TEMP_COLUMNS):
        try:
            a = analyse_soak(log, settings, read)
        except ValueError as exc:
            if "no ambient column" in str(exc):
                raise UserError(f"--ambient-c is required: {_one_line(str(exc))} "
                                "(--ambient-c, in degC)") from None
            raise
    _warn_findings(a)
    data = a.as_json()
    fig = a.figures
    if junction_values is not None:
        from ..physics import thermal

        current = junction_values["--load-current-a"]
        loss = thermal.conduction_loss_w(thermal.full_conduction_i_avg_a(current), current,
                                         junction_values["--vt0-v"],
                                         junction_values["--rt-ohm"])
        rth = (junction_values["--rth-jc-k-per-w"], junction_values["--rth-cs-k-per-w"])
        data["device_loss_w"] = loss
        data["junction_c"] = thermal.junction_temperature_c(fig["predicted_max_c"], loss, *rth)
        data["junction_ci_c"] = [
            _finite(thermal.junction_temperature_c(x, loss, *rth))
            for x in fig["predicted_max_ci_c"]
        ]
    if as_json:
        emit_json(data)
        return
    lo, hi = fig["t_inf_ci_c"]
    plo, phi = fig["predicted_max_ci_c"]
    two = fig["model"] == "two time constants"
    model_src = ("two time constants, Foster network; Incropera" if two else SRC_LUMPED)
    lines = _para(f"{log}: {fig['points']} readings over {fig['duration_s'] / 60:.1f} min, "
                  f"{fig['time_constants_covered']:.1f} of the slowest time constant; model: "
                  f"{fig['model']} (residual autocorrelation r1 "
                  f"{fig['residual_lag1_one_constant']:.2f} for one constant; BIC, Burnham & "
                  "Anderson), least squares (Bates & Watts)")
    lines += _row("start T0", _fmt(fig["t0_c"], ".1f", "°C"), model_src)
    lines += _row("steady state T_inf", _fmt(fig["t_inf_c"], ".1f", "°C"), model_src)
    lines += _row("95 % interval", f"{_fmt(lo, '.1f', '')} to {_fmt(hi, '.1f', '°C')}",
                  "Student t, widened for model uncertainty")
    if two:
        lines += _row("fast constant", _fmt(fig["tau_fast_s"], ".0f", "s"), model_src)
    lines += _row("time constant tau" if not two else "slow constant",
                  _fmt(fig["tau_slow_s"], ".0f", "s"), model_src)
    lines += _row("fit RMSE", _fmt(fig["fit_rmse_k"], ".2f", "K"),
                  "trusted up to 1 K, our default")
    lines += _row("highest logged", _fmt(fig["max_logged_c"], ".1f", "°C"), "the log")
    lines += _row("ambient", _fmt(fig["ambient_c"], ".1f", "°C"), fig["ambient_from"])
    lines += _row("worst ambient", _fmt(fig["worst_ambient_c"], ".1f", "°C"),
                  "given" if worst is not None else "soak ambient (none given)")
    lines += _row("rise factor", _fmt(fig["rise_factor"], ".2f", ""),
                  ("given" if rise_factor is not None else "default")
                  + "; 1.15-1.20 at +10 % V, CHECKS.md")
    lines += _row("predicted maximum", _fmt(fig["predicted_max_c"], ".1f", "°C"),
                  "Tamb,worst + F(Tinf - Tamb), Incropera")
    lines += _row("95 % interval", f"{_fmt(plo, '.1f', '')} to {_fmt(phi, '.1f', '°C')}",
                  "as for T_inf")
    lines += _row("limit", _fmt(limit, ".1f", "°C"), "given (--limit-c)")
    if "junction_c" in data:
        lines += _row("device loss", _fmt(data["device_loss_w"], ".1f", "W"),
                      "V_T0 I_avg + r_T I_rms^2, datasheet")
        lines += _row("junction estimate", _fmt(data["junction_c"], ".1f", "°C"),
                      "T_hs + P (Rth j-c + Rth c-s), datasheet")
    lines += _findings_lines(a)
    lines += _verdict_lines(a.verdict, a.reason)
    _print(lines)


# -- regulation ----------------------------------------------------------------------------

REGULATION_HELP = (
    "Does the diverter hold the grid reading in its dead band?\n\n"
    "Mean and 95th percentile of |grid|, energy still exported and imported, and the "
    "settling time into the dead band after the largest step. Default rule: pass when "
    "|mean| <= D and the 95th percentile of |grid| <= 3 D (common practice; the factor 3 "
    "is our default). Power in kW in the header is converted."
    "\n\n" + SIGN_CONVENTION
)


@app.command(help=REGULATION_HELP, short_help="Regulation log: grid power against the dead band.")
@friendly
def regulation(
    log: Annotated[str, typer.Argument(
        metavar="LOG", show_default=False,
        help="CSV with a time column or timestamps, grid power (grid_w, positive = import, "
        "or with its unit) and optionally diverter_w, logged in automatic mode with surplus "
        "available.")],
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
    time_format: TimeFormatOpt = None,
    tz: TzOpt = None,
    instrument: InstrumentOpt = None,
    register: RegisterOpt = None,
    as_json: JsonOpt = False,
) -> None:
    """Command body; the help text is REGULATION_HELP."""
    from ..analyses import RegulationSettings, analyse_regulation

    dead = _required(_number(dead_band_w, "--dead-band-w", "the dead band in watts, e.g. 50",
                             positive=True),
                     "--dead-band-w", "give the controller's dead band in watts, e.g. 50")
    hold = _number(hold_s, "--settle-hold-s", "a time in seconds, e.g. 10", minimum=0.0,
                   maximum=1e9)
    read = _read_settings(columns_text=columns, example=GRID_COLUMNS, instrument=instrument,
                          register=register, time_format=time_format, tz=tz)
    settings = RegulationSettings(dead_band_w=dead) if hold is None else \
        RegulationSettings(dead_band_w=dead, hold_s=hold)
    with _bad_input(log, GRID_COLUMNS):
        a = analyse_regulation(log, settings, read)
    _warn_findings(a)
    if as_json:
        emit_json(a.as_json())
        return
    fig = a.figures
    lines = _para(f"{log}: {fig['samples']} readings over {fig['duration_s'] / 60:.1f} min")
    lines += _row("mean grid power", _fmt(fig["mean_grid_w"], "+.1f", "W"),
                  f"time mean; dead band ±{dead:g} W given")
    lines += _row("95th pct of |grid|", _fmt(fig["p95_abs_grid_w"], ".1f", "W"),
                  f"allowed {3 * dead:g} W (3 D), our default")
    lines += _row("exported", _fmt(fig["exported_wh"], ".1f", "Wh"),
                  "integral of the readings (trapezoid)")
    lines += _row("imported", _fmt(fig["imported_wh"], ".1f", "Wh"),
                  "integral of the readings (trapezoid)")
    lines += _row("largest step", _fmt(fig["largest_step_w"], "+.0f", "W"),
                  f"at {fig['step_time_s']:.0f} s")
    settled = ("not settled" if fig["settling_s"] is None
               else _fmt(fig["settling_s"], ".0f", "s"))
    lines += _row("settling time", settled,
                  f"into ±{dead:g} W for {fig['settling_hold_s']:g} s (Ogata)")
    if fig["mean_diverter_w"] is not None:
        lines += _row("mean diverted power", _fmt(fig["mean_diverter_w"], ".1f", "W"),
                      "time mean of diverter_w")
        lines += _row("diverted", _fmt(fig["diverted_wh"], ".1f", "Wh"),
                      "integral of diverter_w (trapezoid)")
    lines += _para(SIGN_CONVENTION)
    lines += _findings_lines(a)
    lines += _verdict_lines(a.verdict, a.reason + " (common practice)")
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
