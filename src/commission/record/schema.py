"""The embedded record's schema: one strict, versioned definition (pydantic).

``build`` writes through it, and ``verify``, ``import`` and every later reader parse
through it, so nothing reads a record field that is not declared here. Format 3 is
what this release writes; formats 1 (the first release) and 2 are still read, so their
records keep verifying. Later issues add fields to format 3 as optional fields with a
default. Format 3 declares, inside the signed record, the SHA-256 fingerprint of the
installer's signing certificate and the one box reserved for the reviewer's stamp
(``signing.installer_certificate_sha256``, ``signing.reviewer_stamp``; read them through
``record.installer_certificate_sha256`` / ``record.reviewer_stamp`` on every format).

What a record may hold is stated here, with its bounds: every string has a length
limit, every list a count limit, numbers are finite, one-line fields hold no control
character at all and text answers none but newline and tab (C0/C1, ISO 6429). Unknown
fields are refused. What depends on the embedded checklist (item ids, value types per
item kind) is checked by :mod:`commission.record.content` once the checklist is read.
"""

from __future__ import annotations

from typing import Annotated, Any, Literal

from pydantic import (
    AfterValidator,
    BaseModel,
    ConfigDict,
    Field,
    StrictBool,
    StrictInt,
    StrictStr,
    model_validator,
)

from .text import first_control

FORMAT_V1 = "commission-record/1"
FORMAT_V2 = "commission-record/2"
FORMAT = "commission-record/3"
READABLE = (FORMAT_V1, FORMAT_V2, FORMAT)

# Bounds (a real record is far inside every one; a hostile one meets them early).
MAX_LINE = 200  # ids, names, serials, times
MAX_TEXT = 4000  # a text answer, a reason, a detail
MAX_CHECKLIST = 1024 * 1024  # the embedded checklist text
MAX_ENTRIES = 20_000
MAX_ITEMS = 5_000  # verdicts, files, instruments
MAX_FILE_BYTES = 1 << 40  # a file's declared size (the 20 MB attachment limit is separate)

SHA256 = r"^[0-9a-f]{64}$"
UUID = r"^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$"
TIMESTAMP = r"^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}:\d{2}(\.\d{1,6})?(Z|[+-]\d{2}:\d{2})$"
DATE = r"^\d{4}-\d{2}-\d{2}$"
DEVICE = r"^dev-[0-9a-f]{16}$"
ITEM_ID = r"^[a-z][a-z0-9_-]*(\.[a-z0-9_-]+)*$"
VERDICTS = ("pass", "fail", "review", "n/a", "pending", "recorded")
STATUSES = ("ready", "not-ready", "incomplete")
KINDS = ("confirm", "reading", "choice", "text", "file", "photo")


def _line(value: str) -> str:
    bad = first_control(value, allow_newline=False)
    if bad:
        raise ValueError(f"holds the control character {bad} (refused in records)")
    return value


def _text(value: str) -> str:
    bad = first_control(value, allow_newline=True)
    if bad:
        raise ValueError(f"holds the control character {bad} (only newline and tab are "
                         "accepted in text)")
    return value


def _file_name(value: str) -> str:
    if "/" in value or "\\" in value or value in (".", ".."):
        raise ValueError("must be a file name without folders")
    return value


Line = Annotated[StrictStr, Field(max_length=MAX_LINE), AfterValidator(_line)]
Text = Annotated[StrictStr, Field(max_length=MAX_TEXT), AfterValidator(_text)]
Sha256 = Annotated[StrictStr, Field(pattern=SHA256)]
Uuid = Annotated[StrictStr, Field(pattern=UUID)]
Timestamp = Annotated[StrictStr, Field(pattern=TIMESTAMP)]
ItemId = Annotated[StrictStr, Field(max_length=MAX_LINE, pattern=ITEM_ID)]
FileName = Annotated[StrictStr, Field(min_length=1, max_length=MAX_LINE),
                     AfterValidator(_line), AfterValidator(_file_name)]
