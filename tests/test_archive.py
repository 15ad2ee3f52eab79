"""A record shaped like a real archive, end to end: three sampling eras, a clock on UTC+1 for a summer, a
datum step, a genuine record storm and seasonal outages (tests/archive_records.py), made from the invented
example harbour's process whose true still-water levels are known from a 50,000-year simulation
(example_records/truth.json).

Checked: the eras, the clock span, the step and the storm are found and kept; no good reading is lost; with the
gauge's corrections the levels are right (truth inside the interval and within 0.3 m); without them the levels
are within half a metre of the truth or the verdict says ``unreliable``.
"""
from __future__ import annotations

import json

import pandas as pd
import pytest
from click.testing import CliRunner

from extremes.cli import cli
from extremes.examples import example_records_folder
from tests.archive_records import archive_record

pytestmark = pytest.mark.slow  # whole studies, batches or simulations


@pytest.fixture(scope="module")
def archive(tmp_path_factory):
    folder = tmp_path_factory.mktemp("archive")
    text, truth = archive_record()
    (folder / "archive.csv").write_text(text)
    (folder / "logs.csv").write_text(truth["corrections_csv"])
    return folder, truth


@pytest.fixture(scope="module")
def true_100_m():
    truth = json.loads((example_records_folder() / "truth.json").read_text())
    return next(r["level_m"] for r in truth["return_levels"]["levels"] if r["return_period_years"] == 100)


def _run(folder, name, *extra):
    out = folder / name
    result = CliRunner().invoke(cli, ["run", str(folder / "archive.csv"), "--missing", "-99", "--out", str(out),
                                      "--no-figures", "--resamples", "100", "--periods", "10,100", *extra])
    assert result.exit_code == 0, result.output
    return json.loads((out / "results.json").read_text()), result.output


@pytest.fixture(scope="module")
def corrected(archive):
    folder, _ = archive
    return _run(folder, "corrected", "--corrections", str(folder / "logs.csv"))


@pytest.fixture(scope="module")
def uncorrected(archive):
    folder, _ = archive
    return _run(folder, "uncorrected")


def test_inspect_finds_eras_clock_step_and_keeps_the_storm(archive):
    folder, truth = archive
    result = CliRunner().invoke(cli, ["inspect", str(folder / "archive.csv"), "--missing", "-99", "--json"])
    assert result.exit_code == 0, result.output
    record = json.loads(result.stdout)
    # eras: hourly, 15-minute, 6-minute, each starting where the archive changed
    assert [e["interval_minutes"] for e in record["sampling"]] == [60.0, 15.0, 6.0]
    for era, planned in zip(record["sampling"], truth["eras"]):
        assert pd.Timestamp(era["start"]) - pd.Timestamp(planned["start"], tz="UTC") < pd.Timedelta("1h")
    # completeness against each era's own interval: only the outage years fall short
    completeness = record["completeness_by_year"]
    assert all(completeness[str(y)] > 0.999 for y in (2012, 2014, 2015, 2017, 2018, 2019, 2021, 2023))
    # the clock span, stamps 60 min ahead, its ends as read within a few hours
    (clock,) = record["timing_offsets"]
    assert clock["offset_minutes"] == pytest.approx(60, abs=3)
    start_as_read = pd.Timestamp(truth["clock"]["start"]) + pd.Timedelta(minutes=60)
    assert abs(pd.Timestamp(clock["start"]) - start_as_read) <= pd.Timedelta(hours=3)
    # the datum step: size and time
    (step,) = record["datum_shift_candidates"]
    assert step["size_m"] == pytest.approx(truth["datum_step"]["size_m"], abs=0.04)
    assert abs(pd.Timestamp(step["time"]) - pd.Timestamp(truth["datum_step"]["time"])) <= pd.Timedelta(days=45)
    # no good reading lost to quality control: only the injected faults are flagged (the hourly spike is
    # too small for the raw-level test; the study finds it on the residual)
    assert record["flags"]["sentinel"] == 3
    flagged = set(record["faults"].get("spike", {}).get("times", []))
    planted = {pd.Timestamp(t).strftime("%Y-%m-%dT%H:%M:%SZ") for t, _ in truth["spikes"]}
    assert flagged <= planted and record["n_flagged"] == len(flagged)
    assert record["flags"]["duplicate"] == record["flags"]["conflicting_duplicate"] == 0


def test_corrected_study_gives_the_true_levels(corrected, true_100_m, archive):
    document, output = corrected
    _, truth = archive
    # truth.json: hourly annual maxima of the same process at the epoch 2024.0 (the record ends there)
    assert document["mean_sea_level"]["epoch_year"] == pytest.approx(2024.0, abs=0.01)
    assert [c["shift_minutes"] for c in document["record"]["corrections"]] == [-60.0, 0.0]
    assert document["record"]["timing_offsets"] == [] and document["record"]["datum_shift_candidates"] == []
    row = next(r for r in document["return_levels"] if r["method"] == document["recommended_method"]
               and r["return_period_years"] == 100)
    assert row["lower_m"] <= true_100_m <= row["upper_m"]
    assert row["level_m"] == pytest.approx(true_100_m, abs=0.3)
    assert document["assessment"]["status"] in ("ok", "check")
    # the residual spike test flags the planted spikes and no good reading (of 410,000)
    spikes = document["record"]["flags"]["spike"]
    assert spikes == len(truth["spikes"])
    assert output.startswith("assessment:")


def test_uncorrected_study_within_half_a_metre_or_unreliable(uncorrected, true_100_m):
    document, output = uncorrected
    row = next(r for r in document["return_levels"] if r["method"] == document["recommended_method"]
               and r["return_period_years"] == 100)
    status = document["assessment"]["status"]
    assert abs(row["level_m"] - true_100_m) <= 0.5 or status == "unreliable"
    # the clock fault is named in a warning and kept out of the surge statistics; the verdict says so
    assert any("clock fault" in w and "kept out" in w for w in document["warnings"])
    assert status != "ok" and any("not corrected" in r for r in document["assessment"]["reasons"])
    assert "clock faults detected" in output


def test_storm_kept_in_the_annual_maxima(corrected, archive):
    folder, truth = archive
    maxima = pd.read_csv(folder / "corrected" / "tables" / "annual_maxima.csv")
    top = maxima.loc[maxima["level_m"].idxmax()]
    assert int(top["year"]) == pd.Timestamp(truth["storm"]["peak"]).year


def test_example_faults_record_loses_no_good_reading():
    # example_records/truth.json lists the spikes planted in the 3-year faults record: quality control (raw
    # level, then the residual) flags exactly those, and no storm reading
    from extremes.study import run_study
    from extremes.study_options import StudyOptions

    truth = json.loads((example_records_folder() / "truth.json").read_text())
    planted = {s["time"][:16] for s in truth["records"]["harbour_faults.csv"]["faults"]["spikes"]}
    result = run_study(example_records_folder() / "harbour_faults.csv", reader={"missing": [-99]},
                       options=StudyOptions(resamples=20))
    found = {t.strftime("%Y-%m-%dT%H:%M") for t in result.quality.positions("spike", 100)["time"]}
    assert found == planted
