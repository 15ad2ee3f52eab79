"""The README's promises: a job paragraph first, exactly two set-up commands, and CI runs the second."""
from __future__ import annotations

from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def _setup_commands() -> list[str]:
    lines = (ROOT / "README.md").read_text(encoding="utf-8").splitlines()
    commands = []
    for line in lines[:40]:
        if line.startswith("    ") and line.strip():
            commands.append(line.strip())
        elif commands and line.strip() and not line.startswith("    "):
            break
    return commands


def test_two_setup_commands_demo_then_tests():
    commands = _setup_commands()
    assert len(commands) == 2, commands
    assert commands[0].endswith("extremes demo")
    assert "pytest" in commands[1]


def test_ci_runs_the_readme_test_command():
    ci = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    assert _setup_commands()[1] in ci
