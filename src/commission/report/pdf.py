"""Lay out the handover record with reportlab (platypus), driven by a form file.

The form (``forms/*.yaml``) says which sections appear in which order, their
headings and the caution texts; this module knows how to draw each section.
Every page carries "page N of M", the job id and the record hash in its footer.
"""

from __future__ import annotations

import io
from dataclasses import dataclass
from pathlib import Path
from typing import Any
from xml.sax.saxutils import escape

from ..checks.evaluate import Result, status_reasons
from ..present import SIGN_CONVENTION, format_value
from ..walk.state import JobState

FONT, BOLD = "CommSans", "CommSans-Bold"
FONT_DIR = Path(__file__).resolve().parent / "fonts"
SECTIONS = ("status", "summary", "instruments", "results", "photos", "charts", "cautions",
            "homeowner", "signatures")
_STATUS_WORDS = {"ready": "READY FOR HANDOVER", "not-ready": "NOT READY — DO NOT HAND OVER",
                 "incomplete": "INCOMPLETE — WORK STILL TO DO"}
_STATUS_COLOURS = {"ready": "#1f6f43", "not-ready": "#a12b2b", "incomplete": "#8a5a00"}
_VERDICT_COLOURS = {"pass": "#1f6f43", "fail": "#a12b2b", "review": "#8a5a00",
                    "n/a": "#55606b", "pending": "#55606b"}


class FormError(ValueError):
    pass


def load_form(path: Path) -> dict[str, Any]:
    import yaml

    from ..errors import UserError

    try:
        data = yaml.safe_load(path.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError) as exc:
        raise UserError(f"{path}: cannot read the form ({exc})") from None
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        line = f":{mark.line + 1}" if mark else ""
        raise UserError(f"{path}{line}: not valid YAML") from None
    if not isinstance(data, dict) or data.get("format") != "commission-form/1":
        raise UserError(f"{path}: not a form (needs 'format: commission-form/1')")
    sections = data.get("sections")
    if not isinstance(sections, list) or not sections:
        raise UserError(f"{path}: 'sections' must list some of: {', '.join(SECTIONS)}")
    unknown = [s for s in sections if s not in SECTIONS]
    if unknown:
        raise UserError(f"{path}: unknown section '{unknown[0]}' (accepted: "
                        f"{', '.join(SECTIONS)})")
    for key in ("cautions", "supplement"):
        if key in data and not isinstance(data[key], list | str):
            raise UserError(f"{path}: '{key}' must be text or a list of texts")
    return data


def register_fonts() -> None:
    from reportlab.lib.fonts import addMapping
    from reportlab.pdfbase import pdfmetrics
    from reportlab.pdfbase.ttfonts import TTFont

    if FONT in pdfmetrics.getRegisteredFontNames():
        return
    pdfmetrics.registerFont(TTFont(FONT, str(FONT_DIR / "DejaVuSans.ttf")))
    pdfmetrics.registerFont(TTFont(BOLD, str(FONT_DIR / "DejaVuSans-Bold.ttf")))
    addMapping(FONT, 0, 0, FONT)
    addMapping(FONT, 1, 0, BOLD)
    addMapping(FONT, 0, 1, FONT)
    addMapping(FONT, 1, 1, BOLD)


def _styles():
    from reportlab.lib import colors
    from reportlab.lib.styles import ParagraphStyle

    ink = colors.HexColor("#1d2a36")
    base = ParagraphStyle("base", fontName=FONT, fontSize=8.5, leading=11, textColor=ink)
    return {
        "base": base,
        "small": ParagraphStyle("small", parent=base, fontSize=7, leading=9),
        "cell": ParagraphStyle("cell", parent=base, fontSize=7.2, leading=9),
        "cellb": ParagraphStyle("cellb", parent=base, fontName=BOLD, fontSize=7.2, leading=9),
        "title": ParagraphStyle("title", parent=base, fontName=BOLD, fontSize=16, leading=20),
        "h1": ParagraphStyle("h1", parent=base, fontName=BOLD, fontSize=12, leading=15,
                             spaceBefore=10, spaceAfter=5,
                             textColor=colors.HexColor("#1f5f99")),
        "h2": ParagraphStyle("h2", parent=base, fontName=BOLD, fontSize=9.5, leading=12,
                             spaceBefore=7, spaceAfter=3),
        "plain": ParagraphStyle("plain", parent=base, fontSize=10, leading=14, spaceAfter=5),
        "caution": ParagraphStyle("caution", parent=base, fontSize=8.5, leading=11,
                                  leftIndent=8, borderPadding=4,
                                  textColor=colors.HexColor("#7a2020")),
    }


