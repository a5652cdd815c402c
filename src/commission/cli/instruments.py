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
    with open_register(register) as reg:
        inst = reg.add_instrument(serial.strip(), make.strip(), model.strip(), due.isoformat())
    typer.echo(f"{inst.serial}: {inst.make} {inst.model}, calibration due {inst.calibration_due}")
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
