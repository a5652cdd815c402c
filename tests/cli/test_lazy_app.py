"""The console entry point builds an app holding only the command named on the line.

It must behave exactly as the whole app does for that command, and must really leave the
other commands' modules unloaded (that is what makes a command start quickly)."""

import subprocess
import sys

import pytest
from typer.testing import CliRunner

from commission.cli import app as app_module

# Rendering help costs about 0.25 s a command: a group, a plain command and the one whose
# function name differs from its command name stay in the fast suite, the rest are slow.
_FAST = {"analyse", "verify", "import"}


@pytest.mark.parametrize("name", [
    pytest.param(entry[0], marks=() if entry[0] in _FAST else pytest.mark.slow)
    for entry in app_module.COMMANDS])
def test_one_command_app_reads_as_the_whole_app(name):
    runner = CliRunner()
    whole = runner.invoke(app_module.app, [name, "--help"], prog_name="commission",
                          env={"COLUMNS": "80", "NO_COLOR": "1"})
    alone = runner.invoke(app_module._app_for([name, "--help"]), [name, "--help"],
                          prog_name="commission", env={"COLUMNS": "80", "NO_COLOR": "1"})
    assert whole.exit_code == alone.exit_code == 0
    assert alone.output == whole.output
    assert f"commission {name}" in alone.output


def test_root_help_typo_and_plain_use_the_whole_app():
    assert app_module._app_for([]) is not None
    full = {entry[0] for entry in app_module.COMMANDS}
    for argv in ([], ["--help"], ["-h"], ["reprot"], ["--plain"]):
        import typer.main

        command = typer.main.get_command(app_module._app_for(argv))
        assert set(command.commands) == full, argv
    command = typer.main.get_command(app_module._app_for(["--plain", "verify", "x.pdf"]))
    assert set(command.commands) == {"verify"}


def test_a_command_line_loads_only_its_own_module():
    code = (
        "import sys\n"
        "from commission.cli.app import main\n"
        "code = main(['analyse', 'capture', '--help'])\n"
        "print(code)\n"
        "print(' '.join(sorted(m for m in sys.modules if m.startswith('commission.cli.'))))\n"
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          check=True)
    code_line, modules = done.stdout.strip().splitlines()[-2:]
    assert code_line == "0"
    loaded = set(modules.split())
    assert "commission.cli.analyse" in loaded
    others = {f"commission.cli.{entry[1]}" for entry in app_module.COMMANDS} - {
        "commission.cli.analyse"}
    assert loaded & others == set()
