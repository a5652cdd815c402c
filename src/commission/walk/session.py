"""The on-site walk: one item at a time, every answer committed before the next.

Terminal input and output are injected (:class:`Terminal`), so tests can drive
the walk without a tty and the CLI can give it a real one. Commands start with
a colon, which no answer can begin with.
"""

from __future__ import annotations

import textwrap
from dataclasses import dataclass, field
from typing import Protocol

from ..checks.evaluate import Result, status_reasons
from ..job import JobState
from ..present import SIGN_CONVENTION, WIDTH, format_value, verdict_lines, word
from ..register.store import Instrument
from .values import BadAnswer, parse_answer

COMMANDS = """\
Commands (an answer never starts with a colon):
  :back            go to the previous item
  :skip REASON     leave this item for later (it stays under review)
  :na REASON       not applicable here (refused on critical items)
  :use SERIAL      the instrument for the measured readings that follow
                   (kept with the job; :use none to clear it)
  :goto ITEM-ID    jump to an item
  :status          where the job stands
  :help            this help and the item's help again
  :quit            stop here; everything entered is kept (Ctrl-C does the same)
Press Enter on an answered item to keep its answer."""


class Terminal(Protocol):
    colour: bool

    def ask(self, prompt: str) -> str: ...

    def say(self, text: str = "") -> None: ...


