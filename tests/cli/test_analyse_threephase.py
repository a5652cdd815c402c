"""`commission analyse capture` on three-phase CSV files, driven as a user would.

References: closed forms for resistive loads on a balanced 230/400 V supply (P = U²/R per
phase, textbook phasors L2 at -120 deg and L3 at +120 deg); symmetrical components of the
test's own phasors for the unbalance.
"""

from __future__ import annotations

import cmath
import json
import math

import pytest

RATE = 5000.0


def _write(path, *, voltages=3, perm=(0, 1, 2), orient=(False, False, False),
           ohms=(17.6, 26.45, 52.9), rms=(230.0, 230.0, 230.0), angles=(0.0, -120.0, 120.0),
           neutral=False, seconds=0.44):
    head = ["time_s", *[f"voltage_l{k + 1}_v" for k in range(voltages)],
            "current_1_a", "current_2_a", "current_3_a"] + (["current_n_a"] if neutral else [])
    lines = [",".join(head)]
    for n in range(int(RATE * seconds)):
        t = n / RATE
        v = [math.sqrt(2) * rms[k] * math.cos(2 * math.pi * 50 * t + math.radians(angles[k]))
             for k in range(3)]
        i = [v[k] / ohms[k] for k in range(3)]
        clamp = [(-1 if orient[c] else 1) * i[perm[c]] for c in range(3)]
        row = [t, *v[:voltages], *clamp] + ([-(i[0] + i[1] + i[2])] if neutral else [])
        lines.append(",".join(f"{x:.7f}" for x in row))
    path.write_text("\n".join(lines) + "\n")
    return path


def test_per_phase_power_and_net_sum_in_json(cli, tmp_path):
    """P = U²/R on each phase and their sum, within 0.1 %; sequence measured."""
    f = _write(tmp_path / "three.csv", neutral=True)
    result = cli("analyse", "capture", str(f), "--json")
    assert result.exit_code == 0, result.stderr
    data = json.loads(result.stdout)
    want = [230.0**2 / r for r in (17.6, 26.45, 52.9)]
    for row, w in zip(data["phases"], want, strict=True):
        assert row["p_w"] == pytest.approx(w, rel=1e-3)
    assert data["p_total_w"] == pytest.approx(sum(want), rel=1e-3)
    assert data["phase_sequence"] == "L1-L2-L3" and data["phase_sequence_measured"] is True
    assert data["unbalance_pct"] == pytest.approx(0.0, abs=1e-3)
    i = [230.0 / r for r in (17.6, 26.45, 52.9)]
    neutral = abs(sum(cmath.rect(x, math.radians(a)) for x, a in zip(i, (0, -120, 120),
                                                                       strict=True)))
    assert data["neutral"]["computed_rms_a"] == pytest.approx(neutral, rel=1e-3)
    assert data["neutral"]["measured_rms_a"] == pytest.approx(neutral, rel=1e-3)
    assert data["clamp_verdict"]["verdict"] == "pass"
    assert "positive power = import" in data["sign_convention"]


def test_text_shows_the_table_and_the_instructions(cli, tmp_path):
    """Clamps 2 and 3 swapped, 2 reversed: the text tells the installer what to do."""
    f = _write(tmp_path / "swap.csv", perm=(0, 2, 1), orient=(False, True, False))
    result = cli("analyse", "capture", str(f))
    assert result.exit_code == 0, result.stderr
    out = result.stdout
    assert "Per phase" in out and "total" in out and "Sign convention" in out
    assert "clamp 2 is on L3 and reversed: move it to L2 and turn it round" in out
    assert "clamp 3 is on L2: move it to L3" in out
    assert "(load on every phase, import expected): fail" in out


def test_one_voltage_says_the_sequence_is_assumed(cli, tmp_path):
    """1 V + 3 I: the sequence is assumed and said so, in text and --json."""
    f = _write(tmp_path / "one.csv", voltages=1, perm=(1, 0, 2))
    data = json.loads(cli("analyse", "capture", str(f), "--json").stdout)
    assert data["phase_sequence_measured"] is False and data["unbalance_pct"] is None
    assert [(c["phase"], c["reversed"]) for c in data["clamps"]] == [
        ("L2", False), ("L1", False), ("L3", False)]
    text = cli("analyse", "capture", str(f)).stdout
    assert "assumed L1-L2-L3" in text


