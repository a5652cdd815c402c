"""Every documented command with odd inputs: an empty file, ~50 MB of junk, names with
spaces, unicode or a leading dash, a folder where a file belongs, a missing file, odd job
ids. Never a traceback: exit 0, 1 or 2, and a refusal says why on stderr.

Each case runs in-process on copies of one prepared home (identity, trust store) and
register (a job with answers), so the cases do not disturb each other.
"""

from __future__ import annotations

import os
import re
import shutil
from contextlib import contextmanager
from pathlib import Path
from unittest import mock

import pytest

from conftest import CHECKLIST, DEMO, ROOT

PASS = "sweep passphrase 1"
HUGE_MB = 50
ODD_NAMES = ["with space and ünïcødé Ω", "-leading-dash", "日本語 ファイル", "x" * 150]


@contextmanager
def _runner():
    """CliRunner on the real app, typer's command tree built once."""
    import typer.testing
    from typer.main import get_command

    from commission.cli.app import app

    command = get_command(app)
    runner = typer.testing.CliRunner()
    with mock.patch.object(typer.testing, "_get_command", lambda _app: command):
        yield lambda args: runner.invoke(app, [str(a) for a in args])


@pytest.fixture(scope="module")
def world(tmp_path_factory):
    """A home with an identity and a register with a job, a signed record, a backup."""
    base = tmp_path_factory.mktemp("world")
    home, register = base / "home", base / "reg.sqlite3"
    pf = base / "pass.txt"
    pf.write_text(PASS + "\n", encoding="utf-8")
    env = {"COMMISSION_HOME": str(home), "COMMISSION_REGISTER": str(register),
           "COMMISSION_USER": "sweeper", "NO_COLOR": "1"}
    with mock.patch.dict(os.environ, env), _runner() as run:
        def ok(*args):
            result = run(args)
            assert result.exit_code == 0, (args, result.output)
            return result

        ok("identity", "new", "--name", "Sam Sweep", "--registration", "R-9",
           "--passphrase-file", pf)
        job = ok("new", "--checklist", "diverter-1ph", "--site", "Sweep").stdout.split()[-1]
        answers = base / "answers.yaml"
        answers.write_text("install.inverter: Brightwell\nsupply.voltage: 231 V\n",
                           encoding="utf-8")
        ok("walk", job, "--answers", answers)
        ok("report", job, "--out", base / "signed.pdf", "--sign", "--passphrase-file", pf)
        ok("identity", "export", "--out", base / "cert.pem")
        ok("identity", "backup", "--out", base / "backup.p12", "--passphrase-file", pf)
    huge = base / "huge.bin"
    with huge.open("wb") as fh:  # junk that is not text, not YAML, not a PDF
        for _ in range(HUGE_MB):
            fh.write(os.urandom(1 << 20))
    good = {
        "checklist": CHECKLIST, "answers": answers, "pdf": base / "signed.pdf",
        "cert": base / "cert.pem", "backup": base / "backup.p12", "passphrase": pf,
        "form": ROOT / "forms" / "handover.yaml",
        "capture": DEMO / "files" / "clamp-capture.csv",
        "heating": DEMO / "files" / "heating-run.csv",
        "soak": DEMO / "files" / "heatsink-soak.csv",
        "regulation": DEMO / "files" / "regulation.csv",
    }
    return {"base": base, "home": home, "register": register, "job": job, "pf": pf,
            "huge": huge, "good": good}


