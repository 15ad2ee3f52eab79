"""Checks that the shipped example records of the invented harbour hold what truth.json says.

The records are read here with plain pandas (not with the project's reader), so these tests check the files
and the generator, independently of the code under study. Reference: the generator
``example_records/make_examples.py`` and the values it wrote to ``example_records/truth.json``.
"""
from __future__ import annotations

import functools
import gzip
import hashlib
import json

import numpy as np
import pandas as pd
import pytest

from extremes.example_records import make_examples as gen
from extremes.examples import DEMO_RECORD, example_record_path, example_records_folder

FOLDER = example_records_folder()


@pytest.fixture(scope="module")
def truth():
    return json.loads((FOLDER / gen.TRUTH_NAME).read_text())


def _text(name: str) -> str:
    data = (FOLDER / name).read_bytes()
    return (gzip.decompress(data) if name.endswith(".gz") else data).decode("ascii")


@functools.lru_cache(maxsize=4)
def _read_cached(name: str) -> pd.DataFrame:
    df = pd.read_csv(FOLDER / name, dtype=str, keep_default_na=False)
    df["t"] = pd.to_datetime(df["time"], utc=True, format="ISO8601")
    return df


def _read(name: str) -> pd.DataFrame:
    return _read_cached(name).copy()


def test_demo_record_name_and_size():
    assert DEMO_RECORD == gen.HOURLY_NAME
    assert example_record_path().is_file()
    total = sum(p.stat().st_size for p in FOLDER.iterdir() if p.is_file())
    assert total < 6_000_000


@pytest.mark.parametrize("name", [gen.HOURLY_NAME, gen.FAULTS_NAME, gen.MIXED_NAME])
def test_files_are_what_the_generator_wrote(truth, name):
    assert hashlib.sha256(_text(name).encode("ascii")).hexdigest() == truth["records"][name]["sha256_text"]


def _same_record(text_a: str, text_b: str) -> bool:
    """Same rows, stamps and codes; levels equal to within one step of the last digit written, so that a
    change in the last bit of the tide prediction (which flips a rare rounding) is not a different record."""
    import io

    a, b = (pd.read_csv(io.StringIO(t), sep=None, engine="python", dtype=str, keep_default_na=False)
            for t in (text_a, text_b))
    if a.shape != b.shape or not (a.iloc[:, :-1] == b.iloc[:, :-1]).all().all():
        return False
    la, lb = (frame.iloc[:, -1].str.replace(",", ".") for frame in (a, b))
    x, y = pd.to_numeric(la, errors="coerce"), pd.to_numeric(lb, errors="coerce")
    if not ((x.isna() == y.isna()).all() and (la[x.isna()] == lb[y.isna()]).all()):
        return False
    decimals = max(len(v.split(".")[1]) if "." in v else 0 for v in la[x.notna()].head(50))
    return bool(np.nanmax(np.abs(x - y)) <= 10.0 ** -decimals + 1e-9)


def test_seed_reproduces_the_records(truth):
    # the generator core, re-run with the documented seed, gives the same record (levels to the last digit
    # written, give or take one rounding step)
    assert _same_record(gen.make_faults(truth["seed"])[0], _text(gen.FAULTS_NAME))
    assert not _same_record(gen.make_faults(truth["seed"] + 1)[0], _text(gen.FAULTS_NAME))
    # (the 30-year record goes through the same functions as the faults record; its bytes are checked against
    # the hash the generator stored, see test_files_are_what_the_generator_wrote)
    text, info = gen.make_faults(truth["seed"])
    assert info["faults"] == truth["records"][gen.FAULTS_NAME]["faults"]
    assert _same_record(gen.make_mixed(truth["seed"])[0], _text(gen.MIXED_NAME))


@pytest.mark.parametrize("name", [gen.HOURLY_NAME, gen.FAULTS_NAME])
def test_fault_counts_match_the_file(truth, name):
    info = truth["records"][name]
    faults = info["faults"]
    df = _read(name)
    assert len(df) == faults["rows_written"]
    # missing-value codes and empty values
    codes = df.loc[df["level_m"] == faults["missing_codes"]["code"], "t"]
    assert sorted(codes.map(pd.Timestamp.isoformat)) == sorted(faults["missing_codes"]["times"])
    assert (df["level_m"] == "").sum() == len(faults["empty_values"])
    # duplicated stamps: identical and conflicting
    dup = df[df.duplicated("t", keep=False)]
    n_ident, n_conf = len(faults["identical_duplicates"]), len(faults["conflicting_duplicates"])
    assert dup["t"].nunique() == n_ident + n_conf
    assert df.duplicated(["t", "level_m"]).sum() == n_ident
    for c in faults["conflicting_duplicates"]:
        vals = df.loc[df["t"] == pd.Timestamp(c["time"]), "level_m"].astype(float).tolist()
        assert vals == [c["first_m"], c["second_m"]]
    # out-of-order rows: each swapped pair gives one backwards step
    assert (df["t"].diff() < pd.Timedelta(0)).sum() == len(faults["swapped_pairs"])
    # absent hours on the hourly grid
    grid = pd.date_range(info["start"], info["end"], freq="h")
    assert len(grid) == faults["grid_hours"]
    assert len(grid) - df["t"].nunique() == faults["absent_hours"]
    assert faults["absent_hours"] == sum(o["hours"] for o in faults["outages"]) + len(faults["single_missing_rows"])
    # spikes: file value = true value + offset
    values = df.drop_duplicates("t").set_index("t")["level_m"]
    for s in faults["spikes"]:
        assert float(values[pd.Timestamp(s["time"])]) == s["recorded_m"]
        assert s["recorded_m"] - s["true_level_m"] == pytest.approx(s["offset_m"] + (
            faults["datum_shift"]["step_m"] if "datum_shift" in faults and
            faults["datum_shift"]["start"] <= s["time"] <= faults["datum_shift"]["end"] else 0.0), abs=1.5e-3)
        assert abs(s["offset_m"]) >= 0.8
    # flat lines: identical values over the run
    for f in faults["flatlines"]:
        run = values[pd.date_range(f["start"], periods=f["hours"], freq="h")].astype(float)
        assert (run == f["value_m"]).all()


