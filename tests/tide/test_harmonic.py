"""Tests of extremes.tide.harmonic: prediction, analysis, model I/O."""

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


# ---------------------------------------------------------------------------------------------------- analysis
from extremes.tide.harmonic import FittedConstituent, TideModel, analyse_tide  # noqa: E402

MAJOR = {"M2": (1.2, 30.0), "S2": (0.4, 75.0), "N2": (0.25, 10.0), "K1": (0.3, 200.0), "O1": (0.2, 150.0),
         "M4": (0.05, 300.0), "K2": (0.11, 77.0), "P1": (0.1, 203.0), "Sa": (0.06, 100.0)}


def _synthetic(years=2, freq="h", noise=0.01, phi=0.9, gaps=True, seed=1, start="2000-01-01"):
    t = pd.date_range(start, periods=int(years * 8766 * (1 if freq == "h" else 10)), freq=freq, tz="UTC")
    names = list(MAJOR)
    y = predict_tide(t, names, [MAJOR[n][0] for n in names], [MAJOR[n][1] for n in names], z0_m=2.0)
    rng = np.random.default_rng(seed)
    if noise:
        from scipy.signal import lfilter
        y = y + lfilter([1.0], [1.0, -phi], rng.normal(0.0, noise, t.size))  # AR(1) red noise
    if gaps:
        y[rng.random(t.size) < 0.1] = np.nan
        y[3000:4500] = np.nan
    series = pd.Series(y, index=t)
    series.attrs["datum"] = "CD"
    return series


@pytest.fixture(scope="module")
def red_model():
    return analyse_tide(_synthetic())


def test_recovery_with_red_noise_and_gaps(red_model):
    # Recovery: known constants + AR(1) noise + gaps -> amplitudes within 1 mm, phases within 0.5 deg (majors)
    for name in ("M2", "S2", "N2", "K1", "O1"):
        c = red_model.get(name)
        h, g = MAJOR[name]
        assert abs(c.amplitude_m - h) < 1e-3, name
        assert abs((c.phase_deg - g + 180) % 360 - 180) < 0.5, name
        assert not c.inferred and c.significant
    assert red_model.z0_m == pytest.approx(2.0, abs=0.02)
    assert red_model.datum == "CD"
    assert red_model.condition_number < 10
    assert len(red_model.constituents) >= 55  # 2-yr record: Rayleigh choice takes most of the table


def test_standard_errors_follow_the_red_spectrum(red_model):
    # AR(1) residual has far more power at low frequency than in the semidiurnal band: the band-averaged
    # errors must reflect that (METHODS.md sec. 5, coloured residuals [CP])
    assert red_model.get("Sa").amplitude_se_m > 3 * red_model.get("M2").amplitude_se_m
    # errors are honest: actual errors of the majors within 4 SE
    for name in ("M2", "S2", "N2", "K1", "O1", "M4"):
        c = red_model.get(name)
        assert abs(c.amplitude_m - MAJOR[name][0]) < 4 * c.amplitude_se_m + 1e-5, name


def test_white_noise_standard_error_check_value():
    # [C] METHODS.md sec. 5: hourly, 1 yr (n = 8766), white sigma_r = 0.10 m -> sigma_a ~ sigma_b ~
    # sigma_r sqrt(2/n) = 0.00151 m; for H = 1 m sigma_G ~ 0.087 deg
    t = pd.date_range("2001-01-01", periods=8766, freq="h", tz="UTC")
    rng = np.random.default_rng(7)
    y = predict_tide(t, ["M2"], [1.0], [0.0]) + rng.normal(0, 0.1, t.size)
    model = analyse_tide(pd.Series(y, index=t), infer=False)
    m2 = model.get("M2")
    assert m2.amplitude_se_m == pytest.approx(0.00151, rel=0.2)
    assert m2.phase_se_deg == pytest.approx(0.087, rel=0.2)
    assert model.residual_std_m == pytest.approx(0.1, rel=0.03)
    # a constituent with no signal has an amplitude within two standard errors of zero and is flagged weak
    assert min(c.amplitude_to_se for c in model.constituents) < 2
    assert any(c.to_dict()["weak"] for c in model.constituents)