# Commands that read a file: (id, argv with {F} for the file, kind of good content).
# "--" comes before positional file arguments, so a name with a leading dash is a name.
INPUTS = [
    ("new", ["new", "--checklist", "{F}", "--site", "S"], "checklist"),
    ("walk-answers", ["walk", "{JOB}", "--answers", "{F}"], "answers"),
    ("countersign", ["countersign", "--out", "{OUT}", "--passphrase-file", "{PF}", "--",
                     "{F}"], "pdf"),
    ("report-form", ["report", "{JOB}", "--out", "{OUT}", "--form", "{F}"], "form"),
    ("report-passphrase", ["report", "{JOB}", "--out", "{OUT}", "--sign", "--passphrase-file",
                           "{F}"], "passphrase"),
    ("verify", ["verify", "--", "{F}"], "pdf"),
    # no timestamp authority listens on 127.0.0.1:9: the good file gets one line, exit 2
    ("seal", ["seal", "--tsa", "http://127.0.0.1:9/", "--out", "{OUT}", "--", "{F}"], "pdf"),
    ("verify-trust", ["verify", "{PDF}", "--trust", "{F}"], "cert"),
    ("import", ["import", "--register", "{NEWREG}", "--", "{F}"], "pdf"),
    ("revisit", ["revisit", "--checklist", "diverter-1ph-periodic", "--register", "{NEWREG}",
                 "--", "{F}"], "pdf"),
    ("blank", ["blank", "--out", "{OUT}", "--", "{F}"], "checklist"),
    ("checklists-validate", ["checklists", "validate", "--", "{F}"], "checklist"),
    ("checklists-show", ["checklists", "show", "--", "{F}"], "checklist"),
    ("forms-validate", ["forms", "validate", "--", "{F}"], None),
    ("forms-show", ["forms", "show", "--", "{F}"], None),
    ("identity-new", ["identity", "new", "--name", "N", "--registration", "R", "--force",
                      "--passphrase-file", "{F}"], "passphrase"),
    ("identity-backup-passphrase", ["identity", "backup", "--out", "{OUT}",
                                    "--passphrase-file", "{F}"], "passphrase"),
    ("identity-restore", ["identity", "restore", "--force", "--passphrase-file", "{PF}", "--",
                          "{F}"], "backup"),
    ("trust-add", ["trust", "add", "--", "{F}"], "cert"),
    ("analyse-capture", ["analyse", "capture", "--", "{F}"], "capture"),
    ("analyse-heating", ["analyse", "heating", "--volume-l", "150", "--power-w", "3000", "--",
                         "{F}"], "heating"),
    ("analyse-soak", ["analyse", "soak", "--ambient-c", "25", "--limit-c", "90", "--",
                      "{F}"], "soak"),
    ("analyse-regulation", ["analyse", "regulation", "--dead-band-w", "50", "--", "{F}"],
     "regulation"),
    ("analyse-flicker", ["analyse", "flicker", "--v-scale", "500", "--", "{F}"], None),
    ("register-option", ["jobs", "--register", "{F}"], None),  # a missing one is made
    ("register-option-show", ["show", "{JOB}", "--register", "{F}"], None),
]

# Commands that write a file or folder: (id, argv with {F} for the output).
OUTPUTS = [
    ("backup", ["backup", "--", "{F}"]),
    ("report-out", ["report", "{JOB}", "--out", "{F}"]),
    ("report-sign-out", ["report", "{JOB}", "--out", "{F}", "--sign", "--passphrase-file",
                         "{PF}"]),
    ("blank-out", ["blank", "diverter-1ph", "--out", "{F}"]),
    ("countersign-out", ["countersign", "{PDF}", "--out", "{F}", "--passphrase-file",
                         "{PF}"]),
    ("identity-export", ["identity", "export", "--out", "{F}"]),
    ("identity-backup", ["identity", "backup", "--out", "{F}", "--passphrase-file", "{PF}"]),
    ("demo", ["demo", "--out", "{F}"]),
    ("due-ics", ["due", "--within", "3000d", "--ics", "{F}"]),
]

# Commands that take an id or a text: (id, argv with {T} for the text).
TEXTS = [
    ("show", ["show", "--", "{T}"]),
    ("due-within", ["due", "--within", "{T}"]),
    ("revisit-job", ["revisit", "--checklist", "diverter-1ph-periodic", "--", "{T}"]),
    ("amend", ["amend", "--client", "C", "--", "{T}"]),
    ("walk", ["walk", "--", "{T}"]),
    ("report", ["report", "--out", "{OUT}", "--", "{T}"]),
    ("trust-remove", ["trust", "remove", "--", "{T}"]),
    ("new-site", ["new", "--checklist", "diverter-1ph", "--site", "{T}"]),
    ("amend-client", ["amend", "{JOB}", "--client", "{T}"]),
    ("instruments-add", ["instruments", "add", "--serial", "{T}", "--make", "{T}", "--model",
                         "M", "--calibration-due", "{T}"]),
    ("instruments-profile", ["instruments", "profile", "--", "{T}"]),
    ("instruments-profile-tz", ["instruments", "profile", "--tz", "{T}", "--", "NOSUCH"]),
    ("analyse-option", ["analyse", "heating", "{HEATING}", "--volume-l", "{T}", "--power-w",
                        "{T}"]),
    ("analyse-columns", ["analyse", "capture", "{CAPTURE}", "--columns", "{T}"]),
    ("sync-register", ["sync", "--register", "{T}"]),
    ("confirm", ["confirm", "{JOB}", "--", "{T}"]),
    ("assign", ["assign", "--to", "x", "--", "{T}"]),
]
ODD_TEXTS = ["", " ", "-x", "--help-me", "ünïcødé Ω", "x" * 5000, "'; DROP TABLE jobs; --",
             "%", "%%%%%%%%%", "a\nb", "\x00", "\u202e", "1e999", "nan", "-1"]

