"""commission new | jobs | show | amend | backup"""

from pathlib import Path
from typing import Annotated

import typer

from .common import JsonOpt, RegisterOpt, emit_json, open_register

Text = Annotated[str, typer.Option()]


def new(
    checklist: Annotated[str, typer.Option(help="Checklist file or shipped name.")],
    site: Annotated[str, typer.Option(help="Site name, as the job is known.")],
    address: Text = "",
    client: Annotated[str, typer.Option(help="The homeowner or client.")] = "",
    installer: Annotated[str, typer.Option(help="Installer's name.")] = "",
    installer_contact: Annotated[
        str, typer.Option(help="Phone or e-mail the homeowner can call.")] = "",
    installer_registration: Annotated[
        str, typer.Option(help="Installer's registration or licence number.")] = "",
    installer_address: Annotated[
        str, typer.Option(help="Installer's postal address (printed for the homeowner).")] = "",
    client_contact: Annotated[str, typer.Option(help="The client's phone or e-mail.")] = "",
    timezone: Annotated[
        str, typer.Option(help="The site's time zone, e.g. Europe/Paris (default UTC).")] = "",
    language: Annotated[
        str, typer.Option(help="Language of the homeowner's pages: en or fr.")] = "en",
    next_inspection: Annotated[
        str, typer.Option(help="Next inspection date, YYYY-MM-DD (default: the checklist's "
                          "interval).")] = "",
    register: RegisterOpt = None,
) -> None:
    """Start a job on a checklist; prints the new job's id as the last line."""
    from ..checklist import load
    from ..checks import CHECKS
    from ..errors import UserError
    from ..resources import resolve

    if not site.strip():
        raise UserError("--site: give the site's name (e.g. --site 'Larch House')")
    loaded = load(resolve("checklists", checklist), checks=CHECKS)
    details = {"site": site.strip(), "address": address, "client": client,
               "installer": installer, "installer_contact": installer_contact,
               "installer_registration": installer_registration,
               "installer_address": installer_address, "client_contact": client_contact,
               **checked_details(timezone=timezone, language=language,
                                 next_inspection=next_inspection)}
    with open_register(register) as reg:
        job = reg.create_job(loaded, details)
        from ..job import JobState

        JobState(reg, job).remember_status()
        typer.echo(f"job for {job.details['site']} on {loaded.checklist.id} "
                   f"{loaded.checklist.version}, register {reg.location}")
        typer.echo(job.short_id)


def checked_details(**given: str | None) -> dict[str, str]:
    """The time zone, language and next inspection date, each checked (one-line errors)."""
    import datetime as dt

    from ..errors import UserError
    from ..i18n import check_language

    out: dict[str, str] = {}
    for key, value in given.items():
        if value is None:
            continue
        value = value.strip()
        if key == "language":
            value = check_language(value)
        elif key == "timezone" and value:
            from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

            try:
                ZoneInfo(value)
            except (ZoneInfoNotFoundError, ValueError, OSError):
                raise UserError(f"--timezone {value}: not a time zone name (accepted: IANA "
                                "names such as Europe/London, Europe/Paris, UTC)") from None
        elif key == "next_inspection" and value:
            try:
                value = dt.date.fromisoformat(value).isoformat()
            except ValueError:
                raise UserError(f"--next-inspection {value}: not a date (accepted: "
                                "YYYY-MM-DD, e.g. 2027-12-01)") from None
        out[key] = value
    return out


