"""Measurement uncertainty of a reading from an instrument's stated accuracy.

A maker states accuracy as ``±(a % of reading + n digits)`` per range, sometimes plus an
absolute term. That figure is either a bound (every reading within it: a rectangular
distribution of half-width ``bound``, standard uncertainty ``bound/sqrt(3)`` [1]_) or an
expanded uncertainty at coverage factor k = 2 (IEC 61557-1:2019 reads a stated uncertainty
that way unless the maker says otherwise [2]_). Which it is comes from the maker, never from
a guess, so it is always an argument here.

Functions take and return SI values (the unit of the reading); no verdict words: the
decision rule that turns an interval into a verdict lives with the checks.

References
----------
.. [1] JCGM 100:2008 (GUM), 4.3.7: rectangular distribution, u = a/sqrt(3).
.. [2] IEC 61557-1:2019 (from memory, as quoted in CHECKS.md): stated uncertainties at k = 2.
.. [3] ILAC-G8:09/2019, guard bands w = U around the tolerance limit.
"""

from __future__ import annotations

import math

BOUND, EXPANDED_K2 = "bound", "k2"
READINGS_OF_A_FIGURE = (BOUND, EXPANDED_K2)


def accuracy_bound(reading: float, *, pct_of_reading: float = 0.0, digits: float = 0.0,
                   resolution: float = 0.0, absolute: float = 0.0) -> float:
    """Half-width of the maker's accuracy figure at one reading.

    Parameters
    ----------
    reading : float
        The value shown [unit of the reading].
    pct_of_reading : float
        The percentage term ``a`` [%].
    digits : float
        Number of least-significant digits ``n`` [1].
    resolution : float
        Value of one least-significant digit on the range in use [unit of the reading].
    absolute : float
        A fixed term, e.g. ``+ 0.02 Ω`` [unit of the reading].

    Returns
    -------
    float
        ``a/100 * |reading| + n * resolution + absolute`` [unit of the reading].
    """
    for name, x in (("reading", reading), ("pct_of_reading", pct_of_reading),
                    ("digits", digits), ("resolution", resolution), ("absolute", absolute)):
        if not math.isfinite(x):
            raise ValueError(f"{name} must be finite")
    if pct_of_reading < 0 or digits < 0 or resolution < 0 or absolute < 0:
        raise ValueError("accuracy terms cannot be negative")
    return pct_of_reading / 100.0 * abs(reading) + digits * resolution + absolute


def standard_uncertainty(figure: float, reading_of_figure: str, k: float = 2.0) -> float:
    """Standard uncertainty ``u`` from a maker's accuracy figure.

    Parameters
    ----------
    figure : float
        The half-width the maker states at this reading [unit of the reading].
    reading_of_figure : {"bound", "k2"}
        ``bound``: a limit every reading keeps, read as a rectangular distribution,
        ``u = figure/sqrt(3)`` [1]_; ``k2``: an expanded uncertainty, ``u = figure/2`` [2]_.
    k : float
        Coverage factor of an expanded figure (2 for ``k2``) [1].

    Returns
    -------
    float
        ``u`` [unit of the reading].
    """
    if figure < 0 or not math.isfinite(figure):
        raise ValueError("an accuracy figure must be finite and not negative")
    if reading_of_figure == BOUND:
        return figure / math.sqrt(3.0)
    if reading_of_figure == EXPANDED_K2:
        return figure / k
    raise ValueError(f"a maker's figure is read as 'bound' or 'k2', not {reading_of_figure!r}")


def expanded_uncertainty(figure: float, reading_of_figure: str, k: float = 2.0) -> float:
    """Expanded uncertainty ``U = k*u`` at coverage factor ``k`` (GUM 6.2) [unit of the reading].

    For a figure read as ``k2`` this is the figure itself; for a bound it is
    ``k*figure/sqrt(3)`` (1.155 × the bound at k = 2).
    """
    return k * standard_uncertainty(figure, reading_of_figure)


def combined_standard_uncertainty(*components: float) -> float:
    """Root sum of squares of uncorrelated standard uncertainties (GUM 5.1.2) [unit]."""
    total = 0.0
    for c in components:
        if not math.isfinite(c) or c < 0:
            raise ValueError("uncertainty components must be finite and not negative")
        total += c * c
    return math.sqrt(total)


def resolution_of_typed_number(text: str) -> float:
    """Value of the last digit of a number as typed: "2.17" → 0.01, "231" → 1, "1,5" → 0.1.

    The instrument's display is what the person copied, so the decimals typed are the
    resolution of the range in use when the maker's digits are not given per range [1].
    """
    t = text.strip().lstrip("+-−<>≤≥ ")
    num = ""
    for ch in t:
        if ch.isdigit() or ch in ".,":
            num += ch
        else:
            break
    if not any(c.isdigit() for c in num):
        raise ValueError(f"no number in {text!r}")
    for sep in (".", ","):
        if sep in num:
            decimals = len(num.split(sep, 1)[1])
            return 10.0 ** (-decimals)
    return 1.0
