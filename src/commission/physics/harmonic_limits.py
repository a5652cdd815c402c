"""Published limits for harmonic current emission.

IEC 61000-3-2 Class A (Table 1): maximum permissible harmonic current of equipment with an
input current up to 16 A per phase, as an RMS value per order. The standard is a type test
on a reference supply; a current captured on site against it is indicative only.

References
----------
.. [1] IEC 61000-3-2, Electromagnetic compatibility -- Limits for harmonic current emissions
   (equipment input current <= 16 A per phase), Table 1 (Class A). From memory; the values
   agree with a published test report that reproduces the table.
"""

from __future__ import annotations

# IEC 61000-3-2 Table 1, Class A, from memory [A]
_ODD_A = {3: 2.30, 5: 1.14, 7: 0.77, 9: 0.40, 11: 0.33, 13: 0.21}
_EVEN_A = {2: 1.08, 4: 0.43, 6: 0.30}
_ODD_HIGH_A = 0.15  # times 15/h, for odd 15 <= h <= 39
_EVEN_HIGH_A = 0.23  # times 8/h, for even 8 <= h <= 40
CLASS_A_MAX_ORDER = 40


def class_a_limit_a(order):
    """IEC 61000-3-2 Class A limit for one harmonic order.

    Odd orders: 3 -> 2.30 A, 5 -> 1.14, 7 -> 0.77, 9 -> 0.40, 11 -> 0.33, 13 -> 0.21,
    15...39 -> 0.15*15/h. Even orders: 2 -> 1.08 A, 4 -> 0.43, 6 -> 0.30, 8...40 -> 0.23*8/h.

    Parameters
    ----------
    order : int
        Harmonic order, 2...40 [1].

    Returns
    -------
    float
        Maximum permissible RMS harmonic current [A].

    References
    ----------
    .. [1] IEC 61000-3-2, Table 1, Class A (from memory).
    """
    h = int(order)
    if h != order or not 2 <= h <= CLASS_A_MAX_ORDER:
        raise ValueError(f"IEC 61000-3-2 gives limits for orders 2 to 40, not {order!r}")
    if h % 2:
        return _ODD_A.get(h, _ODD_HIGH_A * 15.0 / h)
    return _EVEN_A.get(h, _EVEN_HIGH_A * 8.0 / h)


def class_a_limits():
    """All IEC 61000-3-2 Class A limits, order -> limit.

    Returns
    -------
    dict of int to float
        Orders 2...40 to maximum permissible RMS current [A].

    References
    ----------
    .. [1] IEC 61000-3-2, Table 1, Class A (from memory).
    """
    return {h: class_a_limit_a(h) for h in range(2, CLASS_A_MAX_ORDER + 1)}
