"""The console script, ``python -m extremes`` and the error mapping of the command-line group."""
from __future__ import annotations

import subprocess
import sys

import click
from click.testing import CliRunner

import extremes
from extremes.cli import COMMANDS, cli
from extremes.errors import DataError


def test_version_via_module():
    out = subprocess.run([sys.executable, "-m", "extremes", "--version"], capture_output=True, text=True)
    assert out.returncode == 0
    assert extremes.__version__ in out.stdout


def test_every_listed_command_module_defines_a_command():
    import importlib
    import importlib.util

    for name, module in COMMANDS.items():
        if importlib.util.find_spec(f"extremes.cli.{module}") is None:
            continue
        command = importlib.import_module(f"extremes.cli.{module}").command
        assert isinstance(command, click.Command), name
        assert command.name == name


def test_library_error_is_one_line_exit_1_without_traceback():
    @cli.command("raise-data-error-for-test", hidden=True)
    def _boom():
        raise DataError("records.csv, line 3: expected a number, got 'abc'")

    try:
        result = CliRunner().invoke(cli, ["raise-data-error-for-test"])
        assert result.exit_code == 1
        assert "records.csv, line 3" in result.output
        assert "Traceback" not in result.output
        debug = CliRunner().invoke(cli, ["--debug", "raise-data-error-for-test"])
        assert isinstance(debug.exception, DataError)
    finally:
        cli.commands.pop("raise-data-error-for-test", None)


def test_unexpected_error_is_reported_without_traceback():
    @cli.command("raise-bug-for-test", hidden=True)
    def _bug():
        raise ZeroDivisionError("division by zero")

    try:
        result = CliRunner().invoke(cli, ["raise-bug-for-test"])
        assert result.exit_code == 1
        assert "internal error" in result.output and "--debug" in result.output
        assert "Traceback" not in result.output
    finally:
        cli.commands.pop("raise-bug-for-test", None)


def test_unknown_option_is_usage_error_exit_2():
    result = CliRunner().invoke(cli, ["--no-such-option"])
    assert result.exit_code == 2
