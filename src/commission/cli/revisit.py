"""commission revisit: start a periodic inspection compared with its baseline record."""

from pathlib import Path
from typing import Annotated

import typer

from .common import RegisterOpt, open_register


def revisit(
    baseline: Annotated[str, typer.Argument(
        help="The baseline: a handover or periodic record (PDF), or a job imported from one.")],
    checklist: Annotated[str, typer.Option(
        help="Periodic checklist, file or shipped name (e.g. diverter-1ph-periodic).")],
    unverified: Annotated[bool, typer.Option(
        help="Start from a baseline that does not verify; the revisit is then marked "
        "unverified wherever it is shown.")] = False,
    trust: Annotated[list[Path] | None, typer.Option(
        help="Also trust this certificate, for this call.")] = None,
    register: RegisterOpt = None,
) -> None:
    """Start a revisit job linked to its baseline record; prints the new job's id last."""
    from ..baseline import (
        baseline_of,
        carried_answers,
        details_of,
        record_checklist,
        record_current,
    )
    from ..checklist import load
    from ..checks import CHECKS
    from ..errors import UserError
    from ..record import safe
    from ..resources import resolve

    loaded = load(resolve("checklists", checklist), checks=CHECKS)
    if loaded.checklist.revisit is None:
        raise UserError(f"--checklist {checklist}: not a periodic checklist (it has no "
                        "'revisit:' block naming what it carries from the baseline; e.g. "
                        "diverter-1ph-periodic)")
    from ..checks.change import PARAMS

    for name in loaded.checklist.revisit.params:
        if name not in PARAMS:
            raise UserError(f"{checklist}: revisit.params: '{name}' is not a change limit "
                            f"(accepted: {', '.join(PARAMS)})")
    path = Path(baseline)
    problem = None
    try:
        a_file = path.suffix.lower() == ".pdf" or path.is_file()
    except OSError:  # e.g. a name too long for a file: then it is a job id
        a_file = False
    if a_file:
        from .report import _record_to_take

        # never a baseline from a record that cannot be read, even --unverified
        result = _record_to_take(path, trust, unverified, refused="not started",
                                 hint="--unverified starts the revisit marked unverified",
                                 nothing="no revisit started")
        if not result.ok():
            problem = result.first_problem()
        record = result.content.record
        sha = result.content.record_sha256
        base = baseline_of(record, sha, verified=result.ok() and not record.job.unverified)
        details = details_of(record)
        carried = carried_answers(loaded.checklist, record_checklist(record),
                                  record_current(record))
        reg = open_register(register)
    else:
        reg = open_register(register, create=False)
        job = reg.find_job(baseline)
        base = (job.recorded or {}).get("as_baseline")
        if not base:
            reg.close()
            raise UserError(f"job {job.short_id}: was not imported from a record, so there is "
                            "no record to compare with; start the revisit from its record "
                            "(PDF)")
        if not base["verified"]:
            problem = "its record did not verify when it was imported"
            if not unverified:
                reg.close()
                typer.echo(f"not started: job {job.short_id}: {problem} (nothing written; "
                           "--unverified starts the revisit marked unverified)", err=True)
                raise typer.Exit(1)
        sha = base["record_sha256"]
        details = {k: job.details.get(k, "") for k in details_keys()}
        from ..walk.state import JobState

        state = JobState(reg, job)
        current = {}
        for e in state.entries:
            if e.action != "detail":
                current[e.item_id] = e
        carried = carried_answers(loaded.checklist, state.checklist, current)
    with reg:
        with reg.batch():
            job = reg.create_job(loaded, details, baseline=base)
            for c in carried:
                reg.add_entry(job, c.item_id, "answer", c.raw, c.value, c.unit_typed,
                              at=c.at, carried=sha)
        typer.echo(f"revisit of {safe(details.get('site', ''))} on {loaded.checklist.id} "
                   f"{loaded.checklist.version}, register {reg.location}")
        typer.echo(f"baseline: record {sha} (job {safe(base['job'])}, made "
                   f"{base['made_at'][:10]}, status {base['status']}, "
                   f"{'verified' if base['verified'] else 'UNVERIFIED'})")
        if problem:
            typer.echo(f"UNVERIFIED baseline: {safe(problem)}; the revisit is marked so")
        typer.echo(f"{len(carried)} answers carried from the baseline (confirm or change them "
                   "in the walk)")
        typer.echo(job.short_id)


def details_keys() -> tuple[str, ...]:
    from ..baseline import DETAILS_CARRIED

    return DETAILS_CARRIED