def _p(text: str, style) -> Any:
    from reportlab.platypus import Paragraph

    return Paragraph(escape(str(text)).replace("\n", "<br/>"), style)


@dataclass
class _Context:
    state: JobState
    results: list[Result]
    record_sha: str
    form: dict[str, Any]
    generated_at: str
    st: dict[str, Any]

    def __post_init__(self) -> None:
        self._by_id = {r.item.id: r for r in self.results}

    def result(self, item_id: str) -> Result | None:
        return self._by_id.get(item_id)

    def value(self, item_id: str, default: str = "—") -> str:
        r = self.result(item_id)
        if r is None or r.entry is None:
            return default
        if r.entry.action != "answer":
            return f"{r.entry.action}: {r.entry.raw}"
        return format_value(r.item, r.entry.value)

    def heading(self, key: str, default: str) -> str:
        return (self.form.get("headings") or {}).get(key, default)


def _table(rows, widths, header=True, zebra=True):
    from reportlab.lib import colors
    from reportlab.platypus import Table, TableStyle

    t = Table(rows, colWidths=widths, repeatRows=1 if header else 0)
    style = [
        ("VALIGN", (0, 0), (-1, -1), "TOP"),
        ("LEFTPADDING", (0, 0), (-1, -1), 3),
        ("RIGHTPADDING", (0, 0), (-1, -1), 3),
        ("TOPPADDING", (0, 0), (-1, -1), 2),
        ("BOTTOMPADDING", (0, 0), (-1, -1), 2),
        ("LINEBELOW", (0, 0), (-1, -1), 0.25, colors.HexColor("#d5dbe1")),
    ]
    if header:
        style.append(("BACKGROUND", (0, 0), (-1, 0), colors.HexColor("#e8eef4")))
    if zebra:
        for n in range(2 if header else 1, len(rows), 2):
            style.append(("BACKGROUND", (0, n), (-1, n), colors.HexColor("#f7f9fb")))
    t.setStyle(TableStyle(style))
    return t


# -- sections ----------------------------------------------------------------------

def _status(c: _Context) -> list:
    from reportlab.lib import colors
    from reportlab.platypus import Spacer, Table, TableStyle

    status = c.state.status(c.results)
    box = Table([[_p(_STATUS_WORDS[status], c.st["title"])]], colWidths=[480])
    box.setStyle(TableStyle([
        ("BOX", (0, 0), (-1, -1), 2, colors.HexColor(_STATUS_COLOURS[status])),
        ("BACKGROUND", (0, 0), (-1, -1), colors.HexColor("#fbfbf7")),
        ("TOPPADDING", (0, 0), (-1, -1), 8), ("BOTTOMPADDING", (0, 0), (-1, -1), 8),
    ]))
    out = [box, Spacer(1, 4), _p(f"Job status: {status}", c.st["base"])]
    reasons = status_reasons(c.results)
    if reasons:
        out.append(_p("What must still be done before handover:", c.st["h2"]))
        for reason in reasons:
            out.append(_p(f"• {reason}", c.st["base"]))
    else:
        out.append(_p("Every critical item passes and nothing is left unanswered.",
                      c.st["base"]))
    return out


