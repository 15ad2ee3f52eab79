"""``extremes batch`` through the click group: usage errors, sources, exit codes, summaries, resume."""
from __future__ import annotations

import json

import pandas as pd
import pytest
from click.testing import CliRunner

from extremes.cli import cli


def invoke(*args):
    return CliRunner().invoke(cli, ["batch", *map(str, args)])


@pytest.mark.parametrize("args, message", [
    (["--out", "x"], "give at least one RECORD"),
    (["a.csv", "--out", "x", "--workers", "2", "--scheduler", "tcp://127.0.0.1:1"], "cannot be used with"),
    (["a.csv", "--out", "x", "--periods", "0.5,10"], "return periods must all be >= 1"),
    (["a.csv", "--out", "x", "--slr", "0.5,abc"], "expected comma-separated numbers"),
    (["a.csv", "--out", "x", "--workers", "0"], "--workers"),
    (["a.csv", "--out", "x", "--epoch", "3000"], "epoch_year"),
])
def test_usage_errors_exit_2(tmp_path, monkeypatch, args, message):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "a.csv").write_text("time,level\n")
    result = invoke(*args)
    assert result.exit_code == 2, result.output
    assert message in result.output
    assert not (tmp_path / "x").exists()


def test_unmatched_pattern_and_bad_manifest_exit_1_one_line(tmp_path):
    result = invoke(tmp_path / "*.csv", "--out", tmp_path / "out")
    assert result.exit_code == 1
    assert "no file matches" in result.output and "Traceback" not in result.output
    (tmp_path / "m.csv").write_text("file\nx.csv\n")
    result = invoke("--manifest", tmp_path / "m.csv", "--out", tmp_path / "out")
    assert result.exit_code == 1
    assert "expected a 'path' column" in result.output
    assert not (tmp_path / "out").exists()
