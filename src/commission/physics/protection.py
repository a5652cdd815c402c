"""Protection and safety-test limits for low-voltage final circuits.

Pure functions of numbers; every figure carries its source. Names end in their
unit (``_ohm``, ``_ms``, ``_mohm``). Rules differ between countries: each value
here is only the default that a checklist parameter may replace.

References
----------
.. [1] IEC 60364-4-41, Protection against electric shock (411.4.4: Zs·Ia ≤ U0;
   411.5.3: RA·IΔn ≤ 50 V; Table 41.1, disconnection times).
.. [2] IEC 60898-1, circuit-breakers: instantaneous tripping ranges B 3–5 In,
   C 5–10 In, D 10–20 In (upper ends used).
.. [3] CENELEC TR 50480, Cmin = 0.95 (from memory).
.. [4] IEC 61008-1 / IEC 61009-1, RCD break times (Table 1), from memory.
.. [5] IEC 60364-6, minimum insulation resistance (Table 6A in 2006, Table 6.1
   in 2016; from memory, agrees with published summaries).
.. [6] IEC 60364-4-43, 433.1: Ib ≤ In ≤ Iz.
.. [7] IEC 60335-1, clause 10.1: rated power input tolerance of heating
   appliances, +5 % or 20 W (whichever is greater) / −10 % (from memory).
"""

from __future__ import annotations

# Multiple of In at which each breaker curve is sure to trip instantaneously:
# the upper end of its range in IEC 60898-1 [2].
INSTANTANEOUS_MULTIPLE = {"B": 5.0, "C": 10.0, "D": 20.0}


def breaker_trip_current_a(curve: str, rating_a: float) -> float:
    """Current Ia that trips a breaker instantaneously [A] (upper end, IEC 60898-1).

    curve : 'B', 'C' or 'D'
    rating_a : rated current In [A]
    """
    try:
        return INSTANTANEOUS_MULTIPLE[curve.upper()] * rating_a
    except KeyError:
        raise ValueError(f"unknown breaker curve {curve!r} (B, C or D)") from None


def loop_impedance_max_ohm(
    curve: str, rating_a: float, u0_v: float = 230.0, c_min: float = 0.95
) -> float:
    """Maximum earth fault loop impedance Zs,max = U0·Cmin/Ia [Ω].

    u0_v : nominal line-to-earth voltage [V]
    c_min : voltage factor for the lowest supply voltage [-] (CENELEC TR 50480 [3])
    Examples: B16 → 2.73 Ω, C16 → 1.37 Ω, D16 → 0.68 Ω at 230 V.
    """
    return u0_v * c_min / breaker_trip_current_a(curve, rating_a)


def touch_voltage_tt_v(earth_electrode_ohm: float, rated_residual_a: float) -> float:
    """Touch voltage RA·IΔn of a TT installation [V]; must not exceed 50 V [1]."""
    return earth_electrode_ohm * rated_residual_a


# RCD break-time limits [ms] by delay class and multiple of IΔn, IEC 61008-1 [4].
# (min, max); None = no bound. At ½ IΔn the device must not trip at all.
RCD_BREAK_TIME_MS: dict[str, dict[float, tuple[float | None, float | None]]] = {
    "general": {1.0: (None, 300.0), 2.0: (None, 150.0), 5.0: (None, 40.0)},
    "S": {1.0: (130.0, 500.0), 2.0: (60.0, 200.0), 5.0: (50.0, 150.0)},
}


def rcd_break_time_limits_ms(
    delay_class: str, multiple: float
) -> tuple[float | None, float | None]:
    """(min, max) break time [ms] for an RCD test at ``multiple`` × IΔn.

    delay_class : 'general' (no time delay) or 'S' (selective)
    multiple : test current as a multiple of IΔn [-]: 1, 2 or 5
    """
    key = "S" if delay_class.upper() == "S" else "general"
    try:
        return RCD_BREAK_TIME_MS[key][float(multiple)]
    except KeyError:
        raise ValueError(f"no break-time limit for {multiple} × IΔn (1, 2 or 5)") from None


