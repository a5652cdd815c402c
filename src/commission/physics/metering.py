"""The diverter's own power measurement against a reference instrument.

Model of a wattmeter with a gain error ``g``, an offset ``b`` and a phase error ``delta``
between its voltage and current channels, measuring a load of active power ``P`` and
reactive power ``Q`` (positive inductive, current lagging)::

    P_shown = (1 + g) * (P*cos(delta) - Q*sin(delta)) + b

``delta > 0`` when the meter's current channel lags its voltage channel: an inductive load
then reads low by about ``tan(phi)*delta`` of its power (CHECKS.md, "The diverter's own
metering"), a resistive one is almost untouched, so one point at a low power factor
measures ``delta``. Written as ``P_shown = A*P + C*Q + b`` the model is linear in
``(A, C, b)`` with ``A = (1+g)*cos(delta)`` and ``C = -(1+g)*sin(delta)``: a weighted least
squares fit gives them and their covariance exactly, and ``g``, ``delta`` follow with
first-order propagation (GUM 5.1.2).

Accuracy classes of static meters (IEC 62053-21 Ed.1 2003, as remembered; a type test
used here as a field guide) are in :func:`class_limit_pct`.

References
----------
.. [1] IEC 62053-21:2003, Table 4 percentage error limits (from memory, as quoted in CHECKS.md).
.. [2] JCGM 100:2008 (GUM), 5.1.2 propagation of uncorrelated uncertainties.
.. [3] Weighted linear least squares: parameter covariance (X^T W X)^-1 with W = diag(1/u^2)
   when the u are the standard uncertainties of the observations.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

# IEC 62053-21 Ed.1 (from memory): (class, power-factor row) → list of
# (lowest I/Ib of the band, limit %), highest band first.
_LIMITS: dict[tuple[str, str], list[tuple[float, float]]] = {
    ("1", "unity"): [(0.10, 1.0), (0.05, 1.5)],
    ("1", "low"): [(0.20, 1.0), (0.10, 1.5)],
    ("2", "unity"): [(0.10, 2.0), (0.05, 2.5)],
    ("2", "low"): [(0.20, 2.0), (0.10, 2.5)],
}
LOW_PF_BELOW = 0.9  # below this the PF 0.5 inductive row applies (a field reading of the table)


def class_limit_pct(accuracy_class: str, current_ratio: float, power_factor: float) -> float | None:
    """Percentage error limit of a static meter of class 1 or 2 at one operating point.

    Parameters
    ----------
    accuracy_class : {"1", "2"}
        Meter accuracy class [1]_.
    current_ratio : float
        Current over the basic current, ``I/Ib`` [1].
    power_factor : float
        Displacement power factor |cos(phi)| at the point [1]; below 0.9 the limits for PF 0.5
        inductive are used, otherwise those for PF 1.

    Returns
    -------
    float or None
        The limit [%], or None below the lowest current the class states a limit for.
    """
    cls = str(accuracy_class).strip()
    if cls not in ("1", "2"):
        raise ValueError(f"accuracy class must be 1 or 2, not {accuracy_class!r}")
    row = "low" if abs(power_factor) < LOW_PF_BELOW else "unity"
    for lowest, limit in _LIMITS[(cls, row)]:
        if current_ratio >= lowest:
            return limit
    return None


@dataclass(frozen=True)
class MeteringFit:
    """Gain, offset and channel phase error with their standard uncertainties."""

    gain_error: float  # g [1]: +0.061 reads 6.1 % high
    gain_error_u: float
    offset_w: float  # b [W]
    offset_u_w: float
    phase_error_rad: float | None  # delta [rad]; None without a low power-factor point
    phase_error_u_rad: float | None
    residuals_w: tuple[float, ...]
    chi2: float  # sum of squared normalised residuals
    dof: int

    @property
    def calibration_factor(self) -> float:
        """Multiply the diverter's power calibration by this to remove the gain error."""
        return 1.0 / (1.0 + self.gain_error)

    @property
    def phase_error_deg(self) -> float | None:
        return None if self.phase_error_rad is None else math.degrees(self.phase_error_rad)

    @property
    def phase_error_u_deg(self) -> float | None:
        return None if self.phase_error_u_rad is None else math.degrees(self.phase_error_u_rad)


