"""Tests of extremes.extremal.threshold (Coles 2001 sec. 4.3) on simulated series with a known tail."""
from __future__ import annotations

import warnings

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from extremes.errors import FitError
from extremes.extremal.samples import peaks_over_threshold
from extremes.extremal.threshold import (
    mean_residual_life,
    parameter_stability,
    return_level_by_threshold,
    select_threshold,
    threshold_for_rate,
)


@pytest.fixture(scope="module")
def gpd_series():
    """30 years of 6-hourly independent values whose tail above 1.0 is exactly GPD(0.2, -0.1)."""
    rng = np.random.default_rng(11)
    n = 4 * 365 * 30
    body = rng.uniform(0.0, 1.0, n)
    tail = rng.random(n) < 0.01
    body[tail] = 1.0 + stats.genpareto.rvs(-0.1, scale=0.2, size=tail.sum(), random_state=rng)
    idx = pd.date_range("1990-01-01", periods=n, freq="6h", tz="UTC")
    return pd.Series(body, index=idx)


def test_mean_residual_life_slope_matches_theory(gpd_series):
    # Coles (2001) sec. 4.3.1: above a valid threshold e(u) = (sigma_u0 + xi (u - u0)) / (1 - xi)
    t = mean_residual_life(gpd_series, thresholds=[1.0, 1.1, 1.2], min_separation_hours=1)
    expected = (0.2 - 0.1 * (t.threshold_m - 1.0)) / 1.1
    assert np.all(np.abs(t.mean_excess_m - expected) < 2.5 * (t.upper_m - t.lower_m) / 2)
    assert list(t.columns) == ["threshold_m", "n_peaks", "mean_excess_m", "lower_m", "upper_m"]


def test_parameter_stability_recovers_shape(gpd_series):
    t = parameter_stability(gpd_series, thresholds=[1.0, 1.05, 1.1], min_separation_hours=1)
    assert np.all((t.shape_lower < -0.1) & (-0.1 < t.shape_upper))
    # modified scale sigma* = sigma_u - xi u is constant: 0.2 + 0.1 * 1.0 = 0.3
    assert np.all((t.modified_scale_lower_m < 0.3) & (0.3 < t.modified_scale_upper_m))
    r = return_level_by_threshold(gpd_series, thresholds=[1.0, 1.1], min_separation_hours=1)
    true = 1.0 + 0.2 / -0.1 * ((0.01 * 4 * 365.2425 * 100) ** -0.1 - 1)
    assert np.all((r.lower_m < true) & (true < r.upper_m))


def test_select_threshold_rule(gpd_series):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        c = select_threshold(gpd_series, thresholds=[0.9, 1.0, 1.05, 1.1, 1.2], min_separation_hours=1,
                             max_rate_per_year=50)
    # below 1.0 the values are uniform (no GPD tail at 0.9): the shape there sits outside the higher intervals
    assert c.threshold_m == 1.0
    assert c.n_peaks >= 30
    assert "lowest candidate" in c.rule
    with pytest.raises(FitError, match="peaks"):
        select_threshold(gpd_series, thresholds=[1.8, 1.9], min_separation_hours=1)


def test_threshold_for_rate_gives_the_rate_and_ignores_the_tail_estimates(gpd_series):
    # a fixed rule: the threshold leaves ~2 declustered peaks a year whatever the shape estimates say
    choice = threshold_for_rate(gpd_series, peaks_per_year=2.0, min_separation_hours=72.0)
    peaks = peaks_over_threshold(gpd_series, threshold=choice.threshold_m, min_separation_hours=72.0)
    assert len(peaks) == choice.n_peaks
    assert choice.rate_per_year == pytest.approx(2.0, rel=0.05)
    assert "fixed rate" in choice.rule and choice.table.empty
    # the same series with its tail scaled up (other shape/scale estimates, same ranks) gets the same quantile
    stretched = gpd_series.where(gpd_series <= 1.0, 1.0 + 3.0 * (gpd_series - 1.0))
    other = threshold_for_rate(stretched, peaks_per_year=2.0, min_separation_hours=72.0)
    assert other.quantile == pytest.approx(choice.quantile, abs=1e-9)
    # a short record keeps at least min_peaks peaks (its rate is higher); too few peaks is a FitError
    short = gpd_series.iloc[: 4 * 365 * 8]
    assert threshold_for_rate(short, peaks_per_year=1.0, min_peaks=30).n_peaks >= 30
    with pytest.raises(FitError):
        threshold_for_rate(gpd_series.iloc[: 4 * 200], peaks_per_year=1.0)
    with pytest.raises(ValueError):
        threshold_for_rate(gpd_series, peaks_per_year=0.0)