def _summary(c: _Context) -> list:
    job = c.state.job
    d = job.details
    v = c.value
    rows = [
        ("Site", d.get("site")), ("Address", d.get("address")), ("Client", d.get("client")),
        ("Installer", d.get("installer")), ("Installer contact", d.get("installer_contact")),
        ("Installer registration", d.get("installer_registration")),
        ("PV array", v("install.pv.size")), ("Inverter", v("install.inverter")),
        ("Diverter", f"{v('install.diverter.model')}, firmware {v('install.diverter.firmware')}"),
        ("Diverter settings", v("install.diverter.settings")),
        ("Control of the element", v("install.diverter.control")),
        ("Element", f"{v('element.rated_power')} at {v('element.rated_voltage')}, cold "
                    f"resistance {v('element.cold_resistance')}"),
        ("Cylinder", f"{v('install.cylinder.volume')}, element {v('install.element.position')}"
                     f", sensor {v('install.sensor.position')}"),
        ("Earthing system", v("supply.earthing")),
        ("Circuit breaker", f"type {v('protection.breaker.curve')} "
                            f"{v('protection.breaker.rating')}; cable Iz "
                            f"{v('protection.cable.iz')}"),
        ("RCD", f"type {v('protection.rcd.type')}, {v('protection.rcd.delay')}, IΔn "
                f"{v('protection.rcd.idn')}"),
        ("Checklist", f"{job.checklist_id} {job.checklist_version} "
                      f"(SHA-256 {job.checklist_sha256[:16]}…)"),
        ("Job", f"{job.short_id} ({job.uuid}), started {job.created_at[:10]}"),
        ("Record made", c.generated_at),
    ]
    table = [[_p(k, c.st["cellb"]), _p(val or "—", c.st["cell"])] for k, val in rows]
    return [_p(c.heading("summary", "Site and installation"), c.st["h1"]),
            _table(table, [130, 350], header=False)]


def _instruments(c: _Context) -> list:
    used = {e.instrument_id for e in c.state.entries if e.instrument_id}
    rows = [[_p(h, c.st["cellb"]) for h in ("Serial", "Make", "Model", "Calibration due")]]
    for i in sorted(used):
        inst = c.state.instruments.get(i)
        if inst:
            rows.append([_p(x, c.st["cell"]) for x in
                         (inst.serial, inst.make, inst.model, inst.calibration_due)])
    out = [_p(c.heading("instruments", "Instruments used"), c.st["h1"])]
    if len(rows) == 1:
        return [*out, _p("No reading names an instrument.", c.st["base"])]
    return [*out, _table(rows, [100, 110, 170, 100])]


def _verdict_cell(verdict: str, st) -> Any:
    colour = _VERDICT_COLOURS.get(verdict, "#1d2a36")
    from reportlab.platypus import Paragraph

    return Paragraph(f'<font color="{colour}"><b>{escape(verdict)}</b></font>', st["cell"])


def _results(c: _Context) -> list:
    out = [_p(c.heading("results", "Every item: reading, expectation, verdict"), c.st["h1"]),
           _p(SIGN_CONVENTION + " ! marks a critical item: it must pass before handover.",
              c.st["small"])]
    section = None
    rows: list = []

    def flush():
        if len(rows) > 1:
            out.append(_table(list(rows), [112, 84, 62, 36, 186]))

    for r in c.results:
        if r.section != section:
            flush()
            section = r.section
            out.append(_p(r.section_title, c.st["h2"]))
            rows = [[_p(h, c.st["cellb"]) for h in
                     ("Item", "Measured", "Expected", "Verdict", "Reason · source")]]
        mark = "! " if r.item.critical else ""
        item_text = f"{mark}{r.item.id}\n{r.item.prompt}"
        value = c.value(r.item.id, default="")
        measured = value
        if r.measured is not None and r.measured.unit:
            figure = r.measured.text()
            if not value:
                measured = figure
            elif figure != value:
                measured = f"{value}\n→ {figure}"
        if r.entry is not None and r.entry.instrument_id:
            inst = c.state.instruments.get(r.entry.instrument_id)
            if inst:
                measured += f"\n({inst.serial})"
        if r.entry is not None:
            measured += f"\n{r.entry.at[:16].replace('T', ' ')}Z"
        expected = r.expected.text() if r.expected else ""
        reason = f"{r.reason}\nSource: {r.source}"
        if len(r.history) > 1:
            prior = "; ".join(f"{h.raw} ({h.action}, {h.at[:16].replace('T', ' ')}Z)"
                              for h in r.history[:-1])
            reason += f"\nCorrected; replaced: {prior}"
        rows.append([_p(item_text, c.st["cell"]), _p(measured, c.st["cell"]),
                     _p(expected, c.st["cell"]), _verdict_cell(r.verdict, c.st),
                     _p(reason, c.st["cell"])])
    flush()
    return out


