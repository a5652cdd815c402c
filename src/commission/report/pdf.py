"""Lay out the handover record with reportlab (platypus), driven by a form and the checklist.

The form (``forms/*.yaml``, schema in ``report/form.py``) says which sections appear in
which order, their headings and the caution texts; the checklist's ``report``
declarations say which items feed the summary, the homeowner's pages, the findings
and the charts. This module knows how to draw each section and never names an item.
Every page carries "page N of M", the job id and the record hash in its footer; all
text is drawn in the bundled DejaVu fonts (embedded) at 8 pt or more.
"""

from __future__ import annotations

import io
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any
from xml.sax.saxutils import escape

from ..checks.evaluate import Result
from ..fingerprint import readable
from ..job import JobState
from ..present import SIGN_CONVENTION, format_value
from .form import SECTIONS, load_form  # noqa: F401  (load_form: the CLI's entry point)

FONT, BOLD = "CommSans", "CommSans-Bold"
FONT_DIR = Path(__file__).resolve().parent / "fonts"
_STATUS_WORDS = {"ready": "READY FOR HANDOVER", "not-ready": "NOT READY — DO NOT HAND OVER",
                 "incomplete": "INCOMPLETE — WORK STILL TO DO"}
_STATUS_COLOURS = {"ready": "#1f6f43", "not-ready": "#a12b2b", "incomplete": "#8a5a00"}
_VERDICT_COLOURS = {"pass": "#1f6f43", "fail": "#a12b2b", "review": "#8a5a00",
                    "n/a": "#55606b", "pending": "#55606b", "recorded": "#1d2a36"}
_WEIGHT_WORDS = {"fail": "Fails", "review": "Needs review", "skipped": "Skipped",
                 "unanswered": "Not answered", "departure": "Departs from the shipped checklist",
                 "limitation": "Limitation of this inspection"}
MUTED = "#55606b"
# The one box reserved for the reviewer's visible countersignature stamp (PDF points),
# beside the reviewer's row of the signer table on page 1; its page and rectangle are
# declared in the signed record (``signing.reviewer_stamp``).
STAMP_SIZE = (230.0, 46.0)


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
    base = ParagraphStyle("base", fontName=FONT, fontSize=9, leading=11.5, textColor=ink)
    return {
        "base": base,
        "small": ParagraphStyle("small", parent=base, fontSize=8, leading=10),
        "cell": ParagraphStyle("cell", parent=base, fontSize=8, leading=10),
        "cellb": ParagraphStyle("cellb", parent=base, fontName=BOLD, fontSize=8, leading=10),
        "title": ParagraphStyle("title", parent=base, fontName=BOLD, fontSize=16, leading=20),
        "h1": ParagraphStyle("h1", parent=base, fontName=BOLD, fontSize=12, leading=15,
                             spaceBefore=10, spaceAfter=5, keepWithNext=1,
                             textColor=colors.HexColor("#1f5f99")),
        # a heading already held together with what follows it (no keepWithNext of its own)
        "h1k": ParagraphStyle("h1k", fontName=BOLD, fontSize=12, leading=15, spaceBefore=10,
                              spaceAfter=5, textColor=colors.HexColor("#1f5f99")),
        "h2k": ParagraphStyle("h2k", fontName=BOLD, fontSize=9.5, leading=12, spaceBefore=7,
                              spaceAfter=3),
        "h2": ParagraphStyle("h2", parent=base, fontName=BOLD, fontSize=9.5, leading=12,
                             spaceBefore=7, spaceAfter=3, keepWithNext=1),
        "plain": ParagraphStyle("plain", parent=base, fontSize=10.5, leading=14.5,
                                spaceAfter=6),
        "caution": ParagraphStyle("caution", parent=base, fontSize=9, leading=11.5,
                                  leftIndent=8, borderPadding=4,
                                  textColor=colors.HexColor("#7a2020")),
    }


def _p(text: str, style) -> Any:
    from reportlab.platypus import Paragraph

    return Paragraph(escape(str(text)).replace("\n", "<br/>"), style)


def _muted(text: str) -> str:
    return f'<font color="{MUTED}">{escape(text)}</font>'


