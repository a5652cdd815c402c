"""The reviewer's visible stamp, and the rule that nothing else visible follows signing.

A record reserves one box for the reviewer's stamp: its field name, page and rectangle
are declared inside the signed record (``signing.reviewer_stamp``). ``countersign``
draws there, and only there, three things: the signer's name, the signing time and the
certificate's SHA-256 fingerprint (grouped for reading aloud). The appearance is a page
drawn by reportlab in the bundled DejaVu font (embedded, as PDF/A wants), imported by
pyHanko as the widget's form XObject; the time shown is the time pyHanko writes in the
signature's ``/M``.

``verify`` (:func:`check_widgets`, after the record is read) accepts a widget with a
visible appearance only when it is that box, filled by a signature other than the first,
and its appearance, extracted as text with pdfplumber, reads exactly the lines
:func:`stamp_lines` makes from that signature's own certificate and ``/M`` and holds
nothing but text (no image, path or rectangle). Every other annotation on a page, and
every other widget with an appearance, is refused: ``modified after signing``.
Limitation: a glyph is read through the font's Unicode map, not by its shape; a font
whose glyphs are drawn to look like other letters would pass. The stamp is made by a
signer the reviewer trusts (every signature must be), which bounds that.
"""

from __future__ import annotations

import datetime as dt
import io
from typing import Any

TIME_FORMAT = "%Y-%m-%d %H:%M:%S %z"
_TOLERANCE = 1.0  # PDF points between the declared box and the widget's rectangle


def stamp_lines(name: str, when: str, fingerprint: str) -> list[str]:
    from ..fingerprint import readable

    grouped = readable(fingerprint)
    half = len(grouped) // 2
    cut = grouped.rfind(" ", 0, half + 1)
    return [f"Countersigned by {name}", f"Signed {when}", "Certificate SHA-256:",
            grouped[:cut], grouped[cut + 1:]]


def stamp_pdf(lines: list[str], width: float, height: float) -> bytes:
    """One page the size of the box with the lines, in the bundled font."""
    from reportlab.pdfgen import canvas

    from .pdf import FONT, register_fonts

    register_fonts()
    buf = io.BytesIO()
    c = canvas.Canvas(buf, pagesize=(width, height), initialFontName=FONT,
                      initialFontSize=7, invariant=1)
    size = max(5.0, min(8.0, (height - 6) / (len(lines) * 1.2)))
    c.setFont(FONT, size)
    c.setFillColorRGB(0.1, 0.16, 0.21)
    y = height - 3 - size
    for line in lines:
        c.drawString(4, y, line)
        y -= size * 1.2
    c.showPage()
    c.save()
    return buf.getvalue()


def stamp_style(name: str, fingerprint: str):
    """A pyHanko stamp style drawing :func:`stamp_lines` with the signing time pyHanko
    hands it (``text_params['ts']``, formatted with :data:`TIME_FORMAT`)."""
    from pyhanko.pdf_utils import content
    from pyhanko.pdf_utils.reader import PdfFileReader
    from pyhanko.stamp import StaticStampStyle, TextStampStyle
    from pyhanko.stamp.static import StaticContentStamp

    class _Page(content.PdfContent):
        def __init__(self, data: bytes):
            self.data = data
            super().__init__()

        def render(self) -> bytes:
            from pyhanko.pdf_utils.layout import BoxConstraints

            reader = PdfFileReader(io.BytesIO(self.data))
            xobj = self._ensure_writer.import_page_as_xobject(reader, page_ix=0)
            self.resources.xobject["/Stamp"] = xobj
            x1, y1, x2, y2 = xobj.get_object()["/BBox"]
            self.box = BoxConstraints(width=abs(x1 - x2), height=abs(y1 - y2))
            return b"/Stamp Do"

    class _Style(TextStampStyle):
        def create_stamp(self, writer, box, text_params):
            lines = stamp_lines(name, str(text_params.get("ts", "")), fingerprint)
            page = _Page(stamp_pdf(lines, box.width, box.height))
            inner = StaticStampStyle(background=page, background_opacity=1.0, border_width=0)
            return StaticContentStamp(writer=writer, style=inner, box=box)

    return _Style(timestamp_format=TIME_FORMAT, border_width=0)


# -- verification ---------------------------------------------------------------------


class WidgetProblem(Exception):
    """Something visible the record does not allow (one line)."""


def _visible(annot) -> bool:
    """A non-empty rectangle, not hidden, with a normal appearance that draws something."""
    from pyhanko.pdf_utils import generic

    try:
        x1, y1, x2, y2 = (float(v) for v in annot["/Rect"])
    except Exception:  # noqa: BLE001 — no usable rectangle: nothing is shown
        return False
    if abs(x2 - x1) < 0.01 or abs(y2 - y1) < 0.01:
        return False
    if int(annot.get("/F", 0)) & 2:  # Hidden
        return False
    ap = annot.get("/AP")
    if ap is None:
        return False
    normal = ap.get_object().get("/N")
    if normal is None:
        return False
    normal = normal.get_object()
    if isinstance(normal, generic.DictionaryObject) and not isinstance(
            normal, generic.StreamObject):  # appearance states: any may be shown
        return True
    return bool(normal.data.strip())  # an empty content stream draws nothing