def _photos(c: _Context) -> list:
    from reportlab.platypus import Image, KeepTogether

    out = [_p(c.heading("photos", "Photos"), c.st["h1"])]
    n = 0
    for r in c.results:
        if r.item.kind != "photo" or r.entry is None or r.entry.action != "answer":
            continue
        path = c.state.files.path(r.entry.value["sha256"])
        if path is None:
            continue
        try:
            img = Image(str(path))
        except Exception:  # noqa: BLE001 — a photo reportlab cannot read is listed, not fatal
            out.append(_p(f"{r.item.prompt}: {r.entry.value['name']} (cannot be shown)",
                          c.st["base"]))
            continue
        scale = min(220 / img.imageWidth, 160 / img.imageHeight)
        img.drawWidth, img.drawHeight = img.imageWidth * scale, img.imageHeight * scale
        out.append(KeepTogether([_p(f"{r.item.prompt} — {r.entry.value['name']}, SHA-256 "
                                    f"{r.entry.value['sha256'][:16]}…", c.st["small"]), img]))
        n += 1
    return out if n else []


def _cautions(c: _Context) -> list:
    texts = list(c.state.checklist.cautions) + list(c.form.get("cautions") or [])
    out = [_p(c.heading("cautions", "Cautions"), c.st["h1"])]
    for text in dict.fromkeys(texts):
        out.append(_p(f"⚠ {text}", c.st["caution"]))
    supplement = c.form.get("supplement") or (
        "This record supplements, and does not replace, any certificate, report or "
        "notification that the local wiring rules require.")
    out.append(_p(supplement if isinstance(supplement, str) else " ".join(supplement),
                  c.st["base"]))
    out.append(_p("Signing is offline: no timestamp authority is used, so a signature's time "
                  "is the time the signer's computer claimed.", c.st["small"]))
    return out


def _homeowner(c: _Context) -> list:
    from reportlab.platypus import PageBreak

    d = c.state.job.details
    v = c.value
    contact = d.get("installer_contact") or "the installer"
    who = d.get("installer") or "your installer"
    lines = [
        f"What was fitted: a solar diverter ({v('install.diverter.model')}) that sends spare "
        f"solar power to the {v('element.rated_power')} immersion element in your "
        f"{v('install.cylinder.volume')} hot-water cylinder, instead of exporting it.",
        f"Where the isolator is: {v('handover.isolator')}. Switch it off before anyone works on "
        "the diverter or the cylinder.",
        "If the RCD trips: switch off the diverter's isolator, then reset the RCD. If it trips "
        f"again, leave it off and call {who} on {contact}.",
        "If the water is not hot: on a dull day the sun may not heat it; the boost (timer) "
        f"setting is: {v('install.diverter.settings')}. If it is still cold after a boost, "
        "check the isolator and call the installer.",
        "Test the RCD: press its test button every few months (common practice; follow the "
        "device maker's instructions). It should switch off at once; switch it back on.",
        "How the store reaches 60 °C: "
        f"{v('water.regime')}. Water stored at 60 °C or more keeps bacteria such as "
        "Legionella from growing.",
        "Very hot water scalds: water above about 50 °C can burn quickly, especially children "
        "and older people. Check taps before bathing.",
        f"Whom to call: {who}, {contact}.",
    ]
    from reportlab.platypus import Paragraph

    out = [PageBreak(), _p(c.heading("homeowner", "For the homeowner"), c.st["h1"])]
    for line in lines:
        lead, _, rest = line.partition(": ")
        out.append(Paragraph(f"<b>{escape(lead)}:</b> {escape(rest)}", c.st["plain"]))
    return out


