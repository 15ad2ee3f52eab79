"""The linter (ruff, configured in pyproject.toml) passes on the whole code base; CI runs it through this test."""
from __future__ import annotations

import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def test_ruff_finds_nothing():
    result = subprocess.run([sys.executable, "-m", "ruff", "check", "extremes", "tests", "benchmarks",
                             "example_records"], cwd=ROOT, capture_output=True, text=True, check=False)
    assert result.returncode == 0, result.stdout + result.stderr
