"""Tests of extremes.extremal.dependence against METHODS.md sec. 9 check values (Ferro & Segers 2003)."""
from __future__ import annotations

import numpy as np
import pytest
from scipy.signal import lfilter

from extremes.errors import DataError
from extremes.extremal.dependence import extremal_index_intervals, extremal_index_runs

from .conftest import hourly_series

S = [5, 6, 7, 30, 31, 32, 60, 61, 90, 91, 92, 93]


def test_methods_check_values():
    # [C] METHODS.md sec. 9: intervals estimator 0.561458; runs (r = 3) 4/12 = 0.3333
    assert extremal_index_intervals(S) == pytest.approx(0.561458, abs=1e-6)
    assert extremal_index_runs(S, run_length=3) == pytest.approx(4 / 12)


def test_series_input_equals_positions():
    v = np.zeros(120)
    v[S] = 2.0
    s = hourly_series(v)
    assert extremal_index_intervals(s, threshold=1.0) == pytest.approx(0.561458, abs=1e-6)
    assert extremal_index_runs(s, threshold=1.0, run_length=3) == pytest.approx(1 / 3)


def test_independent_series_has_theta_near_one_and_ar1_less():
    # iid noise: theta = 1 in theory; AR(1) with phi = 0.9 clusters strongly (theta well below 1)
    rng = np.random.default_rng(1)
    iid = rng.standard_normal(200_000)
    u = np.quantile(iid, 0.99)
    assert extremal_index_intervals(iid, threshold=u) == pytest.approx(1.0, abs=0.08)
    ar = lfilter([1], [1, -0.9], rng.standard_normal(200_000))
    assert extremal_index_intervals(ar, threshold=np.quantile(ar, 0.99)) < 0.6


def test_small_branch_and_errors():
    # all intervals <= 2: first branch, 2(sum T)^2/((N-1) sum T^2) = 2*16/(4*... ) capped at 1
    assert extremal_index_intervals([1, 2, 3, 4, 5]) == 1.0
    assert np.isnan(extremal_index_intervals([3]))
    with pytest.raises(DataError):
        extremal_index_intervals([3.5, 4.0])
    with pytest.raises(ValueError):
        extremal_index_runs(S, run_length=0)
