"""Quantities the checklists use, and the parser for values typed by people.

A reading is typed as a number with or without a unit ("2.85kW", "2850 W",
"0,43 Ω", "22ms", "63 C" on a temperature item). It is stored in the SI unit of
its quantity (temperatures in °C, angles in degrees) together with the unit the
person typed. pint does the unit algebra; it is imported only when a value is
parsed, so the command line starts fast.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from functools import lru_cache


@dataclass(frozen=True)
class Quantity:
    name: str
    si_unit: str  # trade symbol of the unit values are stored in
    examples: str  # shown when the person types something else
    minimum: float | None = None  # physically possible range, in si_unit
    maximum: float | None = None


# Hard bounds are physical facts (no negative resistance, nothing below absolute
# zero), not limits of any rule; a checklist narrows them per item with `accept`.
QUANTITIES: dict[str, Quantity] = {
    q.name: q
    for q in [
        Quantity("voltage", "V", "231 V, 0.4 kV", 0.0),
        Quantity("current", "A", "13 A, 30 mA", 0.0),
        Quantity("resistance", "Ω", "0.43 Ω, 1.2 MΩ, 18.6 ohm", 0.0),
        Quantity("power", "W", "2.85 kW, 2850 W, -1.2 kW (export)"),
        Quantity("energy", "J", "6.9 kWh, 25 MJ"),
        Quantity("time", "s", "22 ms, 1.5 s, 40 min", 0.0),
        Quantity("frequency", "Hz", "50 Hz, 59.9 Hz", 0.0),
        Quantity("temperature", "°C", "63 °C, 63 C, 336 K", -273.15),
        Quantity("temperature_difference", "K", "12 K", None),
        Quantity("volume", "m³", "150 L, 0.2 m³", 0.0),
        Quantity("length", "m", "12 m, 350 mm", 0.0),
        Quantity("area", "m²", "2.5 mm², 4 mm2", 0.0),
        Quantity("ratio", "%", "12 %, 0.5", None),
        Quantity("angle", "°", "30°, 90 deg", -360.0, 360.0),
    ]
}

# Trade symbols → pint spellings. Longest first so "MΩ" is not read as "M" + "Ω".
_SYMBOLS = [
    ("kWp", "kW"),
    ("Wp", "W"),
    ("℃", "degC"),
    ("°C", "degC"),
    ("°F", "degF"),
    ("m³", "m**3"),
    ("m²", "m**2"),
    ("mm²", "mm**2"),
    ("Ω", "ohm"),
    ("°", "degree"),
    ("%", "percent"),
    ("µ", "u"),
    ("μ", "u"),
]

# Unicode that looks right to a person but is not what the parser expects.
_LOOKALIKES = {
    "\u2126": "Ω",  # OHM SIGN → GREEK CAPITAL OMEGA
    "\u00b5": "μ",  # MICRO SIGN → GREEK SMALL MU
    "\u2212": "-",  # MINUS SIGN
    "\u2012": "-",
    "\u2013": "-",
    "\u00a0": " ",
    "\u202f": " ",
    "\u2009": " ",
    "\u00b2": "²",
    "\u00b3": "³",
}

_NUMBER = re.compile(
    r"^(?P<sign>[+-]?)\s*(?P<int>\d*)(?:(?P<sep>[.,])(?P<frac>\d+))?"
    r"(?P<exp>[eE][+-]?\d+)?\s*(?P<unit>.*)$"
)


# Characters a unit may contain; anything else is refused before pint sees it.
_UNIT_CHARS = re.compile(r"[^A-Za-z0-9\s/*^²³°Ωμ%·.\-℃]")


@dataclass(frozen=True)
class Parsed:
    """A reading as stored: SI value, the unit typed (None for a bare number)."""

    value: float  # in the quantity's si_unit (inf for an open circuit)
    si_unit: str
    unit_typed: str | None
    shown: str  # the value in the item's unit, for the echo ("231 V")
    bound: str | None = None  # "over": the instrument's over-range; "open": an open circuit

    def stored(self) -> float | dict[str, float | bool]:
        """The value as the register keeps it (JSON): a number, or a bound's shape."""
        if self.bound == "open":
            return {"open": True}
        if self.bound == "over":
            return {"over": self.value}
        return self.value


@dataclass(frozen=True)
class Bound:
    """A reading the instrument could only bound: over its range (``>299 MΩ``: the true value
    is at least ``si``) or an open circuit (``OL``: no finite value; ``si`` is infinite).

    Checks that understand bounds say so when registered; others never see one (the
    evaluator answers ``review`` for them). ``float()`` gives the lower bound."""

    si: float
    open: bool = False

    def __float__(self) -> float:
        return self.si

    def text(self, quantity: str, unit: str) -> str:
        if self.open:
            return "open circuit (OL)"
        return f">{show_si(self.si, quantity, unit)}"


