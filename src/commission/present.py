"""Text for people: values in the trade's units, verdict lines, the status table.

Nothing is carried by colour alone: every verdict is also a word. Colour is
used only on a terminal and never when ``NO_COLOR`` is set.
"""

from __future__ import annotations

import os
import sys
import textwrap
from typing import Any

from .checks.evaluate import Result
from .units import Bound, as_reading, show_si

WIDTH = 80
SIGN_CONVENTION = (
    "Sign convention: positive power = import from the grid, for a clamp on the incoming "
    "line conductor with its arrow pointing into the premises."
)
_COLOURS = {"pass": "green", "fail": "red", "review": "yellow", "n/a": "cyan",
            "pending": "white", "recorded": "blue", "ready": "green", "not-ready": "red",
            "incomplete": "yellow"}


def use_colour(stream=None) -> bool:
    stream = stream or sys.stdout
    if os.environ.get("NO_COLOR") or plain_mode():
        return False
    return hasattr(stream, "isatty") and stream.isatty()


def plain_mode() -> bool:
    """``commission --plain`` (or ``COMMISSION_PLAIN=1``): no colour, no typographic
    symbols on the terminal; every meaning in words and ASCII."""
    return bool(os.environ.get("COMMISSION_PLAIN"))


# Terminal symbols and their ASCII spelling in plain mode. Unit symbols (Ω, °, µ, ², ³)
# and Greek letters used as quantity symbols (IΔn, τ, φ, ρ, α) carry meaning and stay.
_PLAIN_SYMBOLS = str.maketrans({
    "→": "->", "←": "<-", "·": "-", "…": "...", "—": "-", "–": "-", "−": "-",
    "≤": "<=", "≥": ">=", "≠": "!=", "≈": "~", "±": "+/-", "×": "x", "½": "1/2",
    "∞": "inf", "•": "*", "⚠": "!", "√": "sqrt", "‘": "'", "’": "'", "“": '"', "”": '"',
})


def plain_text(text: str) -> str:
    """Text for the terminal: unchanged, or in plain mode with symbols spelled in ASCII
    (a line that grows past 80 columns is wrapped again at its own indent). Only for what
    is shown on a terminal; never for the PDF or JSON."""
    if not plain_mode():
        return text
    lines = []
    for line in text.translate(_PLAIN_SYMBOLS).split("\n"):
        if len(line) <= WIDTH:
            lines.append(line)
            continue
        indent = " " * (len(line) - len(line.lstrip(" ")))
        lines += textwrap.wrap(line, WIDTH, subsequent_indent=indent + "  ") or [line]
    return "\n".join(lines)


def _ellipsis() -> str:
    return "..." if plain_mode() else "…"


def word(verdict: str, colour: bool = False) -> str:
    if not colour:
        return verdict
    import typer

    return typer.style(verdict, fg=_COLOURS.get(verdict), bold=verdict in ("fail", "not-ready"))


def value_text(result: Result) -> str:
    e = result.entry
    if e is None:
        return ""
    if e.action == "skip":
        return "skipped"
    if e.action == "na":
        return "n/a"
    return format_value(result.item, e.value, e.raw)


def format_value(item, value: Any, raw: str | None = None) -> str:
    """A value in the item's unit. A bound (">299 MΩ", "OL") is shown as it was typed when
    ``raw`` is given: the reading as the instrument showed it."""
    if value is None:
        return ""
    if item.kind == "reading":
        bound = as_reading(value)
        if isinstance(bound, Bound):
            return " ".join(raw.split()) if raw else bound.text(item.quantity, item.unit)
        return show_si(float(value), item.quantity, item.unit)
    if item.kind == "confirm":
        return "yes" if value else "no"
    if isinstance(value, dict) and "sha256" in value:
        return f"{value['name']} ({value['bytes']} B, {value['sha256'][:10]}…)"
    return str(value)


def verdict_lines(result: Result, colour: bool = False, indent: str = "  ") -> list[str]:
    """The verdict of one item as the walk shows it right after an answer."""
    head = f"{indent}→ {word(result.verdict, colour)}: {result.reason}"
    lines = textwrap.wrap(head, WIDTH, subsequent_indent=indent + "    ") or [head]
    extra = []
    if result.expected is not None:
        extra.append(f"expected {result.expected.text()}")
    if result.measured is not None and result.measured.unit:
        extra.append(f"measured {result.measured.text()}")
    if extra:
        lines += textwrap.wrap("; ".join(extra), WIDTH, initial_indent=indent + "    ",
                               subsequent_indent=indent + "    ")
    lines += textwrap.wrap(f"source: {result.source}", WIDTH, initial_indent=indent + "    ",
                           subsequent_indent=indent + "      ")
    return lines


def table(results: list[Result], colour: bool = False) -> list[str]:
    """The readable status table, 80 columns: one line per item, reason and source below."""
    lines: list[str] = []
    section = None
    for r in results:
        if r.section != section:
            section = r.section
            lines.append("")
            lines.append(_section_title(r))
        mark = "!" if r.item.critical else " "
        value = value_text(r)
        verdict = word(f"{r.verdict:<8}", colour) if colour else f"{r.verdict:<8}"
        ident = r.item.id if len(r.item.id) <= 33 else _clip(r.item.id, 33)
        lines.append(f"{verdict} {mark}{ident:<33} {_clip(value, WIDTH - 44)}".rstrip())
        if r.entry is not None and getattr(r.entry, "carried", None):
            lines.append(" " * 10 + f"carried from the baseline ({r.entry.at[:10]}); confirm "
                         "or change it")
        if r.verdict in ("pending", "recorded"):
            continue
        detail = r.reason
        if r.expected is not None and r.verdict in ("pass", "fail", "review"):
            detail += f" [expected {r.expected.text()}]"
        lines += textwrap.wrap(detail, WIDTH, initial_indent=" " * 10,
                               subsequent_indent=" " * 10)
        if r.item.check is not None or r.verdict == "fail":
            lines += textwrap.wrap(f"source: {r.source}", WIDTH, initial_indent=" " * 10,
                                   subsequent_indent=" " * 12)
    return lines


def _clip(text: str, width: int) -> str:
    mark = _ellipsis()
    return text if len(text) <= width else text[: width - len(mark)] + mark


def _section_title(r: Result) -> str:
    return f"{r.section_title or r.section}"

