"""Shared pieces of the benchmarks: figures, child processes, timing, profiles."""

from __future__ import annotations

import contextlib
import cProfile
import io
import os
import pstats
import re
import statistics
import subprocess
import sys
import tempfile
import threading
import time
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field
from pathlib import Path

MB = 1e6  # figures in the table are decimal megabytes


@dataclass
class Figure:
    """One line of the results: a measurement, its baseline from the same run, a target.

    ``limit_on`` says what the target limits: ``"ratio"`` (measured / baseline at most
    ``limit``), ``"measured"`` (the measured value itself below ``limit``, in ``unit``), or
    None for an informational figure without a target.
    """

    name: str
    measured: float
    baseline: float
    unit: str  # "s", "ms" or "MB"; values are stored in that unit
    limit: float | None
    limit_on: str | None = "ratio"
    baseline_name: str = ""
    detail: list[str] = field(default_factory=list)

    @property
    def ratio(self) -> float:
        return self.measured / self.baseline if self.baseline else float("inf")

    @property
    def met(self) -> bool | None:
        if self.limit is None or self.limit_on is None:
            return None
        value = self.ratio if self.limit_on == "ratio" else self.measured
        return value <= self.limit

    @property
    def target(self) -> str:
        if self.limit is None or self.limit_on is None:
            return "(info)"
        if self.limit_on == "ratio":
            return f"<= {self.limit:g}x"
        return f"< {self.limit:g} {self.unit}"

    @property
    def status(self) -> str:
        return {True: "met", False: "MISSED", None: "-"}[self.met]

    def value(self, x: float) -> str:
        if self.unit == "ms":
            return f"{x:.2f} ms" if x < 100 else f"{x:.0f} ms"
        if self.unit == "s":
            return f"{x:.3f} s" if x < 10 else f"{x:.1f} s"
        return f"{x:.0f} {self.unit}"


HEADER = ("benchmark", "measured", "baseline", "ratio", "target", "")


def rows(figures: list[Figure]) -> list[tuple[str, ...]]:
    return [(f.name, f.value(f.measured), f.value(f.baseline), f"{f.ratio:.2f}x", f.target,
             f.status) for f in figures]


def text_table(figures: list[Figure]) -> str:
    table = [HEADER, *rows(figures)]
    widths = [max(len(r[k]) for r in table) for k in range(len(HEADER))]
    lines = []
    for n, r in enumerate(table):
        lines.append("  ".join(c.ljust(w) if k == 0 else c.rjust(w)
                               for k, (c, w) in enumerate(zip(r, widths, strict=True))).rstrip())
        if n == 0:
            lines.append("  ".join("-" * w for w in widths))
    return "\n".join(lines)


def markdown_table(figures: list[Figure]) -> str:
    head = ("Benchmark", "Measured", "Baseline (same run)", "Ratio", "Target", "Result")
    out = ["| " + " | ".join(head) + " |", "|" + "|".join("---" for _ in head) + "|"]
    for f, r in zip(figures, rows(figures), strict=True):
        base = f"{r[2]} ({f.baseline_name})" if f.baseline_name else r[2]
        out.append(f"| {r[0]} | {r[1]} | {base} | {r[3]} | {r[4]} | {r[5]} |")
    return "\n".join(out)


# -- context shared by the benchmarks -------------------------------------------------------

@dataclass
class Context:
    scratch: Path  # temporary folder for generated files, registers, identities
    quick: bool
    say: Callable[[str], None]

    def child_env(self, **extra: str) -> dict[str, str]:
        """Environment for children: our own register and home, no colour, no profiling."""
        env = {k: v for k, v in os.environ.items()
               if not k.startswith(("COMMISSION_", "PYTHONPROFILEIMPORTTIME",
                                    "PYTHONDONTWRITEBYTECODE"))}
        # Bytecode is cached as after an ordinary install, but under the scratch folder,
        # so nothing is written into the source tree (or site-packages).
        env.update(PYTHONPYCACHEPREFIX=str(self.scratch / "pycache"))
        env.update(COMMISSION_HOME=str(self.scratch / "home"),
                   COMMISSION_REGISTER=str(self.scratch / "cli-register.sqlite3"),
                   COMMISSION_USER="bench", NO_COLOR="1", COLUMNS="80", TERM="dumb")
        env.update(extra)
        return env

    @property
    def cli(self) -> list[str]:
        """argv prefix that runs ``commission`` the way its console script does."""
        launcher = self.scratch / "commission_cli.py"
        if not launcher.exists():
            launcher.write_text(
                "import sys\n"
                "from commission.cli.app import run\n"
                "sys.argv[0] = 'commission'\n"
                "run()\n", encoding="utf-8")
        return [sys.executable, str(launcher)]


