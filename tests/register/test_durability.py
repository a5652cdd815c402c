"""Nothing lost: SIGKILL at random points, a full disk, a read-only register, backup mid-walk.

Every failure a person can meet here is one line on stderr with no traceback, and the
register-level ones (full, read-only, missing, foreign) exit with code 2, as every other
"cannot use what you gave me" error does (``UserError``).

The checks on the register after each event read it with plain ``sqlite3``, not through
``commission``, so a bug in the store cannot hide itself.
"""

from __future__ import annotations

import contextlib
import fcntl
import hashlib
import json
import os
import random
import re
import resource
import shlex
import shutil
import signal
import sqlite3
import subprocess
import sys
import tempfile
import threading
import time
from collections import Counter
from pathlib import Path

import pexpect
import pytest
import yaml

from conftest import DEMO, ROOT

TIMEOUT = 30
KILLS = 24  # the issue asks for at least 20 per run
VERDICT = r"\r\n  (?:recorded|→ [a-z/]+:|skipped:|n/a:)"  # the line that follows a commit
HEADER = r" · \d+/\d+ · ([\w.]+)"
END = "End of the checklist"
PNG = b"\x89PNG\r\n\x1a\n"


# -- helpers -------------------------------------------------------------------------------
def _env(register: Path, **extra: str) -> dict[str, str]:
    env = dict(os.environ, COMMISSION_REGISTER=str(register), NO_COLOR="1", COLUMNS="80",
               TERM="dumb", **extra)
    env.pop("COMMISSION_PLAIN", None)  # the patterns below read the symbols of normal mode
    return env


def _spawn(job: str, register: Path, **kw) -> pexpect.spawn:
    return pexpect.spawn(sys.executable, ["-m", "commission", "walk", job], env=_env(register),
                         encoding="utf-8", timeout=TIMEOUT, dimensions=(40, 80), **kw)


def _spawn_logging_stderr(job: str, register: Path, stderr: Path, **kw) -> pexpect.spawn:
    """A walk in a pty with its stderr in a file, so the error line can be counted alone."""
    command = f"exec {_q(sys.executable)} -m commission walk {_q(job)} 2>{_q(str(stderr))}"
    return pexpect.spawn("/bin/sh", ["-c", command], env=_env(register), encoding="utf-8",
                         timeout=TIMEOUT, dimensions=(40, 80), **kw)


def _q(text: str) -> str:
    return shlex.quote(text)


def _commission(*args, register: Path, **kw) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "commission", *map(str, args)],
                          env=_env(register), capture_output=True, text=True, timeout=120, **kw)


def _one_line_error(stderr: str, prefix: str = "error: ") -> str:
    """Test 5: a failure is exactly one line on stderr, never a traceback."""
    assert "Traceback" not in stderr, stderr
    lines = stderr.strip().splitlines()
    assert len(lines) == 1, stderr
    assert lines[0].startswith(prefix), stderr
    return lines[0]


def _integrity(register: Path) -> None:
    db = sqlite3.connect(register)
    try:
        assert db.execute("PRAGMA integrity_check").fetchall() == [("ok",)]
        # A file stored in chunks is whole or absent: no provisional rows, sizes add up.
        assert db.execute("SELECT count(*) FROM blob_chunks WHERE blob LIKE 'partial-%'"
                          ).fetchone()[0] == 0
        rows = db.execute("SELECT b.bytes, (SELECT sum(length(data)) FROM blob_chunks c"
                          " WHERE c.blob = b.sha256) FROM blobs b").fetchall()
        assert all(size == stored for size, stored in rows), rows
    finally:
        db.close()


def _entries(register: Path, job: str) -> list[tuple[str, str, str]]:
    """(item id, action, raw) of a job, oldest first, read with plain sqlite3."""
    db = sqlite3.connect(register)
    try:
        return db.execute(
            "SELECT e.item_id, e.action, e.raw FROM entries e JOIN jobs j ON j.id = e.job_id"
            " WHERE j.short_id = ? ORDER BY e.id", (job,)).fetchall()
    finally:
        db.close()


