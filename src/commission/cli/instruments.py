"""commission instruments add|list"""

from typing import Annotated

import typer

from .common import JsonOpt, RegisterOpt, emit_json, friendly, open_register

app = typer.Typer(help="Test instruments, their calibration dates and export profiles.",
                  no_args_is_help=True)


@app.command()
@friendly
def add(
    serial: Annotated[str, typer.Option(help="Serial number, as on the instrument.")],
    make: Annotated[str, typer.Option()],
    model: Annotated[str, typer.Option()],
    calibration_due: Annotated[str, typer.Option(help="Date calibration is due, YYYY-MM-DD.")],
    accuracy: Annotated[str | None, typer.Option(
        help='Stated accuracy as the maker prints it, per range or function, e.g. '
        '"±(0.5 % + 2 digits)" or "≤ 20 Ω: ±(3 % + 4 digits); time: ±(1 % + 3 digits)". '
        "Verdicts then apply its uncertainty (ILAC-G8 guard band).")] = None,
    accuracy_as: Annotated[str | None, typer.Option(
        "--accuracy-as", metavar="bound|k2",
        help="How the maker's figure is to be read: 'bound' (a limit, rectangular) or 'k2' "
        "(an expanded uncertainty at k = 2). Required with --accuracy; the manual says "
        "which.")] = None,
    register: RegisterOpt = None,
) -> None:
    """Register an instrument; readings record which instrument took them."""
    from datetime import date

    from ..errors import UserError

    try:
        due = date.fromisoformat(calibration_due.strip())
    except ValueError:
        raise UserError(f"--calibration-due: '{calibration_due}' is not a date; "
                        "write YYYY-MM-DD, e.g. 2027-03-31") from None
    if not serial.strip():
        raise UserError("--serial: cannot be empty")
    acc_text, read_as = "", ""
    if accuracy is not None or accuracy_as is not None:
        from ..accuracy import READ_AS_TEXT, parse_accuracy

        if accuracy is None:
            raise UserError("--accuracy-as: give it with --accuracy, e.g. --accuracy "
                            '"±(0.5 % + 2 digits)" --accuracy-as bound')
        read_as = (accuracy_as or "").strip().lower()
        if read_as not in READ_AS_TEXT:
            raise UserError(f"--accuracy-as: {accuracy_as!r} is not accepted; give 'bound' (the "
                            "figure is a limit) or 'k2' (an expanded uncertainty at k = 2), as "
                            "the instrument's manual states")
        try:
            acc_text = parse_accuracy(accuracy, read_as).text
        except ValueError as exc:
            raise UserError(f"--accuracy: {exc}") from None
    with open_register(register) as reg:
        inst = reg.add_instrument(serial.strip(), make.strip(), model.strip(), due.isoformat(),
                                  acc_text, read_as)
    typer.echo(f"{inst.serial}: {inst.make} {inst.model}, calibration due {inst.calibration_due}")
    if inst.accuracy:
        typer.echo(f"  accuracy {inst.accuracy}, read as {READ_AS_TEXT[inst.accuracy_read_as]}")
    note = inst.overdue_note()
    if note:
        typer.echo(f"warning: {note}", err=True)


@app.command("list")
@friendly
def list_(register: RegisterOpt = None, as_json: JsonOpt = False) -> None:
    """List registered instruments."""
    from datetime import date

    with open_register(register) as reg:
        items = reg.instruments()
    if as_json:
        emit_json([i.as_json() for i in items])
        return
    if not items:
        typer.echo("no instruments yet: add one with 'commission instruments add'")
    today = date.today().isoformat()
    for i in items:
        late = "  (calibration overdue)" if i.calibration_due < today else ""
        typer.echo(f"{i.serial:<16} {i.make} {i.model}, due {i.calibration_due}{late}")
        if i.accuracy:
            typer.echo(f"{'':<16} accuracy {i.accuracy} ({i.accuracy_read_as})")


_CANONICAL = ("time_s", "timestamp", "voltage_v", "current_a", "temp_c", "ambient_c", "grid_w",
              "diverter_w")


