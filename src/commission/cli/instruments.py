"""commission instruments add|list"""

from typing import Annotated

import typer

from .common import JsonOpt, RegisterOpt, emit_json, friendly, open_register

app = typer.Typer(help="Test instruments and their calibration dates.", no_args_is_help=True)


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
