"""The form format: which sections a record prints, in which order, with which headings.

``forms/*.yaml`` (``format: commission-form/1``), validated up front by this pydantic
model; ``commission forms schema`` prints its JSON Schema for editors. A form says
nothing about items: the checklist's ``report`` declarations do that.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any, Literal

from pydantic import BaseModel, ConfigDict, Field, ValidationError, field_validator

FORMAT = "commission-form/1"
SECTIONS = ("status", "summary", "instruments", "phases", "results", "files", "photos",
            "charts", "cautions", "homeowner", "signatures")
Section = Literal[SECTIONS]  # type: ignore[valid-type]


class Form(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)

    format: Literal["commission-form/1"] = Field(description="always commission-form/1")
    id: str = Field(pattern=r"^[a-z][a-z0-9_-]*$")
    title: str = Field(min_length=1, description="printed on the first page and every header")
    sections: list[Section] = Field(min_length=1, description="printed in this order")
    headings: dict[Section, str] = Field(default_factory=dict,
                                         description="section → its heading")
    cautions: list[str] = Field(default_factory=list,
                                description="added to the checklist's own cautions")
    supplement: str | None = Field(
        default=None, description="the statement that the record does not replace a local "
        "certificate (a default is printed when absent)")

    @field_validator("sections")
    @classmethod
    def _once(cls, v: list[str]) -> list[str]:
        twice = sorted({s for s in v if v.count(s) > 1})
        if twice:
            raise ValueError(f"section '{twice[0]}' is listed twice")
        return v

    @field_validator("supplement", mode="before")
    @classmethod
    def _joined(cls, v: Any) -> Any:
        return " ".join(str(x) for x in v) if isinstance(v, list) else v


def json_schema() -> dict[str, Any]:
    schema = Form.model_json_schema()
    schema["$schema"] = "https://json-schema.org/draft/2020-12/schema"
    schema["title"] = "commission form"
    return schema


def load_form(path: Path) -> dict[str, Any]:
    """The form as a plain dict; a one-line UserError 'FILE:LINE: key: message'."""
    import yaml

    from ..errors import UserError

    try:
        text = path.read_text(encoding="utf-8")
        data = yaml.safe_load(text)
    except (OSError, UnicodeDecodeError) as exc:
        raise UserError(f"{path}:1: form: cannot read ({exc})") from None
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        line = mark.line + 1 if mark else 1
        raise UserError(f"{path}:{line}: form: not valid YAML") from None
    if not isinstance(data, dict) or data.get("format") != FORMAT:
        raise UserError(f"{path}:1: format: not a form (needs 'format: {FORMAT}')")
    try:
        return Form.model_validate(data).model_dump()
    except ValidationError as exc:
        err = exc.errors()[0]
        loc = [str(x) for x in err["loc"]]
        key = loc[0] if loc else ""
        line = _line_of(text, key)
        where = ".".join(loc) or "form"
        msg = err["msg"].removeprefix("Value error, ")
        if key in ("sections", "headings") and err["type"] == "literal_error":
            msg = f"unknown section (accepted: {', '.join(SECTIONS)})"
        raise UserError(f"{path}{line}: {where}: {msg}") from None


def _line_of(text: str, key: str) -> str:
    for n, line in enumerate(text.splitlines(), start=1):
        if key and line.startswith(f"{key}:"):
            return f":{n}"
    return ":1"