@dataclass
class _Context:
    state: JobState
    results: list[Result]
    record_sha: str
    form: dict[str, Any]
    generated_at: str
    st: dict[str, Any]
    signer: dict[str, str] | None = None  # name, registration, fingerprint of the signer
    extract_of: dict[str, str] | None = None  # homeowner extract: the signed record's hashes
    _by_id: dict[str, Result] = field(default_factory=dict)
    stamp: dict[str, Any] = field(default_factory=dict)  # where the stamp box was drawn
    stamp_reserved: bool = False

    def __post_init__(self) -> None:
        self._by_id = {r.item.id: r for r in self.results}

    @property
    def tz(self) -> str:
        return self.state.job.details.get("timezone") or "UTC"

    def when(self, iso: str) -> str:
        from .findings import local_time

        return local_time(iso, self.tz)

    def result(self, item_id: str) -> Result | None:
        return self._by_id.get(item_id)

    def answer(self, r: Result) -> str:
        if r.entry is None:
            return ""
        if r.entry.action != "answer":
            return f"{r.entry.action}: {r.entry.raw}"
        return format_value(r.item, r.entry.value, r.entry.raw)

    def role(self, name: str) -> str | None:
        """The answer of the first answered item declaring a homeowner role."""
        for r in self.results:
            if r.item.report.homeowner == name and r.answered and r.applicable:
                return self.answer(r)
        return None

    def heading(self, key: str, default: str) -> str:
        return (self.form.get("headings") or {}).get(key, default)