# -- child processes ------------------------------------------------------------------------

@dataclass
class Child:
    seconds: float
    max_rss_mb: float | None  # peak resident set of this child alone
    code: int
    out: str
    err: str
    cpu_s: float | None = None  # user + system CPU time of the child


def _rss_mb(ru_maxrss: int) -> float:
    # ru_maxrss is in kilobytes on Linux, bytes on macOS
    scale = 1 if sys.platform == "darwin" else 1024
    return ru_maxrss * scale / MB


# Linux counts in a child's ru_maxrss the resident set of the process it was forked from, up
# to its exec: a child of this (large) benchmark process would report at least our own size.
# So for a memory figure the command is started by this small wrapper (python -S, a few MB),
# which reports its child's peak through a file.
_RSS_WRAPPER = """\
import os, sys
pid = os.fork()
if pid == 0:
    os.execv(sys.argv[2], sys.argv[2:])
_, status, usage = os.wait4(pid, 0)
with open(sys.argv[1], "w") as fh:
    fh.write(str(usage.ru_maxrss))
sys.exit(os.waitstatus_to_exitcode(status))
"""


def run_child(argv: list[str], *, env: dict[str, str] | None = None, cwd: Path | None = None,
              stderr_tty: bool = False, measure_rss: bool = False) -> Child:
    """Run ``argv`` to the end: wall time, exit code, output.

    Output goes to temporary files (no pipes to drain, so the timing is the child's). With
    ``stderr_tty`` the child's stderr is a pseudo-terminal, as when a person runs it. With
    ``measure_rss`` the child's own peak resident set is measured (``os.wait4`` in a small
    wrapper process, see ``_RSS_WRAPPER``); otherwise ``max_rss_mb`` is None.
    """
    rss_file = None
    if measure_rss:
        fd, rss_file = tempfile.mkstemp(suffix=".rss")
        os.close(fd)
        argv = [sys.executable, "-S", "-c", _RSS_WRAPPER, rss_file, *argv]
    try:
        child = _run(argv, env, cwd, stderr_tty)
        if rss_file is not None:
            text = Path(rss_file).read_text().strip()
            child.max_rss_mb = _rss_mb(int(text)) if text else None
        return child
    finally:
        if rss_file is not None:
            os.unlink(rss_file)


def _run(argv, env, cwd, stderr_tty) -> Child:
    with tempfile.TemporaryFile() as out, tempfile.TemporaryFile() as err:
        master = slave = None
        chunks: list[bytes] = []
        reader = None
        if stderr_tty:
            import pty

            master, slave = pty.openpty()
        t0 = time.perf_counter()
        proc = subprocess.Popen(argv, stdin=subprocess.DEVNULL, stdout=out,
                                stderr=slave if stderr_tty else err, env=env, cwd=cwd)
        if stderr_tty:
            os.close(slave)
            reader = threading.Thread(target=_drain, args=(master, chunks), daemon=True)
            reader.start()
        cpu = None
        if hasattr(os, "wait4"):
            _, status, usage = os.wait4(proc.pid, 0)
            seconds = time.perf_counter() - t0
            proc.returncode = os.waitstatus_to_exitcode(status)
            cpu = usage.ru_utime + usage.ru_stime
        else:  # pragma: no cover - not POSIX
            proc.wait()
            seconds = time.perf_counter() - t0
        if reader is not None:
            reader.join(timeout=5)
            with contextlib.suppress(OSError):
                os.close(master)
        out.seek(0)
        err.seek(0)
        err_bytes = b"".join(chunks) if stderr_tty else err.read()
        return Child(seconds, None, proc.returncode, out.read().decode("utf-8", "replace"),
                     err_bytes.decode("utf-8", "replace"), cpu)


def _drain(fd: int, chunks: list[bytes]) -> None:
    while True:
        try:
            data = os.read(fd, 65536)
        except OSError:  # EIO once the child has closed the terminal
            return
        if not data:
            return
        chunks.append(data)


def checked(child: Child, what: str) -> Child:
    if child.code != 0:
        tail = (child.err.strip().splitlines() or ["(no message)"])[-1]
        raise RuntimeError(f"{what}: exit {child.code}: {tail}")
    return child


# -- timing ---------------------------------------------------------------------------------

@contextlib.contextmanager
def stopwatch() -> Iterator[list[float]]:
    box: list[float] = []
    t0 = time.perf_counter()
    try:
        yield box
    finally:
        box.append(time.perf_counter() - t0)


