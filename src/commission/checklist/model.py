"""The checklist format: a YAML file of sections and items, validated with pydantic.

Our own format, described by ``commission checklists schema``::

    format: commission-checklist/1
    id: diverter-1ph
    title: Surplus diverter, single phase
    version: 1.0.0
    rules: {name: ..., notes: ...}     # the local-rules profile it assumes
    sections:
      - id: supply
        title: Supply
        items:
          - id: supply.voltage
            kind: reading              # confirm | reading | choice | text | file | photo
            quantity: voltage
            unit: V
            prompt: Supply voltage at the origin, L–N
            help: How to take it safely, and the test conditions.
            critical: true
            check: {name: supply_voltage, inputs: {}, params: {nominal_v: 230}}
            when: {item: supply.earthing, in: [TT]}
"""

from __future__ import annotations

import re
from typing import Any, Literal

from pydantic import BaseModel, ConfigDict, Field, field_validator, model_validator

FORMAT = "commission-checklist/1"
KINDS = ("confirm", "reading", "choice", "text", "file", "photo")
ID_PATTERN = r"^[a-z][a-z0-9_-]*(\.[a-z0-9_-]+)*$"


def _word(value: Any) -> Any:
    """YAML 1.1 reads yes/no/on/off as booleans; a checklist means the words."""
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, int | float):
        return str(value)
    return value


def fold(text: str) -> str:
    """A choice answer compared without case, spaces, dashes, dots or slashes:
    'tn c s', 'TN-C-S' and 'tncs' fold alike."""
    folded = "".join(c for c in text.lower() if c.isalnum() or c in "½°+")
    return folded or " ".join(text.lower().split())


class Strict(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)


class Accept(Strict):
    """Plausible range of a reading, in the item's unit (typing errors are refused)."""

    min: float | None = None
    max: float | None = None


class CheckSpec(Strict):
    name: str = Field(description="a registered check (see DEVELOPERS.md)")
    inputs: dict[str, Any] = Field(
        default_factory=dict,
        description="input name → an item id (a string) or a constant (a number, or "
        "{const: VALUE} for a text constant)",
    )
    params: dict[str, Any] = Field(
        default_factory=dict, description="limits and settings that replace the defaults"
    )


class Condition(Strict):
    """The item applies only when another item has one of these answers."""

    item: str
    is_: str | None = Field(default=None, alias="is")
    in_: list[str] | None = Field(default=None, alias="in")

    model_config = ConfigDict(extra="forbid", frozen=True, populate_by_name=True)

    @field_validator("is_", mode="before")
    @classmethod
    def _is_word(cls, v: Any) -> Any:
        return _word(v)

    @field_validator("in_", mode="before")
    @classmethod
    def _in_words(cls, v: Any) -> Any:
        return [_word(x) for x in v] if isinstance(v, list) else v

    @model_validator(mode="after")
    def _one_of(self) -> Condition:
        if (self.is_ is None) == (self.in_ is None):
            raise ValueError("a condition needs exactly one of 'is' or 'in'")
        return self

    def accepts(self) -> list[str]:
        return [self.is_] if self.is_ is not None else list(self.in_ or [])

    def text(self) -> str:
        return f"{self.item} is {' or '.join(self.accepts())}"


HOMEOWNER_ROLES = ("device", "location", "isolator", "settings", "lights", "keep_clear",
                   "heater_power", "store_volume", "water_regime", "forced_modes")


PHASE_LABELS = ("L1", "L2", "L3", "N", "L1-L2", "L2-L3", "L3-L1")


