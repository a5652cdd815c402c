"""commission forms validate|show|schema|list"""

from typing import Annotated

import typer

from .common import JsonOpt, emit_json, friendly

app = typer.Typer(help="Check, inspect and describe report forms.", no_args_is_help=True)


@app.command()
@friendly
def validate(
    files: Annotated[list[str], typer.Argument(help="Form files or shipped names.")],
) -> None:
    """Validate forms; each problem as FILE:LINE: key: message (exit 2)."""
    import re

    from ..errors import UserError
    from ..report.form import load_form
    from ..resources import resolve

    bad = False
    for name in files:
        try:
            path = resolve("forms", name)
            form = load_form(path)
        except UserError as exc:
            bad = True
            message = str(exc)
            if not re.match(r".+:\d+: ", message):  # e.g. no such file: same FILE:LINE form
                message = f"{name}:1: form: {message.removeprefix(name + ': ')}"
            typer.echo(message, err=True)
            continue
        typer.echo(f"{path}: ok ({form['id']}, {len(form['sections'])} sections)")
    if bad:
        raise typer.Exit(2)


@app.command()
@friendly
def show(
    file: Annotated[str, typer.Argument(help="Form file or shipped name.")],
    as_json: JsonOpt = False,
) -> None:
    """Show a form: its sections in print order with their headings."""
    from ..report.form import load_form
    from ..resources import resolve

    form = load_form(resolve("forms", file))
    if as_json:
        emit_json(form)
        return
    typer.echo(f"{form['id']}: {form['title']}")
    for n, section in enumerate(form["sections"], start=1):
        heading = form["headings"].get(section, "")
        typer.echo(f" {n:>2}. {section:<12} {heading}")
    for caution in form["cautions"]:
        typer.echo(f"caution: {caution}")


@app.command()
@friendly
def schema() -> None:
    """Print the JSON Schema of the form format (for editors)."""
    from ..report.form import json_schema

    emit_json(json_schema())


@app.command("list")
@friendly
def list_() -> None:
    """List the forms shipped with the tool."""
    from ..resources import shipped

    for name, path in shipped("forms").items():
        typer.echo(f"{name}\t{path}")