def _latest(register: Path, job: str) -> dict[str, str]:
    return {item: raw for item, action, raw in _entries(register, job) if action != "detail"}


def _job_uuid(register: Path, job: str) -> str:
    db = sqlite3.connect(register)
    try:
        return db.execute("SELECT uuid FROM jobs WHERE short_id = ?", (job,)).fetchone()[0]
    finally:
        db.close()


def _lock_is_free(register: Path, job_uuid: str) -> bool:
    path = register.with_name(register.name + ".locks") / job_uuid
    try:
        fd = os.open(path, os.O_RDWR)
    except FileNotFoundError:  # killed during start-up, before the lock file was made
        return True
    try:
        fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
    except BlockingIOError:
        return False
    finally:
        os.close(fd)  # closing releases our own lock too
    return True


def _first_pending(cli, job: str, register: Path) -> str | None:
    data = json.loads(cli("show", job, "--json", "--register", register).stdout)
    return next((i["id"] for i in data["items"] if i["verdict"] == "pending"), None)


def _typed_answers(big_photo: Path | None = None) -> dict[str, str]:
    """What a person types for each item, from the shipped demo answers."""
    data = yaml.load((DEMO / "answers.yaml").read_text(encoding="utf-8"),
                     Loader=yaml.BaseLoader)
    typed = {}
    for item, spec in data.items():
        if isinstance(spec, str):
            typed[item] = spec
        elif "text" in spec:
            typed[item] = spec["text"]
        elif "file" in spec or "photo" in spec:
            typed[item] = str(DEMO / (spec.get("file") or spec["photo"]))
        elif "skip" in spec:  # answer it instead: the kill test wants no second pass
            typed[item] = str(DEMO / "files" / "clamp-capture.csv")
    if big_photo is not None:
        typed["clamp.arrow.photo"] = str(big_photo)
    return typed


def _big_file(path: Path, size: int, head: bytes = b"") -> Path:
    path.write_bytes(head + random.Random(size).randbytes(size - len(head)))
    return path


# -- 1. SIGKILL at random points -----------------------------------------------------------
@pytest.mark.slow
def test_sigkill_at_random_points_keeps_every_confirmed_entry(cli, new_job, register_path,
                                                              tmp_path, capsys):
    """Reference: SQLite's documented atomic commit (WAL, synchronous=FULL) and the OS file
    lock released by the kernel on process death; the register is read with plain sqlite3.
    The seed is printed on every way out, so any failure can be replayed."""
    seed = int(os.environ.get("COMMISSION_KILL_SEED") or random.SystemRandom().getrandbits(32))
    try:
        _sigkill_run(seed, cli, new_job, register_path, tmp_path, capsys)
    except BaseException as exc:
        replay = f"[kill] seed {seed}: replay with COMMISSION_KILL_SEED={seed}"
        exc.add_note(replay)
        with capsys.disabled():
            print(f"\n{replay}")
        raise


