"""`commission blank`: the checklist as a paper form, for when the laptop dies."""

from __future__ import annotations

import io

from ..checklist import Loaded


def expectation(item) -> str:
    """What the check expects, from its defaults, in words (for the paper form)."""
    from ..checks import CHECKS

    if item.check is None:
        if item.kind == "confirm":
            return f"answer: {item.pass_answer}"
        return ""
    definition = CHECKS.get(item.check.name)
    if definition is None:
        return item.check.name
    params = {k: p.default for k, p in definition.params.items()}
    params.update(item.check.params)
    shown = ", ".join(f"{k} {v}" for k, v in params.items() if v not in (None, ""))
    text = definition.summary
    return f"{text} ({shown})" if shown else text


def render(loaded: Loaded) -> bytes:
    from reportlab.lib.pagesizes import A4
    from reportlab.lib.units import mm
    from reportlab.platypus import SimpleDocTemplate, Spacer

    from .pdf import FONT, _p, _styles, _table, register_fonts

    register_fonts()
    st = _styles()
    c = loaded.checklist
    story = [_p(f"{c.title} — paper form", st["title"]),
             _p(f"Checklist {c.id} {c.version}; rules assumed: {c.rules.name}", st["small"]),
             _p("Site: ____________________   Job id: ________   Date: __________   "
                "Installer: ____________________", st["base"]), Spacer(1, 4)]
    for caution in c.cautions:
        story.append(_p(f"⚠ {caution}", st["caution"]))
    story.append(_p("Write each reading with its unit and the instrument's serial. ! marks a "
                    "critical item: it must pass before handover. Enter the answers in "
                    "'commission walk' later; the record is made from those entries.",
                    st["small"]))
    for section in c.sections:
        story.append(_p(section.title, st["h2"]))
        rows = [[_p(h, st["cellb"]) for h in ("Item", "Expected · source", "Answer",
                                              "Instrument / time")]]
        for item in section.items:
            mark = "! " if item.critical else ""
            what = item.prompt
            if item.kind == "reading":
                what += f" [{item.unit}]"
            elif item.kind == "choice":
                what += " — circle: " + " / ".join(item.options or [])
            elif item.kind == "confirm":
                what += " — yes / no"
            elif item.kind in ("file", "photo"):
                what += f" — {item.kind} name:"
            if item.when is not None:
                what += f" (only when {item.when.text()})"
            expected = expectation(item)
            from ..checks.evaluate import _item_source

            source = _item_source(item, c)
            rows.append([_p(f"{mark}{item.id}\n{what}", st["cell"]),
                         _p(f"{expected}\n{source}" if expected else source, st["cell"]),
                         _p("\n\n", st["cell"]), _p("", st["cell"])])
        story.append(_table(rows, [165, 145, 115, 55]))
    story += [Spacer(1, 10), _p("Signed: ______________________  Registration: ___________  "
                                "Date: __________", st["base"])]

    buf = io.BytesIO()

    def footer(canvas, doc):
        canvas.setFont(FONT, 6.5)
        canvas.drawString(15 * mm, 9 * mm, f"{c.id} {c.version} · paper form · page "
                          f"{doc.page}")

    doc = SimpleDocTemplate(buf, pagesize=A4, leftMargin=15 * mm, rightMargin=15 * mm,
                            topMargin=15 * mm, bottomMargin=16 * mm,
                            title=f"{c.title} — paper form", creator="commission")
    doc.build(story, onFirstPage=footer, onLaterPages=footer)
    return buf.getvalue()