def reactive_power_var(active_w, power_factor):
    """Reactive power of a load from its active power and displacement power factor.

    ``Q = |P| * tan(acos(|PF|))``, positive (inductive) [var]. A PF of exactly 1 gives 0.
    """
    p = np.asarray(active_w, dtype=float)
    pf = np.abs(np.asarray(power_factor, dtype=float))
    if np.any((pf <= 0) | (pf > 1)) or not np.all(np.isfinite(pf)):
        raise ValueError("power factor must lie in (0, 1]")
    return np.abs(p) * np.sqrt(1.0 - pf * pf) / pf


def fit_metering(reference_w, reactive_var, shown_w, u_w) -> MeteringFit:
    """Fit gain error, offset and (with a low power-factor point) channel phase error.

    Parameters
    ----------
    reference_w : array_like
        Active power from the reference instrument at each point [W] (import positive).
    reactive_var : array_like
        Reactive power at each point, positive inductive [var]; zero for resistive points.
    shown_w : array_like
        The diverter's displayed grid power at the same points [W].
    u_w : array_like
        Standard uncertainty of each point's difference (reference and display combined) [W].

    Returns
    -------
    MeteringFit
        The phase error is fitted only when some point has ``|Q| >= 0.3*|S|`` (a power
        factor below about 0.95); otherwise it is None and two parameters are fitted.
    """
    p = np.asarray(reference_w, dtype=float)
    q = np.asarray(reactive_var, dtype=float)
    y = np.asarray(shown_w, dtype=float)
    u = np.asarray(u_w, dtype=float)
    if not (p.shape == q.shape == y.shape == u.shape) or p.ndim != 1:
        raise ValueError("every point needs a reference power, a reactive power, a shown "
                         "power and an uncertainty")
    if not all(np.all(np.isfinite(a)) for a in (p, q, y, u)) or np.any(u <= 0):
        raise ValueError("readings must be finite and uncertainties positive")
    s = np.hypot(p, q)
    with_phase = bool(np.any(np.abs(q) >= 0.3 * np.maximum(s, 1e-12)))
    cols = [p, q, np.ones_like(p)] if with_phase else [p, np.ones_like(p)]
    n_par = len(cols)
    if len(p) < 3 or len(p) < n_par:
        raise ValueError(f"{len(p)} points: at least 3 are needed"
                         + (", and 4 with a low power-factor point" if with_phase else ""))
    x = np.column_stack(cols) / u[:, None]
    yw = y / u
    if np.ptp(p) < 1e-9 * max(1.0, float(np.max(np.abs(p)))):
        raise ValueError("the points need different powers to separate gain from offset")
    cov = np.linalg.inv(x.T @ x)
    beta = cov @ (x.T @ yw)
    resid = y - np.column_stack(cols) @ beta
    chi2 = float(np.sum((resid / u) ** 2))
    if with_phase:
        a, c, b = beta
        r = math.hypot(a, c)
        g = r - 1.0
        delta = math.atan2(-c, a)
        j = np.array([[a / r, c / r, 0.0],  # ∂g/∂(A, C, b)
                      [c / r**2, -a / r**2, 0.0],  # ∂delta/∂(A, C, b)
                      [0.0, 0.0, 1.0]])
        cv = j @ cov @ j.T
        return MeteringFit(g, math.sqrt(cv[0, 0]), float(b), math.sqrt(cv[2, 2]), delta,
                           math.sqrt(cv[1, 1]), tuple(float(r_) for r_ in resid), chi2,
                           len(p) - n_par)
    a, b = beta
    return MeteringFit(float(a - 1.0), math.sqrt(cov[0, 0]), float(b), math.sqrt(cov[1, 1]),
                       None, None, tuple(float(r_) for r_ in resid), chi2, len(p) - n_par)


def point_error_pct(reference_w: float, shown_w: float) -> float:
    """Error of one reading relative to the reference magnitude, ``(shown - ref)/|ref|`` [%]."""
    if reference_w == 0:
        raise ValueError("a point with zero reference power has no relative error")
    return 100.0 * (shown_w - reference_w) / abs(reference_w)
