"""commission demo"""

from pathlib import Path
from typing import Annotated

import typer

DEMO_PASSPHRASE = "larch-house-demo"  # the demo's own throw-away key; never for real work


def _due(value: object) -> str:
    """A calibration date from the scenario: ISO, or '+Nd' days from today."""
    import datetime as dt

    text = str(value)
    if text.startswith("+") and text.endswith("d"):
        return (dt.date.today() + dt.timedelta(days=int(text[1:-1]))).isoformat()
    return text


SCENARIOS = {"single-phase": "", "three-phase": "threephase"}  # name -> folder under demo/


def demo(
    out: Annotated[
        Path | None,
        typer.Option(help="Folder for the demo (default: a new temporary folder)."),
    ] = None,
    scenario: Annotated[
        str,
        typer.Option(help="Which invented site: single-phase (Larch House) or three-phase "
                     "(Quarry Lodge)."),
    ] = "single-phase",
) -> None:
    """Run the bundled demo: walk an invented job, write its signed record and verify it."""
    import os
    import tempfile

    import yaml

    from ..checklist import load
    from ..checks import CHECKS
    from ..errors import UserError
    from ..job import JobState
    from ..register import Register
    from ..report import identity, trust
    from ..report.build import make
    from ..report.pdf import load_form
    from ..report.verify import verify
    from ..resources import demo_dir, resolve
    from ..walk.answers import apply_answers

    if scenario not in SCENARIOS:
        raise UserError(f"--scenario: {scenario!r} is not a demo scenario (accepted: "
                        f"{', '.join(SCENARIOS)})")
    here = demo_dir() / SCENARIOS[scenario]
    folder = Path(out) if out else Path(tempfile.mkdtemp(prefix="commission-demo-"))
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise UserError(f"{folder}: cannot create ({exc.strerror})") from None
    folder = folder.resolve()
    register = folder / "register.sqlite3"
    if register.exists():
        raise UserError(f"{register}: already exists; give --out a new folder")
    os.environ["COMMISSION_HOME"] = str(folder)  # identity and trust store live here
    plan = yaml.safe_load((here / "scenario.yaml").read_text(encoding="utf-8"))
    details = plan["job"]
    loaded = load(resolve("checklists", plan["checklist"]), checks=CHECKS)
    passphrase_file = folder / "demo-passphrase.txt"
    passphrase_file.write_text(DEMO_PASSPHRASE + "\n", encoding="utf-8")
    passphrase_file.chmod(0o600)
    ident, _ = identity.create_identity(details["installer"].split(",")[0],
                                        details["installer_registration"],
                                        passphrase=DEMO_PASSPHRASE, years=5)
    trust.add(ident.cert_file, "demo installer")
    with Register(register) as reg:
        for inst in plan["instruments"]:
            reg.add_instrument(inst["serial"], inst["make"], inst["model"],
                               _due(inst["calibration_due"]), inst.get("accuracy", ""),
                               inst.get("accuracy_as", ""))
        job = reg.create_job(loaded, details, by="demo")
        state = JobState(reg, job)
        report = apply_answers(state, here / plan["answers"])
        # The 10-minute voltage capture is made now, not shipped (2.5 MB of invented data).
        from ..demo.voltage import write_capture

        write_capture(folder / "supply-voltage.wav")
        made_now = folder / "demo-answers-generated.yaml"
        made_now.write_text("flicker.capture: {file: supply-voltage.wav}\n", encoding="utf-8")
        more = apply_answers(state, made_now)
        report.added += more.added
        report.rejected.extend(more.rejected)
        for item_id, message in report.rejected:
            typer.echo(f"{item_id}: {message}", err=True)
        made = make(state, load_form(resolve("forms", "handover")), sign=True,
                    passphrase=DEMO_PASSPHRASE)
        state.files.close()
    pdf = folder / f"record-{job.short_id}.pdf"
    pdf.write_bytes(made.pdf)
    result = verify(made.pdf)
    typer.echo(f"demo job {job.short_id} ({details['site']}): {report.added} answers "
               f"recorded, status {made.status}")
    typer.echo(f"register:       {register}")
    typer.echo(f"signed record:  {pdf}")
    typer.echo(f"record SHA-256: {made.record_sha256}")
    typer.echo(f"verified here:  {'yes' if result.ok() else 'NO: ' + str(result.first_problem())}")
    typer.echo("")
    typer.echo("A reviewer checks the record with:")
    typer.echo(_command(["commission", "verify", str(pdf), "--trust", str(ident.cert_file)]))
    typer.echo("and sees the job with:")
    typer.echo(_command([f"COMMISSION_HOME={folder}", "commission", "show", job.short_id,
                         "--register", str(register)]))
    if report.rejected or not result.ok():
        raise typer.Exit(2 if report.rejected else 1)


def _command(words: list[str]) -> str:
    """A command to copy, indented, within 80 columns: continued with a backslash where a
    line would be longer (an option stays with its value)."""
    import shlex

    parts: list[str] = []
    for word in map(shlex.quote, words):
        if parts and parts[-1].startswith("--") and " " not in parts[-1]:
            parts[-1] += f" {word}"
        else:
            parts.append(word)
    lines, line = [], "  " + parts[0]
    for part in parts[1:]:
        if len(line) + 1 + len(part) + 2 > 80:
            lines.append(line + " \\")
            line = "      " + part
        else:
            line += " " + part
    return "\n".join([*lines, line])
