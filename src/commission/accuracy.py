"""An instrument's stated accuracy, as typed once when the instrument is registered.

Written the way makers print it, one part per range or function, separated by ``;``::

    ±(0.5 % + 2 digits)
    ±(2 % + 3 digits) + 0.02 Ω
    ≤ 20 Ω: ±(3 % + 4 digits), resolution 0.01 Ω; ≤ 200 Ω: ±(3 % + 4 digits)
    time: ±(1 % + 3 digits); ≤ 1000 MΩ: ±(5 % + 3 digits)
    class 1                      (± 1 % of reading)

A part applies to readings of its quantity (named, or implied by the unit of its range or
absolute term; a part with neither applies to any reading). The range is the smallest
``≤ limit`` that holds the reading. ``digits`` count the last digit of the range: its
``resolution`` when given, else the last decimal of the reading as typed.

How the figure is to be read (a bound, or an expanded uncertainty at k = 2) is stored beside
it: see :mod:`commission.physics.uncertainty`.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from .physics.uncertainty import BOUND, EXPANDED_K2, accuracy_bound, expanded_uncertainty

ACCEPTED = ('"±(0.5 % + 2 digits)", "≤ 20 Ω: ±(3 % + 4 digits), resolution 0.01 Ω; '
            '≤ 200 Ω: ±(3 % + 4 digits)", "time: ±(1 % + 3 digits)" or "class 1"')
READ_AS_TEXT = {BOUND: "a bound (rectangular, u = bound/√3)",
                EXPANDED_K2: "an expanded uncertainty at k = 2"}

_QUANTITY_WORDS = ("voltage", "current", "resistance", "power", "time", "frequency",
                   "temperature", "energy")


@dataclass(frozen=True)
class AccuracyPart:
    quantity: str | None  # the quantity it applies to, None: any
    upper: float | None  # range limit in SI units, None: no limit
    pct: float
    digits: float
    resolution: float | None  # SI
    absolute: float  # SI

    def text(self) -> str:
        terms = [f"{self.pct:g} %"] if self.pct else []
        if self.digits:
            terms.append(f"{self.digits:g} digits")
        if self.absolute:
            terms.append(f"{self.absolute:g} (SI)")
        return f"±({' + '.join(terms) or '0'})"


@dataclass(frozen=True)
class Accuracy:
    """A parsed accuracy statement and how its figure is to be read."""

    text: str
    read_as: str
    parts: tuple[AccuracyPart, ...]

    def part_for(self, value_si: float, quantity: str) -> AccuracyPart | None:
        """The part that covers a reading of ``quantity``, or None when none applies."""
        fitting = [p for p in self.parts if p.quantity in (None, quantity)]
        ranged = sorted((p for p in fitting if p.upper is not None), key=lambda p: p.upper)
        for p in ranged:
            if abs(value_si) <= p.upper:  # type: ignore[operator]
                return p
        open_ = [p for p in fitting if p.upper is None]
        if open_:
            return open_[0]
        return None

    def expanded(self, value_si: float, quantity: str, typed: str | None = None,
                 typed_unit: str | None = None, k: float = 2.0) -> float | None:
        """Expanded uncertainty U (SI) of one reading, or None when no part applies.

        ``typed`` is the reading as typed (its decimals give the digit's value when the range
        states no resolution) and ``typed_unit`` the unit it was typed in.
        """
        from .units import QUANTITIES, convert

        part = self.part_for(value_si, quantity)
        if part is None:
            return None
        resolution = part.resolution
        if resolution is None and part.digits:
            if typed is None:
                raise ValueError("the digits of this accuracy need the reading as typed")
            from .physics.uncertainty import resolution_of_typed_number

            res = resolution_of_typed_number(typed)
            unit = typed_unit or QUANTITIES[quantity].si_unit
            resolution = abs(convert(res, unit, QUANTITIES[quantity].si_unit, quantity))
        figure = accuracy_bound(value_si, pct_of_reading=part.pct, digits=part.digits,
                                resolution=resolution or 0.0, absolute=part.absolute)
        return expanded_uncertainty(figure, self.read_as, k)

    def as_json(self) -> dict[str, str]:
        return {"text": self.text, "read_as": self.read_as}


_NUM = r"[0-9]+(?:[.,][0-9]+)?"
_PCT_DIGITS = re.compile(
    rf"^(?:±|\+/-|\+-)\s*\(\s*(?P<pct>{_NUM})\s*%\s*(?:of\s+(?:reading|rdg)\s*)?"
    rf"(?:\+\s*(?P<digits>{_NUM})\s*(?:digits?|dgts?|d|counts?|ct)\s*)?"
    rf"(?:\+\s*(?P<abs_in>{_NUM}\s*[^\s)]+)\s*)?\)\s*"
    rf"(?:\+\s*(?P<abs>{_NUM}\s*\S+)\s*)?$",
    re.IGNORECASE,
)
_PCT_ONLY = re.compile(rf"^(?:±|\+/-|\+-)\s*(?P<pct>{_NUM})\s*%\s*(?:of\s+(?:reading|rdg))?$",
                       re.IGNORECASE)
_ABS_ONLY = re.compile(rf"^(?:±|\+/-|\+-)\s*(?P<abs>{_NUM}\s*\S+)$", re.IGNORECASE)
_CLASS = re.compile(rf"^class\s+(?P<pct>{_NUM})$", re.IGNORECASE)
_RANGE = re.compile(r"^(?:≤|<=|up\s+to)\s*(?P<q>.+)$", re.IGNORECASE)
_RES = re.compile(r"^(?:resolution|res\.?)\s+(?P<q>.+)$", re.IGNORECASE)


def _num(text: str) -> float:
    return float(text.replace(",", "."))


def _quantity(text: str, what: str) -> tuple[float, str]:
    """A typed quantity (e.g. "20 Ω") as (SI value, quantity name)."""
    from .units import QUANTITIES, convert, parse_number, quantity_of_unit

    try:
        value, unit = parse_number(text)
    except ValueError:
        raise ValueError(f"{what} '{text.strip()}' is not a number with a unit") from None
    name = quantity_of_unit(unit) if unit else None
    if name is None:
        raise ValueError(f"{what} '{text.strip()}' needs a unit such as Ω, MΩ, ms, V, A or W")
    si = convert(value, unit, QUANTITIES[name].si_unit, name)
    if si < 0:
        raise ValueError(f"{what} '{text.strip()}' cannot be negative")
    return si, name


def _one_part(text: str) -> AccuracyPart:
    quantity: str | None = None
    upper: float | None = None
    body = text.strip()
    if ":" in body:
        head, body = (s.strip() for s in body.split(":", 1))
        if head.lower() in _QUANTITY_WORDS:
            quantity = head.lower()
        else:
            m = _RANGE.match(head)
            if not m:
                raise ValueError(f"'{head}' is neither a quantity ({', '.join(_QUANTITY_WORDS)}) "
                                 "nor a range such as '≤ 20 Ω'")
            upper, quantity = _quantity(m.group("q"), "range")
    resolution: float | None = None
    if "," in body and _RES.match(body.rsplit(",", 1)[1].strip()):
        body, res_text = (s.strip() for s in body.rsplit(",", 1))
        res_si, res_q = _quantity(_RES.match(res_text).group("q"), "resolution")  # type: ignore[union-attr]
        if quantity not in (None, res_q):
            raise ValueError(f"resolution '{res_text}' is not a {quantity}")
        resolution, quantity = res_si, res_q
    pct = digits = absolute = 0.0
    abs_text = None
    if m := _PCT_DIGITS.match(body):
        pct = _num(m.group("pct"))
        digits = _num(m.group("digits")) if m.group("digits") else 0.0
        abs_text = m.group("abs_in") or m.group("abs")
    elif m := _PCT_ONLY.match(body):
        pct = _num(m.group("pct"))
    elif m := _ABS_ONLY.match(body):
        abs_text = m.group("abs")
    elif m := _CLASS.match(body):
        pct = _num(m.group("pct"))
    else:
        raise ValueError(f"'{body}' is not an accuracy")
    if abs_text:
        absolute, abs_q = _quantity(abs_text, "absolute term")
        if quantity not in (None, abs_q):
            raise ValueError(f"absolute term '{abs_text}' is not a {quantity}")
        quantity = abs_q
    if pct > 100 or digits > 1000:
        raise ValueError(f"'{body}' is beyond any instrument's accuracy (over 100 %)")
    return AccuracyPart(quantity, upper, pct, digits, resolution, absolute)


def parse_accuracy(text: str, read_as: str) -> Accuracy:
    """Parse a maker's accuracy statement; ValueError with a one-line message otherwise."""
    if read_as not in (BOUND, EXPANDED_K2):
        raise ValueError(f"a maker's figure is read as 'bound' or 'k2', not '{read_as}'")
    clean = text.strip()
    if not clean or len(clean) > 400:
        raise ValueError(f"'{clean[:40]}' is not an accuracy; write e.g. {ACCEPTED}")
    parts = []
    for piece in clean.split(";"):
        if not piece.strip():
            continue
        try:
            parts.append(_one_part(piece))
        except ValueError as exc:
            raise ValueError(f"{exc}; write e.g. {ACCEPTED}") from None
    if not parts:
        raise ValueError(f"'{clean}' is not an accuracy; write e.g. {ACCEPTED}")
    return Accuracy(clean, read_as, tuple(parts))
