"""The whole study on a short record of the invented harbour's process, through the command line.

The record is made by the example generator (invented data, for the demo and these tests only); the checks
are on the contract of results.json (CONTRACT.md), on the consistency of what the study writes, and on
outside facts named beside each check.
"""
from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner

from extremes.cli import cli

pytestmark = pytest.mark.slow  # whole studies, batches or simulations

CONTRACT_KEYS = {"schema", "software", "inputs", "record", "tide", "mean_sea_level", "return_levels",
                 "recommended_method", "sea_level_rise", "cautions"}
METHODS = {"annual-maxima", "peaks-over-threshold", "r-largest", "joint-probability",
           "skew-surge-joint-probability"}


@pytest.fixture(scope="module")
def short_record(tmp_path_factory):
    from extremes.example_records import make_examples

    times = pd.date_range("2006-01-01", "2017-12-31 23:00", freq="h", tz="UTC")
    level, _ = make_examples.harbour_levels(times, np.random.default_rng(7))
    path = tmp_path_factory.mktemp("record") / "orrindale_short.csv"
    frame = pd.DataFrame({"time": times.strftime("%Y-%m-%dT%H:%M:%SZ"), "level_m": np.round(level, 3)})
    frame.to_csv(path, index=False)
    return path


@pytest.fixture(scope="module")
def study(short_record, tmp_path_factory):
    out = tmp_path_factory.mktemp("study") / "study"
    result = CliRunner().invoke(cli, ["run", str(short_record), "--out", str(out), "--datum", "gauge zero",
                                      "--resamples", "40", "--slr", "0,0.5", "--periods", "2,10,100"])
    assert result.exit_code == 0, result.output
    return out, result.output


def test_results_json_has_every_contract_key(study):
    out, _ = study
    document = json.loads((out / "results.json").read_text())
    assert CONTRACT_KEYS <= set(document)
    assert document["schema"] == "extremes.results/1"
    assert document["record"]["units"] == "m" and document["record"]["datum"] == "gauge zero"
    for key in ("start", "end", "n_samples", "interval_minutes", "n_missing", "n_flagged", "flags"):
        assert key in document["record"]
    for key in ("duplicate", "sentinel", "spike", "flatline", "gap_hours"):
        assert key in document["record"]["flags"]
    assert {"HAT", "LAT", "MHWS", "MLWS", "MSL"} <= set(document["tide"]["datums_m"])
    assert set(document["tide"]["datums_basis"]) == set(document["tide"]["datums_m"])
    assert "radiational constituents Sa, Ssa, S1 left out" in document["tide"]["datums_basis"]["HAT"]
    constituent = document["tide"]["constituents"][0]
    assert {"name", "speed_deg_per_hour", "amplitude_m", "phase_deg", "amplitude_se_m", "phase_se_deg"} <= set(
        constituent)
    msl = document["mean_sea_level"]
    assert {"trend_m_per_year", "trend_se_m_per_year", "epoch_year", "msl_at_epoch_m"} <= set(msl)
    assert document["recommended_method"] in METHODS
    methods = {row["method"] for row in document["return_levels"]}
    assert methods <= METHODS and document["recommended_method"] in methods
    for row in document["return_levels"]:
        assert {"method", "return_period_years", "level_m", "lower_m", "upper_m", "confidence",
                "period_definition"} <= set(row)
        # CONTRACT.md: 1/AEP for the annual-maximum models, 1/rate for the others
        expected = "1/AEP" if row["method"] in ("annual-maxima", "r-largest") else "1/rate"
        assert row["period_definition"] == expected
    assert {row["offset_m"] for row in document["sea_level_rise"]} == {0.0, 0.5}
    assert any("wave" in c for c in document["cautions"])
    assert any("licensed" in c or "local" in c for c in document["cautions"])


def test_assessment_in_results_and_first_in_the_summary(study):
    # CONTRACT.md: assessment {status, reasons}; shown first in the command-line summary
    out, output = study
    document = json.loads((out / "results.json").read_text())
    verdict = document["assessment"]
    assert verdict["status"] in ("ok", "check", "unreliable")
    assert isinstance(verdict["reasons"], list) and all(isinstance(r, str) for r in verdict["reasons"])
    assert (verdict["status"] == "ok") == (verdict["reasons"] == [])
    assert output.lstrip().startswith(f"assessment: {verdict['status'].upper() if verdict['status'] != 'ok' else 'ok'}")
    for reason in verdict["reasons"]:
        assert reason in output