def as_reading(value: object) -> object:
    """A stored reading's value for the checks: a float, or a :class:`Bound` for the shapes
    ``{"over": si}`` and ``{"open": true}``; anything else unchanged."""
    if isinstance(value, dict):
        if value.get("open") is True and len(value) == 1:
            return Bound(math.inf, open=True)
        if set(value) == {"over"} and isinstance(value["over"], int | float) \
                and not isinstance(value["over"], bool):
            return Bound(float(value["over"]))
    return value


def is_bound_shape(value: object) -> bool:
    return isinstance(as_reading(value), Bound)


# What testers show for an open circuit on a resistance range (compared without case).
OPEN_WORDS = ("ol", "o.l", "o.l.", "open", "open circuit")
# What testers show before an over-range figure: ">299 MΩ", "> 1999 MΩ", ">2GΩ", "≥ 200 MΩ".
_OVER = re.compile(r"^(?:>|≥|>=|over\s)\s*(?P<rest>.+)$", re.IGNORECASE)


def quote_typed(text: str, limit: int = 40) -> str:
    """Quote what a person typed for a message: one line, control characters shown."""
    shown = "".join(c if c.isprintable() else repr(c)[1:-1] for c in text)
    if len(shown) > limit:
        shown = shown[: limit - 1] + "…"
    return f"'{shown}'"


def normalise_text(text: str) -> str:
    for bad, good in _LOOKALIKES.items():
        text = text.replace(bad, good)
    return " ".join(text.split())


def to_pint(symbol: str) -> str:
    """Translate a trade unit symbol to a spelling pint understands."""
    out = symbol.strip()
    for trade, spelled in _SYMBOLS:
        out = out.replace(trade, spelled)
    out = re.sub(r"\bL\b", "liter", out)
    # "mm2" written without a superscript means mm².
    out = re.sub(r"\b(mm|cm|m)2\b", r"\1**2", out)
    return out


@lru_cache(maxsize=1)
def registry():
    import pint

    ureg = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)
    return ureg


def _pint_unit(symbol: str, quantity: Quantity | None = None):
    """The pint unit for a symbol as typed, or None if pint does not know it."""
    spelled = to_pint(symbol)
    if quantity is not None and quantity.name in ("temperature", "temperature_difference"):
        # On a temperature item "63 C" means °C, not coulombs; "F" is °F.
        bare = spelled.replace(" ", "").lower()
        if quantity.name == "temperature":
            if bare in ("c", "degc", "degreec", "celsius", "degreescelsius"):
                spelled = "degC"
            elif bare in ("f", "degf", "fahrenheit"):
                spelled = "degF"
        elif bare in ("k", "kelvin", "degc", "c"):
            spelled = "kelvin"
    if not spelled or _UNIT_CHARS.search(symbol):
        return None
    try:
        return registry().parse_units(spelled)
    except Exception:  # pint's parser raises many kinds on junk; any of them means "unknown"
        return None


def quantity_of_unit(symbol: str) -> str | None:
    """Name of the quantity a unit symbol measures, if it is one we know."""
    import pint

    unit = _pint_unit(symbol)
    if unit is None:
        return None
    for q in QUANTITIES.values():
        try:
            (1 * unit).to(_pint_unit(q.si_unit, q))
            return q.name
        except pint.errors.DimensionalityError:
            continue
    return None


@lru_cache(maxsize=512)
def unit_fits(symbol: str, quantity: str) -> bool:
    """True if ``symbol`` is a unit of ``quantity`` (for checklist validation; cached,
    since every job opened validates its checklist again)."""
    import pint

    q = QUANTITIES[quantity]
    unit = _pint_unit(symbol, q)
    if unit is None:
        return False
    try:
        registry().Quantity(1.0, unit).to(_pint_unit(q.si_unit, q))
    except pint.errors.DimensionalityError:
        return False
    return True


def convert(value: float, from_symbol: str, to_symbol: str, quantity: str) -> float:
    q = QUANTITIES[quantity]
    ureg = registry()
    return float(ureg.Quantity(value, _pint_unit(from_symbol, q)).to(_pint_unit(to_symbol, q)).m)


def format_number(x: float) -> str:
    if x == 0:
        return "0"
    return f"{x:.6g}"


def parse_number(text: str) -> tuple[float, str]:
    """Split a typed reading into its number and the rest (the unit).

    A comma is a decimal separator; "1,200" (a comma before exactly three
    digits) is ambiguous and refused.
    """
    text = normalise_text(text)
    m = _NUMBER.match(text)
    if not m or not (m.group("int") or m.group("frac")):
        raise ValueError("not a number")
    if m.group("sep") == "," and len(m.group("frac")) == 3 and m.group("int"):
        whole = m.group("int") + m.group("frac")
        dotted = format_number(float(m.group("int") + "." + m.group("frac")))
        raise ValueError(
            f"'{m.group('int')},{m.group('frac')}' is ambiguous: write {int(whole)} or {dotted}"
        )
    number = (m.group("int") or "0") + ("." + m.group("frac") if m.group("frac") else "")
    value = float(m.group("sign") + number + (m.group("exp") or ""))
    return value, m.group("unit").strip()