def _signatures(c: _Context) -> list:
    from reportlab.platypus import KeepTogether, Spacer

    d = c.state.job.details
    blocks = [("Installer", d.get("installer", ""), d.get("installer_registration", "")),
              ("Reviewer (electrician)", "", ""), ("Homeowner acknowledgement", d.get("client", ""),
                                                   "")]
    rows = [[_p(h, c.st["cellb"]) for h in ("Role", "Name", "Registration", "Date",
                                             "Signature")]]
    for role, name, reg in blocks:
        rows.append([_p(role, c.st["cell"]), _p(name, c.st["cell"]), _p(reg, c.st["cell"]),
                     _p("", c.st["cell"]), _p("\n\n", c.st["cell"])])
    note = ("Digital signatures, where applied, are listed by any PDF reader's signature "
            "panel and checked by 'commission verify'.")
    table = _table(rows, [110, 120, 80, 60, 110], zebra=False)
    table._argH = [None] + [34] * (len(rows) - 1)  # room to sign by hand
    return [KeepTogether([_p(c.heading("signatures", "Signatures"), c.st["h1"]),
                          table, Spacer(1, 4),
                          _p(note, c.st["small"])])]


def _charts(c: _Context) -> list:
    from .chartdata import chart_flowables

    flow = chart_flowables(c)
    if not flow:
        return []
    return [_p(c.heading("charts", "Measurements in pictures"), c.st["h1"]), *flow]


_BUILDERS = {"status": _status, "summary": _summary, "instruments": _instruments,
             "results": _results, "photos": _photos, "charts": _charts,
             "cautions": _cautions, "homeowner": _homeowner, "signatures": _signatures}


def render(state: JobState, results: list[Result], record_sha: str, form: dict[str, Any],
           generated_at: str) -> bytes:
    from reportlab.lib.pagesizes import A4
    from reportlab.lib.units import mm
    from reportlab.pdfgen import canvas
    from reportlab.platypus import SimpleDocTemplate

    register_fonts()
    st = _styles()
    c = _Context(state, results, record_sha, form, generated_at, st)
    job = state.job
    footer_left = f"Job {job.short_id} · record SHA-256 {record_sha}"

    class NumberedCanvas(canvas.Canvas):
        def __init__(self, *args, **kwargs):
            super().__init__(*args, **kwargs)
            self._pages: list[dict] = []

        def showPage(self):  # noqa: N802 (reportlab's name)
            self._pages.append(dict(self.__dict__))
            self._startPage()

        def save(self):
            total = len(self._pages)
            for page in self._pages:
                self.__dict__.update(page)
                self.setFont(FONT, 6.5)
                self.setFillColorRGB(0.3, 0.35, 0.4)
                self.drawString(15 * mm, 9 * mm, footer_left)
                self.drawRightString(A4[0] - 15 * mm, 9 * mm,
                                     f"page {self._pageNumber} of {total}")
                self.setFont(FONT, 7)
                header = (f"{form.get('title', 'Commissioning record')} · "
                          f"{job.details.get('site', '')}")
                if len(header) > 110:
                    header = header[:109] + "…"
                self.drawString(15 * mm, A4[1] - 10 * mm, header)
                super().showPage()
            super().save()

    buf = io.BytesIO()
    doc = SimpleDocTemplate(
        buf, pagesize=A4, leftMargin=15 * mm, rightMargin=15 * mm, topMargin=16 * mm,
        bottomMargin=16 * mm, title=f"{form.get('title', 'Commissioning record')} — "
        f"{job.details.get('site', '')}", author=job.details.get("installer", ""),
        subject=f"commission record sha256:{record_sha}",
        creator="commission", keywords=[f"record-sha256:{record_sha}", f"job:{job.uuid}"],
    )
    story = [_p(form.get("title", "Commissioning record"), st["title"])]
    for key in form["sections"]:
        story += _BUILDERS[key](c)
    doc.build(story, canvasmaker=NumberedCanvas)
    return buf.getvalue()