def jobs(
    register: RegisterOpt = None,
    as_json: JsonOpt = False,
    status: Annotated[str | None, typer.Option(
        help="Only jobs whose last derived status is this (ready, incomplete, not-ready).",
        show_default=False)] = None,
    installer: Annotated[str | None, typer.Option(
        help="Only this installer's jobs: the job's installer, the whole name, letters A-Z "
        "in any case (on a company register also the database role it is assigned to).",
        show_default=False)] = None,
    due: Annotated[str | None, typer.Option(
        help="Only jobs whose next inspection falls on or before this date: YYYY-MM-DD, or "
        "a number of days from today such as 60d.", show_default=False)] = None,
    page: Annotated[int, typer.Option(min=1, help="Page to show.")] = 1,
    page_size: Annotated[int, typer.Option(min=0, help="Jobs per page (0: all).")] = 100,
    refresh: Annotated[bool, typer.Option(
        "--refresh", help="Derive again the statuses on this page that are not current "
        "(after an upgrade or a sync).")] = False,
) -> None:
    """List the jobs in the register with their last derived status (a page at a time)."""
    due_date = _due(due) if due is not None else None
    with open_register(register) as reg:
        rows, total = reg.list_jobs(status=status, installer=installer, due=due_date,
                                    page=page, size=page_size)
        if refresh and any(not fresh for _j, _s, fresh in rows):
            from ..job import JobState

            rows = [(job, st, True) if fresh else (job, JobState(reg, job).remember_status(),
                                                   True) for job, st, fresh in rows]
    if as_json:
        emit_json([{**job.as_json(), "status": st or "not derived", "status_current": fresh,
                    "unverified": job.unverified,
                    "baseline_record_sha256": job.baseline.get("record_sha256"),
                    "baseline_verified": job.baseline.get("verified")}
                   for job, st, fresh in rows])
        return
    if not rows:
        if total or status or installer or due:
            typer.echo("no jobs match" if not total else f"no jobs on page {page} "
                       f"(there are {total})")
        else:
            typer.echo("no jobs yet: start one with 'commission new --checklist NAME "
                       "--site TEXT'")
        return
    from ..termtext import safe

    stale = 0
    for job, st, fresh in rows:
        mark = "  UNVERIFIED import" if job.unverified else ""
        if job.baseline:
            mark += (f"  revisit of {job.baseline['job']}" +
                     ("" if job.baseline["verified"] else " (UNVERIFIED baseline)"))
        shown = st or "not derived"
        if not fresh:
            shown += "*"
            stale += 1
        typer.echo(f"{job.short_id}  {shown:<12}  {job.created_at[:10]}  "
                   f"{safe(job.details['site'][:40])}{mark}")
    if stale:
        typer.echo(f"* {stale} status(es) not derived since the last change or upgrade; "
                   "'commission jobs --refresh' derives this page")
    if page_size and total > page * page_size:
        pages = -(-total // page_size)
        typer.echo(f"page {page} of {pages} ({total} jobs); --page {page + 1} for more")


def _due(text: str) -> str:
    """--due as an ISO date: YYYY-MM-DD, or Nd days from today."""
    import datetime as dt

    from ..errors import UserError

    text = text.strip()
    try:
        if text.lower().endswith("d") and text[:-1].isdigit():
            return (dt.date.today() + dt.timedelta(days=int(text[:-1]))).isoformat()
        return dt.date.fromisoformat(text).isoformat()
    except (ValueError, OverflowError):
        raise UserError(f"--due {text}: not a date (accepted: YYYY-MM-DD, or days from "
                        "today such as 60d)") from None


def show(
    job: Annotated[str, typer.Argument(help="Job id (as printed by 'new') or UUID.")],
    register: RegisterOpt = None,
    as_json: JsonOpt = False,
) -> None:
    """Show a job: its status and every item's value, verdict, reason and source."""
    from ..checks.evaluate import status_reasons
    from ..job import JobState
    from ..present import SIGN_CONVENTION, WIDTH, table, use_colour, word
    from ..snapshot import job_json

    with open_register(register, create=False) as reg:
        state = JobState(reg, reg.find_job(job))
        results = state.results()
        state.remember_status()
        flagged = [c for c in reg.conflicts(state.job) if not c["confirmed_at"]]
        if as_json:
            emit_json({**job_json(state, results),
                       "changed_on_two_devices": [c["item_id"] for c in flagged]})
            return
    import textwrap

    from ..present import plain_text
    from ..termtext import CONTROL, _escape

    def echo(text: str) -> None:
        # Job text may come from an imported record: controls are shown escaped.
        typer.echo(plain_text(CONTROL.sub(_escape, text)))

    colour = use_colour()
    j = state.job
    c = state.checklist
    echo(f"Job {j.short_id} · {j.details['site']}")
    for key in ("address", "client", "client_contact", "installer", "installer_address",
                "installer_contact", "timezone", "language", "next_inspection"):
        if j.details.get(key):
            echo(f"  {key.replace('_', ' ')}: {j.details[key]}")
    echo(f"  checklist: {c.id} {c.version} (sha256 {j.checklist_sha256[:12]}…)")
    if j.unverified:
        echo("  UNVERIFIED import: this job came from a record that did not verify")
    if j.baseline:
        b = j.baseline
        echo(f"  revisit of job {b['job']}: baseline record sha256 {b['record_sha256']} (made "
             f"{b['made_at'][:10]}, status {b['status']}, "
             f"{'verified' if b['verified'] else 'UNVERIFIED'})")
        if not b["verified"]:
            echo("  UNVERIFIED baseline: the record this revisit compares with did not verify")
    status = state.status(results)
    echo(f"Status: {word(status, colour)}")
    for reason in status_reasons(results):
        echo(textwrap.fill(f"- {reason}", WIDTH, initial_indent="  ",
                           subsequent_indent="    "))
    for c in flagged:
        echo(f"  changed on two devices: {c['item_id']} (both entries kept; the later is "
             f"current; check it, then 'commission confirm {j.short_id} {c['item_id']}')")
    echo(textwrap.fill(SIGN_CONVENTION, WIDTH))
    for line in table(results, colour):
        echo(line)
    from ..snapshot import judged_differently

    for d in judged_differently(state, results):
        echo(f"  record's own verdict: {d['id']}: {d['recorded']} (check logic "
             f"{d['recorded_check_logic']}, commission {d['recorded_program']}); today "
             f"{d['now']} (check logic {d['now_check_logic']})")
    echo("")
    echo("! = critical. Verdicts: pass, fail, review (needs judgement or data),")
    echo("n/a, pending, recorded (answered; no check judges it).")


def amend(
    job: Annotated[str, typer.Argument(help="Job id or UUID.")],
    site: Annotated[str | None, typer.Option()] = None,
    address: Annotated[str | None, typer.Option()] = None,
    client: Annotated[str | None, typer.Option()] = None,
    installer: Annotated[str | None, typer.Option()] = None,
    installer_contact: Annotated[str | None, typer.Option()] = None,
    installer_registration: Annotated[str | None, typer.Option()] = None,
    installer_address: Annotated[str | None, typer.Option()] = None,
    client_contact: Annotated[str | None, typer.Option()] = None,
    timezone: Annotated[str | None, typer.Option(help="e.g. Europe/Paris")] = None,
    language: Annotated[str | None, typer.Option(help="homeowner pages: en or fr")] = None,
    next_inspection: Annotated[str | None, typer.Option(help="YYYY-MM-DD")] = None,
    register: RegisterOpt = None,
) -> None:
    """Change a job's details; each change is kept as an entry."""
    from ..errors import UserError

    changes = {k: v for k, v in {
        "site": site, "address": address, "client": client, "installer": installer,
        "installer_contact": installer_contact,
        "installer_registration": installer_registration,
        "installer_address": installer_address, "client_contact": client_contact,
        **checked_details(timezone=timezone, language=language,
                          next_inspection=next_inspection)}.items() if v is not None}
    if not changes:
        raise UserError("amend: nothing to change (give e.g. --client 'R. Okafor')")
    if "site" in changes and not changes["site"].strip():
        raise UserError("--site: cannot be empty")
    with open_register(register, create=False) as reg:
        target = reg.find_job(job)
        made = reg.amend(target, changes)
    if not made:
        typer.echo("no change: the details already read so")
    for e in made:
        typer.echo(f"{e.item_id.removeprefix('job.')}: {e.value}")


def backup(
    dest: Annotated[Path, typer.Argument(help="New file for the copy.")],
    register: RegisterOpt = None,
) -> None:
    """Write a consistent copy of the register (safe while a walk is open)."""
    with open_register(register, create=False) as reg:
        reg.backup(dest)
    typer.echo(f"register copied to {dest}")