def parse_reading(
    text: str,
    quantity: str,
    item_unit: str,
    accept_min: float | None = None,
    accept_max: float | None = None,
) -> Parsed:
    """Parse a typed reading of ``quantity``; a bare number is in ``item_unit``.

    ``accept_min``/``accept_max`` are the item's plausible range in ``item_unit``.
    Raises ValueError with a one-line message that says what is accepted.
    """
    import pint

    q = QUANTITIES[quantity]
    name = quantity.replace("_", " ")
    hint = f"a {name}, e.g. {q.examples} (a bare number is read in {item_unit})"
    raw = normalise_text(text)
    if raw.lower() in OPEN_WORDS:
        if quantity != "resistance":
            raise ValueError(f"{quote_typed(text)} means an open circuit, which only a "
                             f"resistance reading can show; expected {hint}")
        return Parsed(math.inf, q.si_unit, None, "open circuit (OL)", bound="open")
    over = _OVER.match(raw)
    if over:
        if q.minimum is None:  # a power or a ratio may be negative: no over-range bound
            raise ValueError(f"{quote_typed(text)}: a lower bound ('>') is accepted on "
                             f"readings that cannot be negative; expected {hint}")
        inner = parse_reading(over.group("rest"), quantity, item_unit, accept_min, accept_max)
        if inner.bound:
            raise ValueError(f"{quote_typed(text)} is not a reading; expected {hint}")
        return Parsed(inner.value, inner.si_unit, inner.unit_typed, f">{inner.shown}",
                      bound="over")
    if raw.lower() in ("nan", "inf", "-inf", "+inf", "infinity"):
        raise ValueError(f"{quote_typed(text)} is not a finite number; expected {hint}")
    try:
        number, unit_text = parse_number(raw)
    except ValueError as exc:
        if str(exc) == "not a number":
            raise ValueError(f"{quote_typed(text)} is not a number; expected {hint}") from None
        raise
    if not math.isfinite(number):
        raise ValueError(f"{quote_typed(text)} is not a finite number; expected {hint}")
    typed = unit_text or None
    symbol = unit_text or item_unit
    unit = _pint_unit(symbol, q)
    if unit is None:
        raise ValueError(f"unknown unit '{unit_text}'; expected {hint}")
    ureg = registry()
    try:
        si = float(ureg.Quantity(number, unit).to(_pint_unit(q.si_unit, q)).m)
        shown_value = float(ureg.Quantity(number, unit).to(_pint_unit(item_unit, q)).m)
    except pint.errors.DimensionalityError:
        other = quantity_of_unit(unit_text)
        what = f" (a {other.replace('_', ' ')})" if other else ""
        raise ValueError(
            f"{quote_typed(text)} is not {hint.split(',')[0]}{what}; expected {hint}"
        ) from None
    except OverflowError:
        raise ValueError(f"{quote_typed(text)} is too large; expected {hint}") from None
    if not (math.isfinite(si) and math.isfinite(shown_value)):
        raise ValueError(f"{quote_typed(text)} is too large; expected {hint}")
    if q.minimum is not None and si < q.minimum:
        raise ValueError(
            f"{quote_typed(text)} is impossible: a {quantity.replace('_', ' ')} cannot be below "
            f"{format_number(q.minimum)} {q.si_unit}"
        )
    if q.maximum is not None and si > q.maximum:
        raise ValueError(
            f"{quote_typed(text)} is impossible: a {quantity.replace('_', ' ')} cannot exceed "
            f"{format_number(q.maximum)} {q.si_unit}"
        )
    lo_ok = accept_min is None or shown_value >= accept_min
    hi_ok = accept_max is None or shown_value <= accept_max
    if not (lo_ok and hi_ok):
        lo = "…" if accept_min is None else format_number(accept_min)
        hi = "…" if accept_max is None else format_number(accept_max)
        raise ValueError(
            f"{quote_typed(text)} ({format_number(shown_value)} {item_unit}) is outside what "
            "this reading "
            f"can be ({lo} to {hi} {item_unit}); check the value and its unit"
        )
    # Round off binary noise from unit conversion (150 L → 0.15 m³, not 0.15000000000000002).
    si = float(f"{si:.12g}")
    return Parsed(si, q.si_unit, typed, f"{format_number(shown_value)} {item_unit}")


def show_si(value: float, quantity: str, unit: str) -> str:
    """An SI value shown in a display unit: show_si(0.022, 'time', 'ms') → '22 ms'."""
    q = QUANTITIES[quantity]
    return f"{format_number(convert(value, q.si_unit, unit, quantity))} {unit}"