def test_time_zone_shift_changes_phase_by_speed_times_offset(red_model):
    # [C] METHODS.md sec. 5: a clock Delta = +10 h ahead of UTC analysed as if UT gives g' = G + sigma*Delta
    series = _synthetic(noise=0.0, gaps=False, years=1)
    shifted = pd.Series(series.to_numpy(), index=series.index + pd.Timedelta(hours=10))
    base = analyse_tide(series, constituents=["M2", "K1", "S2", "O1"], infer=False)
    moved = analyse_tide(shifted, constituents=["M2", "K1", "S2", "O1"], infer=False)
    for c in base.constituents:
        expected = (c.phase_deg + c.speed_deg_per_hour * 10.0) % 360.0
        assert abs((moved.get(c.name).phase_deg - expected + 180) % 360 - 180) < 0.01, c.name
    # METHODS example: M2, Delta = +10 h: G = g' - 289.841
    assert base.get("M2").speed_deg_per_hour * 10 == pytest.approx(289.841, abs=1e-3)


def test_short_record_infers_p1_and_k2():
    # 30-day record: P1 and K2 are not resolved and are inferred with equilibrium ratios (METHODS.md sec. 4)
    series = _synthetic(noise=0.002, gaps=False, years=30 / 365.25)
    model = analyse_tide(series)
    assert "K2" in model.inference and "P1" in model.inference
    k2, s2 = model.get("K2"), model.get("S2")
    assert k2.inferred and k2.amplitude_m == pytest.approx(0.272 * s2.amplitude_m)
    assert k2.phase_deg == pytest.approx(s2.phase_deg)
    # the synthetic K2/S2 = 0.275 and P1/K1 = 0.333 are near equilibrium, so S2 and K1 come out nearly right
    assert s2.amplitude_m == pytest.approx(0.4, abs=0.005)
    assert model.get("K1").amplitude_m == pytest.approx(0.3, abs=0.01)
    no_infer = analyse_tide(series, infer=False)
    assert no_infer.get("K2") is None
    # user-given ratios
    custom = analyse_tide(series, infer={"K2": ("S2", 0.275, 2.0)})
    assert custom.get("K2").amplitude_m == pytest.approx(0.275 * custom.get("S2").amplitude_m)
    assert custom.get("P1") is None


def test_trend_term():
    series = _synthetic(noise=0.0, gaps=False, years=3)
    years = (series.index - series.index[0]).total_seconds() / (365.25 * 86400)
    model = analyse_tide(series + 0.004 * years, trend=True)
    assert model.trend_m_per_year == pytest.approx(0.004, abs=1e-4)
    assert model.trend_se_m_per_year is not None
    pred = model.predict(series.index[:5])
    assert np.allclose(pred.to_numpy(), (series + 0.004 * years).to_numpy()[:5], atol=0.005)


def test_chunked_normal_equations_equal_one_block():
    series = _synthetic(years=0.5)
    a = analyse_tide(series, chunk_size=1000)
    b = analyse_tide(series, chunk_size=10**7)
    assert a.get("M2").amplitude_m == pytest.approx(b.get("M2").amplitude_m, abs=1e-12)
    assert a.get("O1").phase_deg == pytest.approx(b.get("O1").phase_deg, abs=1e-9)


def test_model_json_round_trip_and_prediction(red_model, tmp_path):
    path = red_model.save(tmp_path / "model.json")
    loaded = TideModel.load(path)
    assert loaded.names == red_model.names
    times = pd.date_range("2030-01-01", periods=48, freq="h", tz="UTC")
    assert np.allclose(loaded.predict(times).to_numpy(), red_model.predict(times).to_numpy())
    assert loaded.predict(times).attrs["datum"] == "CD"
    with pytest.raises(Exception, match="exists"):
        red_model.save(path)
    red_model.save(path, overwrite=True)
    with pytest.raises(DataError, match="schema"):
        TideModel.from_dict({"schema": "other"})
    assert "TideModel(" in repr(red_model) and isinstance(red_model.constituents[0], FittedConstituent)


