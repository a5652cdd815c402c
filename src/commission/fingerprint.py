"""SHA-256 certificate fingerprints written for people to compare, aloud or by eye.

One function, :func:`readable`, is used wherever a fingerprint is shown to a person:
the signature table in the PDF, ``verify``, ``identity show``/``export``, ``trust
add``/``list``. Upper-case hex in groups of four (16 groups for SHA-256), so that two
people on the phone can read it group by group ("A3F0, next 91C2, …") and a reader
comparing on screen never mistakes b for 6 or a lowercase l for 1 (common practice, as
PGP/GnuPG prints fingerprints in groups of four).
"""

from __future__ import annotations

GROUP = 4


def readable(fingerprint: str, groups: int | None = None) -> str:
    """``"a3f091c2…"`` as ``"A3F0 91C2 …"``; ``groups`` keeps only the first N groups
    (followed by ``…``), for a short reference beside the full one."""
    hexdigits = "".join(fingerprint.split()).replace(":", "").upper()
    parts = [hexdigits[k:k + GROUP] for k in range(0, len(hexdigits), GROUP)]
    if groups is not None and groups < len(parts):
        return " ".join(parts[:groups]) + " …"
    return " ".join(parts)
