"""Drive `commission walk` in a pseudo-terminal, as a person would (pexpect)."""

from __future__ import annotations

import json
import os
import signal
import sys
from pathlib import Path

import pexpect
import pytest

HERE = Path(__file__).resolve().parent.parent
TIMEOUT = 20


def _spawn(job: str, register: Path) -> pexpect.spawn:
    env = dict(os.environ, COMMISSION_REGISTER=str(register), NO_COLOR="1", COLUMNS="80",
               TERM="dumb")
    child = pexpect.spawn(sys.executable, ["-m", "commission", "walk", job], env=env,
                          encoding="utf-8", timeout=TIMEOUT, dimensions=(40, 80))
    return child


def _show(cli, job):
    return json.loads(cli("show", job, "--json").stdout)


def _item(data, item_id):
    return next(i for i in data["items"] if i["id"] == item_id)


@pytest.mark.slow
def test_walk_in_a_terminal_keeps_every_answer(cli, new_job, register_path):
    job = new_job()
    child = _spawn(job, register_path)
    child.expect("CAUTION: Mains electricity can kill")
    child.expect(r"install\.pv\.size")
    child.expect("kW > ")
    child.sendline("abc")  # text for a number
    child.expect("not recorded: 'abc' is not a number")
    child.expect("kW > ")
    child.sendline("4.2")  # a bare number, read in the item's unit and echoed
    child.expect("read as 4.2 kW")
    child.expect(r"install\.inverter")
    child.sendline("Brightwell SL-3600")
    child.expect(r"install\.diverter\.model")
    child.expect("> ")
    child.sendline(":back")
    child.expect(r"install\.inverter")
    child.expect(r"now: Brightwell SL-3600 \(Enter keeps it\)")
    child.sendline("")
    child.expect(r"install\.diverter\.model")
    child.sendline(":skip")
    child.expect("say why")
    child.sendline(":skip ask the client for the box")
    child.expect("skipped: ask the client for the box")
    child.expect(r"install\.diverter\.firmware")
    child.sendline("2.4.1")
    child.expect(r"install\.diverter\.settings")
    child.sendline("dead band 50 W")
    child.expect(r"install\.diverter\.control")
    child.sendline("1")
    child.expect("read as phase angle")
    child.expect(r"→ review: waiting for cold_resistance \(item element\.cold_resistance\)")
    child.expect(r"install\.cylinder\.volume")
    child.sendline("150")
    child.expect("read as 150 L")
    child.expect(r"install\.element\.position")
    child.sendline("1")
    child.expect("read as top entry")
    child.expect(r"install\.element\.fraction_above")
    child.sendline("95 %")
    child.expect("read as 95 %")
    child.expect(r"install\.sensor\.position")
    child.sendline("thermostat pocket")
    for item in ("isolation.tester.proved", "isolation.dead", "isolation.locked"):
        child.expect(item.replace(".", r"\."))
        child.expect("yes/no > ")
        child.sendline("y")
    child.expect(r"supply\.voltage")
    child.expect("V > ")
    child.sendline("2 A")  # wrong unit
    child.expect("not recorded: '2 A' is not a voltage")
    child.sendline("231")
    child.expect("read as 231 V")
    child.expect(r"→ pass: 231 V is inside 207–253 V")
    child.expect(r"source: IEC 60038")
    child.expect(r"supply\.frequency")
    child.expect("Hz > ")

    # A second walk on the same job is refused while this one is open.
    second = _spawn(job, register_path)
    second.expect(f"job {job} is already open in another walk")
    second.expect(pexpect.EOF)
    second.close()
    assert second.exitstatus == 2

    child.sendintr()  # Ctrl-C midway
    child.expect("Stopped. Everything entered is kept")
    child.expect(pexpect.EOF)
    child.close()
    assert child.exitstatus == 130

    data = _show(cli, job)
    assert _item(data, "install.pv.size")["value"] == 4200.0
    assert _item(data, "install.inverter")["value"] == "Brightwell SL-3600"
    assert len(_item(data, "install.inverter")["history"]) == 1  # Enter kept it, nothing added
    model = _item(data, "install.diverter.model")
    assert model["verdict"] == "review" and "ask the client" in model["reason"]
    assert _item(data, "install.element.position")["value"] == "top entry"
    assert _item(data, "supply.voltage")["value"] == 231.0
    assert _item(data, "supply.frequency")["verdict"] == "pending"

    # Start again: resumes at the first unanswered item.
    child = _spawn(job, register_path)
    child.expect(r"(\d+) of (\d+) items recorded")
    child.expect(r"· \d+/\d+ · ([\w.]+)")
    assert child.match.group(1) == "supply.frequency"
    child.expect("Hz > ")
    child.sendline("50,02")
    child.expect("read as 50.02 Hz")
    child.expect(r"supply\.earthing")
    child.sendline(":quit")
    child.expect("Stopped")
    child.expect(pexpect.EOF)
    child.close()
    assert child.exitstatus == 0
    assert _item(_show(cli, job), "supply.frequency")["value"] == 50.02


def test_conditions_second_pass_and_end(cli, register_path):
    created = cli("new", "--checklist", HERE / "data" / "mini.yaml", "--site", "Mini")
    job = created.stdout.strip().splitlines()[-1]
    child = _spawn(job, register_path)
    child.expect(r"a\.earthing")
    child.sendline("TN-S")
    # a.ra applies only on TT: the walk goes straight to the voltage.
    child.expect(r"a\.voltage")
    child.sendline(":na not measured here")  # not critical: n/a accepted
    child.expect("n/a: not measured here")
    child.expect(r"a\.note")
    child.sendline(":skip later")
    child.expect("Skipped so far: a.note")
    child.expect(r"a\.note")
    child.sendline("all good")
    child.expect("End of the checklist")
    child.expect(r"status: (\S+)")
    assert child.match.group(1) == "ready"
    child.expect("Enter leaves")
    child.sendline("")
    child.expect(pexpect.EOF)
    child.close()
    assert child.exitstatus == 0
    data = _show(cli, job)
    assert _item(data, "a.ra")["verdict"] == "n/a"
    assert _item(data, "a.voltage")["verdict"] == "n/a"


@pytest.mark.slow
def test_na_refused_on_critical_item(cli, register_path):
    created = cli("new", "--checklist", HERE / "data" / "mini.yaml", "--site", "Mini")
    job = created.stdout.strip().splitlines()[-1]
    child = _spawn(job, register_path)
    child.expect(r"a\.earthing")
    child.sendline(":na no idea")
    child.expect("refused: a critical item is n/a only through its checklist condition")
    child.sendline(":nonsense")
    child.expect("unknown command ':nonsense'")
    child.sendline("TT")
    child.expect(r"a\.ra")
    child.kill(signal.SIGKILL)
    child.close()
    # The lock went with the killed process: a new walk opens at once.
    again = _spawn(job, register_path)
    again.expect(r"a\.ra")
    again.sendline(":quit")
    again.expect(pexpect.EOF)
    again.close()
    assert again.exitstatus == 0


@pytest.mark.parametrize("stdin", ["", "y\n"])
def test_walk_without_a_terminal_says_use_answers(cli, new_job, stdin):
    job = new_job()
    result = cli("walk", job, input=stdin)
    assert result.exit_code == 2
    assert "--answers" in result.stderr
