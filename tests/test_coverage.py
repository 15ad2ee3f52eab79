"""Fast subset of benchmarks/bench_coverage.py: a regression check of the bias and width of the recommended
method's intervals on a few seeded records of the simulated storm process (tests/simulated_storms.py).

Outside reference: the simulated process itself (empirical annual-maximum quantiles of 20,000 simulated
years). Bounds: the benchmark's 100-record run of the base process (README, "Coverage benchmark") gives a mean
bias within 1 % at 10 and 100 years and a mean 95 % width of 8 % (10 years) and 24 % (100 years) of the true
level; on four records the mean bias must stay within 4 %, every interval must hold the truth and the mean
widths lie within a factor 2 of the benchmark's.
"""
from __future__ import annotations

import numpy as np
import pytest

from extremes.curves import period_from_aep
from extremes.joint import skew_surge_joint_probability
from tests.simulated_storms import PROCESSES, sample_record, true_levels

pytestmark = pytest.mark.slow  # whole studies, batches or simulations

PERIODS_YEARS = np.array([10.0, 100.0])


@pytest.fixture(scope="module")
def truth():
    return true_levels(PROCESSES["base"], PERIODS_YEARS, years=20_000)


@pytest.fixture(scope="module")
def estimates():
    at = period_from_aep(1.0 / PERIODS_YEARS, definition="1/rate")
    rows = []
    for seed in (1000, 1001, 1002, 1003):
        hw, skew, _ = sample_record(PROCESSES["base"], seed)
        table = skew_surge_joint_probability(hw, skew, n_bootstrap=200, seed=seed).curve.table(at)
        rows.append(table[["level_m", "lower_m", "upper_m"]].to_numpy())
    return np.array(rows)  # (records, periods, 3)


def test_mean_bias_within_four_percent(estimates, truth):
    bias = estimates[:, :, 0].mean(axis=0) / truth - 1.0
    assert np.all(np.abs(bias) < 0.04), bias


def test_intervals_hold_the_truth_with_the_benchmark_width(estimates, truth):
    lower, upper = estimates[:, :, 1], estimates[:, :, 2]
    assert np.all((lower <= truth) & (truth <= upper)), (lower, truth, upper)
    relative_width = (upper - lower).mean(axis=0) / truth
    expected = np.array([0.265 / 3.260, 0.868 / 3.662])  # benchmark mean width / true level
    assert np.all((relative_width > expected / 2) & (relative_width < expected * 2)), relative_width
