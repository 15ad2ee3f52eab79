"""Tests of extremes.extremal.samples against pyextremes, pandas resampling and hand-made series."""
from __future__ import annotations

import warnings

import numpy as np
import pandas as pd
import pytest
from numpy.testing import assert_allclose
from scipy.signal import lfilter

from extremes.errors import DataError
from extremes.extremal.samples import (
    annual_maxima,
    observed_years,
    peaks_over_threshold,
    r_largest,
    read_annual_maxima,
)

from .conftest import hourly_series


@pytest.fixture(scope="module")
def surge():
    """Six years of an hourly AR(1) series (surge-like clustering), with a 40-day gap in 2001."""
    rng = np.random.default_rng(5)
    s = hourly_series(lfilter([1], [1, -0.9], rng.standard_normal(24 * 365 * 6) * 0.05))
    s.iloc[24 * 400:24 * 440] = np.nan
    return s


def test_pot_matches_pyextremes(surge):
    # pyextremes get_extremes(method="POT", r="72h") declusters by the same run rule
    pyextremes = pytest.importorskip("pyextremes")
    u = float(surge.quantile(0.995))
    ours = peaks_over_threshold(surge, threshold=u, min_separation_hours=72)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        theirs = pyextremes.get_extremes(surge.dropna().tz_convert(None), "POT", threshold=u, r="72h")
    assert len(ours.peaks) == len(theirs)
    assert_allclose(np.sort(ours.peaks.to_numpy()), np.sort(theirs.to_numpy()))
    assert_allclose(ours.peaks.index.tz_convert(None).as_unit("ns").asi8,
                    theirs.index.as_unit("ns").asi8)


def test_rate_is_per_observed_year(surge):
    u = float(surge.quantile(0.99))
    p = peaks_over_threshold(surge, threshold=u)
    valid_hours = surge.notna().sum()
    assert p.years == pytest.approx(valid_hours / 24 / 365.2425)
    assert p.rate_per_year == pytest.approx(len(p.peaks) / p.years)
    assert observed_years(surge) == pytest.approx(p.years)
    assert p.cluster_sizes.sum() == p.n_exceedances == int((surge > u).sum())


def test_run_length_declustering():
    # exceedance positions of METHODS.md sec. 9's extremal-index check: runs r = 3 -> 4 clusters
    v = np.zeros(100)
    v[[5, 6, 7, 30, 31, 32, 60, 61, 90, 91, 92, 93]] = [2, 3, 2, 5, 4, 2, 2, 6, 2, 2, 7, 2]
    p = peaks_over_threshold(hourly_series(v), threshold=1.0, min_separation_hours=None, run_length=3)
    assert p.peaks.tolist() == [3, 5, 6, 7]
    assert p.cluster_sizes.tolist() == [3, 3, 2, 4]
    # gaps between clusters of 23, 28 and 29 h: a 25-h separation merges only the first two clusters
    p2 = peaks_over_threshold(hourly_series(v), threshold=1.0, min_separation_hours=25.0)
    assert p2.peaks.tolist() == [5, 6, 7]
    assert peaks_over_threshold(hourly_series(v), threshold=1.0, min_separation_hours=30.0).peaks.tolist() == [7]


def test_annual_maxima_match_pandas_and_coverage_rule(surge):
    am = annual_maxima(surge)
    by_year = surge.groupby(surge.index.year).max()
    assert_allclose(am.maxima.to_numpy(), by_year.loc[am.maxima.index].to_numpy())
    # 2001 lost 40 days (89 % coverage): dropped by the default 90 % rule, kept at 85 %
    assert 2001 not in am.maxima.index and am.dropped.year.tolist() == [2001]
    assert "coverage 0.89" in am.dropped.reason[0]
    assert 2001 in annual_maxima(surge, min_coverage=0.85).maxima.index
    assert (surge.loc[am.times[2003]] == am.maxima[2003])


def test_water_year(surge):
    am = annual_maxima(surge, water_year_start_month=7, min_coverage=0.0)
    labels = surge.index.year - (surge.index.month < 7)
    expected = surge.groupby(labels).max()
    assert_allclose(am.maxima.to_numpy(), expected.loc[am.maxima.index].to_numpy())
    assert am.maxima.index[0] == 1999  # Jan-Jun 2000 belongs to the water year that started in July 1999


def test_r_largest_declustered(surge):
    rl = r_largest(surge, r=3, min_separation_hours=72)
    assert list(rl.values.columns) == ["r1", "r2", "r3"]
    assert_allclose(rl.values["r1"], annual_maxima(surge).maxima)
    for year in rl.values.index:
        t = rl.times.loc[year].sort_values()
        assert np.all(np.diff(t.to_numpy()).astype("timedelta64[h]").astype(int) >= 72)
        assert np.all(np.diff(rl.values.loc[year].to_numpy()) <= 0)
        assert_allclose(surge.loc[rl.times.loc[year].to_list()].to_numpy(), rl.values.loc[year].to_numpy())


def test_rejects_naive_times_and_bad_options(surge):
    with pytest.raises(DataError, match="naive"):
        annual_maxima(surge.tz_convert(None))
    with pytest.raises(ValueError, match="water_year_start_month"):
        annual_maxima(surge, water_year_start_month=13)
    with pytest.raises(ValueError, match="decluster"):
        peaks_over_threshold(surge, threshold=0.1, min_separation_hours=None)
    with pytest.raises(ValueError, match="threshold"):
        peaks_over_threshold(surge, threshold=float("nan"))
    with pytest.raises(TypeError):
        annual_maxima(surge.to_numpy())


def test_read_annual_maxima(tmp_path, portpirie):
    f = tmp_path / "am.txt"
    f.write_text("# comment\n1990 1.5\n1991\t1.7\n1992 1.2\n")
    s = read_annual_maxima(f)
    assert s.index.tolist() == [1990, 1991, 1992] and s.tolist() == [1.5, 1.7, 1.2]
    g = tmp_path / "cm.csv"
    g.write_text("time;level\n1990-05-01T00:00Z;150\n1991-02-01T00:00Z;170\n")
    assert read_annual_maxima(g, units="cm").tolist() == [1.5, 1.7]
    bad = tmp_path / "bad.csv"
    bad.write_text("year,value\n1990,1.5\n1991,abc\n")
    with pytest.raises(DataError, match="line 3"):
        read_annual_maxima(bad)
    dup = tmp_path / "dup.csv"
    dup.write_text("1990,1.5\n1990,1.7\n")
    with pytest.raises(DataError, match="more than one row"):
        read_annual_maxima(dup)
    assert read_annual_maxima(dup, several_per_year="none") is None
    assert repr(annual_maxima(hourly_series(np.arange(24 * 800.0)))).startswith("AnnualMaxima(n=")
    df = pd.DataFrame({"year": portpirie.index, "v": portpirie.to_numpy()})
    df.to_csv(tmp_path / "pp.csv", index=False)
    assert_allclose(read_annual_maxima(tmp_path / "pp.csv").to_numpy(), portpirie.to_numpy())
