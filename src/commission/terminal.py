"""Terminal output that fits 80 columns (light: imported before any command runs)."""

from __future__ import annotations

import re
import textwrap

WIDTH = 80
_ANSI = re.compile(r"\x1b\[[0-9;?]*[A-Za-z]")


class TerminalLines:
    """A text stream for a terminal that wraps every line longer than 80 columns at its
    spaces, continuing at the line's own indent plus two (a word longer than a line, such as
    a long path, is kept whole, never cut). ``main`` puts it around stdout and stderr when
    they are terminals; piped output keeps one record per line for scripts."""

    def __init__(self, stream) -> None:
        self._stream = stream
        self._pending = ""

    # What typer/click and rich look at before writing to a stream.
    @property
    def encoding(self):
        return self._stream.encoding

    @property
    def errors(self):
        return self._stream.errors

    def isatty(self) -> bool:
        return self._stream.isatty()

    def fileno(self) -> int:
        return self._stream.fileno()

    def writable(self) -> bool:
        return True

    def readable(self) -> bool:
        return False

    def seekable(self) -> bool:
        return False

    def write(self, text: str) -> int:
        if not isinstance(text, str):
            raise TypeError("write() argument must be str")
        self._pending += text
        if "\n" in self._pending:
            done, self._pending = self._pending.rsplit("\n", 1)
            self._stream.write("\n".join(fit_line(line) for line in done.split("\n")) + "\n")
            self._stream.flush()
        return len(text)

    def flush(self) -> None:
        if self._pending:  # a prompt or a progress line: as it is
            self._stream.write(self._pending)
            self._pending = ""
        self._stream.flush()

    def __getattr__(self, name: str):
        return getattr(self._stream, name)


def fit_line(line: str) -> str:
    """One printed line, wrapped to 80 columns as TerminalLines does."""
    visible = _ANSI.sub("", line)
    if len(visible) <= WIDTH or "\r" in line:
        return line
    indent = " " * (len(line) - len(line.lstrip(" ")))
    return "\n".join(textwrap.wrap(line, WIDTH, subsequent_indent=indent + "  ",
                                   break_long_words=False, break_on_hyphens=False)) or line
