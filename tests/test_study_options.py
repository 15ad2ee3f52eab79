"""Study options and the TOML study file."""
from __future__ import annotations

import pytest

from extremes.errors import DataError
from extremes.study_options import StudyOptions, load_study_file


def test_defaults_match_contract_periods():
    # CONTRACT.md: default periods 1,2,5,10,20,50,100,200,500,1000 years
    assert StudyOptions().periods_years == (1, 2, 5, 10, 20, 50, 100, 200, 500, 1000)


def test_study_file_tables(tmp_path):
    (tmp_path / "rise.csv").write_text("year,central\n2050,0.2\n")
    study = tmp_path / "study.toml"
    study.write_text(
        '[record]\nunits = "cm"\nmissing = [-99]\ntime_column = ["date", "time"]\n'
        '[study]\nepoch_year = 2020.5\nperiods_years = [100, 10]\nseed = 3\n'
        '[sea_level_rise]\noffsets_m = [0.5]\nscenarios = "rise.csv"\ndesign_life_years = 30\n'
    )
    options, reader = load_study_file(study)
    assert options.epoch_year == 2020.5 and options.periods_years == (10.0, 100.0) and options.seed == 3
    assert options.slr_m == (0.5,) and options.design_life_years == 30
    assert options.slr_scenarios.endswith("rise.csv")
    assert reader == {"units": "cm", "missing": [-99], "time_columns": ["date", "time"]}
    # flags override the file; None keeps the file's value
    assert options.replace(seed=9, epoch_year=None).seed == 9
    assert options.replace(seed=9, epoch_year=None).epoch_year == 2020.5


@pytest.mark.parametrize("text, message", [
    ("[study]\nbogus = 1\n", "unknown key 'bogus'"),
    ("[stduy]\nseed = 1\n", "unknown table"),
    ("[study\n", "not valid TOML"),
    ("[study]\nperiods_years = [0.5]\n", "periods_years must all be >= 1"),
    ("[study]\nconfidence = 1.5\n", "confidence must be between 0 and 1"),
    ("[study]\nseed = \"x\"\n", "wrong type"),
    ("[sea_level_rise]\noffsets_m = \"0.5\"\n", "wrong type"),
])
def test_bad_study_files_name_the_problem(tmp_path, text, message):
    study = tmp_path / "study.toml"
    study.write_text(text)
    with pytest.raises(DataError, match=message):
        load_study_file(study)
