"""Find the checklists and forms that ship with the tool.

They live in the top-level ``checklists/`` and ``forms/`` folders of the source
tree and are copied to ``commission/shipped/`` inside a built wheel, so both an
editable and a non-editable install find them. Every ``--checklist`` and
``--form`` option takes a path or one of these names.
"""

from __future__ import annotations

from pathlib import Path

from .errors import UserError

_PACKAGE = Path(__file__).resolve().parent


def _roots(kind: str) -> list[Path]:
    return [_PACKAGE / "shipped" / kind, _PACKAGE.parent.parent / kind]


def shipped(kind: str) -> dict[str, Path]:
    """Shipped files of one kind ('checklists' or 'forms') by name (file stem)."""
    found: dict[str, Path] = {}
    for root in _roots(kind):
        if root.is_dir():
            for path in sorted(root.glob("*.yaml")):
                found.setdefault(path.stem, path)
    return found


def resolve(kind: str, name_or_path: str) -> Path:
    """A path as given if it exists, else the shipped file of that name."""
    try:
        path = Path(name_or_path).expanduser()
        if path.is_file():
            return path
        exists = path.exists()
    except (OSError, RuntimeError):  # a name too long, '~nosuchuser/...': not a file here
        exists = False
    names = shipped(kind)
    key = name_or_path.removesuffix(".yaml")
    if key in names:
        return names[key]
    if exists:
        raise UserError(f"{name_or_path}: is not a file")
    accepted = ", ".join(sorted(names)) or "none"
    raise UserError(
        f"{name_or_path}: no such file and no shipped {kind[:-1]} of that name "
        f"(shipped: {accepted})"
    )


def demo_dir() -> Path:
    """Bundled demo scenario (our own invented site and readings)."""
    return _PACKAGE / "demo"