def test_datum_shift_only_in_the_faults_record(truth):
    assert "datum_shift" not in truth["records"][gen.HOURLY_NAME]["faults"]
    shift = truth["records"][gen.FAULTS_NAME]["faults"]["datum_shift"]
    assert shift["step_m"] == pytest.approx(0.08)
    df = _read(gen.FAULTS_NAME)
    level = pd.to_numeric(df["level_m"], errors="coerce").where(lambda v: v > -90)
    t = df["t"]
    before = level[(t >= "2021-06-01") & (t < "2022-06-01")].median()
    after = level[(t >= "2022-06-01") & (t < "2023-06-01")].median()
    # a year of levels either side of the step: the medians differ by the step plus MSL noise (few cm)
    assert after - before == pytest.approx(0.08, abs=0.05)


def _clean_hourly(truth) -> pd.Series:
    faults = truth["records"][gen.HOURLY_NAME]["faults"]
    df = _read(gen.HOURLY_NAME).drop_duplicates("t", keep="first").sort_values("t")
    level = pd.Series(pd.to_numeric(df["level_m"], errors="coerce").to_numpy(), index=df["t"])
    level[level <= -90] = np.nan
    for s in faults["spikes"]:
        level[pd.Timestamp(s["time"])] = np.nan
    for f in faults["flatlines"]:
        level[pd.date_range(f["start"], periods=f["hours"], freq="h")] = np.nan
    return level


def test_annual_means_follow_the_stated_msl(truth):
    # [C] the scenario: MSL(t) = 2.600 + 0.003 (t - 2000) + annual anomaly; tide and surge have zero mean
    level = _clean_hourly(truth)
    counts = level.groupby(level.index.year).count()
    means = level.groupby(level.index.year).mean()
    msl = truth["mean_sea_level"]
    anomaly = truth["records"][gen.HOURLY_NAME]["annual_msl_anomaly_m"]
    complete = counts[counts >= 0.9 * 8760].index
    assert 2009 not in complete and len(complete) >= 27
    # anomalies are values at mid-year joined linearly, so a calendar year averages 0.75 a_y + 0.125 (a_y-1 + a_y+1)
    expected = np.array([msl["msl_at_2000_m"] + msl["trend_m_per_year"] * (y + 0.5 - 2000) + 0.75 * anomaly[str(y)]
                         + 0.125 * (anomaly[str(y - 1)] + anomaly[str(y + 1)]) for y in complete])
    # annual means of the surge itself scatter by about 0.008 m (AR(1) background and storm counts)
    diff = means[complete].to_numpy() - expected
    assert np.abs(diff).max() < 0.03 and np.abs(diff).mean() < 0.012


def test_record_agrees_with_true_return_levels(truth):
    # [C] the median annual maximum of the record, moved to the 2024 epoch along the true trend, estimates the
    # true 2-year level (sampling sd of a median of ~28 maxima is about 0.05 m here).
    level = _clean_hourly(truth)
    counts = level.groupby(level.index.year).count()
    years = counts[counts >= 0.9 * 8760].index
    rate = truth["mean_sea_level"]["trend_m_per_year"]
    maxima = level.groupby(level.index.year).max()[years] + rate * (2024.0 - (years + 0.5))
    levels = {r["return_period_years"]: r for r in truth["return_levels"]["levels"]}
    assert np.median(maxima) == pytest.approx(levels[2]["level_m"], abs=0.15)
    ordered = [levels[t]["level_m"] for t in gen.PERIODS_YEARS]
    assert all(np.diff(ordered) > 0)
    for r in levels.values():
        assert r["mc_lower_m"] <= r["level_m"] <= r["mc_upper_m"]
    assert truth["return_levels"]["n_years_simulated"] >= 2000


def test_mixed_record_layout(truth):
    info = truth["records"][gen.MIXED_NAME]
    df = pd.read_csv(FOLDER / gen.MIXED_NAME, sep=";", dtype=str)
    assert list(df.columns) == ["date", "time", "level_cm"] and len(df) == info["rows_written"]
    local = pd.to_datetime(df["date"] + " " + df["time"], format="%d/%m/%Y %H:%M")
    utc = local.dt.tz_localize("+10:00").dt.tz_convert("UTC")
    assert utc.iloc[0] == pd.Timestamp(info["start_utc"])
    assert (df["level_cm"] == "9999").sum() == len(info["missing_code_local_times"]) == 20
    cm = pd.to_numeric(df["level_cm"].str.replace(",", "."), errors="coerce")
    valid = cm[cm != 9999] / 100.0
    assert valid.mean() == pytest.approx(truth["mixed"]["msl_m"], abs=0.03)
    tide = truth["mixed_tide"]
    form = (tide["K1"]["amplitude_m"] + tide["O1"]["amplitude_m"]) / (tide["M2"]["amplitude_m"]
                                                                      + tide["S2"]["amplitude_m"])
    assert 0.5 <= form <= 1.0  # METHODS sec. 6: 0.25-1.5 mixed, mainly semidiurnal
