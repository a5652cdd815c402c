"""Is a new key's passphrase worth protecting a signing key with?

Only ``identity new`` asks this: keys made before keep signing with the passphrase they have.
Two rules, each with its reason shown to the person:

- at least 12 characters (NIST SP 800-63B, 5.1.1.2, asks verifiers for at least 8 and to
  allow 64 or more; 12 is our margin for a key that signs records kept for years, since an
  encrypted key file can be attacked offline without any rate limit);
- not a commonly used password, nor one with only digits or symbols added at its end, nor
  one word repeated (NIST SP 800-63B, 5.1.1.2: compare against "passwords obtained from
  previous breach corpuses"). The list is the 30 000 most common passwords that the zxcvbn
  library ships (MIT licence; built from a public corpus of leaked passwords).
"""

from __future__ import annotations

import re

MIN_LENGTH = 12
_TAIL = re.compile(r"[\d\W_]+$")


def _common() -> frozenset[str]:
    from zxcvbn.frequency_lists import FREQUENCY_LISTS

    return frozenset(FREQUENCY_LISTS["passwords"])


def _repeated_unit(text: str) -> str | None:
    """'monkeymonkey' → 'monkey'; None when the text is not one unit repeated."""
    m = re.fullmatch(r"(.+?)\1+", text)
    return m.group(1) if m else None


def weakness(passphrase: str) -> str | None:
    """Why this passphrase is refused for a new key, or None when it is acceptable."""
    if len(passphrase) < MIN_LENGTH:
        return (f"the passphrase has {len(passphrase)} characters; a signing key needs at "
                f"least {MIN_LENGTH} (a few words of your own make a good one)")
    lowered = passphrase.lower()
    compact = re.sub(r"\s+", "", lowered)
    candidates = {lowered, compact, _TAIL.sub("", compact)}
    unit = _repeated_unit(compact)
    if unit:
        candidates.add(unit)
        candidates.add(_TAIL.sub("", unit))
    common = _common()
    hit = next((c for c in sorted(candidates, key=len, reverse=True) if c in common), None)
    if hit is not None:
        # The passphrase (or the part of it found) is never echoed: a screen may be watched.
        built = "is" if hit == compact else "is built on"
        return (f"the passphrase {built} one of the 30 000 most common passwords (zxcvbn's "
                "list); choose words of your own")
    if len(set(compact)) <= 2:
        return "the passphrase repeats one or two characters; choose words of your own"
    return None