def test_levels_increase_with_period_and_intervals_bracket(study):
    out, _ = study
    table = pd.read_csv(out / "tables" / "return_levels.csv")
    for method, rows in table.groupby("method"):
        rows = rows.sort_values("return_period_years").dropna(subset=["level_m"])
        assert np.all(np.diff(rows["level_m"]) > 0), method
        ok = rows.dropna(subset=["lower_m", "upper_m"])
        assert np.all(ok["lower_m"] <= ok["level_m"] + 1e-9) and np.all(ok["level_m"] <= ok["upper_m"] + 1e-9)


def test_tide_recovers_the_generators_main_constituents(study):
    # the generator's constants (example_records/make_examples.py HARBOUR_TIDE; invented values)
    from extremes.example_records.make_examples import HARBOUR_TIDE

    out, _ = study
    constituents = {c["name"]: c for c in json.loads((out / "results.json").read_text())["tide"]["constituents"]}
    for name in ("M2", "S2", "K1", "O1"):
        amplitude, phase = HARBOUR_TIDE[name]
        assert constituents[name]["amplitude_m"] == pytest.approx(amplitude, abs=0.01), name
        assert abs((constituents[name]["phase_deg"] - phase + 180) % 360 - 180) < 3, name


def test_sea_level_rise_offset_rule_and_present_period(study):
    # Hunter (2012) offset rule: future level = present level + rise; the present return period of the raised
    # 100-year level must be longer than 100 years
    out, _ = study
    document = json.loads((out / "results.json").read_text())
    rows = {(r["offset_m"], r["return_period_years"]): r for r in document["sea_level_rise"]}
    assert rows[(0.5, 100.0)]["level_m"] == pytest.approx(rows[(0.0, 100.0)]["level_m"] + 0.5)
    present = rows[(0.5, 100.0)]["present_return_period_years_of_level"]
    assert present is None or present > 100


def test_outputs_written_and_refused_without_overwrite(study, short_record):
    out, output = study
    for name in ("results.json", "report.html", "tables/return_levels.csv", "tables/constituents.csv",
                 "tables/skew_surges.csv", "models/tide_model.json", "models/curves.json"):
        assert (out / name).is_file(), name
    assert "report.html" in output
    again = CliRunner().invoke(cli, ["run", str(short_record), "--out", str(out)])
    assert again.exit_code == 1 and "--overwrite" in again.output


def test_rerun_new_offsets_without_refitting(study, tmp_path):
    out, _ = study
    document = json.loads((out / "results.json").read_text())
    result = CliRunner().invoke(cli, ["rerun", str(out), "--slr", "0.25,1.0", "--json"])
    assert result.exit_code == 0, result.output
    rows = json.loads(result.output)["sea_level_rise"]
    base = {r["return_period_years"]: r["level_m"] for r in document["sea_level_rise"] if r["offset_m"] == 0.0}
    for row in rows:
        assert row["level_m"] == pytest.approx(base[row["return_period_years"]] + row["offset_m"])
    written = CliRunner().invoke(cli, ["rerun", str(out), "--slr", "0.3", "--out", str(tmp_path / "slr")])
    assert written.exit_code == 0, written.output
    assert json.loads((tmp_path / "slr" / "results.json").read_text())["reruns"][0]["slr_m"] == [0.3]


def test_rerun_bad_inputs(tmp_path, study):
    out, _ = study
    assert CliRunner().invoke(cli, ["rerun", str(tmp_path), "--slr", "0.5"]).exit_code == 1
    assert CliRunner().invoke(cli, ["rerun", str(out), "--slr", "half"]).exit_code == 2


def test_run_refuses_bad_record_with_one_line(tmp_path):
    bad = tmp_path / "bad.csv"
    bad.write_text("time,level_m\n")
    result = CliRunner().invoke(cli, ["run", str(bad), "--out", str(tmp_path / "o")])
    assert result.exit_code == 1
    assert "bad.csv" in result.output and "Traceback" not in result.output
    assert not (tmp_path / "o").exists()


