"""Return-level curves: interpolation, inversion and the AEP conventions."""
from __future__ import annotations

import numpy as np
import pytest

from extremes.curves import DENSE_PERIODS_YEARS, ReturnLevelCurve, aep_from_period, period_from_aep
from extremes.errors import DataError


def _gumbel_curve():
    # Gumbel annual maxima, loc 2.0 m, scale 0.2 m: z_T = mu - sigma ln(-ln(1 - 1/T)) (Coles 2001 eq. 3.10)
    periods = DENSE_PERIODS_YEARS
    level = 2.0 - 0.2 * np.log(-np.log1p(-1.0 / periods))
    return ReturnLevelCurve(method="annual-maxima", periods_years=periods, level_m=level,
                            lower_m=level - 0.1, upper_m=level + 0.1, period_definition="1/AEP")


def test_aep_conventions_methods_sec9():
    # METHODS.md sec. 9 [C]: ARI 100 yr <-> AEP 0.995 %; AEP 1 % <-> ARI 99.5 yr
    assert aep_from_period(100.0, definition="1/rate") == pytest.approx(0.00995017, abs=1e-8)
    assert period_from_aep(0.01, definition="1/rate") == pytest.approx(99.4992, abs=1e-4)
    assert aep_from_period(100.0, definition="1/AEP") == pytest.approx(0.01)


def test_level_at_matches_methods_gumbel_check_values():
    # METHODS.md sec. 9 [C]: mu = 2.0, sigma = 0.2, xi = 0: T = 10/100/1000 -> 2.45007/2.92003/3.38145
    curve = _gumbel_curve()
    np.testing.assert_allclose(curve.level_at([10, 100, 1000]), [2.45007, 2.92003, 3.38145], atol=2e-3)


def test_period_of_level_inverts_level_at():
    curve = _gumbel_curve()
    periods = np.array([2.0, 10.0, 100.0, 1000.0])
    np.testing.assert_allclose(curve.period_of_level(curve.level_at(periods)), periods, rtol=1e-3)
    assert np.isinf(curve.period_of_level(10.0))


def test_round_trip_and_shift():
    curve = _gumbel_curve()
    again = ReturnLevelCurve.from_dict(curve.to_dict())
    np.testing.assert_array_equal(again.level_m, curve.level_m)
    np.testing.assert_allclose(curve.shifted(0.3).level_at([100]), curve.level_at([100]) + 0.3)


def test_out_of_range_period_is_refused():
    with pytest.raises(DataError, match="return periods"):
        _gumbel_curve().level_at([20000])


def test_one_year_period():
    # under 1/AEP a 1-year level is undefined (AEP = 1); under 1/rate it is the level reached once a year
    curve = _gumbel_curve()
    assert np.isnan(curve.level_at([1.0])[0])
    rate_curve = ReturnLevelCurve(method="peaks-over-threshold", periods_years=DENSE_PERIODS_YEARS,
                                  level_m=1.5 + 0.1 * np.log(DENSE_PERIODS_YEARS), lower_m=None, upper_m=None,
                                  period_definition="1/rate")
    # GPD xi = 0 with threshold 1.5 m, scale 0.1 m, rate 1/yr: x_T = u + sigma ln(T) (METHODS.md sec. 9 [C])
    assert rate_curve.level_at([1.0])[0] == pytest.approx(1.5, abs=1e-9)


def test_table_on_one_period_basis():
    # AEP = 1 - exp(-1/T) for an average recurrence interval T (METHODS sec. 9): a 2-year ARI is the AEP
    # 39.35 %, i.e. a 1/AEP period of 2.5415 years
    curve = _gumbel_curve()
    table = curve.table_on_basis([2.0, 100.0], basis="1/rate")
    native = 1.0 / (1.0 - np.exp(-1.0 / np.array([2.0, 100.0])))
    np.testing.assert_allclose(table["native_return_period_years"], native, rtol=1e-12)
    assert native[0] == pytest.approx(2.5415, abs=1e-4)
    np.testing.assert_allclose(table["level_m"], curve.level_at(native))
    assert set(table["period_definition"]) == {"1/rate"} and set(table["native_period_definition"]) == {"1/AEP"}
    # the other way: a 1.5-year 1/AEP period is an ARI of 0.91 year, below the rate curve's grid: NaN
    rate_curve = ReturnLevelCurve(method="peaks-over-threshold", periods_years=DENSE_PERIODS_YEARS,
                                  level_m=1.5 + 0.1 * np.log(DENSE_PERIODS_YEARS), lower_m=None, upper_m=None,
                                  period_definition="1/rate")
    back = rate_curve.table_on_basis([1.5, 100.0], basis="1/AEP")
    assert np.isnan(back["level_m"].iloc[0]) and np.isnan(back["native_return_period_years"].iloc[0])
    assert back["native_return_period_years"].iloc[1] == pytest.approx(99.4992, abs=1e-4)
    # same basis: the plain table
    same = curve.table_on_basis([10.0], basis="1/AEP")
    assert same["level_m"].iloc[0] == pytest.approx(curve.level_at([10.0])[0])
    assert list(curve.table([10.0])["period_definition"]) == ["1/AEP"]

def test_unbounded_upper_bound_is_null_in_json_unbounded_in_csv_and_survives_a_round_trip():
    # CONTRACT.md: an upper bound the data cannot limit is null, never a number cut off by a grid
    from extremes.results import csv_text as _csv

    periods = np.array([2.0, 10.0, 100.0, 1000.0])
    curve = ReturnLevelCurve(method="annual-maxima", periods_years=periods, level_m=np.array([1.0, 1.5, 2.0, 2.5]),
                             lower_m=np.array([0.9, 1.3, 1.6, 1.8]), upper_m=np.array([1.1, 1.8, np.inf, np.inf]))
    data = curve.to_dict()
    assert data["upper_m"][2:] == [None, None] and data["upper_unbounded"] == [False, False, True, True]
    back = ReturnLevelCurve.from_dict(data)
    assert np.isposinf(back.upper_m[2:]).all() and np.isposinf(back.shifted(0.3).upper_m[3])
    table = curve.table([10.0, 50.0, 100.0])
    assert table["upper_m"].iloc[0] == pytest.approx(1.8) and np.isposinf(table["upper_m"].iloc[1:]).all()
    assert "unbounded" in _csv(table).splitlines()[2]
