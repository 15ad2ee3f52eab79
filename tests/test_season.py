"""Storm-season rules: the season from the surge climate, annual-maxima season coverage, monthly weighting.

Outside references: the simulated process of tests/tide_types_sim.py (winter storms four times as frequent as
summer ones; truth from long simulation), exact day counts of the calendar, and the maximum-likelihood GPD
fit of :func:`extremes.extremal.distributions.fit_gpd` on a replicated sample (integer weights).
"""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from extremes import season
from extremes.errors import DataError
from extremes.extremal import distributions, samples
from extremes.joint import year_bootstrap
from tests import tide_types_sim as sim

WINTER = (10, 11, 12, 1, 2, 3)


def _with_winter_outages(rec):
    """Drop November-March in two years of every three (a gauge out of service in winter)."""
    t = pd.DatetimeIndex(rec["time"])
    out = np.isin(t.month, [11, 12, 1, 2, 3]) & (t.year % 3 != 0)
    return rec[~out]


def test_storm_season_from_the_monthly_surge_climate():
    rec = sim.record("semidiurnal", 20, 3, winter_factor=4.0)
    s = season.storm_season(pd.Series(rec["skew_surge_m"].to_numpy(), index=pd.DatetimeIndex(rec["time"])))
    # [C] storms four times as frequent October-March: the season lies in those months and holds mid-winter
    assert set(s.months) <= set(WINTER) and {12, 1} <= set(s.months)
    assert s.threshold_m == pytest.approx(np.mean(list(s.monthly_mean_max_m.values())))
    assert all(s.monthly_mean_max_m[m] > s.threshold_m for m in s.months)
    assert s.to_dict()["months"] == list(s.months)
    with pytest.raises(DataError, match="at least 6"):
        short = pd.Series(1.0, index=pd.date_range("2000-01-01", periods=90 * 24, freq="1h", tz="UTC"))
        season.storm_season(short)


def test_monthly_coverage_and_weights_of_a_record_with_winter_outages():
    rec = sim.record("semidiurnal", 9, 1, start_years=0.0)  # 1990-1998: 1990, 1993, 1996 keep their winters
    cut = _with_winter_outages(rec)
    cov = season.monthly_coverage(cut["time"], tides_per_year=sim.YEAR_DAYS * 24 / 12.4206,
                                  start=rec["time"].iloc[0], end=rec["time"].iloc[-1])
    # [C] exact by construction: 3 of 9 Januaries kept; every April-October kept
    assert cov[1] == pytest.approx(3 / 9, abs=0.01) and cov[12] == pytest.approx(3 / 9, abs=0.02)
    assert cov[[4, 5, 6, 7, 8, 9, 10]].min() > 0.98
    w = season.month_weights(cut["time"], cov)
    months = pd.DatetimeIndex(cut["time"]).month
    ratio = w[months == 1].mean() / w[months == 6].mean()
    assert ratio == pytest.approx(cov[6] / cov[1], rel=1e-9) and np.mean(w) == pytest.approx(1.0)
    assert season.month_weights(rec["time"], season.monthly_coverage(rec["time"], tides_per_year=705.75)) is None


def test_weighting_removes_the_winter_outage_bias_of_the_tail_probability():
    # truth: the per-tide probability of a skew surge above 0.3 m, from 250 simulated years
    u = 0.3
    long = sim.record("semidiurnal", 250, 50, winter_factor=4.0, start_years=0.0)
    truth = np.mean(long["skew_surge_m"].to_numpy() > u)
    weighted, plain = [], []
    for seed in range(3):
        cut = _with_winter_outages(sim.record("semidiurnal", 30, seed, winter_factor=4.0))
        cov = season.monthly_coverage(cut["time"], tides_per_year=705.75)
        w = season.month_weights(cut["time"], cov)
        x = cut["skew_surge_m"].to_numpy()
        weighted.append(year_bootstrap.fit_tail(x, threshold_m=u, years=30.0, weights=w).tail_probability)
        plain.append(year_bootstrap.fit_tail(x, threshold_m=u, years=30.0).tail_probability)
    assert np.mean(weighted) == pytest.approx(truth, rel=0.1)
    assert np.mean(plain) < 0.88 * truth  # winter outages: storms under-represented, levels biased low


def test_weighted_tail_equals_the_fit_of_a_replicated_sample():
    # integer weights: the weighted fit must equal the plain fit of the sample with each value repeated
    rng = np.random.default_rng(4)
    x = rng.gumbel(0.0, 0.1, 3000)
    w = rng.integers(1, 4, x.size).astype(float)
    u = float(np.quantile(x, 0.95))
    dist = year_bootstrap.fit_tail(x, threshold_m=u, years=10.0, weights=w / w.mean())
    rep = np.repeat(x, w.astype(int))
    ref = distributions.fit_gpd(rep[rep > u], threshold=u, years=10.0)
    assert dist.scale_m == pytest.approx(ref.scale, rel=2e-3) and dist.shape == pytest.approx(ref.shape, abs=3e-3)
    assert dist.tail_probability == pytest.approx(np.mean(rep > u), rel=1e-12)
    np.testing.assert_allclose(np.quantile(dist.sample_m, [0.1, 0.5, 0.9]), np.quantile(rep, [0.1, 0.5, 0.9]),
                               atol=0.005)


def test_annual_maxima_need_the_storm_season_complete():
    # hourly record, 8 calendar years; in even years 1 December - 5 January is missing (36 days): the year is
    # 90.1 % complete and passes the whole-year rule, but misses 19.8 % of its October-March storm season
    index = pd.date_range("2000-01-01", "2007-12-31 23:00", freq="1h", tz="UTC")
    hours = np.asarray((index - index[0]) / pd.Timedelta(hours=1))
    level = pd.Series(0.5 * np.cos(2 * np.pi * hours / 12.42) + sim.storm_surge(hours, np.random.default_rng(2)),
                      index=index)
    for year in (2000, 2002, 2004, 2006):
        gap = (index >= pd.Timestamp(f"{year}-12-01", tz="UTC")) & (index < pd.Timestamp(f"{year + 1}-01-05",
                                                                                          tz="UTC"))
        level[gap] = np.nan
    plain = samples.annual_maxima(level, min_coverage=0.9)
    assert len(plain) == 8
    ruled = samples.annual_maxima(level, min_coverage=0.9, season_months=WINTER)
    assert sorted(ruled.dropped["year"]) == [2000, 2002, 2004, 2006]
    assert all("storm-season coverage" in r for r in ruled.dropped["reason"])
    # [C] 2002 misses December (31 d) of its season (182 d, Jan-Mar + Oct-Dec of 2002): 1 - 31/182
    assert ruled.season_coverage[2002] == pytest.approx(1 - 31 / 182, abs=1e-9)
    # 2001 misses 1-4 January 2001 (4 d) of its 182-d season
    assert ruled.season_coverage[2001] == pytest.approx(1 - 4 / 182, abs=1e-9)
    assert ruled.min_season_coverage == season.MIN_SEASON_COVERAGE
    assert ruled.to_dict()["storm_season"]["months"] == sorted(WINTER)
    with pytest.raises(ValueError, match="min_season_coverage"):
        samples.annual_maxima(level, season_months=WINTER, min_season_coverage=1.5)
