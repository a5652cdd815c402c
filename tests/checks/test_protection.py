"""Protection checks against the figures cited in shared CHECKS.md and the standards."""

from __future__ import annotations

import pytest

from commission.physics import protection as prot

from .helpers import judge

BREAKER_ITEMS = [
    {"id": "b.curve", "kind": "choice", "prompt": "c", "options": ["B", "C", "D"]},
    {"id": "b.rating", "kind": "reading", "prompt": "r", "quantity": "current", "unit": "A"},
]


@pytest.mark.parametrize(
    ("curve", "rating", "zs_max"),
    [
        # Worked examples in CHECKS.md: Zs,max = 230 × 0.95 / (k·In), k = 5, 10, 20
        # (IEC 60898-1 instantaneous range tops; Cmin from CENELEC TR 50480).
        ("B", 16, 2.73),
        ("C", 16, 1.37),
        ("D", 16, 0.68),
        ("B", 32, 1.37),  # 218.5 / 160 = 1.3656
        ("C", 32, 0.68),  # 218.5 / 320 = 0.6828
    ],
)
def test_loop_impedance_max_matches_published_examples(curve, rating, zs_max):
    assert prot.loop_impedance_max_ohm(curve, rating) == pytest.approx(zs_max, abs=0.005)


def _zs(value, curve="B", rating=16.0, **params):
    return judge("loop_impedance", value, quantity="resistance", unit="Ω",
                 inputs={"curve": "b.curve", "rating": "b.rating"}, params=params,
                 others=BREAKER_ITEMS, other_values={"b.curve": curve, "b.rating": rating})


def test_loop_impedance_verdict_bands_use_cold_factor():
    # B16: Zs,max 2.73 Ω; 80 % of it (common practice for a cold reading) is 2.185 Ω.
    assert _zs(2.0).verdict == "pass"
    assert _zs(2.5).verdict == "review"
    assert _zs(2.8).verdict == "fail"
    r = _zs(2.8)
    assert r.expected.max == pytest.approx(0.8 * 218.5 / 80, abs=1e-3)
    assert "IEC 60364-4-41" in r.source
    # The factor is a checklist parameter: 1.0 accepts up to the full limit.
    assert _zs(2.5, cold_factor=1.0).verdict == "pass"


def test_loop_impedance_waits_for_its_inputs():
    r = judge("loop_impedance", 0.5, quantity="resistance", unit="Ω",
              inputs={"curve": "b.curve", "rating": "b.rating"}, others=BREAKER_ITEMS,
              other_values={"b.curve": "C"})
    assert r.verdict == "review"
    assert "b.rating" in r.reason


@pytest.mark.parametrize(
    ("cls", "multiple", "limits"),
    [
        # IEC 61008-1 Table 1 (from memory, as summarised in CHECKS.md)
        ("general", 1, (None, 300.0)),
        ("general", 2, (None, 150.0)),
        ("general", 5, (None, 40.0)),
        ("S", 1, (130.0, 500.0)),
        ("S", 2, (60.0, 200.0)),
        ("S", 5, (50.0, 150.0)),
    ],
)
def test_rcd_limits_table(cls, multiple, limits):
    assert prot.rcd_break_time_limits_ms(cls, multiple) == limits


RCD_DELAY = [{"id": "r.delay", "kind": "choice", "prompt": "d", "options": ["general", "S"]}]


def _rcd(seconds, multiple, delay="general"):
    return judge("rcd_trip_time", seconds, quantity="time", unit="ms",
                 inputs={"multiple": multiple, "delay_class": "r.delay"},
                 others=RCD_DELAY, other_values={"r.delay": delay})


@pytest.mark.parametrize(
    ("ms", "multiple", "delay", "verdict"),
    [
        (299, 1, "general", "pass"),
        (301, 1, "general", "fail"),
        (350, 1, "general", "fail"),
        (39, 5, "general", "pass"),
        (41, 5, "general", "fail"),
        (140, 2, "general", "pass"),
        (160, 2, "general", "fail"),
        (120, 1, "S", "fail"),  # faster than 130 ms: not behaving as a selective device
        (200, 1, "S", "pass"),
        (510, 1, "S", "fail"),
        (45, 5, "S", "fail"),
        (100, 5, "S", "pass"),
    ],
)
def test_rcd_trip_time_verdicts(ms, multiple, delay, verdict):
    r = _rcd(ms / 1000, multiple, delay)
    assert r.verdict == verdict, r.reason
    assert r.measured.unit == "ms"
    assert r.measured.value == pytest.approx(ms)


def test_rcd_half_no_trip():
    ok = judge("rcd_trip_time", True, kind="confirm", inputs={"multiple": 0.5})
    tripped = judge("rcd_trip_time", False, kind="confirm", inputs={"multiple": 0.5})
    assert ok.verdict == "pass"
    assert tripped.verdict == "fail"
    assert tripped.expected.value == "no trip"


def test_rcd_type_a_or_better():
    for t, verdict in [("AC", "fail"), ("A", "pass"), ("F", "pass"), ("B", "pass")]:
        r = judge("rcd_type", t, kind="choice", options=["AC", "A", "F", "B"])
        assert r.verdict == verdict


def test_rcd_rated_residual():
    assert judge("rcd_rated_residual", 0.030, quantity="current", unit="mA").verdict == "pass"
    assert judge("rcd_rated_residual", 0.100, quantity="current", unit="mA").verdict == "review"


