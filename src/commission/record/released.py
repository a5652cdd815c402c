"""Every checklist version this project has released, by SHA-256, and how a checklist
differs from the shipped one of its id.

A record names the checklist that judged it by id, version and SHA-256 of its text
(the SHA-256 of the UTF-8 text a job stores: the file's bytes, or for a checklist that
includes sections from another, its resolved text). ``verify`` says whether
that text is a released one. The list holds every released version, not only the
current file, so a record made with an older release still says "released".

When a shipped checklist changes: bump its ``version`` and add the new line here
(tests/record/test_released.py fails until the current files are listed).
"""

from __future__ import annotations

from typing import Any

# id -> version -> SHA-256 of every text shipped under that version (recovered with
# `git log -p checklists/`; 1.3.0 and 1.5.0 were each shipped with more than one text: edited
# without a bump).
RELEASED: dict[str, dict[str, tuple[str, ...]]] = {
    "diverter-1ph": {
        "1.0.0": ("0ede64f5d1261abc06667f1bf137bf9a368b5c254e996a8276333f3bf3466401",),
        "1.1.0": ("0923920bac37c00d3421b75251a63a423b7b415d08519fc21a141cbf8e3cf889",),
        "1.2.0": ("8b611a5eee9c47388d830346d98e9f252ef99d39b70cb022e2c7e7d4caf84b19",),
        "1.3.0": ("0644e9117ff461d4cab31a2027a3860e63e1a7e85191d72f4a25ff79212b637b",
                  "0475167728a10e9d0eed006a522aa8d9ee1707cd46aa3bb90128a14cd191e993"),
        "1.4.0": ("d571c6d3ad6a7034539031a7461ca0716c99bbfbafb674a2d00aefaabadc3128",),
        "1.5.0": ("816c4ff5875af9e6abfa4dda5e9e20ca4544c9f30cf66de8db237dc72b4d0334",
                  "18e1bc169056a1eed8f477984a668157c34a63bacf4635d04e40f850e2fe0d72",
                  "3e6fa87a1e77efb5c582d5a2ac791ad5452ad38551c32b3753b09e5f4da904f2"),
        "1.6.0": ("595af612f4a537fb7dfbb5a951e09fafb5514de6fb0dec5a90dd2346963f862f",),
    },
    # A checklist that includes sections from another is hashed as a job stores it: the
    # resolved text (here 1.0.0 resolved against diverter-1ph 1.5.0).
    "diverter-3ph": {
        "1.0.0": ("1f8209b95d88076ba32ab8fd8cd6227aebdd27b492012c0e021566bc3ec6b8ae",),
        "1.1.0": ("8521ceafa6774608d5cdfc10a54044f7fd37b423c79a9012272c00428d26ec70",),
        "1.2.0": ("c37be6a6a1b5ce500f2a6f86f844a326092176eb5a35dfd2895bc6cd83c6d3d3",),
    },
    # The periodic inspection (issue 14), resolved against diverter-1ph 1.6.0.
    "diverter-1ph-periodic": {
        "1.0.0": ("39e2e885fa721562656d62cf3148ccc873bd48229c092c8ff6eaac3928509fb9",),
        # 1.1.0: "what was done" marked for page 1 of the periodic record
        "1.1.0": ("e7ebe2fb972e50d9e68a94a742f3677e64b565cf8dbcecb28a2eef2266c79eda",),
    },
}


def released_version(checklist_id: str, sha256: str) -> str | None:
    """The released version whose text has this SHA-256, or None."""
    for version, digests in RELEASED.get(checklist_id, {}).items():
        if sha256 in digests:
            return version
    return None


def is_released_version(checklist_id: str, version: str) -> bool:
    return version in RELEASED.get(checklist_id, {})


def shipped_checklist(checklist_id: str):
    """The shipped checklist (Loaded) with this id, or None."""
    from ..checklist import ChecklistError, load
    from ..checks import CHECKS
    from ..resources import shipped

    for path in shipped("checklists").values():
        try:
            loaded = load(path, checks=CHECKS, strict=False)
        except ChecklistError:
            continue
        if loaded.checklist.id == checklist_id:
            return loaded
    return None


def _show(value: Any) -> str:
    text = repr(value) if not isinstance(value, str) else f"'{value}'"
    return text if len(text) <= 60 else text[:57] + "…"


def _mapping_diff(where: str, what: str, old: dict[str, Any], new: dict[str, Any]) -> list[str]:
    out = []
    for key in sorted(set(old) | set(new), key=str):
        if key not in new:
            out.append(f"{where}: {what} {key} removed (was {_show(old[key])})")
        elif key not in old:
            out.append(f"{where}: {what} {key} added ({_show(new[key])})")
        elif old[key] != new[key]:
            out.append(f"{where}: {what} {key} {_show(old[key])} → {_show(new[key])}")
    return out


def differences(shipped, custom) -> list[str]:
    """Every item, check, parameter and input of ``custom`` (a Checklist) that differs
    from ``shipped``, one line each, in the shipped walk order then the added items."""
    out: list[str] = []
    if shipped.rules != custom.rules:
        out.append(f"rules: '{shipped.rules.name}' → '{custom.rules.name}'")
    old = {i.id: i for _, i in shipped.items()}
    new = {i.id: i for _, i in custom.items()}
    for item_id, a in old.items():
        b = new.get(item_id)
        if b is None:
            out.append(f"{item_id}: item removed")
            continue
        da = a.model_dump(exclude={"check"}, by_alias=True)
        db = b.model_dump(exclude={"check"}, by_alias=True)
        for key in da:
            if da[key] != db[key]:
                out.append(f"{item_id}: {key} {_show(da[key])} → {_show(db[key])}")
        if a.check is not None and b.check is None:
            out.append(f"{item_id}: check removed")
        elif a.check is None and b.check is not None:
            out.append(f"{item_id}: check {b.check.name} added")
        elif a.check is not None and b.check is not None:
            if a.check.name != b.check.name:
                out.append(f"{item_id}: check {a.check.name} → {b.check.name}")
            out += _mapping_diff(item_id, "param", a.check.params, b.check.params)
            out += _mapping_diff(item_id, "input", a.check.inputs, b.check.inputs)
    out += [f"{item_id}: item added" for item_id in new if item_id not in old]
    return out