class ItemReport(Strict):
    """Where an item appears in the record besides the results table.

    The record's layout code knows these roles, never item ids: any checklist can
    feed the summary, the homeowner's pages, the findings on page 1 and the charts.
    """

    summary: str | None = Field(
        default=None, description="label of this item's row in the record's summary table")
    homeowner: Literal[HOMEOWNER_ROLES] | None = Field(  # type: ignore[valid-type]
        default=None,
        description="what this item's answer tells the homeowner: " + ", ".join(HOMEOWNER_ROLES))
    limitations: bool = Field(
        default=False, description="a text item listing the limitations of the inspection "
        "(printed with the findings on page 1)")
    actions: bool = Field(
        default=False, description="a text item saying what was done on this visit (printed "
        "on page 1 of a periodic record)")
    chart: bool = Field(
        default=False, description="draw this item's check as a chart (where the check has one "
        "and its data exists)")
    phase: Literal[PHASE_LABELS] | None = Field(  # type: ignore[valid-type]
        default=None, description="the phase (or pair of phases) this item measures: "
        + ", ".join(PHASE_LABELS) + "; needs 'measurement'")
    measurement: str | None = Field(
        default=None, min_length=1, description="title of the per-phase table this item is "
        "a row of: items sharing it are printed as one table, one row per phase")

    @model_validator(mode="after")
    def _phase_pair(self) -> ItemReport:
        if (self.phase is None) != (self.measurement is None):
            raise ValueError("'phase' and 'measurement' go together: a per-phase table needs "
                             "both its title and the row's phase")
        return self


class Interval(Strict):
    """How long until the next inspection or service, with where that comes from."""

    months: int = Field(ge=1, le=120)
    source: str = Field(min_length=1)


class Revisit(Strict):
    """What a periodic-inspection checklist takes from its baseline (issue 14)."""

    carry: list[str] = Field(
        default_factory=list,
        description="section or item ids whose baseline answers are carried as starting "
        "answers (site and installation details, settings)")
    temperature: str | None = Field(
        default=None, description="a temperature reading item: the ambient or conductor "
        "temperature at the tests, used to allow for copper's resistance change")
    params: dict[str, float] = Field(
        default_factory=dict,
        description="change limits replacing the defaults (see commission.checks.change)")


class Item(Strict):
    id: str = Field(pattern=ID_PATTERN, description="stable dotted id, e.g. supply.voltage")
    kind: Literal["confirm", "reading", "choice", "text", "file", "photo"]
    prompt: str = Field(min_length=1)
    help: str = ""
    critical: bool = False
    source: str | None = Field(
        default=None, description="where the requirement comes from (standard, clause)"
    )
    quantity: str | None = Field(default=None, description="reading items: what is measured")
    unit: str | None = Field(default=None, description="reading items: unit of a bare number")
    accept: Accept | None = None
    measured: bool | None = Field(
        default=None,
        description="reading items: true (the default) when taken with an instrument, which "
        "is then stamped on it; false when declared from a nameplate, a setting or a size",
    )
    options: list[str] | None = Field(default=None, description="choice items")
    aliases: dict[str, list[str]] | None = Field(
        default=None,
        description="choice items: option → other spellings people type (e.g. TN-C-S: "
        "[PME]); case, spaces and dashes are ignored anyway, and an unambiguous start of "
        "an option is accepted",
    )
    pass_answer: Literal["yes", "no"] = Field(
        default="yes", description="confirm items: the answer that passes"
    )
    check: CheckSpec | None = None
    when: Condition | None = None
    report: ItemReport = Field(default_factory=ItemReport,
                               description="where the item appears in the record")

    @property
    def is_measured(self) -> bool:
        """A reading taken with an instrument (not declared)."""
        return self.kind == "reading" and self.measured is not False

    @field_validator("aliases", mode="before")
    @classmethod
    def _alias_words(cls, v: Any) -> Any:
        if isinstance(v, dict):
            return {_word(k): [_word(x) for x in (w if isinstance(w, list) else [w])]
                    for k, w in v.items()}
        return v

    @field_validator("options", mode="before")
    @classmethod
    def _options_words(cls, v: Any) -> Any:
        return [_word(x) for x in v] if isinstance(v, list) else v

    @field_validator("pass_answer", mode="before")
    @classmethod
    def _pass_word(cls, v: Any) -> Any:
        return _word(v)

    @model_validator(mode="after")
    def _kind_fields(self) -> Item:
        from ..units import QUANTITIES, unit_fits

        if self.kind == "reading":
            if not self.quantity or not self.unit:
                raise ValueError("a reading needs 'quantity' and 'unit'")
            if self.quantity not in QUANTITIES:
                raise ValueError(
                    f"unknown quantity '{self.quantity}' (accepted: {', '.join(QUANTITIES)})"
                )
            if not unit_fits(self.unit, self.quantity):
                raise ValueError(f"unit '{self.unit}' is not a unit of {self.quantity}")
        else:
            for key in ("quantity", "unit", "accept", "measured"):
                if getattr(self, key) is not None:
                    raise ValueError(f"'{key}' belongs to reading items only")
        if self.kind == "choice":
            if not self.options or len(self.options) < 2:
                raise ValueError("a choice needs at least two 'options'")
            if len({fold(o) for o in self.options}) != len(self.options):
                raise ValueError("options must differ (case, spaces and dashes are ignored)")
            seen = {fold(o): o for o in self.options}
            for option, spellings in (self.aliases or {}).items():
                if option not in self.options:
                    raise ValueError(f"aliases: '{option}' is not one of the options "
                                     f"({', '.join(self.options)})")
                for spelling in spellings:
                    key = fold(spelling)
                    if not key:
                        raise ValueError(f"aliases: an empty spelling for '{option}'")
                    if seen.get(key, option) != option:
                        raise ValueError(f"aliases: '{spelling}' would read as both "
                                         f"'{seen[key]}' and '{option}'")
                    seen[key] = option
        elif self.options is not None or self.aliases is not None:
            raise ValueError("'options' and 'aliases' belong to choice items only")
        if self.report.limitations and self.kind != "text":
            raise ValueError("'report: {limitations: true}' belongs to a text item")
        if self.report.actions and self.kind != "text":
            raise ValueError("'report: {actions: true}' belongs to a text item")
        return self