PLAIN = ["jobs", "instruments list", "trust list", "identity show", "checklists list",
         "checklists schema", "forms list", "forms schema", "jobs --json",
         "identity show --json", "trust list --json",
         "--version", "--plain --version", "--help", "--plain --help"]

REFUSAL = re.compile(r"^(error: .+|verification failed: .+|.+:\d+: .+?: .+|"
                     r"[a-z][a-z0-9_-]*(\.[a-z0-9_-]+)*: .+|Error: .+)$")
TRACEBACK = re.compile(r"Traceback \(most recent call last\)|internal problem")


@pytest.fixture
def case(world, tmp_path, monkeypatch):
    """A fresh copy of the home and register, and the placeholders of the templates."""
    home, register = tmp_path / "home", tmp_path / "reg.sqlite3"
    shutil.copytree(world["home"], home)
    shutil.copy2(world["register"], register)
    monkeypatch.setenv("COMMISSION_HOME", str(home))
    monkeypatch.setenv("COMMISSION_REGISTER", str(register))
    monkeypatch.chdir(tmp_path)
    import typer.core

    # `--plain` switches process state (an environment variable, typer's rich output);
    # put it back after each case.
    monkeypatch.setattr(typer.core, "HAS_RICH", typer.core.HAS_RICH)
    monkeypatch.delenv("COMMISSION_PLAIN", raising=False)
    counter = iter(range(10**6))

    def fill(template, **extra):
        values = {"JOB": world["job"], "PF": world["pf"], "PDF": world["good"]["pdf"],
                  "HEATING": world["good"]["heating"],
                  "CAPTURE": world["good"]["capture"], **extra}
        out = []
        for arg in template:
            for key, value in values.items():
                if arg == "{" + key + "}":
                    arg = str(value)
            if arg == "{OUT}":  # a new name each time: report refuses to overwrite
                arg = str(tmp_path / f"out-{next(counter)}.pdf")
            if arg == "{NEWREG}":
                arg = str(tmp_path / f"new-{next(counter)}.sqlite3")
            out.append(arg)
        return out

    with _runner() as run:
        yield {"run": run, "fill": fill, "tmp": tmp_path}
    os.environ.pop("COMMISSION_PLAIN", None)


def _check(result, args, *, must_fail: bool = False) -> None:
    """No traceback, a known exit code, and a refusal that says why on stderr."""
    shown = f"{args!r:.300}\nstdout: {result.stdout[-800:]}\nstderr: {result.stderr[-800:]}"
    if result.exception is not None and not isinstance(result.exception, SystemExit):
        raise AssertionError(f"exception {result.exception!r} for {shown}") from \
            result.exception
    assert result.exit_code in (0, 1, 2), shown
    assert not TRACEBACK.search(result.stdout + result.stderr), shown
    if must_fail:
        assert result.exit_code != 0, shown
    if result.exit_code:
        lines = result.stderr.strip().splitlines()
        assert lines, shown
        # A refusal: "error: ..." lines, or the command's own documented formats
        # (checklist problems FILE:LINE: ITEM: message, answers ITEM: message, verify's
        # "verification failed: ..."), or click's usage error for a bad option value.
        assert any(REFUSAL.match(line) for line in lines), shown


def _inputs(world, tmp: Path, good_kind: str | None) -> list[tuple[str, Path, bool]]:
    """(label, path, must fail) of the odd inputs for one file slot."""
    empty = tmp / "empty.file"
    empty.write_bytes(b"")
    folder = tmp / "a folder"
    folder.mkdir(exist_ok=True)
    out = [("empty", empty, False), ("huge", world["huge"], True),
           ("folder", folder, True), ("missing", tmp / "no" / "such file.csv", True)]
    if good_kind is not None:
        source = world["good"][good_kind]
        for n, name in enumerate(ODD_NAMES):
            odd = tmp / f"{name}{source.suffix}"
            shutil.copy2(source, odd)
            # relative to the working folder, so that "-leading-dash" starts the argument
            out.append((f"odd-name-{n}", Path(odd.name), False))
    return out


