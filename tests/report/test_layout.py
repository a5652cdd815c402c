"""Layout of the record: 150 items, long names and long texts paginate without any two
words overlapping (word boxes from pdfplumber, an independent PDF reader), and names in
Latin with accents, Greek and Cyrillic are drawn with the bundled font (pdftotext)."""

from __future__ import annotations

import itertools
import subprocess

import pytest

from conftest import need_tool

NAMES = ["Zoë Łukasiewicz-Núñez", "Σοφία Παπαδοπούλου", "Дмитрий Кузнецов"]


def _checklist(n_items: int) -> str:
    lines = ["format: commission-checklist/1", "id: long", "title: Layout test with many items",
             "version: '1'", "rules: {name: test}", "sections:"]
    per = 15
    for s in range(n_items // per):
        lines += [f"  - id: s{s}", f"    title: Section {s} with a rather long heading text",
                  "    items:"]
        for i in range(per):
            kind = "text" if i % 5 == 4 else "reading"
            lines += [f"      - id: s{s}.item_with_a_long_identifier_{i}", f"        kind: {kind}",
                      "        prompt: " + "Measure the supply voltage at the far end of the "
                      "circuit with the element running at full output " * 2]
            if kind == "reading":
                lines += ["        quantity: voltage", "        unit: V",
                          "        check: {name: supply_voltage}", "        critical: true"]
    return "\n".join(lines) + "\n"


def _overlaps(words) -> list[tuple[str, str]]:
    bad = []
    for a, b in itertools.combinations(words, 2):
        w = min(a["x1"], b["x1"]) - max(a["x0"], b["x0"])
        h = min(a["bottom"], b["bottom"]) - max(a["top"], b["top"])
        if w > 0.5 and h > 0.5:
            bad.append((a["text"], b["text"]))
    return bad


@pytest.fixture
def long_record(cli, tmp_path):
    path = tmp_path / "long.yaml"
    path.write_text(_checklist(150), encoding="utf-8")
    created = cli("new", "--checklist", path, "--site", "Ferme des Trois Chênes, " * 4,
                  "--client", NAMES[1], "--installer", NAMES[0], "--installer-contact",
                  NAMES[2] + " · +30 210 555 0199")
    assert created.exit_code == 0, created.stderr
    job = created.stdout.strip().splitlines()[-1]
    answers = tmp_path / "a.yaml"
    rows = []
    for s in range(10):
        for i in range(15):
            item = f"s{s}.item_with_a_long_identifier_{i}"
            if i % 5 == 4:
                rows.append(f"{item}: \"{' '.join(NAMES)} — " + "a long note " * 30 + "\"")
            else:
                rows.append(f"{item}: {200 + i * 4} V")  # some outside 207–253 V: long reasons
    answers.write_text("\n".join(rows) + "\n", encoding="utf-8")
    assert cli("walk", job, "--answers", answers).exit_code == 0
    out = tmp_path / "long.pdf"
    result = cli("report", job, "--out", out)
    assert result.exit_code == 0, result.stderr
    return out


@pytest.mark.slow
def test_150_items_paginate_without_overlap(long_record):
    import pdfplumber

    with pdfplumber.open(long_record) as pdf:
        assert len(pdf.pages) >= 10
        for number, page in enumerate(pdf.pages, start=1):
            words = page.extract_words(use_text_flow=False, keep_blank_chars=False)
            assert words, number
            assert _overlaps(words) == [], f"overlapping text on page {number}"
            # Nothing drawn outside the page.
            assert all(w["x0"] >= 0 and w["x1"] <= page.width for w in words), number


@pytest.mark.slow
def test_unicode_names_are_drawn(long_record):
    need_tool("pdftotext")
    text = subprocess.run(["pdftotext", str(long_record), "-"], capture_output=True,
                          text=True, timeout=60).stdout
    for name in NAMES:
        assert name in text, name
    pages = text.count("\f")
    assert f"page {pages} of {pages}" in text
