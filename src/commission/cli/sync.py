"""commission sync | confirm"""

from typing import Annotated

import typer

from .common import JsonOpt, emit_json, open_register


def sync(
    register: Annotated[
        str | None,
        typer.Option("--register", help="The company register's postgresql:// URL (its "
                     "password from PGPASSFILE or a service file). Default: "
                     "$COMMISSION_COMPANY_REGISTER, else the one this device last synced "
                     "with.", show_default=False)] = None,
    local: Annotated[
        str | None,
        typer.Option("--local", help="This device's register file. Default: "
                     "$COMMISSION_REGISTER, else the user data directory.",
                     show_default=False)] = None,
    as_json: JsonOpt = False,
) -> None:
    """Push this device's new jobs, entries, instruments and files to the company register
    and pull the jobs assigned to you. Safe to repeat or to run again after a cut."""
    import os

    from ..errors import UserError
    from ..register import is_url, redact
    from ..register import open_register as engine
    from ..register.store import Register

    here = open_register(local)
    if not isinstance(here, Register):
        raise UserError("--local: give this device's register file (sync copies between "
                        "it and the company register)")
    with here:
        url = register or os.environ.get("COMMISSION_COMPANY_REGISTER") or \
            here.setting("company_register")
        if not url:
            raise UserError("sync: no company register given; use --register "
                            "postgresql://ROLE@HOST/DB (once: it is remembered)")
        if not is_url(url):
            raise UserError(f"--register {url}: the company register is a postgresql:// URL")
        from ..register.sync import sync as run_sync

        remote = engine(url)
        with remote:  # a lost connection is one line from the engine; copied stays copied
            report = run_sync(here, remote)
        if here.setting("company_register") != url:
            here.set_setting("company_register", url)
    if as_json:
        emit_json(report.as_json())
        return
    typer.echo(f"synced with {redact(url)}: jobs {report.jobs_pushed} up, "
               f"{report.jobs_pulled} down; entries {report.entries_pushed} up, "
               f"{report.entries_pulled} down; files {report.files_pushed} up, "
               f"{report.files_pulled} down")
    for c in report.conflicts:
        typer.echo(f"changed on two devices: job {c['job_uuid'][:8]} item {c['item_id']} "
                   "(the later entry is current; check it, then 'commission confirm')")
    for line in report.problems:
        typer.echo(f"warning: {line}", err=True)


def confirm(
    job: Annotated[str, typer.Argument(help="Job id or UUID.")],
    item: Annotated[str, typer.Argument(help="The item flagged 'changed on two devices'.")],
    register: Annotated[
        str | None, typer.Option("--register", help="Register file or postgresql:// URL.",
                                 show_default=False)] = None,
) -> None:
    """Confirm an item changed on two devices (its current entry stands); sync carries the
    confirmation to the other registers."""
    from ..errors import UserError
    from ..register.store import now_iso

    with open_register(register, create=False) as reg:
        target = reg.find_job(job)
        open_ = [c for c in reg.conflicts(target) if c["item_id"] == item
                 and not c["confirmed_at"]]
        if not open_:
            raise UserError(f"job {target.short_id}: item {item} is not flagged as changed "
                            "on two devices")
        reg.add_conflicts([{**c, "confirmed_by": reg.who(), "confirmed_at": now_iso()}
                           for c in open_])
    typer.echo(f"job {target.short_id}: {item} confirmed")


def assign(
    job: Annotated[str, typer.Argument(help="Job id or UUID.")],
    to: Annotated[str, typer.Option("--to", help="The installer's database role.")],
    register: Annotated[
        str | None, typer.Option("--register", help="The company register's URL.",
                                 show_default=False)] = None,
) -> None:
    """Assign a job in the company register to an installer (the office's task); their
    next sync brings it to their laptop."""
    from ..errors import UserError
    from ..register.postgres import PostgresRegister

    with open_register(register, create=False) as reg:
        if not isinstance(reg, PostgresRegister):
            raise UserError("assign: jobs are assigned in a company register (give "
                            "--register postgresql://…)")
        target = reg.find_job(job)
        reg.assign(target, to.strip())
    typer.echo(f"job {target.short_id} assigned to {to.strip()}")
