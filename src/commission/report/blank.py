"""`commission blank`: the checklist as a paper form, for when the laptop dies."""

from __future__ import annotations

import io

from ..checklist import Loaded


def expectation(item, checklist=None) -> str:
    """What the check expects, in the trade's units ("207–253 V", "≤ 300 ms"), computed by
    the check itself from the same parameters and constants as on site. Where the limit
    depends on a choice made on site (an RCD's delay class), one line per option; where it
    depends on another reading, the check's summary in words. Never a parameter name."""
    import itertools

    from ..checks import CHECKS
    from ..checks.registry import Context, MissingFile, MissingInput

    if item.check is None:
        if item.kind == "confirm":
            return f"answer: {item.pass_answer}"
        return ""
    definition = CHECKS.get(item.check.name)
    if definition is None:
        return item.check.name
    params = {k: p.default for k, p in definition.params.items()}
    params.update(item.check.params)
    fixed: dict = {}
    choices: dict[str, list[str]] = {}
    for name, spec in item.check.inputs.items():
        if not isinstance(spec, str):
            fixed[name] = spec["const"] if isinstance(spec, dict) else spec
            continue
        other = _item(checklist, spec)
        if other is not None and other.kind == "choice" and other.options:
            choices[name] = list(other.options)
    probe = {"reading": 1.0, "confirm": item.pass_answer == "yes",
             "choice": (item.options or [""])[0], "text": ""}.get(item.kind)
    if probe is None:  # files and photos: judged from their content
        return definition.summary
    texts: list[tuple[str, str]] = []
    combos = list(itertools.product(*choices.values())) if choices else [()]
    for combo in combos[:6]:
        inputs = dict(fixed)
        refs = {name: (spec if isinstance(spec, str) else None)
                for name, spec in item.check.inputs.items()}
        inputs.update(dict(zip(choices, combo, strict=True)))
        for name, ref in refs.items():
            if name not in inputs:
                inputs[name] = MissingInput(name, ref)
        try:
            outcome = definition.fn(Context(item.id, probe, inputs, refs, params, {}))
        except (MissingInput, MissingFile, ValueError, ArithmeticError, TypeError, KeyError):
            return definition.summary
        if outcome.expected is None:
            return definition.summary
        text = outcome.expected.text()
        if outcome.expected.value is not None and outcome.expected.unit is None:
            text = str(outcome.expected.value)
        texts.append((", ".join(combo), text))
    if not texts:
        return definition.summary
    if len({t for _, t in texts}) == 1:  # the choice made on site does not change it
        return texts[0][1]
    return "\n".join(f"{label}: {text}" for label, text in texts)


def _item(checklist, item_id: str):
    if checklist is None:
        return None
    try:
        return checklist.item(item_id)
    except KeyError:
        return None


def render(loaded: Loaded) -> bytes:
    from xml.sax.saxutils import escape

    from reportlab.lib.pagesizes import A4
    from reportlab.lib.units import mm
    from reportlab.platypus import Paragraph, SimpleDocTemplate, Spacer

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
            expected = expectation(item, c)
            from ..checks.evaluate import _item_source

            source = _item_source(item, c)
            rows.append([Paragraph(f"{escape(mark + what)}<br/><font color='#55606b'>"
                                   f"{escape(item.id)}</font>", st["cell"]),
                         _p(f"{expected}\n{source}" if expected else source, st["cell"]),
                         _p("\n\n", st["cell"]), _p("", st["cell"])])
        story.append(_table(rows, [165, 145, 115, 55]))
    story += [Spacer(1, 10), _p("Signed: ______________________  Registration: ___________  "
                                "Date: __________", st["base"])]

    buf = io.BytesIO()

    def footer(canvas, doc):
        canvas.setFont(FONT, 8)
        canvas.drawString(15 * mm, 9 * mm, f"{c.id} {c.version} · paper form · page "
                          f"{doc.page}")

    doc = SimpleDocTemplate(buf, pagesize=A4, initialFontName=FONT,
                            leftMargin=15 * mm, rightMargin=15 * mm,
                            topMargin=15 * mm, bottomMargin=16 * mm,
                            title=f"{c.title} — paper form", creator="commission")
    doc.build(story, onFirstPage=footer, onLaterPages=footer)
    return buf.getvalue()
