"""Run the speed and scale benchmarks and print each figure against its baseline and target.

    python benchmarks/run.py            # everything, about 3-5 minutes on 2 cores
    python benchmarks/run.py --quick    # fewer repetitions and smaller files, about 1 minute
    python benchmarks/run.py --only help --only walk

Use the Python of a virtual environment where ``commission`` is installed; every child
process runs with that same interpreter. Nothing is asserted: the exit code is 0 when every
benchmark ran, whatever the figures, and 1 when one could not run.
"""

from __future__ import annotations

import argparse
import importlib
import os
import platform
import shutil
import sys
import tempfile
import time
import traceback
from pathlib import Path

if __package__ in (None, ""):  # run as a script: make ``benchmarks`` importable
    sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from benchmarks._common import Context, Figure, markdown_table, text_table  # noqa: E402

BENCHMARKS = ("help", "capture", "wav", "report", "walk", "register", "verify")


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="benchmarks/run.py", description=__doc__.split("\n")[0])
    parser.add_argument("--quick", action="store_true",
                        help="fewer repetitions and smaller files (figures are then marked)")
    parser.add_argument("--only", action="append", choices=BENCHMARKS, metavar="NAME",
                        help=f"run only these ({', '.join(BENCHMARKS)}); may be repeated")
    parser.add_argument("--dir", type=Path, default=None,
                        help="where to put the generated files (default: a new temporary "
                        "folder, removed afterwards); the walk baseline's SQLite file lives "
                        "here too, so both use the same disk")
    parser.add_argument("--keep", action="store_true", help="keep the generated files")
    parser.add_argument("--markdown", action="store_true",
                        help="also print the results as a Markdown table")
    args = parser.parse_args(argv)

    try:
        import commission
    except ImportError:
        print(f"commission is not importable by {sys.executable}; run with the Python of a "
              "virtual environment where it is installed", file=sys.stderr)
        return 1

    parent = args.dir.resolve() if args.dir else None
    if parent:
        parent.mkdir(parents=True, exist_ok=True)
    scratch = Path(tempfile.mkdtemp(prefix="commission-bench-", dir=parent))

    def say(text: str) -> None:
        print(text, flush=True)

    ctx = Context(scratch=scratch, quick=args.quick, say=say)
    say(f"commission {commission.__version__} benchmarks{' (--quick)' if args.quick else ''}")
    say(f"python {platform.python_version()} {sys.executable}")
    say(f"{platform.platform()}, {os.cpu_count()} CPUs; files in {scratch}")
    figures: list[Figure] = []
    failed: list[str] = []
    started = time.perf_counter()
    for name in args.only or BENCHMARKS:
        say(f"\n== {name}")
        t0 = time.perf_counter()
        try:
            module = importlib.import_module(f"benchmarks.bench_{name}")
            got = module.run(ctx)
        except Exception:  # report and go on with the next benchmark
            failed.append(name)
            say(traceback.format_exc().rstrip())
            continue
        for fig in got:
            say(f"{fig.name}: {fig.value(fig.measured)} vs {fig.value(fig.baseline)} "
                f"({fig.baseline_name}) = {fig.ratio:.2f}x, target {fig.target}: {fig.status}")
            for line in fig.detail:
                say(f"    {line}")
        say(f"({time.perf_counter() - t0:.0f} s)")
        figures += got
    say(f"\n== results ({time.perf_counter() - started:.0f} s in all)\n")
    say(text_table(figures))
    if args.markdown:
        say("\n" + markdown_table(figures))
    if failed:
        say(f"\ncould not run: {', '.join(failed)}")
    if args.keep:
        say(f"\ngenerated files kept in {scratch}")
    else:
        shutil.rmtree(scratch, ignore_errors=True)
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
