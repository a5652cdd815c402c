"""Change since the baseline: each repeated reading of a revisit against the same
reading of the visit before it (issue 14).

A reading can be within its limit and still tell that something is wearing out: insulation
falling, a joint loosening, an RCD slowing down, dust on the heatsink, scale on the
element. These rules judge the change; the item's own check still judges the limit.
The rules are keyed by the name of the check that judged the reading, so any checklist
whose items carry those checks gets them. The limits are parameters with their sources;
a periodic checklist may replace them under `revisit: {params: ...}`.
"""

from __future__ import annotations

from .registry import Param

SRC_CHANGE = ("common practice: deterioration worth a review while still within the limit "
              "(no published limit for change; a checklist parameter)")
SRC_COPPER = ("IEC 60228:2004, Annex B: conductor resistance corrected to 20 °C by "
              "R20 = Rt · 254.5 / (234.5 + t) for copper, i.e. α20 = 0.00393 /K (from memory)")

PARAMS: dict[str, Param] = {
    "insulation_fall_factor": Param(10.0, None, SRC_CHANGE,
                                    "review when insulation resistance has fallen by this "
                                    "factor or more"),
    "resistance_rise_pct": Param(20.0, "%", SRC_CHANGE,
                                 "review when Zs or R1+R2 has risen by more than this beyond "
                                 "what conductor temperature explains"),
    "rcd_time_rise_pct": Param(50.0, "%", SRC_CHANGE,
                               "review when an RCD trip time has lengthened by more than this"),
    "heatsink_rise_k": Param(5.0, "K", SRC_CHANGE,
                             "review when the heatsink's predicted maximum has risen by more "
                             "than this"),
    "heating_rate_fall_pct": Param(10.0, "%", SRC_CHANGE,
                                   "review when the heating rate has fallen by more than this "
                                   "(scale on the element)"),
}

__all__ = ["PARAMS", "SRC_CHANGE", "SRC_COPPER"]