@dataclass
class Walk:
    state: JobState
    term: Terminal
    instrument: Instrument | None = None
    start: str | None = None  # an item or section id to open first, answered or not
    answered: int = field(default=0, init=False)
    _last: dict[str, tuple[str, str]] = field(default_factory=dict, init=False)

    # -- navigation ------------------------------------------------------
    def _results(self) -> list[Result]:
        return self.state.results()

    def _first_pending_from(self, results: list[Result], start: int) -> int | None:
        order = list(range(start, len(results))) + list(range(0, start))
        return next((i for i in order if results[i].verdict == "pending"), None)

    def run(self) -> int:
        results = self._results()
        self._remember(results)
        self._header(results)
        try:
            if self.start is not None:
                self._walk_positions(self.positions(self.start))
            pos = self._first_pending_from(self._results(), 0)
            if pos is not None:
                self._walk_from(pos)
            skipped = [i for i, r in enumerate(self._results()) if r.skipped]
            if skipped:
                ids = ", ".join(self._results()[i].item.id for i in skipped)
                self.term.say("")
                self.term.say(_wrap(f"Skipped so far: {ids}. Second pass: answer them now, "
                                    "or press Enter to leave them skipped."))
                self._walk_positions(skipped, second_pass=True)
            return self._end()
        except _Quit:
            return self._stopped()
        except EOFError:  # Ctrl-D: leave as :quit does
            self.term.say("")
            return self._stopped()
        except KeyboardInterrupt:
            self.term.say("")
            return self._stopped(interrupted=True)

    def positions(self, ref: str) -> list[int]:
        """Positions of an item id, or of every applicable item of a section id."""
        results = self._results()
        for n, r in enumerate(results):
            if r.item.id == ref:
                return [n] if r.applicable else []
        return [n for n, r in enumerate(results) if r.section == ref and r.applicable]

    def _walk_from(self, pos: int | None, second_pass: bool = False) -> None:
        """Ask the item at pos, then go on to the next pending item (or where :back or
        :goto lead) until none is pending."""
        while pos is not None:
            outcome = self._ask_item(pos, second_pass)
            results = self._results()
            if outcome == "back":
                pos = self._previous(results, pos)
            elif isinstance(outcome, int):
                pos = outcome
            else:
                pos = self._first_pending_from(results, pos + 1)

    def _walk_positions(self, positions: list[int], second_pass: bool = False) -> None:
        """Ask these items in order, answered or not; :back and :goto leave the list."""
        n = 0
        while n < len(positions):
            outcome = self._ask_item(positions[n], second_pass)
            if outcome == "back":
                self._walk_from(self._previous(self._results(), positions[n]))
                return
            if isinstance(outcome, int):
                self._walk_from(outcome)
                return
            n += 1

    def _end(self) -> int:
        """The end of the checklist: status, what needs attention, and a prompt where
        :goto and :back still reach every answer (Enter leaves)."""
        while True:
            self._summary()
            while True:
                raw = self.term.ask("> ").strip()
                if not raw:
                    return 0
                if not raw.startswith(":"):
                    self.term.say("  the checklist is done: :goto ITEM-ID to change an answer, "
                                  "Enter to leave")
                    continue
                name, _, arg = raw[1:].partition(" ")
                name, arg = name.lower(), arg.strip()
                results = self._results()
                if name in ("quit", "q", "exit"):
                    return 0
                if name == "status":
                    self._status_lines(results)
                    continue
                target: int | None = None
                if name == "back":
                    target = self._previous(results, len(results))
                elif name == "goto":
                    target = self._goto(arg, results)
                else:
                    self.term.say("  at the end: :goto ITEM-ID, :back, :status, or Enter to "
                                  "leave")
                    continue
                if target is not None:
                    self._walk_from(target)
                    break

    def _previous(self, results: list[Result], pos: int) -> int:
        for i in range(pos - 1, -1, -1):
            if results[i].applicable:
                return i
        self.term.say("  (this is the first item)")
        return pos

    # -- one item --------------------------------------------------------
    def _ask_item(self, pos: int, second_pass: bool):
        """Ask until the item is dealt with. Returns 'next', 'back' or a position."""
        results = self._results()
        r = results[pos]
        item = r.item
        total = len(results)
        self.term.say("")
        crit = "  [critical]" if item.critical else ""
        self.term.say(f"{r.section_title} · {pos + 1}/{total} · {item.id}{crit}")
        self.term.say(_wrap(item.prompt))
        if item.help:
            self.term.say(_wrap(item.help, "  "))
        if item.is_measured and self.instrument is not None:
            self.term.say(f"  instrument: {self.instrument.serial} (:use SERIAL to change)")
        hint = self._hint(item)
        if r.entry is not None:
            self.term.say(f"  now: {self._now_text(r)} (Enter keeps it)")
        while True:
            raw = self.term.ask(f"{hint}> ")
            text = raw.strip()
            if not text:
                if r.entry is not None:
                    return "next"
                self.term.say("  type an answer, or :skip REASON (:help for commands)")
                continue
            if text.startswith(":"):
                done = self._command(text, pos, results)
                if done is not None:
                    return done
                continue
            try:
                answer = parse_answer(item, text)
            except BadAnswer as exc:
                self.term.say(f"  not recorded: {exc}")
                continue
            read_with = None
            if item.kind == "file" and answer.path is not None:
                read_with = self._how_to_read(item, answer.path)
            entry = self.state.record(item, text, answer, self.instrument, read_with)
            shown = answer.echo.startswith("read as") or item.kind in ("file", "photo")
            if answer.echo and shown:
                self.term.say(f"  {answer.echo}")
            if entry is None:
                self.term.say("  same as before; nothing added")
            else:
                self.answered += 1
            self._show_verdicts(item.id)
            return "next"

    def _how_to_read(self, item, path) -> dict | None:
        """The export profile to read this file with: the instrument's, or one the person
        gives here when the file cannot be read as it is (the message names the columns
        found; Enter records the file anyway and its check says why it cannot judge it)."""
        from ..analyses import FILE_CHECKS, ReadSettings, SettingsError, probe
        from ..captures import CaptureError

        kind = FILE_CHECKS.get(item.check.name) if item.check is not None else None
        if kind is None:
            return None
        profile = None
        if self.instrument is not None:
            profile = self.state.reg.export_profile_json(self.instrument.id)
        while True:
            try:
                probe(kind, path, ReadSettings.from_json(profile), name=path.name)
                return profile
            except (CaptureError, SettingsError) as exc:
                self.term.say(_wrap(f"  cannot read it as it is: {' '.join(str(exc).split())}",
                                    "  "))
            self.term.say(_wrap("  say how to read it, e.g. temp_c=T1,time_s=t (columns), "
                                "tz=Europe/London, time_format=%d/%m/%Y %H:%M, rate_hz=10000; "
                                "Enter records the file as it is", "  "))
            given = self.term.ask("read as> ").strip()
            if not given:
                return profile
            try:
                profile = {**(profile or {}), **_read_options(given)}
            except ValueError as exc:
                self.term.say(f"  not understood: {exc}")

    def _hint(self, item) -> str:
        if item.kind == "confirm":
            return "yes/no "
        if item.kind == "reading":
            return f"{item.unit} "
        if item.kind == "choice":
            opts = "  ".join(f"{n}) {o}" for n, o in enumerate(item.options or [], 1))
            self.term.say(_wrap(opts, "  "))
            return ""
        if item.kind in ("file", "photo"):
            return "path "
        return ""

    def _now_text(self, r: Result) -> str:
        e = r.entry
        assert e is not None
        if e.action == "skip":
            return f"skipped ({e.raw})"
        if e.action == "na":
            return f"n/a ({e.raw})"
        return format_value(r.item, e.value, e.raw)

    def _command(self, text: str, pos: int, results: list[Result]):
        name, _, arg = text[1:].partition(" ")
        name, arg = name.lower(), arg.strip()
        item = results[pos].item
        if name == "back":
            return "back"
        if name in ("quit", "q", "exit"):
            raise _Quit
        if name == "help":
            self.term.say(COMMANDS)
            if item.help:
                self.term.say(_wrap(item.help, "  "))
            return None
        if name == "skip":
            if not arg:
                if results[pos].skipped:
                    return "next"
                self.term.say("  say why: :skip REASON (e.g. :skip tester at the van)")
                return None
            if self.state.mark(item, "skip", arg) is not None:
                self.answered += 1
            self.term.say(f"  skipped: {arg} (listed again at the end)")
            self._show_verdicts(item.id, own=False)
            return "next"
        if name == "na":
            if item.critical:
                self.term.say("  refused: a critical item is n/a only through its checklist "
                              "condition; answer it or :skip REASON")
                return None
            if not arg:
                self.term.say("  say why: :na REASON")
                return None
            if self.state.mark(item, "na", arg) is not None:
                self.answered += 1
            self.term.say(f"  n/a: {arg}")
            return "next"
        if name == "use":
            if not arg:
                current = self.instrument.serial if self.instrument else "none"
                self.term.say(f"  instrument now: {current}; :use SERIAL to change")
                return None
            if arg.lower() in ("none", "-"):
                self.instrument = None
                self.state.reg.set_instrument_in_use(self.state.job, None)
                self.term.say("  no instrument in use now")
                return None
            try:
                self.instrument = self.state.reg.instrument_by_serial(arg)
            except Exception as exc:  # UserError: unknown serial
                self.term.say(_wrap(str(exc), "  "))
                return None
            i = self.instrument
            # Kept with the job at once: Ctrl-C and a later resume keep using it.
            self.state.reg.set_instrument_in_use(self.state.job, i)
            self.term.say(_wrap(f"readings now taken with {i.make} {i.model} {i.serial} "
                                f"(calibration due {i.calibration_due})", "  "))
            note = i.overdue_note()
            if note:
                self.term.say(_wrap(f"warning: {note}", "  "))
            return None
        if name == "goto":
            return self._goto(arg, results)
        if name == "status":
            self._status_lines(results)
            return None
        self.term.say(f"  unknown command ':{name}' (:help lists the commands)")
        return None

    def _goto(self, arg: str, results: list[Result]) -> int | None:
        """Position of an item id (or the first item of a section id), or None with a line
        saying why."""
        if not arg:
            self.term.say("  say where: :goto ITEM-ID (or a section id)")
            return None
        for n, r in enumerate(results):
            if r.item.id == arg:
                if not r.applicable:
                    self.term.say(_wrap(f"{arg}: {r.reason}", "  "))
                    return None
                return n
        found = [n for n, r in enumerate(results) if r.section == arg and r.applicable]
        if found:
            return found[0]
        self.term.say(_wrap(f"no item or section '{arg}' in this checklist", "  "))
        return None

    # -- verdicts --------------------------------------------------------
    def _remember(self, results: list[Result]) -> None:
        self._last = {r.item.id: (r.verdict, r.reason) for r in results}

    def _show_verdicts(self, item_id: str, own: bool = True) -> None:
        """This item's verdict, and any earlier item that this answer completed."""
        results = self._results()
        for r in results:
            before = self._last.get(r.item.id)
            now = (r.verdict, r.reason)
            if r.item.id == item_id:
                if own and r.verdict == "recorded":
                    self.term.say("  recorded")
                elif own:
                    for line in verdict_lines(r, self.term.colour):
                        self.term.say(line)
            elif before != now and r.entry is not None and r.applicable:
                self.term.say(f"  also {r.item.id} is now {word(r.verdict, self.term.colour)}:")
                for line in verdict_lines(r, self.term.colour, indent="    "):
                    self.term.say(line)
        self._remember(results)

    def _header(self, results: list[Result]) -> None:
        job = self.state.job
        c = self.state.checklist
        self.term.say(f"Job {job.short_id} · {job.details.get('site', '')}")
        self.term.say(_wrap(f"Checklist {c.id} {c.version}: {c.title}"))
        for caution in c.cautions:
            self.term.say(_wrap(f"CAUTION: {caution}"))
        self.term.say(_wrap(SIGN_CONVENTION))
        if self.instrument is not None:
            i = self.instrument
            self.term.say(_wrap(f"Instrument in use: {i.make} {i.model} {i.serial}, stamped on "
                                "measured readings (:use SERIAL to change)"))
            note = i.overdue_note()
            if note:
                self.term.say(_wrap(f"warning: {note}"))
        done = sum(1 for r in results if r.entry is not None)
        self.term.say(f"{done} of {len(results)} items recorded. Type :help for commands.")

    def _status_lines(self, results: list[Result]) -> None:
        status = self.state.status(results)
        counts: dict[str, int] = {}
        for r in results:
            counts[r.verdict] = counts.get(r.verdict, 0) + 1
        summary = ", ".join(f"{v} {k}" for k, v in sorted(counts.items()))
        self.term.say(f"  status: {word(status, self.term.colour)} ({summary})")
        for reason in status_reasons(results)[:8]:
            self.term.say(_wrap(f"- {reason}", "    "))

    def _summary(self) -> None:
        results = self._results()
        self.term.say("")
        self.term.say("End of the checklist.")
        self._status_lines(results)
        attention = [r for r in results if r.verdict in ("fail", "review") or r.skipped]
        if attention:
            self.term.say(f"Needs attention ({len(attention)}):")
            for r in attention:
                what = "skipped" if r.skipped else r.verdict
                crit = " [critical]" if r.item.critical else ""
                self.term.say(_clip(f"  {word(f'{what:<7}', self.term.colour)} :goto "
                                    f"{r.item.id}{crit}", r.item.id))
                reason = r.reason.removeprefix("skipped: ")
                self.term.say(_clip(f"          {reason}"))
        self.term.say(f"Full table: commission show {self.state.job.short_id}")
        self.term.say(_wrap(":goto ITEM-ID or :back changes an answer; Enter leaves."))

    def _stopped(self, interrupted: bool = False) -> int:
        kept = sum(1 for e in self.state.entries if e.action != "detail")
        self.term.say(f"Stopped. Everything entered is kept ({kept} entries).")
        self.term.say(f"Resume with: commission walk {self.state.job.short_id}")
        return 130 if interrupted else 0


