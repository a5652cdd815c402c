"""commission walk"""

import sys
from pathlib import Path
from typing import Annotated

import typer

from .common import RegisterOpt, open_register


class _Tty:
    """The walk's terminal: line input with editing, output flushed at once."""

    def __init__(self) -> None:
        from ..present import use_colour

        self.colour = use_colour()
        import contextlib

        with contextlib.suppress(ImportError):
            import readline  # noqa: F401  (line editing and history for input())

    def ask(self, prompt: str) -> str:
        from ..present import plain_text

        return input(plain_text(prompt))

    def say(self, text: str = "") -> None:
        from ..present import plain_text

        sys.stdout.write(plain_text(text) + "\n")
        sys.stdout.flush()


def _check_start(state, ref: str) -> None:
    """`--item` names an item or a section of the job's checklist that applies here."""
    from ..errors import UserError

    results = state.results()
    for r in results:
        if r.item.id == ref:
            if r.applicable:
                return
            raise UserError(f"--item {ref}: {r.reason}")
    if any(r.section == ref and r.applicable for r in results):
        return
    sections = ", ".join(dict.fromkeys(r.section for r in results))
    raise UserError(f"--item '{ref}': no such item or section in this job's checklist "
                    f"(sections: {sections})")


def walk(
    job: Annotated[str, typer.Argument(help="Job id or UUID.")],
    answers: Annotated[
        Path | None,
        typer.Option(help="Apply an answers file (item id → typed text) instead of asking."),
    ] = None,
    instrument: Annotated[
        str | None, typer.Option(help="Serial of the instrument taking the measured readings "
                                 "(kept with the job).")] = None,
    item: Annotated[
        str | None, typer.Option("--item", help="Open this item (or every item of this "
                                 "section) first, answered or not.")] = None,
    take_over: Annotated[
        bool, typer.Option("--take-over", help="Take over a company register job whose "
                           "walk on another device stopped renewing its lease.")] = False,
    register: RegisterOpt = None,
) -> None:
    """Walk the job's checklist on site: one item at a time, each answer kept at once."""
    from ..job import JobState

    with open_register(register, create=False) as reg:
        target = reg.find_job(job)
        inst = reg.instrument_by_serial(instrument) if instrument else None
        with reg.walk_lock(target, take_over=take_over) as held:
            if getattr(held, "note", ""):
                typer.echo(f"warning: {held.note}", err=True)
            if inst is not None:
                # Kept with the job: a walk resumed after Ctrl-C stamps the same instrument.
                reg.set_instrument_in_use(target, inst)
                note = inst.overdue_note()
                if note and answers is not None:  # the interactive walk says it in its header
                    typer.echo(f"warning: {note}", err=True)
            else:
                inst = reg.instrument_in_use(target)
            state = JobState(reg, target)
            if answers is not None:
                from ..walk.answers import apply_answers

                report = apply_answers(state, answers, inst.serial if inst else None)
                for item_id, message in report.rejected:
                    typer.echo(f"{item_id}: {message}", err=True)
                status = state.remember_status()
                typer.echo(f"{report.added} answers added, {report.unchanged} unchanged, "
                           f"{len(report.rejected)} rejected; job {target.short_id} is {status}")
                if report.rejected:
                    raise typer.Exit(2)
                return
            if item is not None:
                _check_start(state, item)
            if not sys.stdin.isatty():
                from ..errors import UserError

                raise UserError("walk: no terminal to ask on; use --answers FILE for a "
                                "scripted run")
            from ..walk.session import Walk

            code = Walk(state, _Tty(), inst, start=item).run()
            state.remember_status()
    if code:
        raise typer.Exit(code)
