"""Every line the documented commands print on a terminal fits 80 columns.

Each command runs in a pseudo-terminal of 80 columns (pexpect), as a person runs it, on the
demo's register, record and identity; error paths too. Widths are counted with Python's
`unicodedata.east_asian_width` (wide and full-width characters take two columns), an
outside measure of what a terminal shows."""

from __future__ import annotations

import os
import re
import sys
import unicodedata
from pathlib import Path

import pexpect
import pytest

from conftest import CHECKLIST, DEMO

pytestmark = pytest.mark.slow  # about forty processes; CI runs it

WIDTH = 80
ANSI = re.compile(r"\x1b\[[0-9;?]*[A-Za-z]")


def columns(line: str) -> int:
    line = ANSI.sub("", line)
    return sum(0 if unicodedata.combining(c) else
               2 if unicodedata.east_asian_width(c) in ("W", "F") else 1 for c in line)


@pytest.fixture(scope="module")
def world(tmp_path_factory):
    base = tmp_path_factory.mktemp("width")
    env = _env(base)
    out, code = pexpect.run(f"{sys.executable} -m commission demo --out {base / 'demo'}",
                            env=env, withexitstatus=True, timeout=300, encoding="utf-8")
    assert code == 0, out
    job = re.search(r"demo job (\w+)", out).group(1)
    return {"base": base, "env": env, "job": job, "demo_out": out}


def _env(base: Path) -> dict[str, str]:
    env = dict(os.environ, COMMISSION_HOME=str(base / "demo"),
               COMMISSION_REGISTER=str(base / "demo" / "register.sqlite3"), NO_COLOR="1",
               COLUMNS="80", LINES="40", TERM="dumb",
               COMMISSION_PASSPHRASE="larch-house-demo")
    env.pop("COMMISSION_PLAIN", None)
    return env


def _run(world, argv: list[str], stdin: str | None = None) -> tuple[str, int]:
    child = pexpect.spawn(sys.executable, ["-m", "commission", *argv], env=world["env"],
                          encoding="utf-8", timeout=120, dimensions=(40, WIDTH),
                          cwd=str(world["base"]))
    if stdin is not None:
        child.send(stdin)
    child.expect(pexpect.EOF)
    text = child.before or ""
    child.close()
    return text, child.exitstatus if child.exitstatus is not None else -1


def _wide(text: str) -> list[str]:
    """Lines wider than the terminal. A line holding one unbreakable word (a long path on
    its own line) cannot be wrapped without cutting it, so it is allowed."""
    lines = [seg for line in text.split("\r\n") for seg in line.split("\r")]  # \r: progress
    return [line for line in lines if columns(line) > WIDTH
            and len(line.strip().removesuffix("\\").split()) > 1]


def commands(world) -> list[tuple[str, list[str]]]:
    """(leaf command, argv): the documented uses, then error paths."""
    base, job = world["base"], world["job"]
    demo = base / "demo"
    record = demo / f"record-{job}.pdf"
    answers = base / "answers.yaml"
    answers.write_text("supply.voltage: 12 kg\ninsulation.resistance: '>299 MΩ'\n"
                       "nosuch.item: 1\n", encoding="utf-8")
    broken = base / "broken.yaml"
    broken.write_text(CHECKLIST.read_text(encoding="utf-8").replace(
        "check: {name: supply_voltage}", "check: {name: supply_volts}"), encoding="utf-8")
    files = DEMO / "files"
    return [
        ("new", ["new", "--checklist", "diverter-1ph", "--site", "Width Test"]),
        ("jobs", ["jobs"]),
        ("show", ["show", job]),
        ("amend", ["amend", job, "--client", "Rosalind Achterberg-Okonkwo"]),
        ("walk", ["walk", job, "--answers", str(answers)]),  # rejected lines: errors
        ("backup", ["backup", str(base / "copy.sqlite3")]),
        ("countersign", ["countersign", str(record), "--out", str(base / "counter.pdf"),
                         "--passphrase-file", str(demo / "demo-passphrase.txt")]),
        ("report", ["report", job, "--out", str(base / "again.pdf")]),
        ("report", ["report", job, "--out", str(record)]),  # refused: exists
        ("verify", ["verify", str(record)]),
        # no timestamp authority listens on port 9 of this machine: the one-line refusal
        ("seal", ["seal", str(record), "--tsa", "http://127.0.0.1:9/",
                  "--out", str(base / "sealed.pdf")]),
        ("verify", ["verify", str(record), "--trust", str(demo / "identity" / "cert.pem")]),
        ("import", ["import", str(record), "--register", str(base / "imported.sqlite3")]),
        ("revisit", ["revisit", str(record), "--checklist", "diverter-1ph-periodic",
                     "--trust", str(demo / "identity" / "cert.pem"),
                     "--register", str(base / "revisit.sqlite3")]),
        ("revisit", ["revisit", str(record), "--checklist", "diverter-1ph-periodic",
                     "--register", str(base / "revisit.sqlite3")]),  # refused: not trusted
        ("due", ["due", "--within", "800d", "--ics", str(base / "due.ics")]),
        ("due", ["due", "--within", "soon"]),  # refused: not a window
        ("blank", ["blank", "diverter-1ph", "--out", str(base / "blank.pdf")]),
        ("checklists validate", ["checklists", "validate", "diverter-1ph"]),
        ("checklists validate", ["checklists", "validate", str(broken)]),
        ("checklists show", ["checklists", "show", "diverter-1ph"]),
        ("checklists schema", ["checklists", "schema", "--help"]),
        ("checklists list", ["checklists", "list"]),
        ("forms list", ["forms", "list"]),
        ("forms show", ["forms", "show", "handover"]),
        ("forms validate", ["forms", "validate", "handover"]),
        ("forms validate", ["forms", "validate", str(broken)]),  # not a form: refused
        ("forms schema", ["forms", "schema", "--help"]),
        ("instruments add", ["instruments", "add", "--serial", "OLD-1", "--make", "Kestrel",
                             "--model", "CM-2", "--calibration-due", "2020-01-31"]),
        ("instruments add", ["instruments", "add", "--serial", "X", "--make", "K", "--model",
                             "M", "--calibration-due", "31/01/2030"]),
        ("instruments list", ["instruments", "list"]),
        ("instruments profile", ["instruments", "profile", "OLD-1", "--columns",
                                 "temp_c=T1,time_s=Zeit"]),
        ("instruments profile", ["instruments", "profile", "NOSUCH", "--columns", "x"]),
        ("identity new", ["identity", "new", "--name", "A B", "--registration", "R-1",
                          "--force"]),  # refused: the demo passphrase is too short
        ("identity show", ["identity", "show"]),
        ("identity export", ["identity", "export", "--out", str(base / "me.pem")]),
        ("identity backup", ["identity", "backup", "--out", str(base / "me.p12")]),
        ("identity restore", ["identity", "restore", str(base / "missing.p12")]),
        ("trust add", ["trust", "add", str(demo / "identity" / "cert.pem")]),
        ("trust list", ["trust", "list"]),
        ("trust remove", ["trust", "remove", "nosuchfingerprint"]),
        ("analyse capture", ["analyse", "capture", str(files / "clamp-capture.csv")]),
        ("analyse heating", ["analyse", "heating", str(files / "heating-run.csv"),
                             "--volume-l", "150", "--power-w", "2850"]),
        ("analyse soak", ["analyse", "soak", str(files / "heatsink-soak.csv"), "--ambient-c",
                          "24", "--worst-ambient-c", "38", "--limit-c", "85"]),
        ("analyse regulation", ["analyse", "regulation", str(files / "regulation.csv"),
                                "--dead-band-w", "50"]),
        ("analyse flicker", ["analyse", "flicker", str(files / "clamp-capture.csv"),
                             "--v-scale", "500"]),
        ("show", ["show", "NOSUCH"]),
        ("walk", ["walk", job, "--item", "nosuch.item"]),
        ("verify", ["verify", str(files / "clamp-capture.csv")]),
        ("new", ["new", "--checklist", str(base / "missing.yaml"), "--site", "S"]),
        # the company-register commands, on a register file: their one-line refusals
        ("sync", ["sync"]),
        ("confirm", ["confirm", job, "supply.voltage"]),
        ("assign", ["assign", job, "--to", "alice"]),
    ]