def test_negative_sequence_from_three_voltages(cli, tmp_path):
    """L1-L3-L2 (L2 at +120 deg) is detected from the voltages."""
    f = _write(tmp_path / "neg.csv", angles=(0.0, 120.0, -120.0))
    data = json.loads(cli("analyse", "capture", str(f), "--json").stdout)
    assert data["phase_sequence"] == "L1-L3-L2"


def test_unbalance_matches_symmetrical_components(cli, tmp_path):
    """u2 from the command against |V2|/|V1| of the written phasors (Fortescue)."""
    rms, ang = (240.0, 225.0, 231.0), (0.0, -117.0, 122.0)
    f = _write(tmp_path / "unb.csv", rms=rms, angles=ang)
    data = json.loads(cli("analyse", "capture", str(f), "--json").stdout)
    ph = [cmath.rect(r, math.radians(a)) for r, a in zip(rms, ang, strict=True)]
    a = cmath.exp(2j * math.pi / 3)
    want = 100 * abs(ph[0] + a * a * ph[1] + a * ph[2]) / abs(ph[0] + a * ph[1] + a * a * ph[2])
    assert data["unbalance_pct"] == pytest.approx(want, abs=1e-3)


@pytest.mark.parametrize(("args", "needle"), [
    (["--load", "most"], "--load: 'most' is not accepted"),
    (["--v-scale", "2"], "--v-scale: not available for three-phase captures"),
    (["--rate", "fast"], "--rate: 'fast' is not a number"),
])
def test_bad_options_are_one_line(cli, tmp_path, args, needle):
    f = _write(tmp_path / "ok.csv", seconds=0.1)
    result = cli("analyse", "capture", str(f), *args)
    assert result.exit_code == 2 and needle in result.stderr
    assert len(result.stderr.strip().splitlines()) == 1


@pytest.mark.parametrize(("body", "needle"), [
    ("time_s,voltage_l1_v,voltage_l2_v,current_1_a\n0,1,2,3\n", "but not the other phase"),
    ("time_s,voltage_l1_v,current_1_a,current_3_a\n0,1,2,3\n", "no current_2_a"),
    ("time_s,voltage_l1_v,current_1_a\n0,1,x\n", "is not a number"),
    ("time_s,voltage_l1_v,current_1_a\n", "no data rows"),
])
def test_broken_three_phase_files_are_one_line(cli, tmp_path, body, needle):
    f = tmp_path / "bad.csv"
    f.write_text(body)
    result = cli("analyse", "capture", str(f))
    assert result.exit_code == 2, result.stdout
    assert needle in result.stderr and "Traceback" not in result.stderr
    assert len(result.stderr.strip().splitlines()) == 1


def test_reader_layer_decimal_comma_units_and_mapping(cli, tmp_path):
    """Semicolons, decimal commas, a metadata line, units in the headers (currents in mA)
    and a --columns mapping: the same P = U²/R per phase as the plain file."""
    plain = _write(tmp_path / "plain.csv")
    rows = plain.read_text().splitlines()
    out = ["# logger LX-3, site test", "t [s];UL1 [V];UL2 [V];UL3 [V];IA [mA];IB [mA];IC [mA]"]
    for line in rows[1:]:
        x = [float(v) for v in line.split(",")]
        vals = x[:4] + [1000 * c for c in x[4:]]
        out.append(";".join(f"{v:.6f}".replace(".", ",") for v in vals))
    f = tmp_path / "logger.csv"
    f.write_text("\n".join(out) + "\n")
    result = cli("analyse", "capture", str(f), "--json", "--columns",
                 "time_s=t [s],voltage_l1_v=UL1 [V],voltage_l2_v=UL2 [V],voltage_l3_v=UL3 [V],"
                 "current_1_a=IA [mA],current_2_a=IB [mA],current_3_a=IC [mA]")
    assert result.exit_code == 0, result.stderr
    data = json.loads(result.stdout)
    want = [230.0**2 / r for r in (17.6, 26.45, 52.9)]
    for row, w in zip(data["phases"], want, strict=True):
        assert row["p_w"] == pytest.approx(w, rel=1e-3)
