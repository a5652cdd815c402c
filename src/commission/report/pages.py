"""The visible pages say what the signed record says.

After the signatures and the record's content are verified, the text of every page is
extracted with pdfplumber (on pdfminer.six) and matched against the record:

* every page's footer names the record's job and its SHA-256 (``Job ID · record SHA-256
  HEX``) and its place (``page N of M``), and no page prints another record hash;
* page 1 says ``Job status: STATUS`` and the status box's words, for the record's status,
  and no page states another job status;
* the job's UUID is printed (the summary);
* in every results table (found by its column heads: Item, Answer or Measured, …,
  Verdict), every item row shows the record's verdict for that item and begins its
  answer cell with the answer the record holds; every item of the record appears in one.

Rows are found from the lines reportlab draws below each row and the item id printed
under the question; cells from the x position of the column heads. The matching ignores
white space (a cell may wrap anywhere), never the characters. See DEVELOPERS.md, "Pages
and record", for why the text is extracted rather than the pages re-rendered.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from typing import IO, Any

_HEADS = ("Phase", "Item", "Answer", "Measured", "Figure", "Expected", "Verdict", "Reason")
_STATUS_RE = re.compile(r"Jobstatus:(not-ready|ready|incomplete)")
_HASH_RE = re.compile(r"recordSHA-256([0-9a-f]{64})")


class PageMismatch(Exception):
    """The pages do not say what the record says (one line)."""


def _flat(text: str) -> str:
    return "".join(text.split())


@dataclass
class _Word:
    text: str
    x0: float
    top: float
    bottom: float


def expected_rows(record, results) -> dict[str, tuple[str, str]]:
    """Item id -> (answer as the results table prints it, the record's verdict)."""
    from ..present import format_value
    from .pdf import _file_text

    verdicts = {v.id: v.verdict for v in record.verdicts}
    out: dict[str, tuple[str, str]] = {}
    for r in results:
        answer = ""
        if r.entry is not None:
            if r.entry.action != "answer":
                answer = f"{r.entry.action}: {r.entry.raw}"
            elif isinstance(r.entry.value, dict) and "sha256" in r.entry.value:
                answer = _file_text(r.entry.value)
            else:
                answer = format_value(r.item, r.entry.value, r.entry.raw)
        out[r.item.id] = (answer, verdicts.get(r.item.id, r.verdict))
    return out


def check_pages(stream: IO[bytes], record, record_sha: str, results,
                *, answers: bool = True) -> None:
    """Raise :class:`PageMismatch` naming the first page or item that differs.
    ``answers``: also match the answer cells (records of format 1 used other words)."""
    import pdfplumber

    from .pdf import _STATUS_WORDS

    rows = expected_rows(record, results)
    short, uuid, status = record.job.id, record.job.uuid, record.status
    seen: set[str] = set()
    uuid_seen = False
    stream.seek(0)
    with pdfplumber.open(stream) as pdf:
        total = len(pdf.pages)
        for n, page in enumerate(pdf.pages, start=1):
            words, lines = page_words_and_rules(page)
            flat = "".join(w.text for w in words)
            where = f"page {n} of {total}"
            if f"Job{_flat(short)}·recordSHA-256{record_sha}" not in flat:
                raise PageMismatch(f"{where}: its footer does not name job {short} and the "
                                   f"record's SHA-256 {record_sha[:16]}…")
            if f"page{n}of{total}" not in flat:
                raise PageMismatch(f"{where}: its footer does not say 'page {n} of {total}'")
            other = {h for h in _HASH_RE.findall(flat) if h != record_sha}
            if other:
                raise PageMismatch(f"{where}: prints another record SHA-256 "
                                   f"{sorted(other)[0][:16]}…")
            stated = set(_STATUS_RE.findall(flat))
            if stated - {status}:
                raise PageMismatch(f"{where}: says 'Job status: {sorted(stated - {status})[0]}'"
                                   f" but the record's status is {status}")
            if n == 1 and (status not in stated or _flat(_STATUS_WORDS[status]) not in flat):
                raise PageMismatch(f"page 1 does not state the record's status {status}")
            uuid_seen = uuid_seen or uuid in flat
            for item_id, verdict_cell, answer_cell in _table_rows(words, lines, rows):
                answer, verdict = rows[item_id]
                seen.add(item_id)
                if _flat(verdict_cell) != _flat(verdict):
                    raise PageMismatch(f"{where}: item {item_id} shows the verdict "
                                       f"'{verdict_cell[:40]}' but the record says {verdict}")
                if answers and not _flat(answer_cell).startswith(_flat(answer)):
                    raise PageMismatch(f"{where}: item {item_id} shows '{answer_cell[:40]}' "
                                       f"but the record holds '{answer[:40]}'")
    if not uuid_seen:
        raise PageMismatch(f"no page names the record's job {short} ({uuid})")
    missing = [i for i in rows if i not in seen]
    if missing:
        raise PageMismatch(f"no results table on the pages shows item {missing[0]}"
                           + (f" (and {len(missing) - 1} more)" if len(missing) > 1 else ""))


def page_words_and_rules(page) -> tuple[list[_Word], list[float]]:
    """A pdfplumber page's words (as ``page.extract_words(keep_blank_chars=False)`` finds
    them) and the tops of its horizontal rules (``page.lines`` less than 0.5 pt tall),
    sorted and rounded to 0.1 pt.

    pdfplumber's own ``page.chars`` and ``page.lines`` copy and resolve every attribute of
    every layout object (colours, fonts, matrices), half the time of a record's check; only
    the positions and texts are needed, so they are taken from the same layout objects with
    pdfplumber's arithmetic (page height and MediaBox origin) and grouped into words by
    pdfplumber's own ``utils.extract_words``. A test compares both on a signed record."""
    from unicodedata import normalize as normalize_unicode

    from pdfminer.layout import LTChar, LTContainer, LTLine
    from pdfplumber.utils import extract_words

    height = page.height
    mb_x0, mb_top = page.mediabox[:2]
    doctop = page.initial_doctop
    norm = page.pdf.unicode_norm
    chars: list[dict[str, Any]] = []
    rules: set[float] = set()

    def walk(objs) -> None:
        for obj in objs:
            if isinstance(obj, LTContainer):
                walk(obj)
            elif isinstance(obj, LTChar):
                text = obj.get_text()
                top = (height - obj.y1) + mb_top
                chars.append({"text": text if norm is None else normalize_unicode(norm, text),
                              "x0": obj.x0 + mb_x0, "x1": obj.x1 + mb_x0, "top": top,
                              "bottom": (height - obj.y0) + mb_top, "doctop": doctop + top,
                              "upright": obj.upright})
            elif type(obj) is LTLine and abs(obj.y1 - obj.y0) < 0.5:
                rules.add(round(float((height - obj.y1) + mb_top), 1))

    walk(page.layout)
    words = [_Word(w["text"], float(w["x0"]), float(w["top"]), float(w["bottom"]))
             for w in extract_words(chars, keep_blank_chars=False)]
    return words, sorted(rules)


def _table_rows(words: list[_Word], lines: list[float], rows: dict[str, Any]):
    """(item id, verdict cell text, answer cell text) for every item row on a page.

    A row is the band between two consecutive horizontal rules; its table is the one
    whose head row (the nearest row above holding an ``Item`` head) also has a
    ``Verdict`` head; its item is the id printed in its Item cell (last in this release,
    first after the critical mark in format 1), however the id wrapped."""
    heads = [w for w in words if w.text in _HEADS]
    item_heads = sorted((h for h in heads if h.text == "Item"), key=lambda h: h.top)
    ids = sorted(rows, key=len, reverse=True)
    for top, bottom in zip(lines, lines[1:], strict=False):
        above = [h for h in item_heads if h.bottom <= top + 1.0]
        if not above:
            continue
        head = above[-1]
        row_heads = sorted((h for h in heads if abs(h.top - head.top) < 1.0),
                           key=lambda h: h.x0)
        names = [h.text for h in row_heads]
        if "Verdict" not in names:
            continue  # another table (findings) or none

        def column(name: str, names=names, row_heads=row_heads) -> tuple[float, float] | None:
            if name not in names:
                return None
            k = names.index(name)
            left = row_heads[k].x0 - 2.0
            right = row_heads[k + 1].x0 - 2.0 if k + 1 < len(row_heads) else 1e9
            return left, right

        band = [x for x in words if top < x.top and x.bottom <= bottom + 0.5]

        def cell(col: tuple[float, float] | None, band=band) -> str:
            if col is None:
                return ""
            inside = sorted((x for x in band if col[0] <= x.x0 < col[1]),
                            key=lambda x: (round(x.top, 1), x.x0))
            return " ".join(x.text for x in inside)

        item = _flat(cell(column("Item")))
        found = next((i for i in ids if item.endswith(i) or item.lstrip("!").startswith(i)),
                     None)
        if found is None:
            continue
        yield found, cell(column("Verdict")), cell(column("Answer") or column("Measured"))
