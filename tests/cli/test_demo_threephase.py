"""The three-phase demo job (Quarry Lodge, invented) walked, reported, signed and verified.

Outside references: poppler's pdfsig (an independent signature verifier) and pdftotext (the
text a reader sees in the record).
"""

from __future__ import annotations

import re
import subprocess

import pytest

from conftest import need_tool


@pytest.mark.slow
def test_three_phase_demo_is_walked_signed_and_verified(cli, tmp_path):
    """`demo --scenario three-phase`: every answer recorded, status ready, verified by our
    verify and by pdfsig; the record's text holds the per-phase items and the clamp result."""
    result = cli("demo", "--out", tmp_path / "d", "--scenario", "three-phase")
    assert result.exit_code == 0, result.stderr
    assert "(Quarry Lodge)" in result.stdout and "status ready" in result.stdout
    assert "verified here:  yes" in result.stdout
    (pdf,) = (tmp_path / "d").glob("record-*.pdf")
    need_tool("pdfsig")
    sig = subprocess.run(["pdfsig", str(pdf)], capture_output=True, text=True, timeout=60)
    assert "Signature is Valid." in sig.stdout
    need_tool("pdftotext")
    text = subprocess.run(["pdftotext", "-raw", str(pdf), "-"], capture_output=True,
                          text=True, timeout=60).stdout
    assert "diverter-3ph" in text
    for item in ("supply.l2n", "supply.l3l1", "element.l3.cold_resistance", "clamp.capture"):
        assert item in text, item
    assert "clamp 2 is on L2 and the right way round" in " ".join(text.split())
    # the per-phase tables' heads and verdicts are printed whole (a narrow column once
    # broke "Phase" into "Phas" / "e")
    layout = subprocess.run(["pdftotext", "-layout", str(pdf), "-"], capture_output=True,
                            text=True, timeout=60).stdout
    assert re.search(r"\bPhase +Item\b", layout)
    assert not re.search(r"\b(Phas|recorde|revie|pendin)\b", layout)


def test_unknown_demo_scenario_is_one_line(cli, tmp_path):
    result = cli("demo", "--out", tmp_path / "d", "--scenario", "two-phase")
    assert result.exit_code == 2
    assert result.stderr.strip() == ("error: --scenario: 'two-phase' is not a demo scenario "
                                     "(accepted: single-phase, three-phase)")
