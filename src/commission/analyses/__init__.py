"""One analysis per kind of recorded file: read -> physics -> one result object.

``analyse_capture``, ``analyse_heating``, ``analyse_soak`` and ``analyse_regulation`` (and
``flicker.analyse_flicker``, with its own result class) each
read a file through :mod:`commission.captures` (the reader layer, chosen by content, with
an instrument's export profile as :class:`ReadSettings`), compute the figures with
:mod:`commission.physics` (numbers only), and judge them with the file kind's decision rule
here, beside its analysis. They return an :class:`Analysis`: figures (SI), findings,
verdict, reason, source, chart data and ``as_json()``.

``commission analyse``, the checklist's checks and the record's charts all call these
functions with the same settings, whose defaults live in one place (each module's
``*Settings`` dataclass), so the three can never disagree on the same file.

Findings are what a person must know to trust the figures (clipping, irregular cycles, a
DC offset, time gaps, a corrected clock change, too few samples per cycle, a coarse
sensor, thermostat cycling). Each says whether it can change the verdict; those turn a
``pass`` into ``review``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, fields
from typing import Any

from commission.lazy import exports

PASS, FAIL, REVIEW = "pass", "fail", "review"


class SettingsError(ValueError):
    """A setting of a read or an analysis is not usable; the message says what is accepted."""


@dataclass(frozen=True)
class ReadSettings:
    """How to read one instrument's files: an export profile, or the options of a command.

    Attributes
    ----------
    columns : dict or None
        Canonical column -> header name, e.g. ``{"temp_c": "T1", "time_s": "t"}``.
    time_format : str or None
        ``strptime`` form of timestamps that are not ISO 8601.
    tz : str or None
        IANA time zone of naive local timestamps.
    rate_hz : float or None
        Sample rate of a capture without a time column [Hz].
    v_scale, i_scale : float or None
        CSV: volts / amperes per raw unit (default 1); WAV: volts / amperes at full scale.
    v_offset, i_offset : float
        CSV: raw reading at zero volts / amperes.
    channels : tuple of int
        WAV: channel numbers of voltage and current, from 1.
    """

    columns: dict[str, str] | None = None
    time_format: str | None = None
    tz: str | None = None
    rate_hz: float | None = None
    v_scale: float | None = None
    v_offset: float = 0.0
    i_scale: float | None = None
    i_offset: float = 0.0
    channels: tuple[int, int] = (1, 2)

    def as_json(self) -> dict[str, Any]:
        """Only what differs from reading a file as it is (stable keys, for the record)."""
        out: dict[str, Any] = {}
        for f in fields(self):
            value = getattr(self, f.name)
            if value != f.default:
                out[f.name] = list(value) if isinstance(value, tuple) else value
        return out

    @classmethod
    def from_json(cls, data: dict[str, Any] | None) -> ReadSettings:
        """Settings from a stored profile; unknown keys or wrong types raise SettingsError."""
        if not data:
            return cls()
        known = {f.name for f in fields(cls)}
        unknown = sorted(set(data) - known)
        if unknown:
            raise SettingsError(f"unknown read setting(s) {', '.join(unknown)}; accepted: "
                                f"{', '.join(sorted(known))}")
        values = dict(data)
        try:
            if values.get("columns") is not None:
                values["columns"] = {str(k): str(v) for k, v in dict(values["columns"]).items()}
            if "channels" in values:
                v, i = (int(x) for x in values["channels"])
                values["channels"] = (v, i)
            for key in ("rate_hz", "v_scale", "i_scale", "v_offset", "i_offset"):
                if values.get(key) is not None:
                    values[key] = float(values[key])
                    if not math.isfinite(values[key]):
                        raise ValueError(key)
        except (TypeError, ValueError):
            raise SettingsError("a stored read setting has the wrong type") from None
        return cls(**values)

    def merged(self, other: ReadSettings) -> ReadSettings:
        """These settings with every non-default value of ``other`` on top."""
        data = self.as_json()
        data.update(other.as_json())
        return ReadSettings.from_json(data)


@dataclass(frozen=True)
class Finding:
    """Something a person must know about a file before trusting its figures.

    ``affects_verdict`` is True when it can change the verdict: a ``pass`` then becomes
    ``review``.
    """

    code: str
    text: str
    affects_verdict: bool = True

    def as_json(self) -> dict[str, Any]:
        return {"code": self.code, "text": self.text, "affects_verdict": self.affects_verdict}


@dataclass
class Analysis:
    """The one result of analysing one file: what every reader of that file renders.

    Attributes
    ----------
    kind : str
        ``capture``, ``heating``, ``soak`` or ``regulation``.
    file : str
        The file's name as given (never a temporary copy).
    figures : dict
        Every figure, SI units unless the key names its unit (the ``--json`` keys).
    findings : list of Finding
    verdict, reason, source : str
        The judgement, a line a person can act on, and the source of the rule.
    chart : dict
        Data for the record's chart (plain lists of numbers).
    read : ReadSettings
        How the file was read.
    notes : tuple of str
        Metadata lines found above the header.
    measured, expected : tuple or None
        (value, unit) and (unit, min, max, text) for the check's Outcome.
    """

    kind: str
    file: str
    figures: dict[str, Any]
    findings: list[Finding]
    verdict: str
    reason: str
    source: str
    chart: dict[str, Any] = field(default_factory=dict)
    read: ReadSettings = field(default_factory=ReadSettings)
    notes: tuple[str, ...] = ()
    measured: tuple[Any, str | None] | None = None
    expected: dict[str, Any] | None = None
    raw: Any = field(default=None, repr=False)  # the physics result, for text output

    def as_json(self) -> dict[str, Any]:
        data = {k: _finite(v) for k, v in self.figures.items()}
        data.update({
            "verdict": self.verdict,
            "reason": self.reason,
            "source": self.source,
            "findings": [f.as_json() for f in self.findings],
            "notes": list(self.notes),
            "read_with": self.read.as_json(),
            "chart_caption": self.chart.get("caption"),
        })
        return data


def _finite(x: Any) -> Any:
    """NaN and infinity are not JSON: they become null (also inside lists and dicts)."""
    if isinstance(x, float) and not math.isfinite(x):
        return None
    if isinstance(x, list | tuple):
        return [_finite(v) for v in x]
    if isinstance(x, dict):
        return {k: _finite(v) for k, v in x.items()}
    return x


def with_findings(verdict: str, reason: str, findings: list[Finding]) -> tuple[str, str]:
    """The verdict and reason once the findings are counted: every finding is named in the
    reason, and one that can change the verdict turns ``pass`` into ``review``."""
    if not findings:
        return verdict, reason
    texts = "; ".join(f.text for f in findings)
    if verdict == PASS and any(f.affects_verdict for f in findings):
        return REVIEW, f"{reason}; but {texts}: judge by hand or repeat the measurement"
    return verdict, f"{reason}; note: {texts}"


def reader_findings(log) -> list[Finding]:
    """Findings the log reader made (clock change corrected, time gaps)."""
    out = []
    for text in getattr(log, "findings", ()):
        code = "clock_change" if text.startswith("clock change") else "time_gap"
        out.append(Finding(code, text, affects_verdict=code == "time_gap"))
    return out


def resolution_finding(values, *, unit: str, coarse: float, what: str) -> Finding | None:
    """A finding when the sensor resolves only steps of ``coarse`` or more: its readings
    repeat (a third or more of consecutive readings equal) while the smallest step between
    different readings is that coarse."""
    import numpy as np

    x = np.asarray(values, dtype=float)
    v = np.unique(x)
    if v.size < 3 or x.size < 6:
        return None
    repeats = float(np.count_nonzero(np.diff(x) == 0.0)) / (x.size - 1)
    step = float(np.min(np.diff(v)))
    if step >= coarse and repeats >= 1.0 / 3.0:
        return Finding("coarse_resolution",
                       f"the {what} moves in steps of {step:g} {unit} (resolution too coarse; "
                       f"{coarse:g} {unit} or finer is needed)")
    return None


# Each analysis is imported when first named (PEP 562), so a command that analyses one kind
# of file loads only that kind's module.
_LAZY = {
    "CAPTURE_STATES": "capture", "CaptureSettings": "capture", "analyse_capture": "capture",
    "HeatingSettings": "heating", "analyse_heating": "heating",
    "RegulationSettings": "regulation", "analyse_regulation": "regulation",
    "SoakSettings": "soak", "analyse_soak": "soak",
}


__getattr__ = exports(__name__, _LAZY)

__all__ = [
    "CAPTURE_STATES",
    "Analysis",
    "CaptureSettings",
    "Finding",
    "HeatingSettings",
    "ReadSettings",
    "RegulationSettings",
    "SettingsError",
    "SoakSettings",
    "analyse_capture",
    "analyse_heating",
    "analyse_regulation",
    "analyse_soak",
    "with_findings",
]

# Checks that analyse their item's file, and the kind of file each reads.
FILE_CHECKS = {"clamp_capture": "capture", "heatsink_soak": "soak", "heating_log": "heating",
               "regulation_log": "regulation"}


def probe(kind: str, path, read: ReadSettings | None = None, *, name: str | None = None) -> None:
    """Read a file as its analysis would, without the physics: raises
    :class:`commission.captures.CaptureError` (one line naming the columns found and what
    is accepted) when it cannot be read with these settings."""
    from commission import captures
    from commission.analyses.capture import looks_like_wav

    read = read or ReadSettings()
    if kind == "capture":
        if looks_like_wav(path):
            if read.v_scale and read.i_scale:
                captures.open_capture_wav(path, voltage_full_scale_v=read.v_scale,
                                          current_full_scale_a=read.i_scale,
                                          voltage_channel=read.channels[0],
                                          current_channel=read.channels[1], name=name)
            return
        captures.read_capture_csv(
            path, sample_rate_hz=read.rate_hz, columns=read.columns,
            voltage_scale=read.v_scale or 1.0, voltage_offset=read.v_offset,
            current_scale=read.i_scale or 1.0, current_offset=read.i_offset, name=name)
        return
    reader = {"soak": captures.read_soak_log, "heating": captures.read_heating_log,
              "regulation": captures.read_regulation_log}[kind]
    reader(path, columns=read.columns, time_format=read.time_format, tz=read.tz, name=name)
