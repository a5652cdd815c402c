"""Heating analysis against IAPWS-95 (the iapws package) and closed-form logs.

The expected rate of a healthy element is P/(m·cp) with ρ at filling and cp at the mean
temperature from iapws (IAPWS-95); the logs are written here in closed form (straight
rises, thermostat saw-tooth, units converted by hand: °F = °C·9/5 + 32, kW = W/1000).
"""

from __future__ import annotations

import numpy as np
import pytest

from commission.analyses import HeatingSettings, analyse_heating

POWER, VOLUME = 3000.0, 150.0


def _iapws_rate(power_w, volume_l, fill_c, mean_c):
    from iapws import IAPWS95

    rho = IAPWS95(T=fill_c + 273.15, P=0.101325).rho
    cp = IAPWS95(T=mean_c + 273.15, P=0.101325).cp * 1000.0
    return power_w / (volume_l * 1e-3 * rho * cp) * 3600.0


def _write(path, header, cols, sep=",", decimal="."):
    with open(path, "w", newline="") as fh:
        fh.write(sep.join(header) + "\n")
        for row in zip(*cols, strict=True):
            fh.write(sep.join(f"{x:.6f}".replace(".", decimal) for x in row) + "\n")
    return path


def _sawtooth(rate_k_per_h, *, start=35.0, first_open=58.0, close_drop=4.0, creep=0.4,
              cycles=4, step=30.0):
    """Heating at a steady rate to the thermostat's opening point, then cooling by
    close_drop (mixing), re-heating, opening 0.4 K higher each cycle (creep)."""
    t, y = [0.0], [start]
    temp, now = start, 0.0
    opening = first_open
    cool_rate = -3.0 / 3600.0  # K/s while open
    for _ in range(cycles + 1):
        while temp < opening:
            now += step
            temp += rate_k_per_h / 3600.0 * step
            t.append(now)
            y.append(temp)
        target = opening - close_drop
        while temp > target:
            now += step
            temp += cool_rate * step * 10
            t.append(now)
            y.append(temp)
        opening += creep
    return np.array(t), np.array(y)


def test_thermostat_sawtooth_with_creep_passes_on_a_healthy_element(tmp_path):
    """A healthy element heating at the IAPWS-95 rate, with the thermostat cycling five
    times and opening 0.4 K higher each cycle: only the first rising run is fitted, the
    rate matches iapws within 1 %, the verdict is pass and the openings are a finding."""
    rate = _iapws_rate(POWER, VOLUME, 15.0, 46.5)
    t, y = _sawtooth(rate)
    path = _write(tmp_path / "saw.csv", ("time_s", "temp_c"), (t, y))
    a = analyse_heating(path, HeatingSettings(power_w=POWER, volume_l=VOLUME))
    assert a.figures["rate_k_per_h"] == pytest.approx(rate, rel=0.01)
    assert a.figures["ratio"] == pytest.approx(1.0, abs=0.02)
    assert a.verdict == "pass", a.reason
    assert a.figures["thermostat_openings"] >= 4
    temps = a.figures["opening_temps_c"]
    assert temps[1] - temps[0] == pytest.approx(0.4, abs=0.15)
    assert any(f.code == "thermostat_cycling" for f in a.findings)
    assert "thermostat opened" in a.reason


def test_volume_follows_the_element_position(tmp_path):
    """A high side-entry element serves the top 45 % of the cylinder (the checklist's
    default, common practice): a log heating at the rate for 0.45·150 L passes and the
    reason names the 68 L used; read against the whole cylinder it would be too fast."""
    rate = _iapws_rate(POWER, 0.45 * VOLUME, 15.0, 40.0)
    t = np.arange(0.0, 3600.0 + 1, 60.0)
    y = 30.0 + rate * t / 3600.0
    path = _write(tmp_path / "high.csv", ("time_s", "temp_c"), (t, y))
    a = analyse_heating(path, HeatingSettings(power_w=POWER, volume_l=VOLUME,
                                              element_position="side entry high"))
    assert a.figures["served_volume_l"] == pytest.approx(0.45 * VOLUME)
    assert a.verdict == "pass", a.reason
    assert "68 L" in a.reason and "side entry high" in a.reason
    whole = analyse_heating(path, HeatingSettings(power_w=POWER, volume_l=VOLUME))
    assert whole.verdict == "review" and "implausibly fast" in whole.reason


def test_implausible_ratio_lists_units_first(tmp_path):
    """A °F log whose header says °C (a unit slip): the ratio is about 1.8, outside
    0.5-1.5, and the reason lists the likely causes with units first."""
    rate = _iapws_rate(POWER, VOLUME, 15.0, 40.0)
    t = np.arange(0.0, 3600.0 + 1, 60.0)
    y_f = (10.0 + rate * t / 3600.0) * 9 / 5 + 32  # 50 -> 81 °F, labelled °C
    path = _write(tmp_path / "slip.csv", ("time_s", "temp_c"), (t, y_f))
    a = analyse_heating(path, HeatingSettings(power_w=POWER, volume_l=VOLUME))
    assert a.figures["ratio"] == pytest.approx(1.8, abs=0.05)
    reason = a.reason
    assert "units first" in reason
    assert reason.index("°F") < reason.index("sensor")


@pytest.mark.parametrize("form", ["fahrenheit_minutes", "kelvin_ms", "semicolon_comma"])
def test_units_in_headers_give_the_si_figures(tmp_path, form):
    """°F, K, minute and millisecond columns (and a semicolon/decimal-comma export with
    metadata lines) give the same figures as their °C-and-seconds twin."""
    rate = _iapws_rate(POWER, VOLUME, 15.0, 40.0)
    rng = np.random.default_rng(2)
    t = np.arange(0.0, 3600.0 + 1, 60.0)
    y = 30.0 + rate * t / 3600.0 + rng.normal(0, 0.02, t.size)
    si = _write(tmp_path / "si.csv", ("time_s", "temp_c"), (t, y))
    other = tmp_path / f"{form}.csv"
    if form == "fahrenheit_minutes":
        _write(other, ("Time [min]", "Water (°F)"), (t / 60.0, y * 9 / 5 + 32))
    elif form == "kelvin_ms":
        _write(other, ("t/ms", "temp_K"), (t * 1000.0, y + 273.15))
    else:
        _write(other, ("Zeit [s]", "T [°C]"), (t, y), sep=";", decimal=",")
        text = other.read_text()
        other.write_text("Logger;TL-20\nSerial;4471\n\n" + text)
    s = HeatingSettings(power_w=POWER, volume_l=VOLUME)
    x, z = analyse_heating(si, s), analyse_heating(other, s)
    for key in ("rate_k_per_h", "expected_rate_k_per_h", "ratio", "fit_start_s", "fit_end_s"):
        assert z.figures[key] == pytest.approx(x.figures[key], rel=1e-5, abs=1e-6), key
    assert z.verdict == x.verdict
    if form == "semicolon_comma":
        assert z.notes == ("Logger;TL-20", "Serial;4471")