@app.command()
@friendly
def profile(
    serial: Annotated[str, typer.Argument(metavar="SERIAL", show_default=False,
                                          help="Serial number of a registered instrument.")],
    columns: Annotated[str | None, typer.Option(
        "--columns", metavar="MAP", show_default=False,
        help="Map the instrument's header names, e.g. temp_c=T1,time_s=Zeit or "
        "voltage_v=U1,current_a=I1 (keys: " + ", ".join(_CANONICAL) + ").")] = None,
    time_format: Annotated[str | None, typer.Option(
        "--time-format", metavar="FORMAT", show_default=False,
        help="Form of its timestamps in strptime codes, e.g. '%d.%m.%Y %H:%M:%S'.")] = None,
    tz: Annotated[str | None, typer.Option(
        "--tz", metavar="ZONE", show_default=False,
        help="Time zone its clock runs in, e.g. Europe/Berlin (naive local times).")] = None,
    rate: Annotated[str | None, typer.Option(
        "--rate", metavar="HZ", show_default=False,
        help="Sample rate of its captures when they carry no time column.")] = None,
    v_scale: Annotated[str | None, typer.Option(
        "--v-scale", metavar="X", show_default=False,
        help="CSV: volts per raw unit; WAV: volts at full scale.")] = None,
    i_scale: Annotated[str | None, typer.Option(
        "--i-scale", metavar="X", show_default=False,
        help="CSV: amperes per raw unit; WAV: amperes at full scale.")] = None,
    v_offset: Annotated[str | None, typer.Option(
        "--v-offset", metavar="RAW", show_default=False, help="CSV: raw reading at 0 V.")] = None,
    i_offset: Annotated[str | None, typer.Option(
        "--i-offset", metavar="RAW", show_default=False, help="CSV: raw reading at 0 A.")] = None,
    channels: Annotated[str | None, typer.Option(
        "--channels", metavar="V,I", show_default=False,
        help="WAV: channel numbers of voltage and current, from 1.")] = None,
    register: RegisterOpt = None,
    as_json: JsonOpt = False,
) -> None:
    """Save how this instrument's exported files are read (its export profile), or show it.

    Used by 'commission analyse ... --instrument SERIAL' and by a checklist's file item
    taken with the instrument (':use SERIAL' in the walk, or 'instrument:' in an answers
    file); the profile used is stored with the entry and travels in the record.
    """
    import math

    from ..errors import UserError

    given: dict = {}
    if columns is not None:
        mapping = {}
        for part in columns.split(","):
            key, sep, name = (s.strip() for s in part.partition("="))
            if not (sep and key and name):
                raise UserError(f"--columns: {part.strip()!r} is not NAME=HEADER; write e.g. "
                                "temp_c=T1,time_s=t")
            if key not in _CANONICAL:
                raise UserError(f"--columns: {key!r} is not accepted; keys are "
                                f"{', '.join(_CANONICAL)}")
            mapping[key] = name
        given["columns"] = mapping
    if time_format is not None:
        if "%" not in time_format:
            raise UserError(f"--time-format: {time_format!r} has no strptime codes; write e.g. "
                            "'%d.%m.%Y %H:%M:%S'")
        given["time_format"] = time_format
    if tz is not None:
        from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

        try:
            ZoneInfo(tz)
        except (ZoneInfoNotFoundError, ValueError, OSError):
            raise UserError(f"--tz: {tz!r} is not a known time zone; give an IANA zone such as "
                            "Europe/London or UTC") from None
        given["tz"] = tz
    for option, key, value in (("--rate", "rate_hz", rate), ("--v-scale", "v_scale", v_scale),
                               ("--i-scale", "i_scale", i_scale),
                               ("--v-offset", "v_offset", v_offset),
                               ("--i-offset", "i_offset", i_offset)):
        if value is None:
            continue
        try:
            number = float(value)
        except ValueError:
            raise UserError(f"{option}: {value!r} is not a number") from None
        if not math.isfinite(number) or (key in ("rate_hz", "v_scale", "i_scale")
                                          and number <= 0):
            raise UserError(f"{option}: {value!r} must be a finite number above zero")
        given[key] = number
    if channels is not None:
        try:
            v, i = (int(p) for p in channels.split(","))
        except ValueError:
            raise UserError(f"--channels: {channels!r} is not V,I, e.g. 1,2") from None
        if v < 1 or i < 1 or v == i:
            raise UserError(f"--channels: {channels!r}: two different channels from 1, e.g. 1,2")
        given["channels"] = [v, i]
    with open_register(register) as reg:
        inst = reg.instrument_by_serial(serial.strip())
        stored = reg.export_profile_json(inst.id) or {}
        if given:
            stored = {**stored, **given}
            reg.set_export_profile(inst.serial, stored)
    if as_json:
        emit_json({"serial": inst.serial, "profile": stored})
        return
    if not stored:
        typer.echo(f"{inst.serial}: no export profile yet; save one with --columns, "
                   "--time-format, --tz, ...")
        return
    shown = "; ".join(f"{k} {v}" for k, v in sorted(stored.items()))
    typer.echo(f"{inst.serial} ({inst.make} {inst.model}) export profile: {shown}")