def _sigkill_run(seed, cli, new_job, register_path, tmp_path, capsys) -> None:
    rng = random.Random(seed)
    # A 2 MiB photo makes some kills land inside put_file's one chunked transaction.
    typed = _typed_answers(_big_file(tmp_path / "arrow.png", 2 << 20, PNG))
    modes = ["typing", "in_flight", "after_verdict", "startup"]
    kills: Counter[str] = Counter()
    stats: Counter[str] = Counter()
    job = new_job()
    uuid = _job_uuid(register_path, job)
    confirmed: dict[str, str] = {}  # item → text whose verdict line was seen
    fresh = True

    while sum(kills.values()) < KILLS:
        mode = rng.choices(modes, weights=[3, 4, 4, 1])[0]
        child = _spawn(job, register_path)
        child.delaybeforesend = None  # keys go at once, so the delays below are the real ones
        in_flight: tuple[str, str] | None = None
        typing_item: str | None = None
        finished = False
        if mode == "startup":
            time.sleep(rng.uniform(0.0, 0.8))
        else:
            assert child.expect([r"(\d+) of \d+ items recorded", "already open"]) == 0, \
                "the killed walk's lock was not released"
            assert int(child.match.group(1)) == len(_latest(register_path, job))
            at_end = child.expect([HEADER, END]) == 1
            # It resumes at the next pending item, which has no entry yet (or, when a kill
            # came just after the last answer was committed, goes straight to the end).
            if at_end:
                assert _first_pending(cli, job, register_path) is None
                finished = True
            else:
                item = child.match.group(1)
                assert item not in _latest(register_path, job)
            if not fresh:
                assert (None if at_end else item) == _first_pending(cli, job, register_path)
                stats["resumes checked"] += 1
            fresh = False
            for _ in range(0 if finished else rng.randint(0, 4)):
                child.expect("> ")
                child.sendline(typed[item])
                child.expect(VERDICT)
                confirmed[item] = typed[item]
                if child.expect([HEADER, END]) == 1:
                    finished = True
                    break
                item = child.match.group(1)
            if not finished:
                child.expect("> ")
                text = typed[item]
                if mode == "typing":  # part of the answer, key by key, no Enter
                    for ch in text[:rng.randint(0, len(text))]:
                        child.send(ch)
                        time.sleep(rng.uniform(0.0, 0.01))
                    time.sleep(rng.uniform(0.0, 0.05))
                    typing_item = item
                elif mode == "in_flight":  # Enter, then kill before or after the commit
                    child.sendline(text)
                    time.sleep(rng.choice([0.0, rng.uniform(0.0, 0.004), rng.uniform(0.0, 0.02)]))
                    in_flight = (item, text)
                else:  # right after the verdict line
                    child.sendline(text)
                    child.expect(VERDICT)
                    confirmed[item] = text
                    time.sleep(rng.uniform(0.0, 0.03))

        if finished:
            child.expect("Enter leaves")  # the end prompt, where :goto still works
            child.sendline("")
            child.expect(pexpect.EOF)
            child.close()
            assert child.exitstatus == 0
            stats["jobs finished"] += 1
        else:
            child.kill(signal.SIGKILL)
            child.expect(pexpect.EOF)
            rest = child.before or ""
            child.close()
            assert child.signalstatus == signal.SIGKILL
            kills[mode] += 1

        _integrity(register_path)
        assert _lock_is_free(register_path, uuid)
        kept = _latest(register_path, job)
        for item, text in confirmed.items():
            assert kept.get(item) == text, f"confirmed {item} lost (seed {seed})"
        if typing_item is not None:
            assert typing_item not in kept  # half-typed answers are never recorded
        if in_flight is not None:
            item, text = in_flight
            if re.search(VERDICT, rest):  # its verdict reached the screen before the kill
                assert kept.get(item) == text
                stats["in flight, verdict seen"] += 1
            elif item in kept:  # committed just before the kill: whole, never partial
                assert kept[item] == text
                stats["in flight, committed unseen"] += 1
            else:
                stats["in flight, not committed"] += 1
            if item in kept:
                confirmed[item] = text
        assert set(kept) <= set(confirmed), "an entry appeared that was never typed"
        if finished:
            job = new_job()
            uuid = _job_uuid(register_path, job)
            confirmed, fresh = {}, True

    # The last walk after the last kill opens at once and resumes.
    child = _spawn(job, register_path)
    if child.expect([HEADER, END]) == 0:
        assert child.match.group(1) == _first_pending(cli, job, register_path)
        child.expect("> ")
        child.sendline(":quit")
    else:
        assert _first_pending(cli, job, register_path) is None
        child.expect("Enter leaves")
        child.sendline("")
    child.expect(pexpect.EOF)
    child.close()
    assert child.exitstatus == 0
    total = sum(kills.values())
    assert total >= 20
    with capsys.disabled():
        print(f"\n[kill] seed {seed} (COMMISSION_KILL_SEED={seed} repeats it): {total} SIGKILLs "
              f"({dict(kills)}); {dict(stats)}")