class _Quit(Exception):
    pass


def _clip(line: str, keep: str = "") -> str:
    """One line of at most 80 columns (an id named in ``keep`` is never cut)."""
    if len(line) <= WIDTH or (keep and len(line) - len(keep) > WIDTH):
        return line
    return line[: WIDTH - 1] + "…"


_READ_KEYS = {"tz", "time_format", "rate_hz", "v_scale", "i_scale", "v_offset", "i_offset"}


def _read_options(text: str) -> dict:
    """``temp_c=T1,time_s=t,tz=Europe/Paris`` -> an export profile (columns and settings)."""
    columns: dict[str, str] = {}
    out: dict = {}
    for part in text.split(","):
        key, sep, value = (s.strip() for s in part.partition("="))
        if not (sep and key and value):
            raise ValueError(f"{part.strip()!r} is not NAME=VALUE")
        if key in _READ_KEYS:
            out[key] = float(value) if key in ("rate_hz", "v_scale", "i_scale", "v_offset",
                                              "i_offset") else value
        else:
            columns[key] = value
    if columns:
        out["columns"] = columns
    return out


def _wrap(text: str, indent: str = "") -> str:
    return "\n".join(textwrap.wrap(text, WIDTH, initial_indent=indent,
                                   subsequent_indent=indent)) or text
