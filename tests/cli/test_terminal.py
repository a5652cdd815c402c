"""Terminal friendliness: 80 columns, NO_COLOR honoured, and `--plain`, where nothing is
carried by colour, box drawing or typographic symbols alone."""

from __future__ import annotations

import io
import os
import re
import sys
import unicodedata

import pexpect
import pytest

from conftest import DEMO

TIMEOUT = 20
SGR = re.compile(r"\x1b\[[0-9;]*m")  # colour and bold: Select Graphic Rendition
# Symbols that carry meaning and stay in plain mode: units, and Greek letters used as
# quantity symbols in the checks' reasons (IΔn, τ, φ, ρ, α).
MEANINGFUL = set("Ω°µμ²³")
BOX_AND_ARROWS = set("→←·…—–−≤≥±×½∞•⚠╭╮╰╯│─")


@pytest.fixture(autouse=True)
def _restore_plain(monkeypatch):
    """`--plain` sets process state (an environment variable, typer's rich switch); undo it
    after each test so that the rest of the suite runs as before."""
    import typer.core

    monkeypatch.setattr(typer.core, "HAS_RICH", typer.core.HAS_RICH)
    monkeypatch.delenv("COMMISSION_PLAIN", raising=False)
    yield
    os.environ.pop("COMMISSION_PLAIN", None)  # set in-process by the --plain callback


def _not_plain(text: str) -> set[str]:
    """Characters of terminal output that plain mode should not show."""
    bad = set()
    for ch in text:
        if ord(ch) < 128 or ch in MEANINGFUL:
            continue
        if unicodedata.name(ch, "").startswith("GREEK"):
            continue
        bad.add(ch)
    return bad


def _answered_job(cli, new_job) -> str:
    """A job with the demo's answers: every kind of verdict line and source appears."""
    job = new_job(site="Plain Test")
    for serial in ("MFT-40917", "CLAMP-2291", "PA-5530"):
        cli("instruments", "add", "--serial", serial, "--make", "Keelson", "--model", "M",
            "--calibration-due", "2030-01-01")
    result = cli("walk", job, "--answers", DEMO / "answers.yaml")
    assert result.exit_code == 0, result.output
    return job


@pytest.mark.slow
def test_plain_show_is_ascii_safe_and_80_columns(cli, new_job):
    job = _answered_job(cli, new_job)
    fancy = cli("show", job)
    assert fancy.exit_code == 0
    # The control: without --plain the table does use symbols (so the check below bites).
    assert _not_plain(fancy.stdout) & BOX_AND_ARROWS

    plain = cli("--plain", "show", job)
    assert plain.exit_code == 0, plain.stderr
    out = plain.stdout
    assert _not_plain(out) == set(), sorted(_not_plain(out))
    assert all(len(line) <= 80 for line in out.splitlines())
    assert not SGR.search(out)
    # Verdicts are words, the legend explains the one mark, and ranges read in ASCII.
    for word in ("pass", "review", "Status: "):
        assert word in out
    assert "! = critical" in out
    assert "207-253 V" in out and "<=" in out
    # The same facts as without --plain: every item line is there.
    assert len(out.splitlines()) >= len(fancy.stdout.splitlines())


@pytest.mark.slow
def test_plain_does_not_touch_json(cli, new_job):
    job = _answered_job(cli, new_job)
    fancy = cli("show", job, "--json").stdout
    plain = cli("--plain", "show", job, "--json").stdout
    assert plain == fancy
    assert "–" in plain or "≤" in plain  # the JSON keeps the record's own text


def test_plain_help_has_no_boxes(cli):
    fancy = cli("show", "--help").stdout
    assert "╭" in fancy  # the control: rich draws boxes by default
    plain = cli("--plain", "show", "--help").stdout
    assert "Usage: commission show" in plain
    assert not set(plain) & set("╭╮╰╯│─")
    assert all(len(line) <= 80 for line in plain.splitlines())
    top = cli("--plain", "--help").stdout
    assert "--plain" in top and "╭" not in top


def test_plain_usage_error_is_plain_text(cli):
    result = cli("--plain", "show", "--no-such-option")
    assert result.exit_code == 2
    assert "Error: No such option: --no-such-option" in result.stderr
    assert not set(result.stderr) & set("╭╮╰╯│─")


def _spawn(args, register, env_extra, dimensions=(40, 80)):
    env = {k: v for k, v in os.environ.items() if k not in ("NO_COLOR", "COMMISSION_PLAIN")}
    env.update(COMMISSION_REGISTER=str(register), COLUMNS="80", **env_extra)
    log = io.StringIO()
    child = pexpect.spawn(sys.executable, ["-m", "commission", *args], env=env,
                          encoding="utf-8", timeout=TIMEOUT, dimensions=dimensions)
    child.logfile_read = log
    return child, log


def _walk_to_status(child):
    child.expect(r"install\.pv\.size")
    child.expect("kW > ")
    child.sendline(":status")
    child.expect(r"status: .*incomplete")
    child.expect("kW > ")
    child.sendline(":goto supply.voltage")
    child.expect("V > ")
    child.sendline("231")
    child.expect(r"pass.*: 231 V is inside 207.253 V")
    child.expect(r"supply\.frequency")
    child.expect("Hz > ")
    child.sendline(":quit")
    child.expect("Stopped")
    child.expect(pexpect.EOF)
    child.close()
    return child.exitstatus


@pytest.mark.slow
def test_walk_in_colour_only_without_no_color(new_job, register_path):
    # The control: on a colour terminal the verdict words are coloured...
    job = new_job()
    child, log = _spawn(["walk", job], register_path, {"TERM": "xterm-256color"})
    assert _walk_to_status(child) == 0
    assert SGR.search(log.getvalue()), "expected colour on a terminal without NO_COLOR"
    # ...and with NO_COLOR set there is no colour escape at all, words still there.
    child, log = _spawn(["walk", job], register_path,
                        {"TERM": "xterm-256color", "NO_COLOR": "1"})
    assert _walk_to_status(child) == 0
    text = log.getvalue()
    assert not SGR.search(text), repr(SGR.search(text))
    assert "incomplete" in text and "pass" in text
    assert all(len(line) <= 80 for line in text.replace("\r\n", "\n").splitlines())


def test_walk_plain_in_a_terminal_shows_verdict_words(new_job, register_path):
    job = new_job()
    child, log = _spawn(["--plain", "walk", job], register_path, {"TERM": "xterm-256color"})
    assert _walk_to_status(child) == 0
    text = log.getvalue().replace("\r\n", "\n")
    assert not SGR.search(text)  # --plain means no colour even on a colour terminal
    assert "-> pass: 231 V is inside 207-253 V" in text
    assert "status: incomplete" in text
    assert "Installation details - 1/" in text  # "·" spelled as "-"
    assert _not_plain(text) == set(), sorted(_not_plain(text))
    assert all(len(line) <= 80 for line in text.splitlines())
