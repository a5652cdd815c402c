"""commission checklists validate|show|schema|list"""

from typing import Annotated

import typer

from .common import JsonOpt, emit_json, friendly

app = typer.Typer(help="Check, inspect and describe checklist files.", no_args_is_help=True)


@app.command()
@friendly
def validate(
    files: Annotated[list[str], typer.Argument(help="Checklist files or shipped names.")],
) -> None:
    """Validate checklists; every problem as FILE:LINE: ITEM-ID: message (exit 2)."""
    from ..checklist import ChecklistError, load
    from ..checks import CHECKS
    from ..errors import UserError
    from ..resources import resolve

    bad = False
    for name in files:
        try:
            loaded = load(resolve("checklists", name), checks=CHECKS)
        except ChecklistError as exc:
            bad = True
            for problem in exc.problems:
                typer.echo(str(problem), err=True)
            continue
        except UserError as exc:
            bad = True
            typer.echo(f"{name}:1: -: {str(exc).removeprefix(name + ': ')}", err=True)
            continue
        n = len(loaded.checklist.items())
        typer.echo(f"{loaded.name}: ok ({loaded.checklist.id} {loaded.checklist.version}, "
                   f"{n} items)")
    if bad:
        raise typer.Exit(2)


@app.command()
@friendly
def show(
    file: Annotated[str, typer.Argument(help="Checklist file or shipped name.")],
    as_json: JsonOpt = False,
) -> None:
    """Show a checklist's items in walk order."""
    from ..checklist import load
    from ..checks import CHECKS
    from ..resources import resolve

    loaded = load(resolve("checklists", file), checks=CHECKS)
    c = loaded.checklist
    if as_json:
        emit_json({
            "checklist": {"id": c.id, "title": c.title, "version": c.version,
                          "rules": c.rules.model_dump(), "sha256": loaded.sha256,
                          "cautions": list(c.cautions)},
            "items": [
                {"id": i.id, "section": s.id, "kind": i.kind, "quantity": i.quantity,
                 "unit": i.unit, "critical": i.critical,
                 "measured": i.is_measured if i.kind == "reading" else None,
                 "aliases": i.aliases,
                 "check": i.check.name if i.check else None, "options": i.options,
                 "prompt": i.prompt, "when": i.when.model_dump(by_alias=True,
                                                               exclude_none=True)
                 if i.when else None}
                for s, i in c.items()
            ],
        })
        return
    typer.echo(f"{c.id} {c.version}: {c.title}")
    typer.echo(f"rules: {c.rules.name}")
    for section in c.sections:
        typer.echo("")
        typer.echo(section.title)
        for i in section.items:
            mark = "!" if i.critical else " "
            kind = i.kind + (f" [{i.unit}]" if i.unit else "")
            if i.kind == "reading" and not i.is_measured:
                kind += " declared"
            extra = f" check {i.check.name}" if i.check else ""
            cond = f" (when {i.when.text()})" if i.when else ""
            typer.echo(f" {mark}{i.id:<32} {kind:<23}{extra}{cond}"[:200].rstrip())
    typer.echo("")
    typer.echo("! = critical: must pass before the job is ready; declared = a reading from a")
    typer.echo("nameplate, a setting or a size (no instrument is stamped on it)")


@app.command()
@friendly
def schema() -> None:
    """Print the JSON Schema of the checklist format (for editors)."""
    from ..checklist.model import json_schema

    emit_json(json_schema())


@app.command("list")
@friendly
def list_() -> None:
    """List the checklists shipped with the tool."""
    from ..resources import shipped

    for name, path in shipped("checklists").items():
        typer.echo(f"{name}\t{path}")
