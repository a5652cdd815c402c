"""Options and helpers shared by the commands."""

import json
import sys
from pathlib import Path
from typing import Annotated, Any

import typer

RegisterOpt = Annotated[
    str | None,
    typer.Option(
        "--register",
        help="Register file, or a company register's postgresql:// URL (its password from "
        "PGPASSFILE or a service file, never here). Default: $COMMISSION_REGISTER, else the "
        "user data directory.",
        show_default=False,
    ),
]
JsonOpt = Annotated[bool, typer.Option("--json", help="Machine-readable output (SI units).")]


def open_register(option: str | Path | None, create: bool = True):
    from ..register import open_register as engine

    return engine(option, create=create)


def emit_json(data: Any) -> None:
    sys.stdout.write(json.dumps(data, ensure_ascii=False, indent=2) + "\n")


def friendly(fn):
    """Wrap a command so bad input is one line on stderr and exit code 2."""
    import functools

    @functools.wraps(fn)
    def wrapper(*args, **kwargs):
        from ..errors import UserError

        try:
            return fn(*args, **kwargs)
        except UserError as exc:
            import os

            if os.environ.get("COMMISSION_DEBUG"):
                raise
            for line in str(exc).splitlines() or [""]:
                typer.echo(f"error: {line}", err=True)
            raise typer.Exit(exc.exit_code) from None

    return wrapper
