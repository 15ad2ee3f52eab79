"""Tests of extremes.tide.harmonic: prediction, analysis, model I/O."""
import datetime as dt

import numpy as np
import pandas as pd
import pytest

from extremes.errors import DataError
from extremes.tide.harmonic import predict_tide
from extremes.tide.nodal import nodal_corrections

# METHODS.md sec. 3: V0 at 2000-01-01 00:00 UT, Set A [C]
V0_2000 = {"M2": 136.490, "S2": 0.000, "N2": 8.060, "K2": 199.946, "K1": 9.973, "O1": 126.517,
           "P1": 350.027, "Q1": 358.087, "Mf": 63.456, "Mm": 128.430, "M4": 272.980, "MS4": 136.490}


@pytest.mark.parametrize("name", sorted(V0_2000))
def test_predict_reproduces_v0_check_values(name):
    # [C] METHODS.md sec. 3: H = 1, G = 0 -> eta = f cos(V0 + u); G = 90 -> f sin(V0 + u)
    t = pd.DatetimeIndex([pd.Timestamp("2000-01-01", tz="UTC")])
    f, u = nodal_corrections([name], np.array([125.0698]), np.array([83.2976]))
    c = predict_tide(t, [name], [1.0], [0.0])[0] / f[0, 0]
    s = predict_tide(t, [name], [1.0], [90.0])[0] / f[0, 0]
    v0 = (np.rad2deg(np.arctan2(s, c)) - u[0, 0]) % 360.0
    assert abs((v0 - V0_2000[name] + 180) % 360 - 180) < 6e-4


def test_facts_of_the_trade_periods():
    # [V] public statements: semidiurnal cycle about 12 h 25 min; lunar day about 24 h 50 min
    times = pd.date_range("2001-03-01", periods=2 * 60 * 60, freq="30s", tz="UTC")  # 60 h
    for names, expected_min in [(["M2"], 12 * 60 + 25.2), (["M1"], 24 * 60 + 50.0)]:
        eta = predict_tide(times, names, [1.0], [0.0])
        j = np.flatnonzero((eta[1:-1] > eta[:-2]) & (eta[1:-1] >= eta[2:])) + 1
        gaps_min = np.diff(times[j]).astype("timedelta64[s]").astype(float) / 60.0
        # M1 carries a slowly varying nodal phase, hence the looser tolerance
        assert gaps_min[0] == pytest.approx(expected_min, abs=1.0 if names == ["M2"] else 3.0)


def test_spring_tides_near_new_and_full_moon():
    # Facts of the trade: equilibrium M2 + S2 (G = 0) has its spring maxima within ~1.5 d of new/full moon,
    # the moon phases computed with the ephem package (independent ephemeris)
    ephem = pytest.importorskip("ephem")
    from scipy.signal import find_peaks
    times = pd.date_range("2010-01-01", "2010-07-01", freq="30min", tz="UTC")
    eta = predict_tide(times, ["M2", "S2"], [1.0, 0.46], [0.0, 0.0])
    daily = pd.Series(eta, index=times).rolling("25h").max().to_numpy()
    peaks, _ = find_peaks(daily, distance=10 * 48)
    springs = times[peaks][(times[peaks] > times[0] + pd.Timedelta("3D"))]
    assert len(springs) >= 10
    phases = []
    d = ephem.Date("2009/12/15")
    for _ in range(16):
        d_new = ephem.next_new_moon(d)
        d_full = ephem.next_full_moon(d)
        phases += [d_new.datetime(), d_full.datetime()]
        d = ephem.Date(min(d_new, d_full) + 1)
    moons = pd.DatetimeIndex(sorted(set(phases))).tz_localize("UTC")
    for spring in springs:
        # the rolling 25 h max lags the envelope by ~12 h: centre it
        centre = spring - pd.Timedelta("12.5h")
        assert np.min(np.abs((moons - centre).total_seconds())) / 86400 < 1.5


def test_time_zone_of_input_does_not_matter():
    utc = pd.date_range("2015-06-01", periods=50, freq="h", tz="UTC")
    a = predict_tide(utc, ["M2", "K1"], [1.0, 0.3], [40.0, 120.0], z0_m=2.0)
    b = predict_tide(utc.tz_convert("Australia/Sydney"), ["M2", "K1"], [1.0, 0.3], [40.0, 120.0], z0_m=2.0)
    assert np.array_equal(a, b)
    assert a.mean() == pytest.approx(2.0, abs=0.2)


def test_predict_input_errors():
    t = pd.date_range("2015-06-01", periods=5, freq="h", tz="UTC")
    with pytest.raises(DataError, match="same length"):
        predict_tide(t, ["M2"], [1.0, 2.0], [0.0])
    with pytest.raises(DataError, match="naive"):
        predict_tide(t.tz_localize(None), ["M2"], [1.0], [0.0])
    with pytest.raises(DataError, match="unknown"):
        predict_tide(t, ["Q9"], [1.0], [0.0])