def test_every_documented_command_fits_80_columns(world):
    from typer.main import get_command

    from commission.cli.app import app

    def leaves(cmd, prefix=()):
        subs = getattr(cmd, "commands", None)
        if not subs:
            return [" ".join(prefix)]
        return [leaf for name, sub in subs.items() for leaf in leaves(sub, (*prefix, name))]

    table = commands(world)
    covered = {leaf for leaf, _ in table} | {"demo"}
    assert set(leaves(get_command(app))) - covered == set()
    too_wide = {"demo": _wide(world["demo_out"])} if _wide(world["demo_out"]) else {}
    for _leaf, argv in [*table, ("--help", ["--help"])]:
        text, _code = _run(world, argv)
        assert "Traceback" not in text, (argv, text)
        wide = _wide(text)
        if wide:
            too_wide[" ".join(argv)] = wide
    if too_wide:
        shown = "\n".join(f"$ {cmd}\n" + "\n".join(f"  [{columns(x)}] {x}" for x in lines)
                          for cmd, lines in too_wide.items())
        pytest.fail(f"{len(too_wide)} command(s) print past {WIDTH} columns:\n{shown}",
                    pytrace=False)


def test_walk_in_a_terminal_fits_80_columns(world):
    """A new job typed with mistakes, help, status and a jump; then the demo's finished job
    with its end list and a :goto."""
    env = world["env"]
    made, _ = _run(world, ["new", "--checklist", "diverter-1ph", "--site", "Walk Width"])
    job = made.strip().splitlines()[-1].strip()
    seen = []
    child = pexpect.spawn(sys.executable, ["-m", "commission", "walk", job], env=env,
                          encoding="utf-8", timeout=60, dimensions=(40, WIDTH))
    for typed in ["12 kg", ":help", "4.2", "Brightwell SL-3600 string inverter", ":status",
                  ":use NOSUCH-SERIAL", ":goto supply.earthing", "t", "tncs",
                  ":goto insulation.resistance", ">0.5 MΩ", ":goto nosuch", ":na why",
                  ":skip tester at the van", ":quit"]:
        child.expect("> ")
        child.sendline(typed)
    child.expect(pexpect.EOF)
    seen.append(child.before or "")
    child.close()
    child = pexpect.spawn(sys.executable, ["-m", "commission", "walk", world["job"]], env=env,
                          encoding="utf-8", timeout=60, dimensions=(40, WIDTH))
    child.expect("Second pass")
    child.expect("> ")
    child.sendline("")
    child.expect("End of the checklist")
    child.expect("> ")
    child.sendline(":goto earth.zs")
    child.expect("> ")
    child.sendline("0.58")
    child.expect("End of the checklist")
    child.expect("> ")
    child.sendline("")
    child.expect(pexpect.EOF)
    seen.append(child.before or "")
    child.close()
    wide = [line for text in seen for line in _wide(text)]
    assert wide == []

