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


def test_write_corrections_draft_and_read_it_back(tmp_path):
    # two years of hourly levels of a simple tide, 0.15 m higher from mid-2021 (a datum step)
    times = pd.date_range("2020-01-01", "2021-12-31 23:00", freq="h", tz="UTC")
    hours = np.arange(times.size, dtype=float)
    rng = np.random.default_rng(3)
    level = 2 + np.cos(2 * np.pi * hours / 12.4206) + 0.05 * rng.standard_normal(times.size)
    level[times >= "2021-01-01"] += 0.15
    record = tmp_path / "g.csv"
    pd.DataFrame({"time": times.strftime("%Y-%m-%dT%H:%MZ"), "level": level.round(3)}).to_csv(record, index=False)
    draft = tmp_path / "draft.csv"
    result = run(record, "--write-corrections", draft)
    assert result.exit_code == 0, result.output
    assert "draft corrections written" in result.stdout and "DETECTED" in draft.read_text()
    again = run(record, "--write-corrections", draft)
    assert again.exit_code == 1 and "--overwrite" in again.output
    # the draft, as written, is accepted back and removes the step
    fixed = run(record, "--corrections", draft, "--json")
    assert fixed.exit_code == 0, fixed.output
    document = json.loads(fixed.stdout)
    assert document["datum_shift_candidates"] == [] and len(document["corrections"]) == len(
        [line for line in draft.read_text().splitlines() if line and not line.startswith(("#", "start"))])


def test_bad_corrections_file_is_one_line_naming_the_line(gauge_csv, tmp_path):
    bad = tmp_path / "fix.csv"
    bad.write_text("start,end,add_m,shift_minutes\n2021-03-01T00:00Z,,zero,0\n")
    result = run(gauge_csv, "--units", "cm", "--utc-offset", "+10:00", "--corrections", bad)
    assert result.exit_code == 1 and "Traceback" not in result.output
    assert f"{bad}, line 2" in result.output and len(result.output.strip().splitlines()) == 1


def test_summary_lists_the_longest_gaps_of_the_whole_record(tmp_path):
    # 300 short gaps first, the longest outage last: it must head the list
    times = pd.date_range("2020-01-01", "2020-12-31 23:00", freq="h", tz="UTC")
    keep = np.ones(times.size, dtype=bool)
    keep[np.arange(10, 300 * 24, 24)] = False
    keep[(times >= "2020-11-01") & (times < "2020-12-10")] = False
    path = tmp_path / "g.csv"
    hours = np.arange(times.size, dtype=float)
    pd.DataFrame({"time": times[keep].strftime("%Y-%m-%dT%H:%MZ"),
                  "level": np.round(np.cos(2 * np.pi * hours[keep] / 12.42), 3)}).to_csv(path, index=False)
    result = run(path)
    assert result.exit_code == 0, result.output
    lines = result.stdout.splitlines()
    head = lines[[i for i, line in enumerate(lines) if "the longest:" in line][0] + 1]
    assert "2020-11-01T00:00:00Z to 2020-12-09T23:00:00Z" in head and "(936.0 h)" in head
    document = json.loads(run(path, "--json").stdout)
    assert document["n_gaps"] == 301 and len(document["gaps"]) == 301