# -- 2. full disk --------------------------------------------------------------------------
def _file_size_limit(limit: int):
    def apply() -> None:  # in the child, before exec
        signal.signal(signal.SIGXFSZ, signal.SIG_IGN)  # writes past the limit fail with EFBIG
        resource.setrlimit(resource.RLIMIT_FSIZE, (limit, limit))

    return apply


@pytest.mark.slow
def test_full_disk_during_a_walk_keeps_what_was_committed(new_job, register_path, tmp_path):
    job = new_job()
    typed = _typed_answers()
    before = _entries(register_path, job)
    errors = tmp_path / "stderr.txt"
    # Room for the -shm file and a handful of entries in the -wal, then the disk is "full".
    child = _spawn_logging_stderr(job, register_path, errors, preexec_fn=_file_size_limit(48 << 10))
    child.expect(HEADER)
    item = child.match.group(1)
    confirmed = []
    while True:
        child.expect("> ")
        child.sendline(typed[item])
        if child.expect([VERDICT, pexpect.EOF]) == 1:
            break
        confirmed.append((item, "answer", typed[item]))
        child.expect(HEADER)
        item = child.match.group(1)
    child.close()
    assert child.exitstatus == 2
    line = _one_line_error(errors.read_text())
    assert "cannot write" in line and "nothing was changed" in line
    assert len(confirmed) >= 1  # the limit let some answers through before it bit
    _integrity(register_path)
    assert _entries(register_path, job) == before + confirmed  # all kept, nothing half
    # With room again the walk resumes at the answer that could not be written.
    again = _spawn(job, register_path)
    again.expect(HEADER)
    assert again.match.group(1) == item
    again.expect("> ")
    again.sendline(":quit")
    again.expect(pexpect.EOF)
    again.close()
    assert again.exitstatus == 0


@pytest.mark.slow
def test_full_disk_during_a_photo_upload_in_the_walk(new_job, register_path, tmp_path):
    job = new_job()
    photo = _big_file(tmp_path / "nameplate.png", 3 << 20, PNG)
    errors = tmp_path / "stderr.txt"
    child = _spawn_logging_stderr(job, register_path, errors, preexec_fn=_file_size_limit(1 << 20))
    child.expect("kW > ")
    child.sendline("4.2")
    child.expect(VERDICT)
    child.expect("> ")
    child.sendline(":goto element.nameplate.photo")
    child.expect(r"element\.nameplate\.photo")
    child.expect("path > ")
    child.sendline(str(photo))
    child.expect(pexpect.EOF)
    child.close()
    assert child.exitstatus == 2
    assert "cannot write" in _one_line_error(errors.read_text())
    _integrity(register_path)
    assert _latest(register_path, job) == {"install.pv.size": "4.2"}
    db = sqlite3.connect(register_path)
    assert db.execute("SELECT count(*) FROM blob_chunks").fetchone()[0] == 0
    assert db.execute("SELECT count(*) FROM blobs").fetchone()[0] == 0
    db.close()


@pytest.mark.slow
def test_full_disk_in_an_answers_file_upload(new_job, register_path, tmp_path):
    job = new_job()
    _big_file(tmp_path / "capture.csv", 3 << 20)
    answers = tmp_path / "answers.yaml"
    answers.write_text("install.inverter: Brightwell SL-3600\n"
                       "install.diverter.model: Sunfold HeatSink-D2\n"
                       "clamp.capture: {file: capture.csv}\n", encoding="utf-8")
    result = subprocess.run(
        [sys.executable, "-m", "commission", "walk", job, "--answers", str(answers)],
        env=_env(register_path), capture_output=True, text=True, timeout=120,
        preexec_fn=_file_size_limit(1 << 20))
    assert result.returncode == 2
    # Today the item is reported as rejected ("ITEM: reason") and the run goes on; stopping
    # at once ("error: reason") would do as well.
    line = _one_line_error(result.stderr, prefix="")
    assert line.startswith(("clamp.capture: ", "error: "))
    assert "cannot write" in line and "nothing was changed" in line
    if line.startswith("clamp.capture: "):
        assert "2 answers added, 0 unchanged, 1 rejected" in result.stdout
    _integrity(register_path)
    assert _latest(register_path, job) == {"install.inverter": "Brightwell SL-3600",
                                           "install.diverter.model": "Sunfold HeatSink-D2"}
    db = sqlite3.connect(register_path)
    assert db.execute("SELECT count(*) FROM blob_chunks").fetchone()[0] == 0
    db.close()


