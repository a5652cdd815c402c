"""The ``commission`` command. Only typer is imported at start-up; every command
imports what it needs when it runs, so ``commission --help`` is instant."""

import os
import sys

import typer

from . import (
    analyse,
    checklists,
    demo,
    due,
    forms,
    identity,
    instruments,
    jobs,
    report,
    revisit,
    walk,
)
from . import sync as sync_cmd
from .common import friendly

app = typer.Typer(
    name="commission",
    help="Commission a solar surplus diverter: walk the checklist on site, check every "
    "reading against the physics, keep everything in one register.\n\n"
    "Mains work can kill: isolate and prove dead; competent, licensed persons only; "
    "local wiring rules come first.",
    no_args_is_help=True,
    add_completion=False,
    pretty_exceptions_enable=False,
    context_settings={"help_option_names": ["-h", "--help"]},
)
app.add_typer(checklists.app, name="checklists")
app.add_typer(forms.app, name="forms")
app.add_typer(instruments.app, name="instruments")
app.add_typer(identity.identity_app, name="identity")
app.add_typer(identity.trust_app, name="trust")
app.add_typer(analyse.app, name="analyse")
app.command("new")(friendly(jobs.new))
app.command("jobs")(friendly(jobs.jobs))
app.command("show")(friendly(jobs.show))
app.command("amend")(friendly(jobs.amend))
app.command("walk")(friendly(walk.walk))
app.command("backup")(friendly(jobs.backup))
app.command("demo")(friendly(demo.demo))
app.command("countersign")(friendly(identity.countersign))
app.command("report")(friendly(report.report))
app.command("verify")(friendly(report.verify))
app.command("import")(friendly(report.import_))
app.command("blank")(friendly(report.blank))
app.command("seal")(friendly(report.seal))
app.command("sync")(friendly(sync_cmd.sync))
app.command("confirm")(friendly(sync_cmd.confirm))
app.command("assign")(friendly(sync_cmd.assign))
app.command("revisit")(friendly(revisit.revisit))
app.command("due")(friendly(due.due))


def _plain(value: bool) -> bool:
    """--plain, handled before --help (eager) so that help is plain too."""
    if value:
        os.environ["COMMISSION_PLAIN"] = "1"  # present.use_colour and plain_text read it
        import typer.core

        typer.core.HAS_RICH = False  # help and usage errors as plain text, no boxes
    return value


def _version(value: bool) -> bool:
    """--version, handled while the options are read (eager): no command is needed."""
    if value:
        from .. import __version__

        typer.echo(f"commission {__version__}")
        raise typer.Exit(0)
    return value


@app.callback()
def _root(
    version: bool = typer.Option(False, "--version", is_eager=True, callback=_version,
                                 help="Print the version and exit."),
    plain: bool = typer.Option(
        False, "--plain", is_eager=True, callback=_plain,
        help="Plain output for screen readers and basic terminals: no colour, no boxes, "
        "arrows or other symbols; every meaning in words. Give it before the command."),
) -> None:
    """Both options act while they are read (see _version and _plain)."""


def main(argv: list[str] | None = None) -> int:
    """Entry point: bad input → one line on stderr and exit 2, never a traceback."""
    debug = bool(os.environ.get("COMMISSION_DEBUG"))
    streams = (sys.stdout, sys.stderr)
    _fit_terminal()
    try:
        return _main(argv, debug)
    finally:
        for stream in (sys.stdout, sys.stderr):
            stream.flush()
        sys.stdout, sys.stderr = streams


def _fit_terminal() -> None:
    """On a terminal, every line fits 80 columns (see present.TerminalLines)."""
    from ..terminal import TerminalLines

    for name in ("stdout", "stderr"):
        stream = getattr(sys, name)
        try:
            tty = stream.isatty()
        except (AttributeError, ValueError):
            tty = False
        if tty:
            setattr(sys, name, TerminalLines(stream))


def _main(argv: list[str] | None, debug: bool) -> int:
    from ..errors import UserError

    try:
        app(args=argv, prog_name="commission")
    except SystemExit as exc:
        code = exc.code
        return code if isinstance(code, int) else (0 if code is None else 1)
    except UserError as exc:
        if debug:
            raise
        for line in str(exc).splitlines() or [""]:
            sys.stderr.write(f"error: {line}\n")
        return exc.exit_code
    except KeyboardInterrupt:
        sys.stderr.write("stopped\n")
        return 130
    except OSError as exc:
        if debug:
            raise
        where = f"{exc.filename}: " if getattr(exc, "filename", None) else ""
        sys.stderr.write(f"error: {where}{exc.strerror or exc}\n")
        return 1
    except Exception as exc:  # last resort: one line, never a traceback for a person
        if debug:
            raise
        text = " ".join(str(exc).split())[:200]
        sys.stderr.write(f"error: internal problem ({type(exc).__name__}: {text}); nothing "
                         "recorded was lost; COMMISSION_DEBUG=1 shows the details\n")
        return 1
    return 0


def run() -> None:
    sys.exit(main())


if __name__ == "__main__":
    run()