@pytest.mark.slow
@pytest.mark.parametrize("template,good", [t[1:] for t in INPUTS], ids=[t[0] for t in INPUTS])
def test_file_inputs(world, case, template, good):
    run, fill, tmp = case["run"], case["fill"], case["tmp"]
    control = None
    if good is not None:  # the control: the same command with a plain name works
        args = fill([a.replace("{F}", str(world["good"][good])) for a in template])
        control = run(args)
        _check(control, args)
    creates = template[0] == "jobs"  # `jobs` makes a new register where none is
    for label, path, must_fail in _inputs(world, tmp, good):
        args = fill([str(path) if a == "{F}" else a for a in template])
        result = run(args)
        _check(result, args, must_fail=must_fail and not (creates and label == "missing"))
        if label.startswith("odd-name") and control is not None:
            # an odd name is still a name: the outcome is the control's
            assert result.exit_code == control.exit_code, (label, result.output,
                                                           control.output)


@pytest.mark.slow
@pytest.mark.parametrize("template", [t[1] for t in OUTPUTS], ids=[t[0] for t in OUTPUTS])
def test_file_outputs(case, template):
    run, fill, tmp = case["run"], case["fill"], case["tmp"]
    existing_dir = tmp / "an existing folder"
    existing_dir.mkdir()
    existing_file = tmp / "an existing file"
    existing_file.write_bytes(b"")
    under_a_file = existing_file / "out.pdf"  # a parent that is a file, not a folder
    names = [existing_dir, existing_file, under_a_file, tmp / "new" / "deeper" / "out.pdf"]
    names += [Path(f"{name}.out") for name in ODD_NAMES[:2]]  # relative: "-leading-dash"
    if template[0] == "demo":  # a demo run takes seconds: one odd name, one bad place
        names = [under_a_file, Path(ODD_NAMES[0])]
    for path in names:
        args = fill([str(path) if a == "{F}" else a for a in template])
        result = run(args)
        _check(result, args, must_fail=path == under_a_file)
        if path.name.startswith(tuple(ODD_NAMES)):
            assert result.exit_code == 0, result.output  # odd names are fine names
            assert (tmp / path).exists()


# revisit verifies and signs a whole record per odd text: seconds each, so it runs in CI only
@pytest.mark.parametrize("template", [
    pytest.param(t[1], id=t[0], marks=[pytest.mark.slow] if t[0] == "revisit-job" else [])
    for t in TEXTS])
def test_odd_texts(case, template):
    run, fill = case["run"], case["fill"]
    for text in ODD_TEXTS:
        args = fill([a.replace("{T}", text) for a in template])
        _check(run(args), args)


def test_leading_dash_without_separator_is_a_usage_error(case):
    """Without "--" a name like '-x.yaml' reads as an option: click's usage error (exit 2,
    on stderr), not a traceback."""
    result = case["run"](["checklists", "validate", "-x.yaml"])
    assert result.exit_code == 2
    assert "No such option" in result.stderr and not TRACEBACK.search(result.stderr)


@pytest.mark.parametrize("words", PLAIN)
def test_commands_without_input(case, words):
    args = words.split()
    result = case["run"](args)
    _check(result, args)
    assert result.exit_code == 0
    if "--version" in args:
        assert re.fullmatch(r"commission \S+\n", result.stdout)


def test_every_documented_command_is_swept():
    """The sweep above names every leaf command that `commission --help` documents."""
    from typer.main import get_command

    from commission.cli.app import app

    def leaves(cmd, prefix=()):
        subs = getattr(cmd, "commands", None)
        if not subs:
            return [" ".join(prefix)]
        return [leaf for name, sub in subs.items() for leaf in leaves(sub, (*prefix, name))]

    documented = set(leaves(get_command(app)))
    swept = set()
    for table in (INPUTS, OUTPUTS, TEXTS):
        for row in table:
            words = [w for w in row[1] if not w.startswith(("-", "{"))]
            for n in (1, 2):
                if " ".join(words[:n]) in documented:
                    swept.add(" ".join(words[:n]))
    swept |= {w for w in PLAIN if w in documented}
    assert documented - swept == set()
