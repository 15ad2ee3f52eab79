"""Tests of extremes.extremal.nonstationary against the evd reference (tests/data/README.md)."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from numpy.testing import assert_allclose

from extremes.errors import DataError
from extremes.extremal import distributions as D
from extremes.extremal.nonstationary import fit_gev_nonstationary


def test_venice_location_trend_matches_evd(venice, ref):
    # reference README (evd 2.3-6.1): Venice r1, location linear in (year - 1956): trend 0.5644 (0.1395) cm/yr,
    # log-lik -216.0626 against -222.7145 stationary
    f = fit_gev_nonstationary(venice["r1"], reference_year=1956)
    assert f.loc_trend == pytest.approx(0.5644, abs=6e-5)
    assert f.standard_errors[1] == pytest.approx(0.1395, abs=6e-5)
    assert f.log_likelihood == pytest.approx(-216.0626, abs=6e-5)
    assert f.stationary_log_likelihood == pytest.approx(ref["venice_r1_gev"]["loglik"], abs=1e-6)
    assert f.deviance == pytest.approx(2 * (-216.0626 + 222.7145), abs=3e-4)
    assert f.p_value < 0.001


def test_return_levels_for_a_year(venice):
    f = fit_gev_nonstationary(venice["r1"], reference_year=1956)
    t = f.return_levels([10, 100], year=1981)
    loc, scale, shape = f.parameters_at(1981)
    assert_allclose(t.level_m, D.gev_return_level([10, 100], loc=loc, scale=scale, shape=shape))
    assert loc == pytest.approx(f.loc0 + 25 * f.loc_trend)
    assert np.all(t.lower_m < t.level_m) and np.all(t.level_m < t.upper_m)
    assert t.attrs["year"] == 1981


def test_no_trend_gives_small_deviance():
    rng = np.random.default_rng(3)
    from scipy import stats

    x = stats.genextreme.rvs(0.1, loc=2, scale=0.2, size=60, random_state=rng)
    s = pd.Series(x, index=np.arange(1950, 2010))
    f = fit_gev_nonstationary(s, scale_trend=True)
    assert f.deviance >= -1e-6
    assert f.log_likelihood >= f.stationary_log_likelihood - 1e-6
    assert f.reference_year == 1980
    with pytest.raises(DataError):
        fit_gev_nonstationary(x)  # no years
