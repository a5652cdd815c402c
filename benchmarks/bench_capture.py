"""``commission analyse capture`` of a 2-minute, 10 kS/s, three-column CSV (about 30 MB)
against ``numpy.loadtxt`` parsing the same file.

Both are whole processes started the same way (``python ...``, same interpreter): the
command with every import, check and figure it prints, and a script that imports numpy and
calls ``numpy.loadtxt(file, delimiter=",", skiprows=1)``. Runs are interleaved; the ratio is
of the medians. The file is a 50.02 Hz supply with 3rd-harmonic distortion and a load
current lagging by 7 degrees with 3rd and 5th harmonics, written with numpy in one go.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np

from ._common import (
    Context,
    Figure,
    checked,
    cpu_ratio,
    imports_beyond,
    median,
    profile_child,
    run_child,
    spread,
    stopwatch,
)

TARGET = 1.5
RATE_HZ = 10_000
LOADTXT = ("import sys\nimport numpy\n"
           "numpy.loadtxt(sys.argv[1], delimiter=',', skiprows=1)\n")


def write_capture_csv(path: Path, seconds: float, rate_hz: int = RATE_HZ) -> int:
    """A three-column capture (time_s, voltage_v, current_a); returns its size in bytes."""
    n = int(round(seconds * rate_hz))
    t = np.arange(n) / rate_hz
    w = 2 * np.pi * 50.02 * t
    rng = np.random.default_rng(5)
    v = 325.27 * np.sin(w) + 4.0 * np.sin(3 * w + 0.3) + rng.normal(0, 0.2, n)
    i = (12.4 * np.sin(w - 0.12) + 1.1 * np.sin(3 * w) + 0.5 * np.sin(5 * w)
         + rng.normal(0, 0.01, n))
    with path.open("w", encoding="ascii", newline="\n") as fh:
        fh.write("time_s,voltage_v,current_a\n")
        np.savetxt(fh, np.column_stack([t, v, i]), fmt=("%.4f", "%.3f", "%.4f"), delimiter=",")
    return path.stat().st_size


def run(ctx: Context) -> list[Figure]:
    seconds = 120.0
    csv = ctx.scratch / "capture.csv"
    with stopwatch() as made:
        size = write_capture_csv(csv, seconds)
    ctx.say(f"wrote {csv.name}: {seconds:g} s at {RATE_HZ} S/s, {size / 1e6:.1f} MB "
            f"in {made[0]:.1f} s")
    script = ctx.scratch / "loadtxt_only.py"
    script.write_text(LOADTXT, encoding="utf-8")
    env = ctx.child_env()
    cli_argv = [*ctx.cli, "analyse", "capture", str(csv), "--json"]
    base_argv = [sys.executable, str(script), str(csv)]
    checked(run_child(cli_argv, env=env), "analyse capture")  # warm caches, bytecode
    checked(run_child(base_argv, env=env), "loadtxt")
    n = 2 if ctx.quick else 5
    t_cli: list[float] = []
    t_base: list[float] = []
    cpu_cli: list[float] = []
    cpu_base: list[float] = []
    for _ in range(n):
        base = checked(run_child(base_argv, env=env), "loadtxt")
        t_base.append(base.seconds)
        cpu_base.append(base.cpu_s or 0.0)
        child = checked(run_child(cli_argv, env=env), "analyse capture")
        t_cli.append(child.seconds)
        cpu_cli.append(child.cpu_s or 0.0)
    cycles = _cycles(child.out)
    label = f"analyse capture, {seconds / 60:g} min CSV ({size / 1e6:.0f} MB)"
    fig = Figure(label, median(t_cli), median(t_base), "s", TARGET,
                 baseline_name="numpy.loadtxt, same file")
    fig.detail.append(f"analyse capture: {spread(t_cli)}; {cycles} mains cycles analysed")
    fig.detail.append(f"numpy.loadtxt:   {spread(t_base)}")
    fig.detail.append(f"ratio of the best runs {min(t_cli) / min(t_base):.2f}x; of the median "
                      f"CPU times (user + system) {cpu_ratio(cpu_cli, cpu_base)}")
    lib, parts = _parts(ctx, csv)
    fig.detail += parts
    fig.detail.append(_fixed_cost(ctx, cli_argv[:-2], base_argv[:-1]))
    if fig.met is False:
        fig.detail += imports_beyond(cli_argv, [sys.executable, "-c", "import numpy"], env)
        fig.detail += profile_child(cli_argv, ctx.scratch, env, n=10)
    return [fig, lib, _export_twin(ctx, csv, t_base)]


def _export_twin(ctx: Context, csv: Path, t_base: list[float]) -> Figure:
    """The same capture as an instrument exports it (two metadata lines, ';' with decimal
    commas, units in the header) through the same command, against the same loadtxt runs
    of the plain file (informational: the reader layer's decimal-comma path)."""
    twin = ctx.scratch / "capture-export.csv"
    with csv.open(encoding="ascii") as src, twin.open("w", encoding="utf-8") as out:
        out.write("Logger;FE-2\nSerial;00412\ntime [s];U [V];I [A]\n")
        next(src)
        for line in src:
            out.write(line.replace(",", ";").replace(".", ","))
    env = ctx.child_env()
    argv = [*ctx.cli, "analyse", "capture", str(twin), "--json"]
    checked(run_child(argv, env=env), "analyse capture (export)")
    times = [checked(run_child(argv, env=env), "analyse capture (export)").seconds
             for _ in range(2 if ctx.quick else 3)]
    return Figure("  same capture as a ';'/decimal-comma export", median(times),
                  median(t_base), "s", None, None, baseline_name="numpy.loadtxt, plain file")


def _fixed_cost(ctx: Context, cli_argv: list[str], base_argv: list[str]) -> str:
    """The same two commands on a one-second capture: what does not grow with the file."""
    tiny = ctx.scratch / "capture-1s.csv"
    write_capture_csv(tiny, 1.0)
    env = ctx.child_env()
    cli = [checked(run_child([*cli_argv, str(tiny), "--json"], env=env), "tiny").seconds
           for _ in range(3)]
    base = [checked(run_child([*base_argv, str(tiny)], env=env), "tiny").seconds
            for _ in range(3)]
    return (f"fixed cost, on a 1 s capture (0.2 MB): the command {median(cli):.3f} s, "
            f"loadtxt {median(base):.3f} s: {median(cli) - median(base):.3f} s of the "
            "difference does not grow with the file")


def _cycles(out: str) -> str:
    import json

    try:
        return str(json.loads(out)["cycles"])
    except (ValueError, KeyError):
        return "?"


def _parts(ctx: Context, csv: Path) -> tuple[Figure, list[str]]:
    """The library's reader and analysis in this process against numpy.loadtxt in this
    process (an informational figure), and where the command's time goes."""
    env = ctx.child_env()
    started = [checked(run_child([sys.executable, "-c", "import numpy"], env=env),
                       "python -c 'import numpy'").seconds for _ in range(3)]
    from commission.analyses import CaptureSettings, analyse_capture
    from commission.captures import read_capture_csv

    t_load, t_read, t_all = [], [], []
    for _ in range(2 if ctx.quick else 3):
        with stopwatch() as loadtxt:
            np.loadtxt(csv, delimiter=",", skiprows=1)
        with stopwatch() as read:
            read_capture_csv(csv)
        with stopwatch() as analysed:
            analyse_capture(csv, CaptureSettings(state="full"))
        t_load += loadtxt
        t_read += read
        t_all += analysed
    load, rd, whole, st = median(t_load), median(t_read), median(t_all), median(started)
    fig = Figure("  library only: analyses.analyse_capture", whole, load, "s", None,
                 None, baseline_name="numpy.loadtxt, in-process")
    return fig, [
        f"in-process medians: numpy.loadtxt {load:.3f} s; read_capture_csv {rd:.3f} s "
        f"(loadtxt + reader layer {rd - load:+.3f} s); analyse_capture (read, physics, "
        f"findings, clamp) {whole:.3f} s; a child that only imports numpy {st:.3f} s"]