Finite = Annotated[float, Field(strict=True, allow_inf_nan=False)]
Scalar = StrictBool | Finite | Text


class _Strict(BaseModel):
    model_config = ConfigDict(extra="forbid", strict=True, frozen=True)


class Tool(_Strict):
    name: Literal["commission"]
    version: Line
    check_logic: StrictInt | None = None  # absent in format 1 (check-logic version 1)


class Details(_Strict):
    """Job details as typed (the site, its people); all text, no local names."""

    site: Text = ""
    address: Text = ""
    client: Text = ""
    installer: Text = ""
    installer_contact: Text = ""
    installer_registration: Text = ""
    installer_address: Text = ""
    client_contact: Text = ""
    timezone: Line = ""
    language: Line = ""
    next_inspection: Line = ""


class ChecklistRef(_Strict):
    id: Line
    version: Line
    sha256: Sha256
    text: Annotated[StrictStr, Field(max_length=MAX_CHECKLIST)]


class FileValue(_Strict):
    """The value of a file or photo answer: the file by name (no folders) and SHA-256."""

    sha256: Sha256
    name: FileName
    bytes: Annotated[StrictInt, Field(ge=1, le=MAX_FILE_BYTES)]


class Accuracy(_Strict):
    """A maker's accuracy statement and how it is read (commission.accuracy)."""

    text: Annotated[StrictStr, Field(min_length=1, max_length=400), AfterValidator(_line)]
    read_as: Literal["bound", "k2"]


class Instrument(_Strict):
    serial: Line
    make: Line
    model: Line
    calibration_due: Annotated[StrictStr, Field(pattern=DATE)]
    accuracy: Accuracy | None = None  # only when stated


class FileMeta(_Strict):
    sha256: Sha256
    name: FileName
    bytes: Annotated[StrictInt, Field(ge=0, le=MAX_FILE_BYTES)]
    items: Annotated[list[ItemId], Field(min_length=1, max_length=MAX_ITEMS)]
    kind: Literal["file", "photo"]
    attached: StrictBool


class Measured(_Strict):
    value: Scalar
    unit: Line | None
    # a reading the instrument could only bound: "over" its range (value is a lower bound)
    # or an "open" circuit
    bound: Literal["over", "open"] | None = None


class Expected(_Strict):
    unit: Line | None
    value: Scalar | None = None
    min: Finite | None = None
    max: Finite | None = None


class Verdict(_Strict):
    id: ItemId
    verdict: Literal[VERDICTS]  # type: ignore[valid-type]
    reason: Text
    source: Text
    measured: Measured | None
    expected: Expected | None


class NextInspection(_Strict):
    date: Annotated[StrictStr, Field(pattern=DATE)]
    source: Text


class StampBox(_Strict):
    """The one box reserved for a reviewer's visible stamp (PDF points, page from 0)."""

    field: Line
    page: Annotated[StrictInt, Field(ge=0, le=10_000)]
    rect: Annotated[list[Finite], Field(min_length=4, max_length=4)]  # [x1, y1, x2, y2]

    @model_validator(mode="after")
    def _ordered(self) -> StampBox:
        x1, y1, x2, y2 = self.rect
        if not (x1 < x2 and y1 < y2):
            raise ValueError("rect must be [x1, y1, x2, y2] with x1 < x2 and y1 < y2")
        return self


class SigningInfo(_Strict):
    """Signed facts the signature checks rely on (format 3; absent from unsigned records).

    ``installer_certificate_sha256``: SHA-256 of the DER certificate the installer signs
    with (the first signature must be made with exactly that certificate);
    ``reviewer_stamp``: the one box on the pages reserved for the reviewer's visible
    countersignature stamp (field name, page from 0, rectangle in PDF points)."""

    created_at: Timestamp
    installer_certificate_sha256: Sha256
    reviewer_stamp: StampBox | None = None


