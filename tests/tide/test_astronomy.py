"""Tests of extremes.tide.astronomy against METHODS.md sec. 1 check values and Meeus (1998)."""
import numpy as np
import pandas as pd
import pytest

from extremes.errors import DataError
from extremes.tide.astronomy import (
    RATES_DEG_PER_HOUR,
    days_since_epoch,
    doodson_variables,
    doodson_variables_days,
    doodson_variables_meeus,
)

# METHODS.md sec. 1 check table [C] (Set A, Explanatory Supplement 1961 polynomials)
CHECK = [
    ("2000-01-01 00:00", 68.2451, 211.7280, 279.9731, 83.2976, 125.0698, 282.9404),
    ("2000-01-01 12:00", 242.1497, 218.3162, 280.4659, 83.3533, 125.0433, 282.9405),
    ("2020-01-01 00:00", 294.8229, 345.3041, 280.1270, 177.0998, 98.2423, 283.2845),
]


def _diff(a, b):
    return np.abs((np.asarray(a) - np.asarray(b) + 180.0) % 360.0 - 180.0)


@pytest.mark.parametrize("row", CHECK)
def test_set_a_matches_methods_check_table(row):
    # [C] METHODS.md sec. 1 table, 4 decimals
    stamp, *expected = row
    got = doodson_variables(pd.DatetimeIndex([pd.Timestamp(stamp, tz="UTC")]))
    values = got[["tau", "s", "h", "p", "N", "p1"]].to_numpy()[0]
    assert _diff(values, expected).max() < 6e-5


def test_set_a_reproduces_meeus_constants_at_j2000():
    # [C/V] METHODS.md sec. 1: at J2000.0 Set A gives Meeus (1998) constants 218.3164, 280.4665, 83.3531,
    # 125.0445 to <= 0.0015 deg
    got = doodson_variables([pd.Timestamp("2000-01-01 12:00", tz="UTC")]).iloc[0]
    assert _diff([got.s, got.h, got.p, got.N], [218.3164477, 280.46646, 83.3531513, 125.04452]).max() < 0.0016


def test_set_a_agrees_with_set_b_over_a_century():
    # Set B = Meeus (1998) Astronomical Algorithms ch. 22/47 [V]; METHODS.md: agreement <= 0.004 deg near 2000
    times = pd.date_range("1950-01-01", "2050-01-01", freq="365D", tz="UTC")
    a = doodson_variables(times)
    b = doodson_variables_meeus(times)
    for col in ["tau", "s", "h", "p", "N", "p1"]:
        assert _diff(a[col], b[col]).max() < 0.02, col
    near = (times.year >= 1990) & (times.year <= 2010)
    for col in ["tau", "s", "h", "p", "N", "p1"]:
        assert _diff(a[col][near], b[col][near]).max() < 0.004, col


def test_rates_match_schureman_hourly_rates():
    # [M/V] Schureman hourly rates (METHODS.md sec. 1): Set A derivatives agree within 1e-8 deg/h
    d = np.array([36524.5, 36524.5 + 1.0 / 24.0])
    x = doodson_variables_days(d)
    rate = (np.unwrap(np.deg2rad(x), axis=0)[1] - np.unwrap(np.deg2rad(x), axis=0)[0]) * 180 / np.pi
    assert np.allclose(rate, RATES_DEG_PER_HOUR, atol=5e-8)


def test_periods_of_the_variables():
    # [C] METHODS.md sec. 1: tropical month 27.3216 d, year 365.2422 d, perigee 8.847 yr, node 18.613 yr
    r = RATES_DEG_PER_HOUR
    assert 360 / r[1] / 24 == pytest.approx(27.3216, abs=1e-4)
    assert 360 / r[2] / 24 == pytest.approx(365.2422, abs=1e-3)
    assert 360 / r[3] / 24 / 365.25 == pytest.approx(8.847, abs=1e-3)
    assert 360 / r[4] / 24 / 365.25 == pytest.approx(18.613, abs=1e-3)


def test_naive_times_refused():
    with pytest.raises(DataError, match="naive"):
        doodson_variables(pd.date_range("2000-01-01", periods=3, freq="h"))
    with pytest.raises(ValueError):
        days_since_epoch([np.datetime64("2000-01-01T00:00")])


def test_other_time_zone_converted_to_utc():
    utc = doodson_variables([pd.Timestamp("2000-01-01 00:00", tz="UTC")])
    local = doodson_variables([pd.Timestamp("2000-01-01 10:00", tz="Etc/GMT-10")])
    assert np.allclose(utc.to_numpy(), local.to_numpy())
