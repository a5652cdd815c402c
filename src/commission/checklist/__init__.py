"""The checklist format: models and a loader whose errors name file, line and item."""

from .loader import ChecklistError, Loaded, Problem, load, parse
from .model import Checklist, Item, Section

__all__ = ["Checklist", "ChecklistError", "Item", "Loaded", "Problem", "Section", "load", "parse"]