class SigningInfoV2(_Strict):
    """Format 2's signing facts (read only)."""

    created_at: Timestamp
    installer_fingerprint: Sha256 | None = None
    stamp: StampBox | None = None


# -- format 3 -----------------------------------------------------------------------

class Job(Details):
    id: Line
    uuid: Uuid
    created_at: Timestamp
    original: Details  # details before any amendment
    unverified: StrictBool = False  # made from a job imported without verification


class Entry(_Strict):
    uuid: Uuid
    item: ItemId
    action: Literal["answer", "skip", "na", "detail"]
    raw: Text  # what was typed; for files and photos, the file name
    value: Any  # checked against the item's kind once the checklist is read
    unit_typed: Line | None
    instrument: Line | None  # serial
    at: Timestamp
    device: Annotated[StrictStr, Field(pattern=DEVICE)] | None  # random id of the computer
    supersedes: Uuid | None
    # the export profile a file was read with (columns, time format and zone, scales), so
    # verify reads the file the same way; present only when a profile was used
    read_with: dict[str, Any] | None = None
    carried: Sha256 | None = None  # a revisit's starting answer: the baseline record's hash


class BaselineReading(_Strict):
    """A repeated reading as an earlier visit judged it (the measured value of its verdict)."""

    value: Finite
    unit: Line | None
    at: Timestamp  # when the reading was taken


class Visit(_Strict):
    """One earlier visit: its record by SHA-256, when it was made, and its readings."""

    record_sha256: Sha256
    made_at: Timestamp
    readings: Annotated[dict[ItemId, BaselineReading], Field(max_length=MAX_ITEMS)]
    temperature_c: Finite | None = None  # ambient or conductor temperature at the tests


class Baseline(_Strict):
    """What a periodic inspection was compared with: the baseline record (the last visit)
    named by the SHA-256 of its canonical JSON, and every earlier visit for the trends."""

    record_sha256: Sha256
    job: Line
    uuid: Uuid
    site: Text = ""
    made_at: Timestamp
    status: Literal[STATUSES]  # type: ignore[valid-type]
    verified: StrictBool  # False: the revisit was started from an unverified baseline
    checklist: Line  # "id version"
    visits: Annotated[list[Visit], Field(min_length=1, max_length=200)]


class _RecordBody(_Strict):
    """What formats 2 and 3 share: everything but the format tag and the signing block."""

    tool: Tool
    generated_at: Timestamp
    job: Job
    checklist: ChecklistRef
    entries: Annotated[list[Entry], Field(max_length=MAX_ENTRIES)]
    instruments: Annotated[list[Instrument], Field(max_length=MAX_ITEMS)]
    files: Annotated[list[FileMeta], Field(max_length=MAX_ITEMS)]
    verdicts: Annotated[list[Verdict], Field(max_length=MAX_ITEMS)]
    status: Literal[STATUSES]  # type: ignore[valid-type]
    next_inspection: NextInspection | None = None  # when the installation is due again
    language: Line = "en"  # of the homeowner's pages

    @property
    def check_logic(self) -> int:
        return 1 if self.tool.check_logic is None else self.tool.check_logic


class Record(_RecordBody):
    format: Literal["commission-record/3"]
    signing: SigningInfo | None = None
    baseline: Baseline | None = None  # a periodic inspection: the record it was compared with

    @property
    def installer_certificate_sha256(self) -> str | None:
        return self.signing.installer_certificate_sha256 if self.signing else None

    @property
    def reviewer_stamp(self) -> StampBox | None:
        return self.signing.reviewer_stamp if self.signing else None


# -- format 2 (read only) -----------------------------------------------------------

class RecordV2(_RecordBody):
    format: Literal["commission-record/2"]
    signing: SigningInfoV2 | None = None

    @property
    def installer_certificate_sha256(self) -> str | None:
        # format 2 records made by report --sign declare it under its old name
        return self.signing.installer_fingerprint if self.signing else None

    @property
    def reviewer_stamp(self) -> StampBox | None:
        return self.signing.stamp if self.signing else None