class Section(Strict):
    id: str = Field(pattern=r"^[a-z][a-z0-9_-]*$")
    title: str
    intro: str = ""
    items: list[Item] = Field(min_length=1)


class RulesProfile(Strict):
    name: str = Field(description="the local wiring rules this checklist assumes")
    notes: str = ""


class Checklist(Strict):
    format: Literal["commission-checklist/1"] = FORMAT
    id: str = Field(pattern=ID_PATTERN)
    title: str
    version: str
    rules: RulesProfile
    cautions: list[str] = Field(default_factory=list)
    inspection_interval: Interval | None = Field(
        default=None, description="time to the next inspection or service, with its source")
    sections: list[Section] = Field(min_length=1)
    revisit: Revisit | None = Field(
        default=None, description="a periodic-inspection checklist: what it carries from "
        "the baseline record and compares with it")

    @model_validator(mode="after")
    def _revisit_refs(self) -> Checklist:
        if self.revisit is None:
            return self
        sections = {s.id for s in self.sections}
        items = {i.id: i for s in self.sections for i in s.items}
        for ref in self.revisit.carry:
            if ref not in sections and ref not in items:
                raise ValueError(f"revisit.carry: '{ref}' is neither a section nor an item")
        t = self.revisit.temperature
        if t is not None and (t not in items or items[t].quantity != "temperature"):
            raise ValueError(f"revisit.temperature: '{t}' is not a temperature reading item")
        return self

    def carried_ids(self) -> list[str]:
        """The items whose baseline answers a revisit carries, in walk order."""
        if self.revisit is None:
            return []
        refs = set(self.revisit.carry)
        return [i.id for s in self.sections for i in s.items if s.id in refs or i.id in refs]

    @field_validator("version", mode="before")
    @classmethod
    def _version_text(cls, v: Any) -> Any:
        return str(v) if isinstance(v, int | float) else v

    def items(self) -> list[tuple[Section, Item]]:
        """Every item in walk order with its section."""
        return [(s, i) for s in self.sections for i in s.items]

    def item(self, item_id: str) -> Item:
        for _, i in self.items():
            if i.id == item_id:
                return i
        raise KeyError(item_id)

    def section_of(self, item_id: str) -> Section:
        for s, i in self.items():
            if i.id == item_id:
                return s
        raise KeyError(item_id)


def json_schema() -> dict[str, Any]:
    schema = Checklist.model_json_schema(by_alias=True)
    schema["$schema"] = "https://json-schema.org/draft/2020-12/schema"
    schema["title"] = "commission checklist"
    return schema


_REF = re.compile(ID_PATTERN)


def is_ref(value: Any) -> bool:
    """A check input that is a string names an item; anything else is a constant."""
    return isinstance(value, str) and bool(_REF.match(value))
