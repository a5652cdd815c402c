"""``commission --help`` against the ``--help`` of a bare typer app with one command.

Both run the same way: a fresh ``python SCRIPT --help`` with the same interpreter, where
the script is what a console-script wrapper does (import the app, call it). Runs are
interleaved so that a busy machine slows both alike; the ratio is of the medians.
Over target, ``python -X importtime`` shows which modules beyond the bare app's cost most.
"""

from __future__ import annotations

import sys

from ._common import (
    Context,
    Figure,
    checked,
    cpu_ratio,
    imports_beyond,
    median,
    run_child,
    spread,
)

TARGET = 1.3

BARE_APP = '''\
import typer

app = typer.Typer(add_completion=False)


@app.command()
def hello(name: str = "world") -> None:
    """Say hello."""
    typer.echo(f"hello {name}")


app()
'''


def run(ctx: Context) -> list[Figure]:
    bare = ctx.scratch / "bare_typer_app.py"
    bare.write_text(BARE_APP, encoding="utf-8")
    bare_argv = [sys.executable, str(bare), "--help"]
    cli_argv = [*ctx.cli, "--help"]
    env = ctx.child_env()
    n = 7 if ctx.quick else 31
    for argv in (bare_argv, cli_argv):  # warm the file cache and the .pyc files
        for _ in range(2):
            checked(run_child(argv, env=env), " ".join(argv[1:]))
    t_bare: list[float] = []
    t_cli: list[float] = []
    cpu_bare: list[float] = []
    cpu_cli: list[float] = []
    for _ in range(n):
        child = checked(run_child(bare_argv, env=env), "bare --help")
        t_bare.append(child.seconds)
        cpu_bare.append(child.cpu_s or 0.0)
        child = checked(run_child(cli_argv, env=env), "commission --help")
        t_cli.append(child.seconds)
        cpu_cli.append(child.cpu_s or 0.0)
    fig = Figure("commission --help", median(t_cli) * 1e3, median(t_bare) * 1e3, "ms", TARGET,
                 baseline_name="bare typer app --help")
    fig.detail.append(f"commission --help: {spread(t_cli, 1e3, 'ms')}")
    fig.detail.append(f"bare typer --help: {spread(t_bare, 1e3, 'ms')}")
    fig.detail.append(f"ratio of the best runs {min(t_cli) / min(t_bare):.2f}x; of the median "
                      f"CPU times (user + system) {cpu_ratio(cpu_cli, cpu_bare)}")
    lines = imports_beyond(cli_argv, bare_argv, env)
    fig.detail += lines if fig.met is False else lines[:1]
    return [fig]
