"""The command line's contract: help, exit codes, one-line errors."""

import subprocess
import sys

from auroraplan.cli import COMMANDS, main


def run_cli(*argv):
    return subprocess.run(
        [sys.executable, "-m", "auroraplan.cli", *argv], capture_output=True, text=True
    )


def test_help_lists_every_command():
    result = run_cli("--help")
    assert result.returncode == 0
    for name in COMMANDS:
        assert name in result.stdout


def test_unknown_option_is_one_line_and_exit_2():
    result = run_cli("oval", "--no-such-option")
    assert result.returncode == 2
    assert len(result.stderr.strip().splitlines()) == 1
    assert "Traceback" not in result.stderr


def test_no_command_prints_help_and_exit_2(capsys):
    assert main([]) == 2
    assert "COMMAND" in capsys.readouterr().out
