"""A large plain CSV body parsed in two processes at once, one half each.

``numpy.loadtxt`` holds the interpreter lock while it parses, so threads cannot share the
work; a forked child can. The parent parses the first half (``max_rows``) while the child
parses the second (``skiprows``) into memory both share. On a two-processor machine a
29 MB capture was parsed in 0.17 s instead of 0.23 s (the two halves contend for the
processors' shared caches; more processors, less contention).

The split is used only where it is provably the same as one ``loadtxt`` call over the whole
body: every line of the first half after the header is a data row (no blank or comment
lines, which ``loadtxt`` skips and would shift the split; no quotes, whose fields may span
lines; no CR that is not part of a CR LF, as a lone CR also ends a line), so the first
half is exactly its lines' rows and the second starts at the next line. Anything else, or
any failure in either process, returns None and the caller parses the file in one pass,
which also names the first bad line. Linux only (fork is not safe with the system
libraries elsewhere), and only for files of ``MIN_BYTES`` or more, below which starting
the child costs more than it saves.
"""

from __future__ import annotations

import mmap
import os
import signal
import sys
import warnings

import numpy as np

MIN_BYTES = 2 << 20  # measured (2 processors): even at about 1 MB, a quarter faster at 4 MB
FIRST_SHARE = 0.5  # of the bytes, parsed by this process; the child skips to the rest
ENABLED = sys.platform == "linux" and hasattr(os, "fork")


def _processors() -> int:
    try:
        return len(os.sched_getaffinity(0))
    except (AttributeError, OSError):
        return os.cpu_count() or 1


def loadtxt_in_halves(path, *, skiprows, delimiter, usecols, encoding):
    """``numpy.loadtxt(path, ...)`` of a float table in two processes, or None.

    Parameters are those of the one-pass call in ``csv_capture._load_numbers``; the result
    is identical to it (same rows, same values, shape ``(rows, len(usecols))``). None means
    "parse it in one pass": the split is not safe for this file, not worth it, or failed.
    """
    if not ENABLED or _processors() < 2:
        return None
    try:
        with open(path, "rb") as fh:
            size = os.fstat(fh.fileno()).st_size
            if size < MIN_BYTES:
                return None
            head = fh.read(int(size * FIRST_SHARE))
            head += fh.readline()  # the first part ends at a line's end
    except OSError:
        return None
    if len(head) >= size or not head.endswith(b"\n"):
        return None
    newline = np.frombuffer(head, dtype=np.uint8) == 10
    lines_before = int(np.count_nonzero(newline))
    rows1 = lines_before - skiprows
    if rows1 < 1:
        return None
    ncols = len(usecols)
    # Rows of the second part, at most: every line holds at least the fields up to the
    # last one read, each of one character and a separator.
    most = (size - len(head)) // (2 * (max(usecols) + 1)) + 1
    try:
        shared = mmap.mmap(-1, 8 * (1 + (rows1 + most) * ncols))  # shared with the child
    except (OSError, ValueError, OverflowError):
        return None
    count = np.frombuffer(shared, dtype=np.int64, count=1)  # rows the child read
    rows = np.frombuffer(shared, dtype=float, offset=8).reshape(rows1 + most, ncols)
    options = dict(delimiter=delimiter, usecols=usecols, comments="#", ndmin=2, dtype=float,
                   quotechar='"', encoding=encoding)
    # numpy opens a named file through these modules: imported here, not first in the
    # child, so the child imports nothing
    import bz2  # noqa: F401
    import gzip  # noqa: F401
    import lzma  # noqa: F401

    with warnings.catch_warnings():
        # Python 3.12+ warns about fork in a process with threads (numpy's BLAS pool); the
        # child runs only the parser, which uses neither those threads nor their locks.
        warnings.simplefilter("ignore", DeprecationWarning)
        pid = os.fork()
    if pid == 0:  # the child: the second part into the shared rows, then exit
        _child(path, lines_before, options, count, rows[rows1:])
    ok = False
    try:
        if _first_part_is_plain(head, newline, skiprows):
            del head, newline
            with warnings.catch_warnings():
                warnings.simplefilter("ignore", UserWarning)
                first = np.loadtxt(path, skiprows=skiprows, max_rows=rows1, **options)
            if first.shape == (rows1, ncols):
                rows[:rows1] = first
                ok = True
            del first
    except ValueError:
        pass  # the one-pass parse names the bad line
    finally:
        if not ok:
            os.kill(pid, signal.SIGKILL)
        _, status = os.waitpid(pid, 0)
    if ok and os.waitstatus_to_exitcode(status) == 0:
        return rows[: rows1 + int(count[0])]
    return None


def _first_part_is_plain(head: bytes, newline, skiprows: int) -> bool:
    """True when the lines of ``head`` are what its newline bytes say (no lone CR, which
    also ends a line) and every one after the first ``skiprows`` is a row that ``loadtxt``
    reads (no blank or comment lines, no quotes), so that the first part is exactly its
    lines' rows and the second part starts at the next line."""
    if head.find(b"\r") != -1:
        cr = np.frombuffer(head, dtype=np.uint8) == 13
        cr_newline = cr[:-1] & newline[1:]
        if np.count_nonzero(cr) != np.count_nonzero(cr_newline):
            return False  # a lone CR
    else:
        cr_newline = None
    start = 0
    for _ in range(skiprows):  # past the header and the lines above it
        start = head.find(b"\n", start) + 1
    if head.find(b"#", start) != -1 or head.find(b'"', start) != -1:
        return False  # comment lines are skipped and quoted fields may span lines
    body = newline[start:]
    if body[0] or np.any(body[:-1] & body[1:]):
        return False  # a blank line (skipped)
    if cr_newline is not None:
        body_cr = cr_newline[start:]
        if body_cr[0] or np.any(body[:-2] & body_cr[1:]):
            return False  # a line of only CR (blank, skipped)
    return True


def _child(path, skiprows, options, count, rows) -> None:
    """Parse from line ``skiprows`` on into ``rows`` and their number into ``count``;
    never returns (exit status 0 when done)."""
    status = 1
    try:
        _detach()  # stderr is now /dev/null: a warning from the parser goes nowhere
        part = np.loadtxt(path, skiprows=skiprows, **options)
        if part.shape[0] <= rows.shape[0]:
            rows[: part.shape[0]] = part
            count[0] = part.shape[0]
            status = 0
    finally:
        os._exit(status)


def _detach() -> None:
    """In the child: hold none of the parent's files (not a register's lock, not a
    terminal), so nothing waits on the child if the parent is stopped."""
    null = os.open(os.devnull, os.O_RDWR)
    for fd in (0, 1, 2):
        os.dup2(null, fd)
    os.closerange(3, 1 << 16)
