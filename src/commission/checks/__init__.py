"""Named checks: a job's readings → a verdict with measured, expected, reason, source.

Importing this package registers every check; each module holds the checks of
one topic and calls :mod:`commission.physics` for the numbers.
"""

from . import (  # noqa: F401  (registers the checks)
    circuit,
    clamp,
    controls,
    element,
    heating,
    metering,
    output,
    protection,
    recordings,
    supply,
    threephase,
)
from .registry import CHECKS, FAIL, NA, PASS, PENDING, REVIEW, worst

__all__ = ["CHECKS", "FAIL", "NA", "PASS", "PENDING", "REVIEW", "worst"]
