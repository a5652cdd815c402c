"""Options and helpers shared by the commands."""

import json
import sys
from pathlib import Path
from typing import Annotated, Any

import typer

RegisterOpt = Annotated[
    Path | None,
    typer.Option(
        "--register",
        help="Register file. Default: $COMMISSION_REGISTER, else the user data directory.",
        show_default=False,
    ),
]
JsonOpt = Annotated[bool, typer.Option("--json", help="Machine-readable output (SI units).")]


def open_register(option: Path | None, create: bool = True):
    from ..paths import register_path
    from ..register import Register

    reg = Register(register_path(option), create=create)
    reg.open()
    return reg


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
