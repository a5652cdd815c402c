"""A large plain CSV body parsed in two processes at once, one half each.

``numpy.loadtxt`` holds the interpreter lock while it parses, so threads cannot share the
work; a forked child can. The parent parses the first half (``max_rows``) while the child
parses the second (``skiprows``) and sends it back through a pipe. On a two-processor machine a
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

import os
import signal
import sys
import warnings

import numpy as np

MIN_BYTES = 2 << 20  # measured (2 processors): even at about 1 MB, a quarter faster at 4 MB
FIRST_SHARE = 0.53  # of the bytes, parsed by this process; the child skips to the rest
ENABLED = sys.platform == "linux" and hasattr(os, "fork")


def _processors() -> int:
    try:
        return len(os.sched_getaffinity(0))
    except (AttributeError, OSError):
        return os.cpu_count() or 1


def loadtxt_in_halves(path, *, skiprows, options):
    """``numpy.loadtxt(path, skiprows=skiprows, **options)`` of a float table in two
    processes, or None.

    ``options`` are the one-pass call's own (``csv_capture._loadtxt_options``: they name
    the ``usecols``, a list of column indices); the result is identical to that call
    (same rows, same values, shape ``(rows, len(usecols))``; each
    column contiguous in memory, so ``numpy.ascontiguousarray`` of one copies nothing). None means
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
    usecols = options["usecols"]
    ncols = len(usecols)
    # numpy opens a named file through these modules: imported here, not first in the
    # child, so the child imports nothing
    import bz2  # noqa: F401
    import gzip  # noqa: F401
    import lzma  # noqa: F401

    try:
        read_end, write_end = os.pipe()
    except OSError:
        return None
    try:
        with warnings.catch_warnings():
            # Python 3.12+ warns about fork in a process with threads (a BLAS pool, where
            # one was allowed); the child runs only the parser, which uses neither those
            # threads nor their locks.
            warnings.simplefilter("ignore", DeprecationWarning)
            pid = os.fork()
    except OSError:  # no processes left, or fork not allowed here
        os.close(read_end)
        os.close(write_end)
        return None
    if pid == 0:  # the child: the second part, through the pipe, then exit
        _child(path, lines_before, options, write_end)
    os.close(write_end)
    ok = False
    try:
        if _first_part_is_plain(head, newline, skiprows):
            head_bytes = len(head)
            del head, newline
            with warnings.catch_warnings():
                warnings.simplefilter("ignore", UserWarning)
                first = np.loadtxt(path, skiprows=skiprows, max_rows=rows1, **options)
            if first.shape == (rows1, ncols):
                # One block per column, with room for the rows the second part likely
                # holds (lines as long as the first part's, 5 % to spare): the first part
                # is moved into it while the child is still parsing.
                likely = int(1.05 * rows1 * (size - head_bytes) / head_bytes) + 16
                columns = np.empty((ncols, rows1 + likely))
                columns[:, :rows1] = first.T
                del first
                out = _receive(read_end, columns, rows1)
                ok = out is not None
    except ValueError:
        pass  # the one-pass parse names the bad line
    finally:
        os.close(read_end)
        if not ok:
            os.kill(pid, signal.SIGKILL)
        _, status = os.waitpid(pid, 0)
    if ok and os.waitstatus_to_exitcode(status) == 0:
        return out
    return None


def _receive(fd, columns, rows1):
    """All rows, ``(rows, ncols)`` with each column contiguous in memory (the reader's
    passes over a column, and its copies of one, need no gathering): the first part,
    already in ``columns``, and the child's rows from the pipe; None when the child sent
    less than it announced."""
    with os.fdopen(fd, "rb", buffering=0, closefd=False) as pipe:
        head = _read_exactly(pipe, 8)
        if head is None:
            return None
        rows2 = int(np.frombuffer(head, dtype=np.int64)[0])
        if rows2 < 0:
            return None
        if rows2 > columns.shape[1] - rows1:  # shorter lines than guessed: more room
            wider = np.empty((columns.shape[0], rows1 + rows2))
            wider[:, :rows1] = columns[:, :rows1]
            columns = wider
        for k in range(columns.shape[0]):
            if _read_exactly(pipe, 8 * rows2, into=columns[k, rows1 : rows1 + rows2]) is None:
                return None
    return columns[:, : rows1 + rows2].T


def _read_exactly(pipe, size, into=None):
    """``size`` bytes from the pipe (into the array ``into`` when given), None at EOF."""
    buffer = memoryview(bytearray(size) if into is None else into).cast("B")
    got = 0
    while got < size:
        n = pipe.readinto(buffer[got:])
        if not n:
            return None
        got += n
    return buffer


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


def _child(path, skiprows, options, pipe_fd) -> None:
    """Parse from line ``skiprows`` on and write the row count and then each column into
    the pipe; never returns (exit status 0 when all was written)."""
    status = 1
    try:
        _detach(keep=pipe_fd)  # stderr is now /dev/null: a parser warning goes nowhere
        part = np.loadtxt(path, skiprows=skiprows, **options)
        with os.fdopen(pipe_fd, "wb", buffering=0) as pipe:
            _resize(pipe_fd)
            pipe.write(np.int64(part.shape[0]).tobytes())
            for k in range(part.shape[1]):
                data = memoryview(np.ascontiguousarray(part[:, k])).cast("B")
                while data:
                    data = data[pipe.write(data):]
        status = 0
    finally:
        os._exit(status)


def _resize(fd) -> None:
    """A pipe buffer of 1 MiB where the system allows it (fewer switches between the two
    processes than with the usual 64 KiB)."""
    try:
        import fcntl

        fcntl.fcntl(fd, getattr(fcntl, "F_SETPIPE_SZ", 1031), 1 << 20)
    except OSError:
        pass


def _detach(keep: int) -> None:
    """In the child: hold none of the parent's files but ``keep`` (not a register's lock,
    not a terminal), so nothing waits on the child if the parent is stopped."""
    null = os.open(os.devnull, os.O_RDWR)
    for fd in (0, 1, 2):
        os.dup2(null, fd)
    os.closerange(3, keep)
    os.closerange(keep + 1, 1 << 16)