def insulation_min_mohm(
    circuit_nominal_v: float, selv_or_pelv: bool = False
) -> tuple[float, float]:
    """(test voltage [V DC], minimum insulation resistance [MΩ]), IEC 60364-6 [5].

    circuit_nominal_v : nominal voltage of the circuit under test [V]
    selv_or_pelv : True for a SELV or PELV circuit
    """
    if selv_or_pelv:
        return 250.0, 0.5
    if circuit_nominal_v <= 500.0:
        return 500.0, 1.0
    return 1000.0, 1.0


def element_power_w(voltage_v: float, resistance_ohm: float) -> float:
    """Power of a resistive element P = U²/R [W]."""
    if resistance_ohm <= 0:
        raise ValueError("resistance must be positive")
    return voltage_v**2 / resistance_ohm


def rated_power_tolerance_w(rated_w: float) -> tuple[float, float]:
    """(lowest, highest) acceptable power input of a heating appliance [W].

    IEC 60335-1 clause 10.1 [7] (from memory): above 200 W, +5 % or +20 W,
    whichever is greater, and −10 %.
    """
    return rated_w * 0.90, rated_w + max(0.05 * rated_w, 20.0)


def design_current_a(power_w: float, voltage_v: float) -> float:
    """Design current Ib of a resistive load at its rated voltage [A]."""
    return power_w / voltage_v


# -- conductors and fault current --------------------------------------------------------
# IEC 60228, maximum DC resistance at 20 °C of class 1 and 2 plain (annealed) copper
# conductors, mΩ/m (from memory; the 1.5–10 mm² values are those in the project's CHECKS.md).
IEC60228_COPPER_MOHM_PER_M = {1.0: 18.1, 1.5: 12.1, 2.5: 7.41, 4.0: 4.61, 6.0: 3.08,
                              10.0: 1.83, 16.0: 1.15}
# IEC 60028 international annealed copper standard: 1/58 Ω·mm²/m at 20 °C; α20 = 0.00393 /K.
COPPER_RHO20_OHM_MM2_PER_M = 1 / 58
COPPER_ALPHA20_PER_K = 0.00393


def copper_resistance_ohm_per_m(area_mm2: float) -> float:
    """Resistance of a copper conductor at 20 °C [Ω/m]: the IEC 60228 maximum for a listed
    size, else ρ20/A of annealed copper (IEC 60028), which is slightly lower."""
    if area_mm2 <= 0:
        raise ValueError("a conductor cross-section must be positive")
    for size, mohm in IEC60228_COPPER_MOHM_PER_M.items():
        if abs(size - area_mm2) < 1e-9:
            return mohm / 1000
    return COPPER_RHO20_OHM_MM2_PER_M / area_mm2


def copper_temperature_factor(temp_c: float, alpha20_per_k: float = COPPER_ALPHA20_PER_K
                              ) -> float:
    """R(t)/R(20 °C) = 1 + α20·(t − 20) for copper."""
    return 1 + alpha20_per_k * (temp_c - 20.0)


def r1r2_expected_ohm(length_m: float, line_mm2: float, cpc_mm2: float,
                      temp_c: float = 20.0) -> float:
    """End-to-end resistance of the line and protective conductors of a circuit [Ω]."""
    per_m = copper_resistance_ohm_per_m(line_mm2) + copper_resistance_ohm_per_m(cpc_mm2)
    return length_m * per_m * copper_temperature_factor(temp_c)


def fault_current_a(u0_v: float, loop_ohm: float, c: float = 1.0) -> float:
    """Prospective fault current c·U0/Z [A] (c = 1.1 for the maximum, IEC 60909 voltage
    factor for low voltage with +10 % tolerance, from memory)."""
    if loop_ohm <= 0:
        raise ValueError("a loop impedance must be positive")
    return c * u0_v / loop_ohm


def element_current_a(rated_power_w: float, rated_voltage_v: float, supply_v: float) -> float:
    """Current of a resistive element rated P at U_r when supplied at U [A]: R = U_r²/P,
    I = U/R (resistance taken as constant)."""
    if rated_power_w <= 0 or rated_voltage_v <= 0:
        raise ValueError("rated power and voltage must be positive")
    return supply_v * rated_power_w / rated_voltage_v ** 2
