"""The homeowner's pages, in plain words and in the job's language.

What each line says comes from the items that declare a homeowner role in the
checklist (``report: {homeowner: device}`` …); a line whose role no item fills is
left out, and the lines that need no answer (the RCD, cold water, scalds, whom to
call, the next service) are always there. The words are gettext messages
(``locale/<lang>/LC_MESSAGES/commission.po``); answers typed by the installer are
printed as typed.
"""

from __future__ import annotations

from typing import Any
from xml.sax.saxutils import escape


def _(message: str) -> str:  # marks a message for extraction; translated in lines()
    return message


def lines(c) -> list[tuple[str, str]]:
    """(lead, text) pairs, already translated into the job's language."""
    from ..i18n import translator
    from .findings import next_inspection

    tr = translator(c.state.job.details.get("language")).gettext
    d = c.state.job.details
    role = c.role
    who = d.get("installer") or tr("your installer")
    phone = d.get("installer_contact") or ""
    out: list[tuple[str, str]] = []

    def add(lead: str, message: str, **values: Any) -> None:
        out.append((tr(lead), tr(message).format(**values)))

    device, power, volume = role("device"), role("heater_power"), role("store_volume")
    if device and power and volume:
        add(_("What was fitted"), _("a solar diverter ({device}). When your solar panels make "
            "more power than the house uses, it sends the spare power to the {power} "
            "electric heater in your {volume} hot-water cylinder instead of to the grid."),
            device=device, power=power, volume=volume)
    elif device:
        add(_("What was fitted"), _("a solar diverter ({device}). When your solar panels make "
            "more power than the house uses, it sends the spare power to your water heater "
            "instead of to the grid."), device=device)
    made = [r.entry.at for r in c.results if r.entry is not None]
    if made:
        add(_("When"), _("commissioned on {date}."), date=max(made)[:10])
    if role("location"):
        add(_("Where it is"), "{text}", text=role("location"))
    if role("isolator"):
        add(_("How to switch it off"), _("{text}. Switch this off before anyone works on the "
            "diverter or the cylinder."), text=role("isolator"))
    if role("lights"):
        add(_("What its lights mean"), "{text}", text=role("lights"))
    if role("settings"):
        add(_("How it is set"), _("as your installer wrote it: {text}. The diverter uses only "
            "power your panels would otherwise send to the grid; a timed boost, where set, "
            "heats the water from the grid at the times shown so that it is hot on dull days "
            "too."), text=role("settings"))
    meaning = _forced_modes(c)
    if meaning == "power":
        add(_("The boost percentages"), _("on this diverter a forced setting means a share of "
            "the heater's power: 20 % gives a fifth of its power."))
    elif meaning == "time":
        add(_("The boost percentages"), _("on this diverter a forced setting means a share of "
            "time within each mains cycle, not of power: 20 % gives only about 5 % of the "
            "heater's power, 50 % gives half, 80 % about 95 %."))
    add(_("If the RCD trips"), _("(the safety switch that cuts the power when current leaks "
        "to earth) switch off the diverter, then switch the RCD back on. If it trips again, "
        "leave it off and call {who}."), who=who)
    add(_("If the water is cold"), _("on a dull day the sun may not heat it. Check that the "
        "diverter is switched on. If the water stays cold after a boost, call {who}."),
        who=who)
    keep_clear = role("keep_clear")
    add(_("Keep it clear"), _("{text}. Do not cover the diverter or block its vents; keep "
        "water and flammable things away from it."),
        text=keep_clear or tr("leave space around the diverter as its manual asks"))
    add(_("Test the RCD"), _("press its test button every few months (common practice; follow "
        "the maker's instructions). It should switch off at once; switch it back on."))
    regime = role("water_regime")
    if regime:
        add(_("Hot water and health"), _("the store is brought to 60 °C by: {regime}. Water "
            "stored at 60 °C or more keeps bacteria such as Legionella from growing."),
            regime=regime)
    add(_("Scalding"), _("water above about 50 °C can burn quickly, especially children and "
        "older people. Check the temperature before bathing."))
    due = next_inspection(d, c.state.checklist, c.generated_at)
    if due:
        add(_("Next service"), _("due by {date}. Ask {who} to check the diverter, its RCD "
            "and the stored water."), date=due[0], who=who)
    contact = ", ".join(x for x in (who, d.get("installer_address"), phone) if x)
    add(_("Whom to call"), "{text}", text=contact)
    return out


def _forced_modes(c) -> str | None:
    """'power' or 'time': what the forced-mode percentages mean, from the readings of the
    item declaring the role (its check's inputs), or None when undetermined."""
    from ..checks.output import POWER_LAW, TIME_LAW, forced_mode_law

    for r in c.results:
        if r.item.report.homeowner != "forced_modes" or not (r.answered and r.applicable):
            continue
        if r.item.check is None or r.item.check.name != "forced_mode_law" or \
                r.verdict != "pass":
            return None
        values = []
        for name in ("p20", "p50"):
            other = c.result(r.item.check.inputs.get(name))
            if other is None or not other.answered:
                return None
            values.append(float(other.entry.value))
        tolerance = float(r.item.check.params.get("tolerance_pct", 3.0)) / 100.0
        try:
            law, _fit = forced_mode_law(values[0], values[1], float(r.entry.value), tolerance)
        except (TypeError, ValueError):
            return None
        return law if law in (POWER_LAW, TIME_LAW) else None
    return None


def homeowner_flowables(c) -> list[Any]:
    from reportlab.platypus import Paragraph

    from ..i18n import translator

    tr = translator(c.state.job.details.get("language")).gettext
    default = tr("For the homeowner")
    heading = default if c.state.job.details.get("language", "en") not in ("", "en") \
        else c.heading("homeowner", default)
    from .pdf import _p

    out = [_p(heading, c.st["h1"]),
           _p(tr("Keep this page with the house papers. It explains in plain words what was "
                 "fitted and what to do if something goes wrong."), c.st["plain"])]
    for lead, text in lines(c):
        out.append(Paragraph(f"<b>{escape(lead)}:</b> {escape(text)}", c.st["plain"]))
    return out


def extract_heading(c) -> list[Any]:
    from ..i18n import translator
    from .pdf import _p

    tr = translator(c.state.job.details.get("language")).gettext
    e = c.extract_of
    return [_p(tr("Extract for the homeowner — not signed"), c.st["title"]),
            _p(tr("This extract is printed from the signed commissioning record, which is the "
                  "authority: record SHA-256 {record}; PDF file SHA-256 {file}.").format(
                record=e["record_sha256"], file=e["file_sha256"]), c.st["small"])]
