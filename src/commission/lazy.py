"""Names a package exports from its submodules, imported when first used (PEP 562), so
that a command needing one reader or one analysis loads only that module."""

from __future__ import annotations

import importlib
import sys
from collections.abc import Callable
from typing import Any


def exports(package: str, where: dict[str, str]) -> Callable[[str], Any]:
    """A module ``__getattr__`` for ``package``: ``name`` comes from the submodule
    ``where[name]``, imported on first use and then kept in the package."""

    def __getattr__(name: str) -> Any:
        module = where.get(name)
        if module is None:
            raise AttributeError(f"module {package!r} has no attribute {name!r}")
        value = getattr(importlib.import_module(f"{package}.{module}"), name)
        setattr(sys.modules[package], name, value)
        return value

    return __getattr__
