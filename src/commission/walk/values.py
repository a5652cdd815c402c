"""Turn what a person typed into an item's value, or one line saying what is accepted."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any

from ..checklist.model import Item, fold
from ..units import format_number, parse_reading, quote_typed

YES = {"y", "yes"}
NO = {"n", "no"}
# Photos are embedded in the record as they are: formats a PDF can carry.
_IMAGE_MAGIC = {b"\xff\xd8\xff": "JPEG", b"\x89PNG\r\n\x1a\n": "PNG"}


class BadAnswer(ValueError):
    """The answer cannot be used; the message says what would be accepted."""


def choose(item: Item, raw: str) -> tuple[str, str]:
    """The option a typed choice answer means, and how it was matched: 'exact', 'number',
    'spelling' (case, spaces and dashes ignored, or an alias declared in the checklist) or
    'prefix' (the start of exactly one option). One line saying what is accepted if none."""
    options = item.options or []
    for option in options:
        if raw == option:
            return option, "exact"
    if raw.isdecimal() and 1 <= int(raw) <= len(options):  # not isdigit: "²"
        return options[int(raw) - 1], "number"
    key = fold(raw)
    spellings: dict[str, str] = {fold(o): o for o in options}
    for option, others in (item.aliases or {}).items():
        for other in others:
            spellings[fold(other)] = option
    if key in spellings:
        return spellings[key], "spelling"
    starts = sorted({o for k, o in spellings.items() if key and k.startswith(key)},
                    key=options.index)
    if len(starts) == 1:
        return starts[0], "prefix"
    listed = ", ".join(f"{n} {o}" for n, o in enumerate(options, 1))
    if len(starts) > 1:
        raise BadAnswer(f"{quote_typed(raw)} could be {' or '.join(starts)}; type more of "
                        f"it, or its number: {listed}")
    raise BadAnswer(
        f"{quote_typed(raw)} is not one of the options; type its number or name: {listed}"
    )


def pasted_path(raw: str) -> str:
    """A path as a terminal or a file manager pastes it: in quotes, as a file:// address,
    or with backslash-escaped spaces."""
    from urllib.parse import unquote, urlparse

    text = raw.strip()
    if len(text) >= 2 and text[0] == text[-1] and text[0] in "'\"":
        text = text[1:-1]
    if text.lower().startswith("file://"):
        parsed = urlparse(text)
        if parsed.netloc in ("", "localhost"):
            text = unquote(parsed.path)
    elif "\\ " in text and not Path(text).exists():
        import shlex

        try:
            parts = shlex.split(text)
        except ValueError:
            parts = []
        if len(parts) == 1:
            text = parts[0]
    return text


@dataclass(frozen=True)
class Answer:
    value: Any  # SI float, bool, option text, text, or a Path for file/photo items
    unit_typed: str | None = None
    echo: str = ""  # how the value was read, shown back to the person
    path: Path | None = None


def parse_answer(item: Item, text: str, base: Path | None = None) -> Answer:
    raw = text.strip()
    if not raw:
        raise BadAnswer("empty answer")
    from ..termtext import first_control

    bad = first_control(raw, allow_newline=True)
    if bad:  # a record refuses them (ISO 6429 C0/C1), so they are refused when typed
        raise BadAnswer(f"the answer holds the control character {bad}; type plain text")
    if item.kind == "confirm":
        word = raw.lower()
        if word in YES:
            return Answer(True, echo="yes")
        if word in NO:
            return Answer(False, echo="no")
        raise BadAnswer(f"{quote_typed(raw)} is not yes or no; type y or n")
    if item.kind == "reading":
        assert item.quantity and item.unit
        acc = item.accept
        try:
            parsed = parse_reading(raw, item.quantity, item.unit,
                                   acc.min if acc else None, acc.max if acc else None)
        except ValueError as exc:
            raise BadAnswer(str(exc)) from None
        if parsed.bound == "open":
            echo = "read as an open circuit (OL)"
        elif parsed.bound == "over":
            echo = f"read as {parsed.shown} (over the instrument's range: a lower bound)"
        else:
            echo = f"read as {parsed.shown}"
        return Answer(parsed.stored(), parsed.unit_typed, echo)
    if item.kind == "choice":
        option, how = choose(item, raw)
        return Answer(option, echo=option if how == "exact" else f"read as {option}")
    if item.kind == "text":
        return Answer(raw, echo="")
    # file and photo: a path to something taken on site
    raw = pasted_path(raw)
    try:
        path = Path(raw).expanduser()
    except RuntimeError:  # '~nosuchuser/...'
        raise BadAnswer(f"{quote_typed(raw)}: no such user's home folder; give the path of "
                        f"the {item.kind}") from None
    if base is not None and not path.is_absolute():
        path = base / path
    try:
        if not path.is_file():
            what = "a folder" if path.is_dir() else "no such file"
            raise BadAnswer(f"{quote_typed(raw)}: {what}; give the path of the {item.kind}")
        size = path.stat().st_size
        if size == 0:
            raise BadAnswer(f"{quote_typed(raw)}: the file is empty")
        head = b""
        if item.kind == "photo":
            with path.open("rb") as handle:
                head = handle.read(8)
    except OSError as exc:  # a name too long, no permission, ...
        raise BadAnswer(f"{quote_typed(raw)}: cannot be read ({exc.strerror or exc}); give "
                        f"the path of the {item.kind}") from None
    if item.kind == "photo":
        kind = next((k for magic, k in _IMAGE_MAGIC.items() if head.startswith(magic)), None)
        if kind is None:
            raise BadAnswer(f"{quote_typed(raw)}: not a JPEG or PNG image (accepted: .jpg, .png)")
    return Answer(path, echo=f"{path.name}, {format_number(size)} bytes", path=path)