@pytest.mark.slow
def test_full_disk_midway_through_an_answers_file_is_one_line(new_job, register_path,
                                                              tmp_path):
    job = new_job()
    typed = _typed_answers()
    answers = tmp_path / "answers.yaml"  # the first twelve items: no instruments, no files
    answers.write_text("".join(f"{item}: {json.dumps(typed[item])}\n"
                               for item in list(typed)[:12]), encoding="utf-8")
    result = subprocess.run(
        [sys.executable, "-m", "commission", "walk", job, "--answers", answers],
        env=_env(register_path), capture_output=True, text=True, timeout=120,
        preexec_fn=_file_size_limit(48 << 10))
    _integrity(register_path)
    assert result.returncode != 0
    assert "cannot write" in _one_line_error(result.stderr, prefix="")


# -- 3. read-only register -----------------------------------------------------------------
NOBODY = 65534


def _unprivileged(args: list[str], register: Path, home: Path) -> tuple[int, str, str]:
    """Run the CLI entry point in a forked child as 'nobody' (as ourselves when not root).

    Forked rather than exec'd: the interpreter may live where 'nobody' cannot enter (a
    pyenv under /root), and the entry point is what `python -m commission` calls."""
    out_r, out_w = os.pipe()
    err_r, err_w = os.pipe()
    pid = os.fork()
    if pid == 0:  # the child: never returns into pytest
        code = 99
        try:
            os.close(out_r)
            os.close(err_r)
            os.dup2(os.open(os.devnull, os.O_RDONLY), 0)
            os.dup2(out_w, 1)
            os.dup2(err_w, 2)
            sys.stdin = open(0, encoding="utf-8", closefd=False)  # noqa: SIM115
            sys.stdout = open(1, "w", encoding="utf-8", closefd=False)  # noqa: SIM115
            sys.stderr = open(2, "w", encoding="utf-8", closefd=False)  # noqa: SIM115
            if os.geteuid() == 0:
                os.setgroups([])
                os.setgid(NOBODY)
                os.setuid(NOBODY)
            os.environ.update(COMMISSION_REGISTER=str(register), COMMISSION_HOME=str(home),
                              HOME=str(home), NO_COLOR="1")
            os.chdir("/")
            from commission.cli.app import main

            code = main(args)
        except BaseException:  # noqa: BLE001  (report anything, then leave)
            import traceback

            traceback.print_exc()
        finally:
            with contextlib.suppress(Exception):
                sys.stdout.flush()
                sys.stderr.flush()
            os._exit(code)
    os.close(out_w)
    os.close(err_w)
    chunks: dict[int, bytes] = {}

    def drain(fd: int) -> None:
        with os.fdopen(fd, "rb") as f:
            chunks[fd] = f.read()

    reader = threading.Thread(target=drain, args=(err_r,))
    reader.start()
    drain(out_r)
    reader.join()
    _, status = os.waitpid(pid, 0)
    return (os.waitstatus_to_exitcode(status), chunks[out_r].decode(), chunks[err_r].decode())


_WARMED: list[bool] = []


@pytest.fixture
def as_nobody(cli, tmp_path):
    """`_unprivileged`, after every command has run once here as the owner: the forked child
    cannot import a module it has not got yet from an interpreter folder it cannot enter."""
    if not _WARMED:
        reg = tmp_path / "warm" / "reg.sqlite3"
        job = cli("new", "--checklist", "diverter-1ph", "--site", "Warm", "--register", reg
                  ).stdout.strip().splitlines()[-1]
        for args in (("instruments", "add", "--serial", "W-1", "--make", "A", "--model", "B",
                      "--calibration-due", "2030-01-01"),
                     ("walk", job, "--answers", DEMO / "answers.yaml"), ("show", job),
                     ("show", job, "--json"), ("jobs",), ("instruments", "list"),
                     ("amend", job, "--client", "C"), ("backup", reg.with_name("copy"))):
            cli(*args, "--register", reg)
        _WARMED.append(True)
    return _unprivileged