def test_short_record_gets_no_annual_maxima_fit(tmp_path):
    # three years of the invented harbour's process: a three-parameter GEV on three annual maxima is
    # meaningless, so annual maxima and r-largest are left out with a note, and a direct method using every
    # storm is recommended
    from extremes.example_records import make_examples
    from extremes.study import run_study
    from extremes.study_options import StudyOptions

    times = pd.date_range("2019-01-01", "2021-12-31 23:00", freq="h", tz="UTC")
    level, _ = make_examples.harbour_levels(times, np.random.default_rng(3))
    path = tmp_path / "short.csv"
    pd.DataFrame({"time": times.strftime("%Y-%m-%dT%H:%M:%SZ"), "level_m": np.round(level, 3)}).to_csv(
        path, index=False)
    result = run_study(path, options=StudyOptions(resamples=10))
    assert "annual-maxima" not in result.curves and "r-largest" not in result.curves
    assert any("complete years" in note for note in result.notes)
    assert result.recommended_method != "annual-maxima"


def _without(document, *keys):
    """The document without ``keys`` and without any timing (keys ``seconds_*`` at any depth)."""
    def strip(value):
        if isinstance(value, dict):
            return {k: strip(v) for k, v in value.items() if not k.startswith("seconds")}
        if isinstance(value, list):
            return [strip(v) for v in value]
        return value
    return strip({k: v for k, v in document.items() if k not in keys})


def test_rerun_equals_a_fresh_study_with_the_same_offsets(study, short_record, tmp_path):
    # one number, one source: a rerun with new offsets and periods writes what a fresh study with them writes,
    # apart from the timings and the record of the rerun itself
    out, _ = study
    rerun = CliRunner().invoke(cli, ["rerun", str(out), "--slr", "0.3,0.8", "--periods", "5,50,100",
                                     "--out", str(tmp_path / "rerun")])
    assert rerun.exit_code == 0, rerun.output
    fresh = CliRunner().invoke(cli, ["run", str(short_record), "--out", str(tmp_path / "fresh"), "--datum",
                                     "gauge zero", "--resamples", "40", "--slr", "0.3,0.8", "--periods",
                                     "5,50,100", "--no-figures"])
    assert fresh.exit_code == 0, fresh.output
    a = json.loads((tmp_path / "rerun" / "results.json").read_text())
    b = json.loads((tmp_path / "fresh" / "results.json").read_text())
    assert len(a["sea_level_rise_details"]["encounter"]) == 3  # no rise, +0.3 m, +0.8 m
    assert _without(a, "timings_s", "reruns") == _without(b, "timings_s")
    for table in ("sea_level_rise", "sea_level_rise_by_offset", "return_levels"):
        assert (tmp_path / "rerun" / "tables" / f"{table}.csv").read_text() == \
            (tmp_path / "fresh" / "tables" / f"{table}.csv").read_text(), table


def test_tide_and_fit_commands_give_the_study_numbers(study, short_record):
    # the tide command and the study share the tide stage; the fit command and the study share the fit of one
    # sample: the same record gives the same constants and the same annual-maxima levels
    out, _ = study
    document = json.loads((out / "results.json").read_text())
    tide = CliRunner().invoke(cli, ["tide", str(short_record), "--datum", "gauge zero", "--json"])
    assert tide.exit_code == 0, tide.output
    assert json.loads(tide.output)["tide"]["constituents"] == document["tide"]["constituents"]
    assert json.loads(tide.output)["mean_sea_level"]["epoch_year"] == document["epoch_year"]
    fit = CliRunner().invoke(cli, ["fit", str(out / "tables" / "annual_maxima.csv"), "--periods", "10,100",
                                   "--json"])
    assert fit.exit_code == 0, fit.output
    levels = {row["return_period_years"]: row for row in json.loads(fit.output)["return_levels"]}
    study_rows = {row["return_period_years"]: row for row in document["return_levels"]
                  if row["method"] == "annual-maxima"}
    # (the table holds 6 significant digits, hence the relative tolerance; upper bounds are left out: on these
    # 12 maxima the fitted shape is near 1 and the profile deviance stays below 1 far above the level,
    # so the upper bound is set by the search limits and moves with the 6-digit rounding of the table)
    for period in (10.0, 100.0):
        for key in ("level_m", "lower_m"):
            assert levels[period][key] == pytest.approx(study_rows[period][key], rel=5e-4), (period, key)