def median(xs: list[float]) -> float:
    return statistics.median(xs)


def spread(xs: list[float], unit_scale: float = 1.0, unit: str = "s") -> str:
    """"median m (best b, worst w) of n" for the detail lines."""
    s = sorted(x * unit_scale for x in xs)
    return (f"median {statistics.median(s):.3f} {unit} (best {s[0]:.3f}, worst {s[-1]:.3f}) "
            f"of {len(s)}")


def cpu_ratio(measured: list[float], baseline: list[float]) -> str:
    """Ratio of median CPU times: less disturbed than wall time by other work on the box
    (but blind to waiting for the disk)."""
    if not measured or not baseline or not median(baseline):
        return "n/a"
    return (f"{median(measured) / median(baseline):.2f}x ({median(measured):.3f} s / "
            f"{median(baseline):.3f} s)")


# -- diagnosis ------------------------------------------------------------------------------

def profile_top(fn: Callable[[], object], n: int = 8, sort: str = "tottime") -> list[str]:
    """cProfile ``fn`` once; the ``n`` costliest functions as short lines."""
    prof = cProfile.Profile()
    prof.enable()
    try:
        fn()
    finally:
        prof.disable()
    return stats_lines(pstats.Stats(prof), n, sort)


def stats_lines(stats: pstats.Stats, n: int = 8, sort: str = "tottime") -> list[str]:
    stats.sort_stats(sort)
    total = stats.total_tt  # type: ignore[attr-defined]
    out = [f"cProfile: {total:.3f} s in all; top {n} by {sort}:"]
    for func in stats.fcn_list[:n]:  # type: ignore[attr-defined]
        _cc, calls, tt, ct, _callers = stats.stats[func]  # type: ignore[attr-defined]
        filename, line, name = func
        where = _short_path(filename)
        out.append(f"  {tt:7.3f} s self {ct:7.3f} s cum {calls:>8} calls  {name} "
                   f"({where}:{line})")
    return out


def profile_child(argv: list[str], scratch: Path, env: dict[str, str], n: int = 8,
                  sort: str = "tottime") -> list[str]:
    """Run ``argv`` (a Python script and its arguments) under cProfile in a child."""
    target = scratch / "child.prof"
    child = run_child([sys.executable, "-m", "cProfile", "-o", str(target), *argv[1:]],
                      env=env)
    checked(child, "profiled run")
    return stats_lines(pstats.Stats(str(target), stream=io.StringIO()), n, sort)


def _short_path(filename: str) -> str:
    for marker in ("site-packages/", "/src/", "/lib/python"):
        if marker in filename:
            return filename.split(marker, 1)[1]
    return filename


_IMPORT_LINE = re.compile(r"import time:\s+(\d+) \|\s+(\d+) \|( *)(\S+)")


def import_times(stderr: str) -> dict[str, tuple[int, int, int]]:
    """``-X importtime`` output -> module: (self µs, cumulative µs, depth)."""
    found = {}
    for line in stderr.splitlines():
        m = _IMPORT_LINE.match(line)
        if m:
            found[m.group(4)] = (int(m.group(1)), int(m.group(2)), len(m.group(3)) // 2)
    return found


def imports_beyond(argv: list[str], base_argv: list[str], env: dict[str, str],
                   n: int = 8) -> list[str]:
    """Modules ``argv`` imports that ``base_argv`` does not, by their own import time
    (``python -X importtime``, one run each)."""
    def times(cmd: list[str]) -> dict[str, tuple[int, int, int]]:
        child = checked(run_child([cmd[0], "-X", "importtime", *cmd[1:]], env=env),
                        "-X importtime")
        return import_times(child.err)

    base, got = times(base_argv), times(argv)
    extra = {m: t for m, t in got.items() if m not in base}
    total = sum(t[0] for t in extra.values()) / 1e3
    by_package: dict[str, int] = {}
    for m, t in extra.items():
        top = m.split(".")[0]
        by_package[top] = by_package.get(top, 0) + t[0]
    ranked = sorted(by_package.items(), key=lambda kv: -kv[1])[:6]
    lines = [f"-X importtime: {len(extra)} modules beyond the baseline's, {total:.1f} ms of "
             "their own import time; by package: "
             + ", ".join(f"{p} {us / 1e3:.1f} ms" for p, us in ranked)]
    for m, t in sorted(extra.items(), key=lambda kv: -kv[1][0])[:n]:
        lines.append(f"  {t[0] / 1e3:6.1f} ms self {t[1] / 1e3:6.1f} ms cum  {m}")
    return lines
