"""``extremes inspect``: JSON record object, terminal summary, exit codes 0/1/2."""
from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner

from extremes.cli import cli


@pytest.fixture
def gauge_csv(tmp_path):
    # 10 days of 6-minute readings in cm at local time +10:00, with a missing code, a spike and a duplicate
    times = pd.date_range("2021-03-01T10:00", periods=2400, freq="6min")
    hours = np.arange(2400) * 0.1
    rng = np.random.default_rng(7)
    level_cm = np.round(100 * np.cos(2 * np.pi * hours / 12.42) + 2 * rng.standard_normal(2400))
    level_cm[300] = -999
    level_cm[700] += 150
    lines = [f"{t:%Y-%m-%d %H:%M},{v:.0f}" for t, v in zip(times, level_cm)]
    lines.insert(1001, lines[1000])
    path = tmp_path / "gauge.csv"
    path.write_text("# test gauge\nstamp,height_cm\n" + "\n".join(lines) + "\n")
    return path


def run(*args):
    return CliRunner().invoke(cli, ["inspect", *map(str, args)])


def test_json_record_object(gauge_csv):
    result = run(gauge_csv, "--units", "cm", "--missing", "-999", "--utc-offset", "+10:00", "--datum", "LAT",
                 "--json")
    assert result.exit_code == 0, result.output
    record = json.loads(result.stdout)
    for key in ("start", "end", "n_samples", "interval_minutes", "n_missing", "n_flagged", "flags", "datum",
                "units"):
        assert key in record
    assert record["start"] == "2021-03-01T00:00:00Z"  # 10:00 at +10:00
    assert record["n_samples"] == 2401 and record["interval_minutes"] == 6.0
    assert record["datum"] == "LAT" and record["units"] == "m"
    flags = record["flags"]
    assert flags["sentinel"] == 1 and flags["duplicate"] == 1 and flags["spike"] == 1
    assert flags["gap_hours"] == pytest.approx(0.1)
    assert record["n_missing"] == 1 and record["n_flagged"] == 2
    assert record["faults"]["spike"]["rows"] == [701]


def test_summary_is_readable(gauge_csv):
    result = run(gauge_csv, "--units", "cm", "--missing", "-999", "--utc-offset", "+10:00")
    assert result.exit_code == 0, result.output
    assert "spike" in result.stdout and "row 701" in result.stdout
    assert "2021" in result.stdout and "completeness" in result.stdout


def test_naive_stamps_exit_1_naming_the_option(gauge_csv):
    result = run(gauge_csv, "--units", "cm")
    assert result.exit_code == 1
    assert "--utc-offset" in result.output and "gauge.csv" in result.output
    assert "Traceback" not in result.output


@pytest.mark.parametrize("text", ["", "time,level\n", "time,level\n2020-01-01T00:00Z,1\nbad,2\n"])
def test_bad_file_exit_1(tmp_path, text):
    path = tmp_path / "bad.csv"
    path.write_text(text)
    result = run(path)
    assert result.exit_code == 1
    assert "bad.csv" in result.output and len(result.output.strip().splitlines()) == 1


@pytest.mark.parametrize("options", [["--units", "furlong"], ["--utc-offset", "10"], ["--missing", "x"]])
def test_bad_option_value_exit_2(gauge_csv, options):
    assert run(gauge_csv, *options).exit_code == 2


def test_missing_file_and_folder_exit_1(tmp_path):
    # a missing file or a folder is bad input (CONTRACT.md: exit 1), reported in one line naming it
    for bad in (tmp_path / "absent.csv", tmp_path):
        result = run(bad)
        assert result.exit_code == 1 and str(bad.name) in result.output and "Traceback" not in result.output