# -- format 1 (read only) -----------------------------------------------------------

class ChecklistSourceV1(_Strict):
    id: Line
    version: Line
    sha256: Sha256
    source: Annotated[StrictStr, Field(max_length=4096)]


class JobV1(Details):
    id: Line
    uuid: Uuid
    created_at: Timestamp
    created_by: Line
    checklist: ChecklistSourceV1
    original: Details
    unverified: StrictBool = False


class EntryV1(_Strict):
    uuid: Uuid
    seq: StrictInt
    item: ItemId
    action: Literal["answer", "skip", "na", "detail"]
    raw: Text
    value: Any
    unit_typed: Line | None
    instrument: Line | None
    at: Timestamp
    by: Line
    supersedes: StrictInt | None
    host: Line = ""
    read_with: dict[str, Any] | None = None


class RecordV1(_Strict):
    format: Literal["commission-record/1"]
    tool: Tool
    generated_at: Timestamp
    job: JobV1
    checklist: ChecklistRef
    entries: Annotated[list[EntryV1], Field(max_length=MAX_ENTRIES)]
    instruments: Annotated[list[Instrument], Field(max_length=MAX_ITEMS)]
    files: Annotated[list[FileMeta], Field(max_length=MAX_ITEMS)]
    verdicts: Annotated[list[Verdict], Field(max_length=MAX_ITEMS)]
    status: Literal[STATUSES]  # type: ignore[valid-type]
    signing: None = None
    next_inspection: NextInspection | None = None  # written by releases after issue 11
    language: Line = "en"

    @property
    def check_logic(self) -> int:
        return 1  # format 1 predates the check-logic version: call it 1

    @property
    def installer_certificate_sha256(self) -> str | None:
        return None  # format 1 declares no certificate: that check is not available

    @property
    def reviewer_stamp(self) -> StampBox | None:
        return None


AnyRecord = Record | RecordV2 | RecordV1


def field_path(loc: tuple[Any, ...]) -> str:
    """pydantic's error location as the record's field path: entries[3].value"""
    out = ""
    for part in loc:
        if isinstance(part, int):
            out += f"[{part}]"
        elif str(part).startswith(("function-after", "constrained-str", "json-or-python")) \
                or part in ("str", "float", "bool", "int", "tuple", "list", "none"):
            continue  # pydantic's names of union members, not fields
        else:
            out += ("." if out else "") + str(part)
    return out or "(top level)"


def parse(data: Any) -> AnyRecord:
    """A record from parsed JSON; RecordError naming the first field that is wrong."""
    from pydantic import ValidationError

    from .strictjson import RecordError
    from .text import safe

    if not isinstance(data, dict):
        raise RecordError("is not a JSON object")
    fmt = data.get("format")
    models: dict[str, type[BaseModel]] = {FORMAT: Record, FORMAT_V2: RecordV2,
                                          FORMAT_V1: RecordV1}
    model = models.get(fmt) if isinstance(fmt, str) else None
    if model is None:
        raise RecordError(f"field format: {safe(str(fmt))[:60]!s} is not a record format this "
                          f"release reads ({', '.join(READABLE)})")
    try:
        return model.model_validate(data)
    except ValidationError as exc:
        err = exc.errors()[0]
        where = field_path(tuple(err["loc"]))
        msg = err["msg"].removeprefix("Value error, ")
        given = err.get("input")
        shown = ""
        if isinstance(given, bool | int | float) or (isinstance(given, str) and len(given) < 60):
            shown = f" (got {safe(repr(given))})"
        if err["type"] == "extra_forbidden":
            msg = "unknown field (refused)"
            shown = ""
        raise RecordError(f"field {safe(where)}: {safe(msg)}{shown}") from None
