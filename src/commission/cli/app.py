"""The ``commission`` command. Only typer is imported at start-up, and only the command
named on the line is loaded (the whole app is built for help, a typo or no command);
every command imports what it needs when it runs."""

import importlib
import os
import sys

import typer

from .common import friendly

# Every command, in the order `commission --help` lists them: (name, module, attribute,
# kind). "group" is a typer sub-app, "command" a function. The one table serves both the
# whole app (help, tests) and the one-command app the console entry point builds, so a
# command runs without importing the others (see _app_for).
COMMANDS: tuple[tuple[str, str, str, str], ...] = (
    ("checklists", "checklists", "app", "group"),
    ("forms", "forms", "app", "group"),
    ("instruments", "instruments", "app", "group"),
    ("identity", "identity", "identity_app", "group"),
    ("trust", "identity", "trust_app", "group"),
    ("analyse", "analyse", "app", "group"),
    ("new", "jobs", "new", "command"),
    ("jobs", "jobs", "jobs", "command"),
    ("show", "jobs", "show", "command"),
    ("amend", "jobs", "amend", "command"),
    ("walk", "walk", "walk", "command"),
    ("backup", "jobs", "backup", "command"),
    ("demo", "demo", "demo", "command"),
    ("countersign", "identity", "countersign", "command"),
    ("report", "report", "report", "command"),
    ("verify", "report", "verify", "command"),
    ("import", "report", "import_", "command"),
    ("blank", "report", "blank", "command"),
    ("seal", "report", "seal", "command"),
    ("sync", "sync", "sync", "command"),
    ("confirm", "sync", "confirm", "command"),
    ("assign", "sync", "assign", "command"),
    ("revisit", "revisit", "revisit", "command"),
    ("due", "due", "due", "command"),
)
_ROOT_FLAGS = ("--plain",)  # root options that take no value and may precede the command


def _new_app() -> typer.Typer:
    root = typer.Typer(
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
    root.callback()(_root)
    return root


def _add(root: typer.Typer, name: str, module: str, attr: str, kind: str) -> None:
    target = getattr(importlib.import_module(f"{__package__}.{module}"), attr)
    if kind == "group":
        root.add_typer(target, name=name)
    else:
        root.command(name)(friendly(target))


def _full_app() -> typer.Typer:
    root = _new_app()
    for entry in COMMANDS:
        _add(root, *entry)
    return root


def _app_for(argv: list[str]) -> typer.Typer:
    """The app for one command line: only the named command when the line names one
    (after the root's flags), else every command (root help, a typo, no command), so
    that help and "no such command" read exactly as from the whole app."""
    words = list(argv)
    while words and words[0] in _ROOT_FLAGS:
        words.pop(0)
    if words:
        for entry in COMMANDS:
            if entry[0] == words[0]:
                root = _new_app()
                _add(root, *entry)
                return root
    return _full_app()


_whole: typer.Typer | None = None


def __getattr__(name: str) -> typer.Typer:
    """``app``: the whole command, built on first use (tests, documentation)."""
    global _whole
    if name == "app":
        if _whole is None:
            _whole = _full_app()
        return _whole
    raise AttributeError(name)


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
        words = sys.argv[1:] if argv is None else argv
        _app_for(words)(args=words, prog_name="commission")
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
