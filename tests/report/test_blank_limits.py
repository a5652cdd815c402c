"""The paper form prints each item's limit in the trade's units, computed by the checks from
the same parameters as on site: the supply band against IEC 60038 (230 V −10 %/+10 %, worked
by hand: 207–253 V), the RCD rows against IEC 61008-1 Table 1 break times (general ≤ 300 ms
at IΔn and ≤ 40 ms at 5 IΔn; type S 130–500 ms and 50–150 ms), and no parameter name. Read
back with pdftotext."""

from __future__ import annotations

import re
import subprocess

from conftest import need_tool


def _blank_text(cli, tmp_path, checklist="diverter-1ph") -> str:
    need_tool("pdftotext")
    out = tmp_path / "blank.pdf"
    result = cli("blank", checklist, "--out", out)
    assert result.exit_code == 0, result.stderr
    return subprocess.run(["pdftotext", "-layout", str(out), "-"], capture_output=True,
                          text=True, check=True).stdout


def test_blank_prints_limits_not_parameters(cli, tmp_path):
    from commission.checks import CHECKS

    text = _blank_text(cli, tmp_path)
    rows = text.splitlines()
    volt = next(n for n, line in enumerate(rows) if "Supply voltage L–N at the origin" in line)
    assert "207–253 V" in rows[volt]
    half = next(line for line in rows if "did not trip at ½ IΔn" in line)
    t1 = next(n for n, line in enumerate(rows) if "RCD trip time at IΔn" in line)
    t5 = next(n for n, line in enumerate(rows) if "RCD trip time at 5 IΔn" in line)
    assert "no trip" in half
    assert "general: ≤ 300 ms" in rows[t1] and "S: 130–500 ms" in rows[t1 + 1]
    assert "general: ≤ 40 ms" in rows[t5] and "S: 50–150 ms" in rows[t5 + 1]
    assert "≥ 1 MΩ" in text
    names = {name for d in CHECKS.values() for name in d.params if "_" in name}
    assert names
    for name in names:
        assert not re.search(rf"\b{re.escape(name)}\b", text), name


def test_blank_uses_a_checklists_own_parameters(cli, tmp_path):
    """A checklist that sets 220 V nominal and ±6 % gets 206.8–233.2 V on paper."""
    from conftest import CHECKLIST

    own = tmp_path / "own.yaml"
    own.write_text(CHECKLIST.read_text(encoding="utf-8").replace(
        "check: {name: supply_voltage}",
        "check: {name: supply_voltage, params: {nominal_v: 220, below_pct: 6, "
        "above_pct: 6}}"), encoding="utf-8")
    text = _blank_text(cli, tmp_path, str(own))
    assert "206.8–233.2 V" in text
