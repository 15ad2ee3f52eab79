"""Independent Monte Carlo check of the skew-surge JPM with clustered storms.

A long simulation of a known process (tide from two sinusoids at each high water, storms spanning several
tides on top of a background surge) gives the true annual-maximum quantiles empirically; the method,
applied to 30 years of the same process, must hold the truth inside its interval at 10 and 100 years.
Outside reference: the simulated process itself (empirical quantiles of 8,000 simulated years).
"""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from extremes.curves import period_from_aep
from extremes.joint import skew_surge_joint_probability

pytestmark = pytest.mark.slow  # whole studies, batches or simulations

TIDES_PER_YEAR = 705.75
NODAL_SET_SIZE = 13_134  # high waters in 18.61 years


def tide_at(k):
    """High-water tide [m]: spring-neap (28.53 tides) and diurnal inequality (alternate tides)."""
    k = np.asarray(k, dtype=float)
    return 2.0 + 0.6 * np.cos(2 * np.pi * k / 28.53) + 0.12 * np.cos(np.pi * k)


def simulate_surge(n_tides, rng, *, storms_per_year=6.0, peak_scale_m=0.18, decay=0.75, half_width=3):
    """Skew surge at each tide: N(0, 0.07) background plus storms whose peak (exponential) decays over
    ``half_width`` tides either side (clusters of up to 7 tides)."""
    surge = rng.normal(0.0, 0.07, n_tides)
    n_storms = rng.poisson(storms_per_year * n_tides / TIDES_PER_YEAR)
    centre = rng.integers(0, n_tides, n_storms)
    peak = 0.1 + rng.exponential(peak_scale_m, n_storms)
    for d in range(-half_width, half_width + 1):
        idx = centre + d
        ok = (idx >= 0) & (idx < n_tides)
        np.add.at(surge, idx[ok], peak[ok] * decay ** abs(d))
    return surge


def true_levels(aeps, *, years=8000, seed=12345):
    """Empirical annual-maximum quantiles of the simulated total level [m]."""
    rng = np.random.default_rng(seed)
    n = int(years * TIDES_PER_YEAR)
    k = np.arange(n)
    total = tide_at(k) + simulate_surge(n, rng)
    year = (k / TIDES_PER_YEAR).astype(np.int64)
    annual_max = np.full(years, -np.inf)
    np.maximum.at(annual_max, year[year < years], total[year < years])
    return np.quantile(annual_max, 1 - np.asarray(aeps))


def sample_inputs(seed, *, years=30):
    """Predicted high waters of the 'nodal' set and a 30-year skew-surge Series (UTC)."""
    rng = np.random.default_rng(seed)
    n = int(years * TIDES_PER_YEAR)
    times = pd.Timestamp("1990-01-01", tz="UTC") + pd.to_timedelta(np.arange(n) * 12.4206, unit="h")
    return tide_at(np.arange(NODAL_SET_SIZE)), pd.Series(simulate_surge(n, rng), index=times)


@pytest.fixture(scope="module")
def truth():
    return true_levels([0.1, 0.01])


def test_truth_inside_interval_at_10_and_100_years(truth):
    hw, skew = sample_inputs(seed=7)
    res = skew_surge_joint_probability(hw, skew, n_bootstrap=200, seed=7)
    periods = period_from_aep([0.1, 0.01], definition="1/rate")
    lo = np.interp(np.log(periods), np.log(res.curve.periods_years), res.curve.lower_m)
    hi = np.interp(np.log(periods), np.log(res.curve.periods_years), res.curve.upper_m)
    assert np.all(lo <= truth) and np.all(truth <= hi), (lo, truth, hi)
    # storms span several tides: the clustered curve is lower than the theta = 1 curve at 10 years
    assert res.clustering_effect["difference_m"].iloc[0] < -0.005