def _appearance_text(annot) -> tuple[str, int]:
    """(text, number of non-text objects) of a widget's normal appearance, drawn on a
    page of its own and read with pdfplumber."""
    import pdfplumber
    from pyhanko.pdf_utils import generic
    from pyhanko.pdf_utils.writer import PdfFileWriter

    normal = annot["/AP"]["/N"].get_object()
    x1, y1, x2, y2 = [float(v) for v in normal.get("/BBox", [0, 0, 1, 1])]
    bbox = [min(x1, x2), min(y1, y2), max(x1, x2), max(y1, y2)]
    w = PdfFileWriter()
    ref = w.import_object(normal)
    if not isinstance(ref, generic.IndirectObject | generic.Reference):
        ref = w.add_object(ref)  # a stream is always an indirect object
    page = generic.DictionaryObject({
        generic.NameObject("/Type"): generic.NameObject("/Page"),
        generic.NameObject("/MediaBox"): generic.ArrayObject(
            [generic.FloatObject(v) for v in bbox]),
        generic.NameObject("/Resources"): generic.DictionaryObject({
            generic.NameObject("/XObject"): generic.DictionaryObject(
                {generic.NameObject("/A"): ref})}),
        generic.NameObject("/Contents"): w.add_object(
            generic.StreamObject(stream_data=b"q /A Do Q")),
    })
    w.insert_page(page)
    out = io.BytesIO()
    w.write(out)
    out.seek(0)
    with pdfplumber.open(out) as pdf:
        p = pdf.pages[0]
        words = p.extract_words()
        drawn = len(p.images) + len(p.rects) + len(p.lines) + len(p.curves)
    return " ".join(x["text"] for x in words), drawn


def check_widgets(reader, record, signatures: list[Any]) -> None:
    """Raise :class:`WidgetProblem` for any annotation other than a signature widget, and
    for any widget with a visible appearance that is not the reviewer's stamp in the box
    the record reserves, drawn as ``countersign`` draws it. ``signatures``: pyHanko
    ``EmbeddedPdfSignature`` objects in signing order."""
    box = getattr(record, "reviewer_stamp", None)
    by_field = {es.field_name: es for es in signatures}
    first = signatures[0].field_name if signatures else None
    stamps = 0
    for n, page_ref in enumerate(_pages(reader)):
        page = page_ref.get_object()
        annots = page.get("/Annots")
        if annots is None:
            continue
        for annot_ref in annots.get_object():
            annot = annot_ref.get_object()
            subtype = str(annot.get("/Subtype", ""))
            if subtype != "/Widget":
                raise WidgetProblem(f"modified after signing: page {n + 1} carries an "
                                    f"annotation ({subtype or 'no type'}) that commission "
                                    "never draws")
            if not _visible(annot):
                continue
            name = _field_name(annot)
            where = f"signature field '{name}' on page {n + 1}"
            es = by_field.get(name)
            if es is None or name == first:
                raise WidgetProblem(f"modified after signing: {where} shows an appearance "
                                    "(only the reviewer's stamp may, in its reserved box)")
            if box is None or name != box.field or n != box.page:
                raise WidgetProblem(f"modified after signing: {where} shows an appearance "
                                    "outside the box the record reserves for the reviewer's "
                                    "stamp")
            rect = [float(v) for v in annot["/Rect"]]
            rect = [min(rect[0], rect[2]), min(rect[1], rect[3]),
                    max(rect[0], rect[2]), max(rect[1], rect[3])]
            if any(abs(a - b) > _TOLERANCE for a, b in zip(rect, box.rect, strict=True)):
                raise WidgetProblem(f"modified after signing: {where} is not the reserved "
                                    "stamp box (its rectangle differs)")
            _check_stamp(annot, es, where)
            stamps += 1
            if stamps > 1:
                raise WidgetProblem("modified after signing: more than one reviewer's stamp")


def _check_stamp(annot, es, where: str) -> None:
    import hashlib

    from .signatures import _subject

    cert = es.signer_cert
    name, _ = _subject(cert)
    fp = hashlib.sha256(cert.dump()).hexdigest()
    claimed = es.self_reported_timestamp
    if claimed is None:
        raise WidgetProblem(f"{where}: the stamp's signature claims no time")
    if claimed.tzinfo is None:
        claimed = claimed.replace(tzinfo=dt.UTC)
    want = " ".join(stamp_lines(name, claimed.strftime(TIME_FORMAT), fp))
    try:
        text, drawn = _appearance_text(annot)
    except Exception as exc:  # noqa: BLE001 — an appearance that cannot be read is refused
        raise WidgetProblem(f"modified after signing: {where}: its appearance cannot be "
                            f"read ({type(exc).__name__})") from None
    if drawn:
        raise WidgetProblem(f"modified after signing: {where}: the stamp draws more than "
                            "text (images or shapes)")
    if "".join(text.split()) != "".join(want.split()):
        raise WidgetProblem(f"modified after signing: {where}: the stamp does not show "
                            f"what countersign draws for that signature ({name}, "
                            f"{claimed.strftime(TIME_FORMAT)}, its fingerprint)")


def _field_name(annot) -> str:
    node, parts, seen = annot, [], 0
    while node is not None and seen < 32:
        if "/T" in node:
            parts.append(str(node["/T"]))
        parent = node.get("/Parent")
        node = parent.get_object() if parent is not None else None
        seen += 1
    return ".".join(reversed(parts))


MAX_PAGES = 10_000


def _pages(reader) -> list[Any]:
    """The page dictionaries in order; a page tree with a cycle or beyond
    :data:`MAX_PAGES` is cut short (pyHanko's own checks judge such a tree)."""
    out: list[Any] = []
    seen: set[int] = set()
    try:
        stack = [(reader.root["/Pages"], 0)]
    except Exception:  # noqa: BLE001
        return out
    while stack and len(out) < MAX_PAGES:
        node, depth = stack.pop()
        try:
            node = node.get_object()
        except Exception:  # noqa: BLE001
            continue
        if id(node) in seen or depth > 32:
            continue
        seen.add(id(node))
        if "/Kids" in node:
            stack.extend((kid, depth + 1) for kid in reversed(list(node["/Kids"])))
        else:
            out.append(node)
    return out