def _table(rows, widths, header=True, zebra=True):
    from reportlab.lib import colors
    from reportlab.platypus import Table, TableStyle

    # splitInRow=0 (reportlab's default): a row is never split across two pages
    t = Table(rows, colWidths=widths, repeatRows=1 if header else 0, splitInRow=0)
    style = [
        ("FONT", (0, 0), (-1, -1), FONT, 8),  # plain-string cells too: never a base-14 font
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


# -- page 1 ------------------------------------------------------------------------

def _status(c: _Context) -> list:
    from reportlab.lib import colors
    from reportlab.platypus import Paragraph, Spacer, Table, TableStyle

    from .findings import findings, next_inspection

    job = c.state.job
    checklist = c.state.checklist
    status = c.state.status(c.results)
    box = Table([[_p(_STATUS_WORDS[status], c.st["title"])]], colWidths=[480])
    box.setStyle(TableStyle([
        ("FONT", (0, 0), (-1, -1), FONT, 8),
        ("BOX", (0, 0), (-1, -1), 2, colors.HexColor(_STATUS_COLOURS[status])),
        ("BACKGROUND", (0, 0), (-1, -1), colors.HexColor("#fbfbf7")),
        ("TOPPADDING", (0, 0), (-1, -1), 8), ("BOTTOMPADDING", (0, 0), (-1, -1), 8),
    ]))
    found = findings(c.results, checklist, job.checklist_sha256)
    counts = {w: sum(1 for f in found if f.weight == w) for w in _WEIGHT_WORDS}
    if status == "ready":
        line = "Every critical item passes."
        noted = [f"{_WEIGHT_WORDS[w].lower()}: {n}" for w, n in counts.items()
                 if n and w in ("fail", "review", "skipped")]
        if noted:
            line += f" Findings on other items ({'; '.join(noted)}) are listed below."
    elif status == "not-ready":
        line = "A critical item fails: do not hand over until it is put right."
    else:
        line = "Work remains before handover: see the findings below."
    out = [box, Spacer(1, 4),
           _p(f"Job status: {status}. {line}", c.st["base"]),
           _p(f"Job {job.short_id} · {job.details.get('site', '')} · record made "
              f"{c.when(c.generated_at)}", c.st["small"])]
    if job.unverified:
        out.append(_p("UNVERIFIED IMPORT: this job was imported from a record that did "
                      "not verify (signature, integrity or content); its entries are not "
                      "vouched for by a trusted signature.", c.st["base"]))

    if job.baseline:
        out += _periodic(c, status)

    out.append(_p("Findings, by weight", c.st["h2"]))
    if not found:
        out.append(_p("No failures, reviews, skipped items, departures or limitations.",
                      c.st["base"]))
    else:
        rows = [[_p(h, c.st["cellb"]) for h in ("Finding", "Item", "Reason")]]
        for f in found:
            item = (f"{escape(f.item)}<br/>{_muted(f.item_id)}" if f.item_id
                    else escape(f.item))
            rows.append([_p(_WEIGHT_WORDS[f.weight], c.st["cellb"]),
                         Paragraph(item, c.st["cell"]), _p(f.reason, c.st["cell"])])
        out.append(_table(rows, [82, 170, 228]))
    if not any(f.weight == "limitation" for f in found):
        out.append(_p("Limitations of this inspection: none recorded.", c.st["small"]))

    d = job.details
    installer = d.get("installer") or "the installer"
    reg = f" (registration {d['installer_registration']})" if d.get(
        "installer_registration") else ""
    out.append(_p("Declaration", c.st["h2"]))
    did = ("inspected the installation at {site}, compared every repeated reading with the "
           "baseline record named above and" if job.baseline else
           "commissioned the installation at {site} and").format(site=d.get('site', ''))
    out.append(_p(
        f"I, {installer}{reg}, {did} "
        f"recorded every reading and answer in this record, following checklist "
        f"{checklist.id} {checklist.version} ({checklist.title}) under {checklist.rules.name}. "
        "The verdicts are derived from those readings by the rules and sources printed "
        "beside each item. Verification: an electrician reviews this record and "
        "countersigns it digitally or in the signature table; until then it is the "
        "installer's own statement.", c.st["base"]))

    due = next_inspection(d, checklist, c.generated_at)
    out.append(_p("Next inspection", c.st["h2"]))
    if due:
        out.append(_p(f"Next inspection or service due: {due[0]}", c.st["cellb"]))
        out.append(_p(f"Source: {due[1]}", c.st["small"]))
    else:
        out.append(_p("Next inspection or service due: not set (no interval in the checklist; "
                      "set one with 'amend --next-inspection DATE').", c.st["base"]))

    out.append(_p("Signed by", c.st["h2"]))
    out += _signer_block(c)
    return out


def _periodic(c: _Context, status: str) -> list:
    """Page 1 of a periodic record: the baseline it was compared with (named and
    fingerprinted by its record's SHA-256), the overall condition, every deterioration
    by weight, and what was done."""
    from reportlab.platypus import Paragraph

    b = c.state.job.baseline
    out = [_p("Periodic inspection against the baseline", c.st["h2"])]
    state = ("verified when this inspection started" if b["verified"] else
             "UNVERIFIED: it did not verify when this inspection started, so the comparison "
             "rests on a record nobody vouches for")
    out.append(_p(f"Compared with the record of job {b['job']} made {b['made_at'][:10]} "
                  f"(status {b['status']}; {state}). A reviewer finds that record's SHA-256 "
                  "(over its canonical JSON) with 'commission verify' and compares it with:",
                  c.st["base"]))
    out.append(_p(f"Baseline record SHA-256: {b['record_sha256']}", c.st["cellb"]))
    judged = [r for r in c.results if r.change is not None]
    worse = sorted((r for r in judged if r.change.verdict == "review"),
                   key=lambda r: -r.change.weight)
    if status == "not-ready":
        condition = ("unsatisfactory: a critical item fails (see the findings below)"
                     + (f"; {len(worse)} change(s) since the baseline" if worse else ""))
    elif worse:
        condition = (f"deteriorated: {len(worse)} change(s) since the baseline need review, "
                     "listed below by weight")
    else:
        condition = ("satisfactory: no reading has deteriorated beyond its limit of change "
                     "since the baseline")
    if status == "incomplete":
        condition += " (this inspection is not complete: see the findings below)"
    out.append(_p(f"Overall condition: {condition}.", c.st["cellb"]))
    if worse:
        rows = [[_p(h, c.st["cellb"]) for h in ("Change", "Baseline", "Now", "A year",
                                                   "Judged")]]
        for r in worse:
            ch = r.change
            unit = f" {ch.unit}" if ch.unit else ""
            base = (f"{ch.baseline_value:.4g}{unit}" if isinstance(ch.baseline_value, float)
                    else str(ch.baseline_value))
            now = (f"{ch.value:.4g}{unit}" if isinstance(ch.value, float) else str(ch.value))
            rate = (f"{ch.rate_per_year:+.3g}{unit}" if ch.rate_per_year is not None
                    else "under a day apart")
            rows.append([Paragraph(f"{escape(ch.what)}<br/>{_muted(r.item.id)}", c.st["cell"]),
                         _p(f"{base}, {ch.baseline_at[:10]}", c.st["cell"]),
                         _p(now, c.st["cell"]), _p(rate, c.st["cell"]),
                         _p(ch.reason, c.st["cell"])])
        out.append(_table(rows, [86, 74, 52, 52, 216]))
    # named with their item ids: two items may measure the same quantity (the RCD time at
    # IΔn and at 5 IΔn), and one of them may have changed while the other did not
    fine = [f"{r.change.what} ({r.item.id})" if r.change.unit else r.item.id
            for r in judged if r.change.verdict != "review"]
    if fine:
        out.append(_p("Unchanged within the limits of change: " + ", ".join(fine) + ".",
                      c.st["small"]))
    done = next((c.answer(r) for r in c.results
                 if r.item.report.actions and r.answered), None)
    out.append(_p(f"What was done: {done or 'not recorded'}", c.st["base"]))
    return out


def _group(hexdigest: str) -> str:
    return " ".join(hexdigest[k:k + 4] for k in range(0, len(hexdigest), 4))


def _signer_block(c: _Context) -> list:
    d = c.state.job.details
    rows = [[_p(h, c.st["cellb"]) for h in ("Role", "Name", "Certificate (SHA-256)",
                                             "Signed")]]
    if c.signer:
        rows.append([_p("Installer", c.st["cell"]),
                     _p(f"{c.signer['name']}\n{c.signer.get('registration') or ''}".strip(),
                        c.st["cell"]),
                     _p(readable(c.signer["fingerprint"], groups=4), c.st["cell"]),
                     _p(f"digitally (PAdES), {c.when(c.generated_at)}; the signature "
                        "panel shows the signing time", c.st["cell"])])
    else:
        rows.append([_p("Installer", c.st["cell"]), _p(d.get("installer", ""), c.st["cell"]),
                     _p("not signed digitally", c.st["cell"]),
                     _p("sign by hand in the signature table", c.st["cell"])])
    rows.append([_p("Reviewer (electrician)", c.st["cell"]), _p("", c.st["cell"]),
                 _p("", c.st["cell"]),
                 _p("countersigns digitally, or by hand in the signature table",
                    c.st["cell"])])
    out = [_table(rows, [80, 110, 170, 120], zebra=False)]
    if c.signer:
        # The whole fingerprint on its own full-width line, in reading order for any text
        # extractor (a table cell would interleave with its neighbours).
        out.append(_p(f"Installer's certificate fingerprint (SHA-256): "
                      f"{readable(c.signer['fingerprint'])}", c.st["small"]))
        if not c.stamp_reserved:
            out.append(_stamp_row(c))
    return out


def _stamp_row(c: _Context) -> Any:
    """The reviewer's stamp box: only the first signer block holds it (one box)."""
    from reportlab.platypus import Table, TableStyle

    c.stamp_reserved = True
    note = _p("Reviewer's digital stamp: 'commission countersign' draws the reviewer's name, "
              "signing time and certificate fingerprint in the box beside; nothing else may "
              "appear there.", c.st["small"])
    row = Table([[note, _stamp_box(c.stamp)]], colWidths=[480 - STAMP_SIZE[0], STAMP_SIZE[0]])
    row.setStyle(TableStyle([("FONT", (0, 0), (-1, -1), FONT, 8),
                             ("VALIGN", (0, 0), (-1, -1), "MIDDLE"),
                             ("LEFTPADDING", (1, 0), (1, 0), 0),
                             ("RIGHTPADDING", (1, 0), (1, 0), 0)]))
    return row


def _stamp_box(sink: dict[str, Any]) -> Any:
    """An empty dashed box that records where it was drawn (page from 0, PDF points)."""
    from reportlab.lib import colors
    from reportlab.platypus import Flowable

    class StampBox(Flowable):
        def wrap(self, avail_width, avail_height):
            self.width, self.height = STAMP_SIZE
            return STAMP_SIZE

        def draw(self) -> None:
            canv = self.canv
            w, h = STAMP_SIZE
            canv.saveState()
            canv.setDash(2, 2)
            canv.setLineWidth(0.6)
            canv.setStrokeColor(colors.HexColor(MUTED))
            canv.rect(0, 0, w, h, stroke=1, fill=0)
            canv.restoreState()
            x1, y1 = canv.absolutePosition(0, 0)
            x2, y2 = canv.absolutePosition(w, h)
            sink.update(page=canv.getPageNumber() - 1,
                        rect=[round(min(x1, x2), 2), round(min(y1, y2), 2),
                              round(max(x1, x2), 2), round(max(y1, y2), 2)])

    return StampBox()


def _summary(c: _Context) -> list:
    job = c.state.job
    d = job.details
    rows: list[tuple[str, str]] = [
        ("Site", d.get("site", "")), ("Address", d.get("address", "")),
        ("Client", d.get("client", "")), ("Client contact", d.get("client_contact", "")),
        ("Installer", d.get("installer", "")),
        ("Installer address", d.get("installer_address", "")),
        ("Installer contact", d.get("installer_contact", "")),
        ("Installer registration", d.get("installer_registration", "")),
    ]
    for r in c.results:
        label = r.item.report.summary
        if label and r.applicable:
            rows.append((label, c.answer(r) if r.answered else "—"))
    rows += [
        ("Checklist", f"{job.checklist_id} {job.checklist_version} "
                      f"(SHA-256 {job.checklist_sha256[:16]}…)"),
        ("Job", f"{job.short_id} ({job.uuid}), started {c.when(job.created_at)}"),
        ("Times shown in", c.tz),
        ("Record made", c.when(c.generated_at)),
    ]
    table = [[_p(k, c.st["cellb"]), _p(val or "—", c.st["cell"])] for k, val in rows
             if val or k in ("Site", "Installer")]
    return [_p(c.heading("summary", "Site and installation"), c.st["h1"]),
            _table(table, [130, 350], header=False)]


def _instruments(c: _Context) -> list:
    used = {e.instrument_id for e in c.state.entries if e.instrument_id}
    rows = [[_p(h, c.st["cellb"]) for h in ("Serial", "Make", "Model", "Calibration due",
                                            "Stated accuracy")]]
    for i in sorted(used):
        inst = c.state.instruments.get(i)
        if inst:
            read_as = "a bound" if inst.accuracy_read_as == "bound" else "U at k = 2"
            accuracy = (f"{inst.accuracy} (read as {read_as})" if inst.accuracy
                        else "none stated: no uncertainty applied")
            rows.append([_p(x, c.st["cell"]) for x in
                         (inst.serial, inst.make, inst.model, inst.calibration_due, accuracy)])
    out = [_p(c.heading("instruments", "Instruments used"), c.st["h1"])]
    if len(rows) == 1:
        return [*out, _p("No reading names an instrument.", c.st["base"])]
    return [*out, _table(rows, [70, 60, 110, 70, 170])]


def _verdict_cell(verdict: str, st) -> Any:
    from reportlab.platypus import Paragraph

    colour = _VERDICT_COLOURS.get(verdict, "#1d2a36")
    return Paragraph(f'<font color="{colour}"><b>{escape(verdict)}</b></font>', st["cell"])


def _file_text(value: dict[str, Any]) -> str:
    return f"{value.get('name', '')}\n{_size(value.get('bytes', 0))}"


def _size(n: int) -> str:
    for unit, scale in (("MB", 1e6), ("kB", 1e3)):
        if n >= scale:
            return f"{n / scale:.1f} {unit}"
    return f"{n} B"


def _results(c: _Context) -> list:
    from reportlab.lib import colors
    from reportlab.platypus import Table, TableStyle

    out = [_p(c.heading("results", "Every item: reading, expectation, verdict"), c.st["h1"]),
           _p(SIGN_CONVENTION + " ! marks a critical item: it must pass before handover. "
              "'Figure' is what the check derived or predicted from the answer.",
              c.st["small"])]
    # the Verdict column fits its longest word, "recorded" (40.4 pt in bold 8 pt, plus
    # 6 pt of padding), on one line
    widths = [124, 78, 44, 58, 48, 128]
    sections: dict[str, list[Result]] = {}
    for r in c.results:
        sections.setdefault(r.section, []).append(r)
    for members in sections.values():
        times = [c.when(x.entry.at) for x in members if x.entry is not None]
        section_time = max(set(times), key=times.count) if times else ""
        title = members[0].section_title + (f" — recorded {section_time}"
                                            if section_time else "")
        # The section's title and the column heads are the table's first two rows, repeated
        # on every page the section runs onto; rows are never split across pages.
        rows: list = [[_p(title, c.st["h2"])] + [""] * 5,
                      [_p(h, c.st["cellb"]) for h in
                       ("Item", "Answer", "Figure", "Expected", "Verdict", "Reason · source")]]
        for r in members:
            rows.append(_result_row(c, r, section_time))
        table = Table(rows, colWidths=widths, repeatRows=2, splitInRow=0)
        style = [
            ("SPAN", (0, 0), (-1, 0)), ("FONT", (0, 0), (-1, -1), FONT, 8),
            ("VALIGN", (0, 0), (-1, -1), "TOP"),
            ("LEFTPADDING", (0, 0), (-1, -1), 3), ("RIGHTPADDING", (0, 0), (-1, -1), 3),
            ("TOPPADDING", (0, 0), (-1, -1), 2), ("BOTTOMPADDING", (0, 0), (-1, -1), 2),
            ("TOPPADDING", (0, 0), (-1, 0), 8),
            ("LINEBELOW", (0, 1), (-1, -1), 0.25, colors.HexColor("#d5dbe1")),
            ("BACKGROUND", (0, 1), (-1, 1), colors.HexColor("#e8eef4")),
        ]
        for n in range(3, len(rows), 2):
            style.append(("BACKGROUND", (0, n), (-1, n), colors.HexColor("#f7f9fb")))
        table.setStyle(TableStyle(style))
        out.append(table)
    return out


def _phases(c: _Context) -> list:
    """One table per measurement the checklist marks per phase (``report: {phase,
    measurement}``), one row per phase, in the checklist's order; nothing when none is."""
    from reportlab.lib import colors
    from reportlab.platypus import Table, TableStyle

    groups: dict[str, list[Result]] = {}
    for r in c.results:
        spec = r.item.report
        if spec.measurement is not None and r.applicable:
            groups.setdefault(spec.measurement, []).append(r)
    if not groups:
        return []
    out = [_p(c.heading("phases", "Per phase"), c.st["h1"]),
           _p(SIGN_CONVENTION + " One table per measurement, one row per phase; every row "
              "also appears with its section below.", c.st["small"])]
    widths = [34, 100, 64, 44, 48, 48, 142]  # "Phase" and the verdicts on one line
    for title, members in groups.items():
        rows: list = [[_p(title, c.st["h2"])] + [""] * 6,
                      [_p(h, c.st["cellb"]) for h in
                       ("Phase", "Item", "Answer", "Figure", "Expected", "Verdict",
                        "Reason · source")]]
        for r in members:
            rows.append([_p(r.item.report.phase or "", c.st["cellb"]),
                         *_result_row(c, r, "")])
        table = Table(rows, colWidths=widths, repeatRows=2, splitInRow=0)
        table.setStyle(TableStyle([
            ("SPAN", (0, 0), (-1, 0)), ("FONT", (0, 0), (-1, -1), FONT, 8),
            ("VALIGN", (0, 0), (-1, -1), "TOP"),
            ("LEFTPADDING", (0, 0), (-1, -1), 3), ("RIGHTPADDING", (0, 0), (-1, -1), 3),
            ("TOPPADDING", (0, 0), (-1, -1), 2), ("BOTTOMPADDING", (0, 0), (-1, -1), 2),
            ("TOPPADDING", (0, 0), (-1, 0), 8),
            ("LINEBELOW", (0, 1), (-1, -1), 0.25, colors.HexColor("#d5dbe1")),
            ("BACKGROUND", (0, 1), (-1, 1), colors.HexColor("#e8eef4")),
        ]))
        out.append(table)
    return out


def _result_row(c: _Context, r: Result, section_time: str) -> list:
    from reportlab.platypus import Paragraph

    mark = "! " if r.item.critical else ""
    item_cell = Paragraph(f"{escape(mark + r.item.prompt)}<br/>{_muted(r.item.id)}",
                          c.st["cell"])
    if r.answered and isinstance(r.entry.value, dict) and "sha256" in r.entry.value:
        answer = _file_text(r.entry.value)
    else:
        answer = c.answer(r)
    figure = ""
    if r.measured is not None and r.measured.unit:
        text = r.measured.text()
        if text != answer:
            figure = text
    if r.entry is not None and r.entry.instrument_id:
        inst = c.state.instruments.get(r.entry.instrument_id)
        if inst:
            answer += f"\n({inst.serial})"
    if r.entry is not None and c.when(r.entry.at) != section_time:
        answer += f"\n{c.when(r.entry.at)}"
    expected = r.expected.text() if r.expected else ""
    reason = f"{r.reason}\nSource: {r.source}"
    if len(r.history) > 1:
        prior = "; ".join(f"{h.raw} ({h.action}, {c.when(h.at)})" for h in r.history[:-1])
        reason += f"\nCorrected; replaced: {prior}"
    return [item_cell, _p(answer, c.st["cell"]), _p(figure, c.st["cell"]),
            _p(expected, c.st["cell"]), _verdict_cell(r.verdict, c.st),
            _p(reason, c.st["cell"])]


def _recorded_files(c: _Context) -> list[tuple[Result, dict[str, Any]]]:
    return [(r, r.entry.value) for r in c.results
            if r.answered and isinstance(r.entry.value, dict) and "sha256" in r.entry.value]


def _files(c: _Context) -> list:
    found = _recorded_files(c)
    if not found:
        return []
    from .record import ATTACH_LIMIT

    rows = [[_p(h, c.st["cellb"]) for h in ("File", "Size", "SHA-256", "Item")]]
    for r, value in found:
        attached = value.get("bytes", 0) <= ATTACH_LIMIT
        rows.append([_p(value.get("name", ""), c.st["cell"]),
                     _p(_size(value.get("bytes", 0)) + ("" if attached else "\nnot attached"),
                        c.st["cell"]),
                     _p(_group(value["sha256"]), c.st["cell"]),
                     _p(r.item.prompt, c.st["cell"])])
    note = ("Each file travels inside this PDF as an attachment named by its SHA-256 (never by "
            "the name it had), so opening one cannot overwrite a file of yours.")
    return [_p(c.heading("files", "Recorded files"), c.st["h1"]), _p(note, c.st["small"]),
            _table(rows, [120, 50, 170, 140])]


def _photos(c: _Context) -> list:
    from reportlab.platypus import Image, KeepTogether, Table, TableStyle

    cells = []
    for r, value in _recorded_files(c):
        if r.item.kind != "photo":
            continue
        path = c.state.files.path(value["sha256"])
        if path is None:
            continue
        caption = _p(f"{r.item.prompt} — {value['name']}", c.st["small"])
        try:
            img = Image(str(path))
        except Exception:  # noqa: BLE001 — a photo reportlab cannot read is listed, not fatal
            cells.append([caption, _p("(cannot be shown)", c.st["small"])])
            continue
        scale = min(225 / img.imageWidth, 140 / img.imageHeight)
        img.drawWidth, img.drawHeight = img.imageWidth * scale, img.imageHeight * scale
        cells.append([caption, img])
    if not cells:
        return []
    rows = []  # two photos a row, one table a row, so the page fills before a break
    for k in range(0, len(cells), 2):
        pair = cells[k:k + 2] + ([[]] if len(cells[k:k + 2]) == 1 else [])
        row = Table([pair], colWidths=[240, 240])
        row.setStyle(TableStyle([("VALIGN", (0, 0), (-1, -1), "TOP"),
                                 ("FONT", (0, 0), (-1, -1), FONT, 8),
                                 ("BOTTOMPADDING", (0, 0), (-1, -1), 8)]))
        rows.append(row)
    # the heading travels with the first row: never left alone at the foot of a page
    return [KeepTogether([_p(c.heading("photos", "Photos"), c.st["h1k"]), rows[0]]),
            *rows[1:]]


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

    from .homeowner import homeowner_flowables

    out = [] if c.extract_of else [PageBreak()]
    out += homeowner_flowables(c)
    if not c.extract_of and c.form["sections"][-1] != "homeowner":
        out.append(PageBreak())  # the homeowner's pages stand alone, printable apart
    return out


def _signatures(c: _Context) -> list:
    from reportlab.platypus import KeepTogether, Spacer

    d = c.state.job.details
    blocks = [("Installer", d.get("installer", ""), d.get("installer_registration", "")),
              ("Reviewer (electrician)", "", ""),
              ("Homeowner acknowledgement", d.get("client", ""), "")]
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
                          *_signer_block(c), Spacer(1, 6), table, Spacer(1, 4),
                          _p(note, c.st["small"])])]


