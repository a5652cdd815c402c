"""The walk engine with a scripted terminal (no tty): re-evaluation and navigation."""

from __future__ import annotations

import pytest

from commission.checklist import load
from commission.checks import CHECKS
from commission.register import Register
from commission.walk.session import Walk
from commission.walk.state import JobState
from conftest import CHECKLIST


class Script:
    colour = False

    def __init__(self, answers):
        self.answers = list(answers)
        self.out: list[str] = []

    def ask(self, prompt: str) -> str:
        self.out.append(prompt)
        if not self.answers:
            raise EOFError
        a = self.answers.pop(0)
        if a is KeyboardInterrupt:
            raise KeyboardInterrupt
        return a

    def say(self, text: str = "") -> None:
        self.out.extend(text.splitlines() or [""])

    @property
    def text(self) -> str:
        return "\n".join(self.out)


@pytest.fixture
def state(register_path):
    reg = Register(register_path)
    reg.open()
    job = reg.create_job(load(CHECKLIST, checks=CHECKS), {"site": "S"})
    yield JobState(reg, job)
    reg.close()


def test_later_reading_completes_an_earlier_check(state):
    term = Script([
        ":goto protection.breaker.rating", "16",
        ":goto protection.cable.iz", "24 A",
        ":goto element.rated_power", "2.85 kW", "230",
        ":quit",
    ])
    assert Walk(state, term).run() == 0
    text = term.text
    # Iz first shows review (inputs missing), then passes once the element is recorded.
    assert "→ review: waiting for load_power (item element.rated_power)" in text
    assert "also protection.cable.iz is now pass:" in text
    assert "Ib 12.4 A, In 16 A, Iz 24 A" in text


def test_ctrl_c_keeps_entries_and_returns_130(state):
    term = Script(["4.2", KeyboardInterrupt])
    assert Walk(state, term).run() == 130
    assert "Everything entered is kept (1 entries)" in term.text
    assert [e.raw for e in state.reg.entries(state.job)] == ["4.2"]


def test_ctrl_d_leaves_like_quit(state):
    term = Script(["4.2"])
    assert Walk(state, term).run() == 0
    assert "Stopped." in term.text


def test_help_and_use(state):
    state.reg.add_instrument("MFT-1", "K", "MT", "2030-01-01")
    term = Script([":help", ":use NOPE", ":use MFT-1", "4.2", ":goto supply.voltage", "236",
                   ":quit"])
    Walk(state, term).run()
    assert ":skip REASON" in term.text
    assert "instrument 'NOPE': not registered" in term.text
    assert "readings now taken with K MT MFT-1" in term.text
    declared, measured = state.reg.entries(state.job)
    # The PV size is declared (a sum of nameplates): only the measured voltage is stamped.
    assert (declared.item_id, declared.instrument_id) == ("install.pv.size", None)
    assert measured.item_id == "supply.voltage" and measured.instrument_id is not None


def test_same_answer_adds_nothing(state):
    term = Script(["4.2", ":back", "4.2", ":quit"])
    Walk(state, term).run()
    assert "same as before; nothing added" in term.text
    assert len(state.reg.entries(state.job)) == 1


def test_copies_left_by_a_killed_process_are_swept(state, tmp_path, monkeypatch):
    """A folder of file copies whose process no longer exists is removed on the next use."""
    import os
    import subprocess
    import sys
    import tempfile

    from commission.walk.state import FileStore

    monkeypatch.setattr(tempfile, "tempdir", str(tmp_path))
    dead = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"],
                          capture_output=True, text=True).stdout.strip()
    stale = tmp_path / f"commission-files-{dead}-abc"
    stale.mkdir()
    (stale / "photo").write_bytes(b"x")
    mine = tmp_path / f"commission-files-{os.getpid()}-keep"
    mine.mkdir()
    photo = tmp_path / "p.bin"
    photo.write_bytes(b"site photo bytes")
    sha, _ = state.reg.put_file(photo)
    store = FileStore(state.reg)
    assert store.path(sha).read_bytes() == b"site photo bytes"
    assert not stale.exists()
    assert mine.exists()
    store.close()


def test_a_file_that_cannot_be_read_is_asked_how_to_read(state, tmp_path):
    """A heating log whose columns are 'when' and 'T1': the walk shows the reader's one line
    (naming the columns found, with the path as typed, never a temporary copy) and asks how
    to read it; the answer is stored with the entry and the check then reads the file with
    it (reference: the values as written in the file)."""
    log = tmp_path / "logger.csv"
    log.write_text("when,T1\n" + "".join(f"{k * 60},{30 + 0.3 * k:.2f}\n" for k in range(40)))
    term = Script([":goto install.cylinder.volume", "150", ":goto element.rated_power",
                   "3 kW", ":goto water.heat.log", str(log), "temp_c=T1",
                   "temp_c=T1,time_s=when", ":quit"])
    assert Walk(state, term).run() == 0
    text = term.text
    assert "cannot read it as it is: logger.csv: line 1: no time column; the header has " \
        "'when', 'T1'" in " ".join(text.split())
    assert "read as> " in term.out
    assert "commission-files-" not in text and "/tmp/" not in text.replace(str(tmp_path), "")
    entry = state.current("water.heat.log")
    assert entry.read_with == {"columns": {"temp_c": "T1", "time_s": "when"}}
    result = next(r for r in state.results() if r.item.id == "water.heat.log")
    assert result.analysis is not None
    assert result.analysis.figures["rate_k_per_h"] == pytest.approx(18.0, rel=1e-6)


def test_selecting_an_overdue_instrument_says_so_at_once(state):
    """The calibration date is compared with today's date (datetime, outside the walk)."""
    state.reg.add_instrument("OLD-7", "K", "CM", "2020-01-31")
    term = Script([":use OLD-7", ":quit"])
    Walk(state, term).run()
    assert "warning: instrument OLD-7: calibration was due 2020-01-31" in term.text
    assert state.reg.instrument_in_use(state.job).serial == "OLD-7"  # kept with the job
