"""Direct methods as curves: annual maxima checked against evd's Port Pirie fit (tests/data/README.md)."""
from __future__ import annotations

import json
import warnings

import numpy as np
import pandas as pd
import pytest

from extremes.errors import ExtremesWarning
from extremes.extremal.direct import direct_annual_maxima, direct_peaks_over_threshold


def _series_with_annual_maxima(maxima, years):
    # a 6-hourly level series whose yearly maximum is the given value (the rest 1 m lower)
    times = pd.date_range(f"{years[0]}-01-01", f"{years[-1] + 1}-01-01", freq="6h", tz="UTC", inclusive="left")
    values = np.zeros(times.size)
    year_of = np.asarray(times.year)
    for y, m in zip(years, maxima):
        sel = np.flatnonzero(year_of == y)
        values[sel] = m - 1.0
        values[sel[len(sel) // 2]] = m
    return pd.Series(values, index=times)


def test_direct_annual_maxima_matches_evd_port_pirie(tests_data):
    # evd 2.3-6.1 reference fit of Port Pirie (Coles 2001 sec. 3.4.1): 10/100-year levels 4.2962/4.6884 and
    # profile-likelihood 95 % intervals (tests/data/evd_reference_values.json)
    ref = json.loads((tests_data / "evd_reference_values.json").read_text())["portpirie_gev"]["return_levels"]
    data = pd.read_csv(tests_data / "portpirie.csv")
    level = _series_with_annual_maxima(data["annual_max_m"].to_numpy(), data["year"].to_numpy())
    curve = direct_annual_maxima(level, periods_years=np.geomspace(1.01, 1000, 60),
                                 profile_periods_years=(1.01, 2, 10, 100, 1000)).curve
    assert curve.method == "annual-maxima" and curve.period_definition == "1/AEP"
    for t in ("10", "100"):
        assert curve.level_at([float(t)])[0] == pytest.approx(ref[t]["estimate"], abs=2e-3)
        lo = np.interp(np.log(float(t)), np.log(curve.periods_years), curve.lower_m)
        hi = np.interp(np.log(float(t)), np.log(curve.periods_years), curve.upper_m)
        assert [lo, hi] == pytest.approx(ref[t]["profile_95"], abs=5e-3)


def test_direct_peaks_over_threshold_is_rate_based_and_increasing():
    rng = np.random.default_rng(2)
    times = pd.date_range("2000-01-01", "2020-01-01", freq="1h", tz="UTC", inclusive="left")
    level = pd.Series(np.cos(2 * np.pi * np.arange(times.size) / 12.42) + rng.gumbel(0, 0.05, times.size),
                      index=times)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ExtremesWarning)
        curve = direct_peaks_over_threshold(level, threshold_m=float(np.quantile(level, 0.999)),
                                            periods_years=np.geomspace(1.01, 1000, 40),
                                            profile_periods_years=(1.01, 10, 100, 1000)).curve
    assert curve.period_definition == "1/rate" and curve.method == "peaks-over-threshold"
    lv = curve.level_at([10, 100, 1000])
    assert np.all(np.diff(lv) > 0)
    assert np.all(curve.lower_m[-5:] < curve.level_m[-5:]) and np.all(curve.upper_m[-5:] > curve.level_m[-5:])