@pytest.mark.parametrize(
    ("circuit_v", "selv", "expected"),
    [
        # IEC 60364-6 Table 6A / 6.1 (from memory): (test voltage V DC, minimum MΩ)
        (24, True, (250.0, 0.5)),
        (230, False, (500.0, 1.0)),
        (400, False, (500.0, 1.0)),
        (690, False, (1000.0, 1.0)),
    ],
)
def test_insulation_minima(circuit_v, selv, expected):
    assert prot.insulation_min_mohm(circuit_v, selv) == expected


def test_insulation_check():
    assert judge("insulation_resistance", 0.99e6, quantity="resistance",
                 unit="MΩ").verdict == "fail"
    assert judge("insulation_resistance", 1.0e6, quantity="resistance",
                 unit="MΩ").verdict == "pass"
    assert judge("insulation_resistance", 0.6e6, quantity="resistance", unit="MΩ",
                 params={"selv": 1}).verdict == "pass"
    # A sheathed-element allowance of a national rule, as a checklist parameter.
    assert judge("insulation_resistance", 0.6e6, quantity="resistance", unit="MΩ",
                 params={"min_mohm": 0.5}).verdict == "pass"
    low_test = judge("insulation_resistance", 50e6, quantity="resistance", unit="MΩ",
                     inputs={"test_voltage": "t.v"},
                     others=[{"id": "t.v", "kind": "reading", "prompt": "v",
                              "quantity": "voltage", "unit": "V"}],
                     other_values={"t.v": 250.0})
    assert low_test.verdict == "review"


def test_tt_touch_voltage():
    others = [{"id": "r.idn", "kind": "reading", "prompt": "i", "quantity": "current",
               "unit": "mA"}]
    # IEC 60364-4-41, 411.5.3: RA·IΔn ≤ 50 V. 1666 Ω × 30 mA = 49.98 V; 1700 Ω → 51 V.
    ok = judge("tt_touch_voltage", 1666.0, quantity="resistance", unit="Ω",
               inputs={"residual_rating": "r.idn"}, others=others,
               other_values={"r.idn": 0.030})
    bad = judge("tt_touch_voltage", 1700.0, quantity="resistance", unit="Ω",
                inputs={"residual_rating": "r.idn"}, others=others,
                other_values={"r.idn": 0.030})
    assert ok.verdict == "pass"
    assert bad.verdict == "fail"
    assert bad.measured.value == pytest.approx(51.0)


def _coord(iz, in_a, power=2850.0, volts=230.0):
    others = [
        {"id": "e.p", "kind": "reading", "prompt": "p", "quantity": "power", "unit": "W"},
        {"id": "e.u", "kind": "reading", "prompt": "u", "quantity": "voltage", "unit": "V"},
        {"id": "b.in", "kind": "reading", "prompt": "i", "quantity": "current", "unit": "A"},
    ]
    return judge("circuit_coordination", iz, quantity="current", unit="A",
                 inputs={"load_power": "e.p", "load_voltage": "e.u", "breaker_rating": "b.in"},
                 others=others, other_values={"e.p": power, "e.u": volts, "b.in": in_a})


def test_circuit_coordination():
    # IEC 60364-4-43, 433.1: Ib ≤ In ≤ Iz. Ib = 2850/230 = 12.4 A.
    assert _coord(24, 16).verdict == "pass"
    assert _coord(24, 10).verdict == "fail"  # In < Ib
    assert _coord(15, 16).verdict == "fail"  # In > Iz


def test_supply_voltage_band():
    # IEC 60038: 230 V +10 % / −10 % → 207 … 253 V.
    for u, verdict in [(206.9, "fail"), (207, "pass"), (253, "pass"), (253.1, "fail")]:
        assert judge("supply_voltage", u, quantity="voltage", unit="V").verdict == verdict


def test_supply_frequency_detects_the_system():
    assert judge("supply_frequency", 59.9, quantity="frequency", unit="Hz").verdict == "pass"
    assert judge("supply_frequency", 50.2, quantity="frequency", unit="Hz").verdict == "pass"
    assert judge("supply_frequency", 51.0, quantity="frequency", unit="Hz").verdict == "fail"


def test_polarity():
    assert judge("polarity", True, kind="confirm").verdict == "pass"
    assert judge("polarity", False, kind="confirm").verdict == "fail"


def _element(r_ohm, supply=None):
    others = [
        {"id": "e.p", "kind": "reading", "prompt": "p", "quantity": "power", "unit": "W"},
        {"id": "e.u", "kind": "reading", "prompt": "u", "quantity": "voltage", "unit": "V"},
    ]
    values = {"e.p": 3000.0, "e.u": 230.0}
    return judge("element_power", r_ohm, quantity="resistance", unit="Ω",
                 inputs={"rated_power": "e.p", "rated_voltage": "e.u"}, others=others,
                 other_values=values)


def test_element_power_from_cold_resistance():
    # P = U²/R: 230² / 17.63 = 3000.6 W. IEC 60335-1 cl. 10.1 (from memory): −10 % / +5 %.
    assert _element(17.63).verdict == "pass"
    assert _element(17.63).measured.value == pytest.approx(230**2 / 17.63, abs=0.1)
    # 230² / 19.6 = 2699 W < 2700 W (−10 %): fail.
    assert _element(19.6).verdict == "fail"
    # 230² / 16.7 = 3168 W > 3150 W (+5 %): fail.
    assert _element(16.7).verdict == "fail"
    assert prot.rated_power_tolerance_w(300.0) == (270.0, 320.0)  # +20 W beats +5 % below 400 W