def _charts(c: _Context) -> list:
    from reportlab.platypus import KeepTogether

    from .chartdata import chart_flowables, trend_flowables

    flow = chart_flowables(c) + trend_flowables(c)
    if not flow:
        return []
    # the heading travels with the first chart: never left alone at the foot of a page
    first = list(getattr(flow[0], "_content", [flow[0]]))  # one group, not nested ones
    return [KeepTogether([_p(c.heading("charts", "Measurements in pictures"), c.st["h1k"]),
                          *first]), *flow[1:]]


_BUILDERS = {"status": _status, "summary": _summary, "instruments": _instruments,
             "phases": _phases, "results": _results, "files": _files, "photos": _photos,
             "charts": _charts,
             "cautions": _cautions, "homeowner": _homeowner, "signatures": _signatures}
assert set(_BUILDERS) == set(SECTIONS)


def render(state: JobState, results: list[Result],
           record_sha: str | Callable[[dict[str, Any] | None], str], form: dict[str, Any],
           generated_at: str, signer: dict[str, str] | None = None,
           extract_of: dict[str, str] | None = None) -> bytes:
    """The record's pages; with ``extract_of`` (the signed record's hashes) only the
    homeowner's pages, as an unsigned extract naming that record as the authority.

    ``record_sha`` may be a function: it is called once the pages are laid out, with
    where the reviewer's stamp box landed (``{"page", "rect"}``, or None when no box was
    drawn), and returns the record hash the footers and document info then print. So
    the record can declare the box's place without a second layout."""
    from reportlab.lib.pagesizes import A4
    from reportlab.lib.units import mm
    from reportlab.pdfgen import canvas
    from reportlab.platypus import SimpleDocTemplate

    register_fonts()
    st = _styles()
    late = record_sha if callable(record_sha) else None
    if late is not None:
        record_sha = "0" * 64  # the footer is drawn last, once the record is made
    assert isinstance(record_sha, str)
    c = _Context(state, results, record_sha, form, generated_at, st, signer, extract_of)
    job = state.job
    title = form.get("title", "Commissioning record")
    if job.baseline:  # a revisit: the same layout, named for what it is
        title = f"{title}: periodic inspection"
    page_of = "page {n} of {total}"
    if extract_of:
        from ..i18n import translator

        tr = translator(job.details.get("language")).gettext
        title = tr("Extract for the homeowner")
        page_of = tr("page {n} of {total}")
        footer_left = tr("Job {job} · extract, not signed · signed record SHA-256 {sha}").format(
            job=job.short_id, sha=extract_of["record_sha256"])
    else:
        footer_left = f"Job {job.short_id} · record SHA-256 {record_sha}"

    class NumberedCanvas(canvas.Canvas):
        def __init__(self, *args, **kwargs):
            # no base-14 (unembedded) font is ever referenced, not even as the initial font
            kwargs["initialFontName"] = FONT
            kwargs["initialFontSize"] = kwargs.get("initialFontSize") or 9
            super().__init__(*args, **kwargs)
            self._pages: list[dict] = []

        def showPage(self):  # noqa: N802 (reportlab's name)
            self._pages.append(dict(self.__dict__))
            self._startPage()

        def save(self):
            nonlocal footer_left
            if late is not None:
                sha = late(dict(c.stamp) if c.stamp else None)
                c.record_sha = sha
                footer_left = f"Job {job.short_id} · record SHA-256 {sha}"
                self.setSubject(f"commission record sha256:{sha}")
                self.setKeywords([f"record-sha256:{sha}", f"job:{job.uuid}"])
            total = len(self._pages)
            for page in self._pages:
                self.__dict__.update(page)
                self.setFont(FONT, 8)
                self.setFillColorRGB(0.3, 0.35, 0.4)
                self.drawString(12 * mm, 8 * mm, footer_left)
                self.drawRightString(A4[0] - 12 * mm, 8 * mm,
                                     page_of.format(n=self._pageNumber, total=total))
                header = f"{title} · {job.details.get('site', '')}"
                if len(header) > 100:
                    header = header[:99] + "…"
                self.drawString(15 * mm, A4[1] - 10 * mm, header)
                super().showPage()
            super().save()

    buf = io.BytesIO()
    doc = SimpleDocTemplate(
        buf, pagesize=A4, leftMargin=15 * mm, rightMargin=15 * mm, topMargin=16 * mm,
        bottomMargin=16 * mm, title=f"{title} — {job.details.get('site', '')}",
        author=job.details.get("installer", ""),
        subject=f"commission record sha256:{record_sha}",
        creator="commission", keywords=[f"record-sha256:{record_sha}", f"job:{job.uuid}"],
        lang=(job.details.get("language") or "en") if extract_of else "en",
    )
    if extract_of:
        from .homeowner import extract_heading

        story = extract_heading(c)
        story += _homeowner(c)
    else:
        story = [_p(title, st["title"])]
        for key in form["sections"]:
            story += _BUILDERS[key](c)
    doc.build(story, canvasmaker=NumberedCanvas)
    return buf.getvalue()