def test_analysis_input_errors():
    t = pd.date_range("2001-01-01", periods=100, freq="h", tz="UTC")
    with pytest.raises(DataError, match="naive"):
        analyse_tide(pd.Series(np.zeros(100), index=t.tz_localize(None)))
    with pytest.raises(DataError, match="Series"):
        analyse_tide(np.zeros(100))
    with pytest.raises(DataError, match="not resolved"):
        analyse_tide(pd.Series(np.sin(np.arange(100.0)), index=t), constituents=["M2", "S2"])
    with pytest.raises(DataError, match="resolves no constituent"):
        analyse_tide(pd.Series(np.zeros(10), index=t[:10]))
    with pytest.raises(DataError, match="duplicated"):
        analyse_tide(pd.Series(np.zeros(4), index=t[[0, 1, 1, 2]]))


def test_regular_grid_prediction_matches_sample_by_sample_synthesis(monkeypatch):
    # the block recurrence on regular grids against the direct sum f H cos(V + u - G) at every sample
    # (Schureman 1958 prediction formula, METHODS.md sec. 3): within 1e-4 of each amplitude
    from extremes.tide import harmonic, synthesis

    names = ["M2", "S2", "N2", "K2", "K1", "O1", "P1", "Q1", "M4", "MS4", "Sa", "Mf", "L2", "M1", "J1"]
    rng = np.random.default_rng(3)
    amplitudes, phases = rng.uniform(0.05, 1.0, len(names)), rng.uniform(0, 360, len(names))
    for freq, periods in (("10min", 60_000), ("1h", 30_000), ("7min", 4_000)):
        times = pd.date_range("2003-05-06 07:11", periods=periods, freq=freq, tz="UTC")
        fast = harmonic.predict_tide(times, names, amplitudes, phases)
        monkeypatch.setattr(synthesis, "_REGULAR_MIN", 10**12)
        slow = harmonic.predict_tide(times, names, amplitudes, phases)
        monkeypatch.setattr(synthesis, "_REGULAR_MIN", 2048)
        assert np.max(np.abs(fast - slow)) < 1e-4 * amplitudes.sum(), freq


def test_analysis_on_a_gappy_regular_grid_matches_the_sample_by_sample_design(monkeypatch):
    # the block phases used for records on a regular grid with gaps give the same harmonic constants as the
    # direct design f cos(V + u), f sin(V + u) at every sample (least squares of METHODS.md sec. 5) to within
    # 0.05 mm and 0.01 deg; inferred constituents (P1, K2 on a short record) included
    from extremes.tide import synthesis

    names = ["M2", "S2", "K1", "O1", "N2", "K2", "P1", "M4"]
    times = pd.date_range("1995-01-01", periods=120 * 144, freq="10min", tz="UTC")
    level = predict_tide(times, names, [1, 0.3, 0.2, 0.15, 0.2, 0.08, 0.066, 0.05], [10, 20, 30, 40, 50, 20, 30, 80])
    level = pd.Series(level + np.random.default_rng(5).normal(0, 0.05, times.size), index=times)
    level.iloc[1000:3000] = np.nan
    fast = analyse_tide(level)
    monkeypatch.setattr(synthesis, "_REGULAR_MIN", 10**12)
    slow = analyse_tide(level)
    assert any(c.inferred for c in fast.constituents)
    for c in fast.constituents:
        other = slow.get(c.name)
        assert c.amplitude_m == pytest.approx(other.amplitude_m, abs=5e-5), c.name
        if c.amplitude_m > 0.01:
            assert abs((c.phase_deg - other.phase_deg + 180) % 360 - 180) < 0.01, c.name