def _snapshot(folder: Path) -> dict[str, str]:
    return {str(p.relative_to(folder)): hashlib.sha256(p.read_bytes()).hexdigest()
            if p.is_file() else "dir" for p in sorted(folder.rglob("*"))}


@pytest.fixture
def ro_folder():
    """A folder the unprivileged user can read but not write (0555, file 0444)."""
    folder = Path(tempfile.mkdtemp(prefix="commission-ro-", dir="/tmp"))
    folder.chmod(0o755)
    yield folder
    for p in [folder, *folder.rglob("*")]:
        with contextlib.suppress(OSError):
            p.chmod(0o755 if p.is_dir() else 0o644)
    shutil.rmtree(folder, ignore_errors=True)


def _make_read_only(folder: Path) -> None:
    for p in [*folder.rglob("*"), folder]:
        p.chmod(0o555 if p.is_dir() else 0o444)


def _ready_read_only(folder: Path) -> None:
    _make_read_only(folder)
    if os.geteuid() != 0 and os.access(folder, os.W_OK):
        pytest.skip(f"{folder}: this filesystem ignores permission bits, so a read-only "
                    "register cannot be made without root")


@pytest.mark.slow
def test_read_only_register_reads_and_refuses_writes(cli, ro_folder, as_nobody):
    reg = ro_folder / "reg.sqlite3"
    created = cli("new", "--checklist", "diverter-1ph", "--site", "Larch House",
                  "--register", reg)
    job = created.stdout.strip().splitlines()[-1]
    assert cli("instruments", "add", "--serial", "MFT-1", "--make", "Megger", "--model", "MFT1741",
               "--calibration-due", "2030-01-01", "--register", reg).exit_code == 0
    answers = ro_folder / "answers.yaml"
    answers.write_text("install.pv.size: 4.2 kW\nsupply.voltage: 231 V\n", encoding="utf-8")
    assert cli("walk", job, "--answers", answers, "--register", reg).exit_code == 0
    shutil.rmtree(ro_folder / "reg.sqlite3.locks")  # as if no walk ever ran here
    assert sorted(p.name for p in ro_folder.iterdir()) == ["answers.yaml", "reg.sqlite3"]
    _ready_read_only(ro_folder)
    home = ro_folder / "home"
    before = _snapshot(ro_folder)

    def run(*args) -> tuple[int, str, str]:
        return as_nobody([str(a) for a in args], reg, home)

    # Reading works and shows what the register holds.
    code, out, err = run("jobs")
    assert (code, err) == (0, "") and job in out
    code, out, err = run("show", job, "--json")
    assert (code, err) == (0, "")
    values = {i["id"]: i["value"] for i in json.loads(out)["items"]}
    assert values["install.pv.size"] == 4200.0 and values["supply.voltage"] == 231.0
    code, out, err = run("instruments", "list")
    assert (code, err) == (0, "") and "MFT-1" in out

    # Writing is refused with one line that says why; exit 2 like every register error.
    refused = [
        ("new", "--checklist", "diverter-1ph", "--site", "Elm Cottage"),
        ("instruments", "add", "--serial", "X-2", "--make", "A", "--model", "B",
         "--calibration-due", "2030-01-01"),
        ("amend", job, "--client", "R. Okafor"),
        ("walk", job, "--answers", answers),  # its lock folder cannot be made
    ]
    for args in refused:
        code, out, err = run(*args)
        assert code == 2, (args, out, err)
        assert "read-only" in _one_line_error(err), args
    # The lock folder exists (made by the owner) but no lock file can be made in it.
    ro_folder.chmod(0o755)
    (ro_folder / "reg.sqlite3.locks").mkdir()
    _make_read_only(ro_folder)
    code, out, err = run("walk", job, "--answers", answers)
    assert code == 2 and "read-only" in _one_line_error(err)
    # A backup of a read-only register can still be taken somewhere writable.
    dest_dir = Path(tempfile.mkdtemp(prefix="commission-bak-", dir="/tmp"))
    try:
        dest_dir.chmod(0o777)
        code, out, err = run("backup", dest_dir / "copy.sqlite3")
        assert (code, err) == (0, ""), err
        _integrity(dest_dir / "copy.sqlite3")
        assert _latest(dest_dir / "copy.sqlite3", job) == _latest(reg, job)
    finally:
        shutil.rmtree(dest_dir, ignore_errors=True)

    assert _snapshot(ro_folder) == {**before, "reg.sqlite3.locks": "dir"}  # not one byte
    _integrity(reg)


