"""commission demo"""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer


def demo(
    out: Annotated[
        Path | None,
        typer.Option(help="Folder for the demo's register (default: a new temporary folder)."),
    ] = None,
) -> None:
    """Run the bundled demo: a job walked from its answers file, then shown."""
    import os
    import tempfile

    import yaml

    from ..checklist import load
    from ..errors import UserError
    from ..register import Register
    from ..resources import demo_dir, resolve
    from ..walk.answers import apply_answers
    from ..walk.state import JobState
    from .jobs import show

    folder = Path(out) if out else Path(tempfile.mkdtemp(prefix="commission-demo-"))
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise UserError(f"{folder}: cannot create ({exc.strerror})") from None
    register = folder / "register.sqlite3"
    if register.exists():
        raise UserError(f"{register}: already exists; give --out a new folder")
    os.environ["COMMISSION_HOME"] = str(folder)
    scenario = yaml.safe_load((demo_dir() / "scenario.yaml").read_text(encoding="utf-8"))
    loaded = load(resolve("checklists", scenario["checklist"]))
    with Register(register) as reg:
        for inst in scenario["instruments"]:
            reg.add_instrument(inst["serial"], inst["make"], inst["model"],
                               str(inst["calibration_due"]))
        job = reg.create_job(loaded, scenario["job"], by="demo")
        state = JobState(reg, job)
        report = apply_answers(state, demo_dir() / scenario["answers"])
        for item_id, message in report.rejected:
            typer.echo(f"{item_id}: {message}", err=True)
        typer.echo(f"demo register: {register}")
        typer.echo(f"job {job.short_id}: {report.added} answers recorded from the demo "
                   "answers file")
    show(job.short_id, register=register, as_json=False)
    typer.echo("")
    typer.echo("Try next:")
    typer.echo(f"  commission show {job.short_id} --register {register} --json")
    typer.echo(f"  commission walk {job.short_id} --register {register}")
    if report.rejected:
        raise typer.Exit(2)
