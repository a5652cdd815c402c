"""Moved to ``commission.termtext`` (usable without loading this package)."""

from ..termtext import CONTROL, CONTROL_ANY, _escape, first_control, safe

__all__ = ["CONTROL", "CONTROL_ANY", "_escape", "first_control", "safe"]