@pytest.mark.slow
def test_read_only_reader_sees_what_an_open_or_killed_walk_committed(cli, ro_folder,
                                                                     as_nobody):
    if os.geteuid() != 0:
        pytest.skip("needs root: the walk's owner and the read-only reader must be two users")
    reg = ro_folder / "reg.sqlite3"  # root's, 0644 in a 0755 folder: read-only for nobody
    created = cli("new", "--checklist", "diverter-1ph", "--site", "Larch House",
                  "--register", reg)
    job = created.stdout.strip().splitlines()[-1]
    home = ro_folder / "home"

    def shown() -> dict[str, object]:
        code, out, err = as_nobody(["show", job, "--json"], reg, home)
        assert (code, err) == (0, "")
        return {i["id"]: i["value"] for i in json.loads(out)["items"] if i["value"] is not None}

    walk = _spawn(job, reg)
    walk.expect("kW > ")
    walk.sendline("4.2")
    walk.expect(VERDICT)
    walk.expect("> ")
    assert (ro_folder / "reg.sqlite3-wal").stat().st_size > 0  # the answer is in the -wal
    before = _snapshot(ro_folder)
    assert shown() == {"install.pv.size": 4200.0}  # read through the walk's -wal and -shm
    code, out, err = as_nobody(["new", "--checklist", "diverter-1ph", "--site", "X"], reg, home)
    assert code == 2 and "read-only" in _one_line_error(err)
    assert _snapshot(ro_folder) == before
    # The walk is killed: its -wal and -shm stay behind, and a reader still sees everything.
    walk.sendline("Brightwell SL-3600")
    walk.expect(VERDICT)
    walk.kill(signal.SIGKILL)
    walk.expect(pexpect.EOF)
    walk.close()
    assert {"reg.sqlite3-wal", "reg.sqlite3-shm"} <= {p.name for p in ro_folder.iterdir()}
    before = _snapshot(ro_folder)
    assert shown() == {"install.pv.size": 4200.0, "install.inverter": "Brightwell SL-3600"}
    # Without the -shm a reader cannot use the -wal: it says so, and guesses nothing.
    (ro_folder / "reg.sqlite3-shm").unlink()
    before.pop("reg.sqlite3-shm")
    code, out, err = as_nobody(["show", job], reg, home)
    line = _one_line_error(err)
    assert code == 2 and "read-only" in line and out == ""
    assert _snapshot(ro_folder) == before
    # The owner opens it again and nothing was lost.
    _integrity(reg)
    assert _latest(reg, job) == {"install.pv.size": "4.2", "install.inverter": "Brightwell SL-3600"}


def test_read_only_register_from_schema_1_is_refused_untouched(ro_folder, as_nobody):
    old = ro_folder / "old.sqlite3"
    shutil.copyfile(ROOT / "tests" / "data" / "register-v1.sqlite3", old)
    _ready_read_only(ro_folder)
    before = _snapshot(ro_folder)
    code, out, err = as_nobody(["jobs"], old, ro_folder / "home")
    line = _one_line_error(err)
    assert code == 2 and "read-only" in line and "older release" in line
    assert _snapshot(ro_folder) == before


