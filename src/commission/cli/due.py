"""commission due: installations overdue or due for inspection within a window."""

from pathlib import Path
from typing import Annotated

import typer

from .common import JsonOpt, RegisterOpt, emit_json, open_register


def due(
    within: Annotated[str, typer.Option(help="Window from today: days or weeks (60d, 8w).")
                      ] = "60d",
    today: Annotated[str | None, typer.Option(
        help="Count from this day, YYYY-MM-DD (default: today).")] = None,
    ics: Annotated[Path | None, typer.Option(
        help="Also write the due dates as calendar events (.ics) to this file.")] = None,
    register: RegisterOpt = None,
    as_json: JsonOpt = False,
) -> None:
    """List the installations overdue (marked) or due for inspection within the window."""
    from ..due import due as find
    from ..due import ics as calendar
    from ..due import parse_today, parse_window
    from ..errors import UserError
    from ..termtext import safe

    days = parse_window(within)
    day = parse_today(today)
    with open_register(register, create=False) as reg:
        rows = find(reg, day, days)
    if ics is not None:
        try:
            ics.write_text(calendar(rows), encoding="utf-8", newline="")
        except OSError as exc:
            raise UserError(f"{ics}: cannot write ({exc.strerror})") from None
    if as_json:
        emit_json({"today": day.isoformat(), "within_days": days,
                   "due": [r.as_json() for r in rows]})
        return
    if not rows:
        typer.echo(f"nothing due by {day.isoformat()} + {days} days")
    for r in rows:
        mark = f"OVERDUE by {-r.days} days" if r.overdue else f"due in {r.days} days"
        typer.echo(f"{r.date}  {mark}  {r.job}  {safe(r.site)}")
        who = ", ".join(x for x in (r.client, r.client_contact) if x)
        typer.echo(f"    client: {safe(who) or 'not recorded'}; job {r.status}, {r.origin}")
        if r.baseline:
            typer.echo(f"    {safe(r.baseline)}")
    if ics is not None:
        typer.echo(f"calendar written: {ics} ({len(rows)} events)")