# -- 4. backup during a walk ---------------------------------------------------------------
@pytest.mark.slow
def test_backup_during_a_walk_restores_every_committed_entry(cli, new_job, register_path,
                                                             tmp_path):
    job = new_job()
    typed = _typed_answers()
    walk = _spawn(job, register_path)
    walk.expect(HEADER)
    item = walk.match.group(1)
    answered = []

    def answer(n: int) -> None:
        nonlocal item
        for _ in range(n):
            walk.expect("> ")
            walk.sendline(typed[item])
            walk.expect(VERDICT)
            answered.append((item, "answer", typed[item]))
            walk.expect(HEADER)
            item = walk.match.group(1)

    answer(6)
    dest = tmp_path / "backup" / "copy.sqlite3"
    dest.parent.mkdir()
    result = _commission("backup", dest, register=register_path)
    assert result.returncode == 0, result.stderr
    at_backup = list(answered)
    next_item = item
    answer(4)
    walk.expect("> ")
    walk.sendline(":quit")
    walk.expect(pexpect.EOF)
    walk.close()
    assert walk.exitstatus == 0

    # The copy is a register on its own: intact, one file, exactly what was committed.
    assert sorted(p.name for p in dest.parent.iterdir()) == ["copy.sqlite3"]
    _integrity(dest)
    assert _entries(dest, job) == at_backup
    assert _entries(register_path, job) == answered
    shown = json.loads(cli("show", job, "--json", "--register", dest).stdout)
    assert [i["raw"] for i in shown["items"] if i["raw"]] == [raw for _, _, raw in at_backup]
    # Restored, a walk on the copy resumes where the backup left off.
    again = _spawn(job, dest)
    again.expect(HEADER)
    assert again.match.group(1) == next_item
    again.expect("> ")
    again.sendline(":quit")
    again.expect(pexpect.EOF)
    again.close()
    assert again.exitstatus == 0

    # A backup never overwrites: one line, the old copy kept.
    digest = hashlib.sha256(dest.read_bytes()).hexdigest()
    result = _commission("backup", dest, register=register_path)
    assert result.returncode == 2 and "already exists" in _one_line_error(result.stderr)
    assert hashlib.sha256(dest.read_bytes()).hexdigest() == digest


# -- 5. every register failure is one line -------------------------------------------------
def _folder(tmp: Path) -> Path:
    (tmp / "folder.sqlite3").mkdir()
    return tmp / "folder.sqlite3"


def _junk(tmp: Path) -> Path:
    return _big_file(tmp / "junk.sqlite3", 8192)


def _newer(tmp: Path) -> Path:
    path = tmp / "newer.sqlite3"
    db = sqlite3.connect(path)
    db.execute("PRAGMA user_version = 99")
    db.close()
    return path


@pytest.mark.parametrize(("make", "args", "says"), [
    (lambda tmp: tmp / "missing.sqlite3", ("show", "ABCDE"), "no register here"),
    (lambda tmp: tmp / "missing.sqlite3", ("backup", "{tmp}/copy.sqlite3"), "no register here"),
    (_folder, ("jobs",), "is a folder"),
    (_junk, ("jobs",), "not a"),
    (_newer, ("jobs",), "newer release"),
    (_newer, ("walk", "ABCDE", "--answers", "x.yaml"), "newer release"),
], ids=["show-missing", "backup-missing", "folder", "junk", "newer", "walk-newer"])
def test_register_failures_are_one_line(tmp_path, make, args, says):
    register = make(tmp_path)
    result = _commission(*(a.format(tmp=tmp_path) for a in args), register=register)
    assert result.returncode == 2
    assert says in _one_line_error(result.stderr)


def test_backup_into_a_missing_folder_is_one_line(cli, new_job, register_path, tmp_path):
    new_job()
    result = _commission("backup", tmp_path / "nowhere" / "copy.sqlite3", register=register_path)
    assert result.returncode == 2
    assert "cannot create" in _one_line_error(result.stderr)
    assert not (tmp_path / "nowhere").exists()
