"""Tests of extremes.surge against METHODS.md sec. 7-8 check values and scipy.stats references."""
from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from scipy import signal, stats

from extremes import surge
from extremes.errors import DataError, ExtremesWarning, FitError

M2_DEG_PER_HOUR = 28.9841042  # METHODS sec. 2 table [V: published speed]
S2_DEG_PER_HOUR = 30.0
T0 = pd.Timestamp("2001-03-01", tz="UTC")


def _hours(index: pd.DatetimeIndex) -> np.ndarray:
    return (index.as_unit("ns").asi8 - T0.as_unit("ns").value) / 3.6e12


def _m2(hours: np.ndarray, amplitude_m: float = 1.0) -> np.ndarray:
    return amplitude_m * np.cos(np.radians(M2_DEG_PER_HOUR) * hours)


def _m2_turning_points(start_h: float, end_h: float, amplitude_m: float = 1.0) -> pd.DataFrame:
    """Exact HW/LW of amplitude*cos(w t): HW at w t = 2 pi k, LW at w t = (2k+1) pi."""
    period_h = 360.0 / M2_DEG_PER_HOUR
    k = np.arange(math.floor(start_h / period_h * 2) - 1, math.ceil(end_h / period_h * 2) + 2)
    t_h = k * period_h / 2.0
    kind = np.where(k % 2 == 0, "high", "low")
    return pd.DataFrame({"time": T0 + pd.to_timedelta(t_h, unit="h"),
                         "level_m": np.where(kind == "high", amplitude_m, -amplitude_m), "kind": kind})


def _series(index, values, datum="test"):
    s = pd.Series(values, index=index)
    s.attrs["datum"] = datum
    return s


@pytest.fixture(scope="module")
def minute_m2():
    index = pd.date_range(T0, periods=30 * 24 * 60, freq="min")
    h = _hours(index)
    return index, h, _m2_turning_points(h[0], h[-1])


def test_constant_offset_gives_constant_skew_surge(minute_m2):
    # METHODS sec. 8 check [C]: obs = tide + 0.25 m -> every skew surge = 0.25 m.
    index, h, tp = minute_m2
    skew = surge.skew_surges_from_turning_points(_series(index, _m2(h) + 0.25), tp)
    assert len(skew) >= 55  # 30 days hold ~58 complete semidiurnal cycles
    # 1-min sampling misses the crest by at most 1 - cos(w * 0.5 min) = 3.6e-5 m
    np.testing.assert_allclose(skew["skew_surge_m"], 0.25, atol=1e-4)
    assert (skew["window_end"] - skew["window_start"]).dt.total_seconds().between(6.2 * 3600, 6.22 * 3600 * 2).all()
    assert skew.attrs["n_skipped"] == 0


def test_time_shift_pollutes_residual_not_skew_surge(minute_m2):
    # METHODS sec. 8 check [C]: pure M2 (H = 1 m) observed 10 min late -> skew surge = 0, while
    # max |NTR| = H * sigma * delta = 1 * 0.50587 rad/h * (1/6 h) = 0.0843 m.
    index, h, tp = minute_m2
    observed = _series(index, _m2(h - 10.0 / 60.0))
    ntr = surge.residual_from_prediction(observed, _m2(h))
    assert np.nanmax(np.abs(ntr)) == pytest.approx(0.0843, abs=2e-4)
    skew = surge.skew_surges_from_turning_points(observed, tp)
    np.testing.assert_allclose(skew["skew_surge_m"], 0.0, atol=1e-4)
    # the observed crest comes 10 min after the predicted one
    lag = (skew["observed_max_time"] - skew["time"]).dt.total_seconds() / 60.0
    np.testing.assert_allclose(lag, 10.0, atol=1.0)


def test_incomplete_cycles_are_skipped_and_counted():
    # [C] an hourly pure-M2 record with one NaN and one absent row: the cycles containing them are skipped.
    index = pd.date_range(T0, periods=24 * 20, freq="h")
    h = _hours(index)
    level = _series(index, _m2(h) + 0.1)
    tp = _m2_turning_points(h[0], h[-1])
    full = surge.skew_surges_from_turning_points(level, tp)
    n = full.attrs["n_cycles"]
    assert full.attrs["n_skipped"] == 0 and len(full) == n
    gappy = level.copy()
    gappy.iloc[100] = np.nan
    gappy = gappy.drop(gappy.index[300])
    out = surge.skew_surges_from_turning_points(gappy, tp)
    assert out.attrs["n_cycles"] == n
    assert out.attrs["n_skipped"] == 2 and len(out) == n - 2
    for pos in (100, 300):
        t = index[pos]
        assert not ((out["window_start"] <= t) & (out["window_end"] >= t)).any()
    loose = surge.skew_surges_from_turning_points(gappy, tp, require_complete=False)
    assert len(loose) == n and (~loose["complete"]).sum() == 2


def test_skew_surge_rejects_bad_input(minute_m2):
    index, h, tp = minute_m2
    naive = pd.Series(_m2(h), index=index.tz_localize(None))
    with pytest.raises(ValueError, match="naive"):
        surge.skew_surges_from_turning_points(naive, tp)
    with pytest.raises(DataError, match="kind"):
        surge.skew_surges_from_turning_points(_series(index, _m2(h)), tp.drop(columns="kind"))
    # one rule for every stage (extremes.timebase.level_series): time order is restored, repeats are refused
    shuffled = _series(index[::-1], _m2(h)[::-1])
    pd.testing.assert_frame_equal(surge.skew_surges_from_turning_points(shuffled, tp),
                                  surge.skew_surges_from_turning_points(_series(index, _m2(h)), tp))
    repeated = _series(index.append(index[:1]), np.append(_m2(h), 0.0))
    with pytest.raises(DataError, match="duplicated"):
        surge.skew_surges_from_turning_points(repeated, tp)


# ------------------------------------------------------------------------------------------------------
# interaction
# ------------------------------------------------------------------------------------------------------
@pytest.fixture(scope="module")
def spring_neap():
    """10 years at 10 min of M2 (1 m) + S2 (0.3 m); HW/LW located with scipy.signal.find_peaks at 5 min.

    10-min sampling, not hourly: hourly samples under-read each crest by up to H (1 - cos(sigma * 30 min)),
    about 4 cm at springs and 1 cm at neaps here, which alone makes skew surge fall with HW level.
    """
    index = pd.date_range(T0, periods=10 * 8766 * 6, freq="10min")
    h = _hours(index)

    def tide(hours):
        return np.cos(np.radians(M2_DEG_PER_HOUR) * hours) + 0.3 * np.cos(np.radians(S2_DEG_PER_HOUR) * hours)

    fine_h = np.arange(h[0] - 13, h[-1] + 13, 5.0 / 60.0)
    fine = tide(fine_h)
    hi = signal.find_peaks(fine)[0]
    lo = signal.find_peaks(-fine)[0]
    pos = np.concatenate([hi, lo])
    tp = pd.DataFrame({"time": T0 + pd.to_timedelta(fine_h[pos], unit="h"), "level_m": fine[pos],
                       "kind": ["high"] * hi.size + ["low"] * lo.size}).sort_values("time")
    return index, h, tide(h), tp


def _storm_surge(rng, n, *, storms_per_year=40.0, per_hour=1):
    """AR(1) background plus Poisson storms with Gaussian hydrographs (sd 8 h) and exponential peaks."""
    background = signal.lfilter([1.0], [1.0, -0.95 ** (1 / per_hour)],
                                rng.normal(0.0, 0.03 / math.sqrt(per_hour), n))
    spikes = np.zeros(n)
    n_storms = rng.poisson(storms_per_year * n / 8766 / per_hour)
    spikes[rng.integers(0, n, n_storms)] = rng.exponential(0.4, n_storms)
    kernel = np.exp(-0.5 * (np.arange(-36 * per_hour, 36 * per_hour + 1) / (8.0 * per_hour)) ** 2)
    return background + signal.oaconvolve(spikes, kernel, mode="same")


def test_independent_surge_shows_no_interaction_on_most_seeds(spring_neap):
    # [C] surge generated independently of the tide: both tests should reject at 5% on about 5% of seeds.
    index, _, tide, tp = spring_neap
    hw = tp.loc[tp["kind"] == "high", "time"]
    detected_timing = detected_level = 0
    for seed in range(10):
        s = _storm_surge(np.random.default_rng(seed), index.size, per_hour=6)
        observed = _series(index, tide + s)
        ntr = surge.residual_from_prediction(observed, tide)
        skew = surge.skew_surges_from_turning_points(observed, tp)
        res = surge.interaction_tests_from_series(ntr, hw, skew, peak_quantile=0.97)
        assert res.n_peaks >= 65 and sum(res.timing_counts) == res.n_peaks
        assert sum(res.timing_expected) == pytest.approx(res.n_peaks)
        detected_timing += res.timing_dependent
        detected_level += res.level_dependent
    # binomial(10, 0.05): P(more than 3 rejections) = 0.001
    assert detected_timing <= 3 and detected_level <= 3
    assert "no dependence" in res.verdict or "not timed" in res.verdict


def test_tide_dependent_surge_is_detected(spring_neap):
    # [C] a surge (0.3 m set-up plus storms) amplified at low tide and damped at high tide by the factor
    # 1 - 0.7 tide/1.3: peaks cluster away from high water and skew surge falls with the HW level.
    index, _, tide, tp = spring_neap
    hw = tp.loc[tp["kind"] == "high", "time"]
    s = _storm_surge(np.random.default_rng(42), index.size, per_hour=6)
    observed = _series(index, tide + (0.3 + s) * (1.0 - 0.7 * tide / 1.3))
    ntr = surge.residual_from_prediction(observed, tide)
    skew = surge.skew_surges_from_turning_points(observed, tp)
    res = surge.interaction_tests_from_series(ntr, hw, skew, peak_quantile=0.97)
    assert res.timing_dependent and res.level_dependent
    assert res.kendall_tau < 0
    # the reference: scipy.stats.kendalltau on the same pairs
    kept, last = [], None
    for i, t in enumerate(skew["time"]):
        if last is None or t - last >= pd.Timedelta(hours=48):
            kept.append(i)
            last = t
    ref = stats.kendalltau(skew["skew_surge_m"].iloc[kept], skew["predicted_high_water_m"].iloc[kept])
    assert res.n_skew_surges_tested == len(kept) and res.n_skew_surges == len(skew)
    assert res.kendall_tau == pytest.approx(ref.statistic) and res.kendall_p_value == pytest.approx(ref.pvalue)
    bands = list(res.band_quantiles_m.values())
    assert len(bands) == 3 and bands[0][0.99] > bands[-1][0.99]  # neap-band tail above spring-band tail
    assert "depends on the predicted high-water level" in res.verdict
    d = res.to_dict()
    assert d["level"]["dependent"] and d["timing"]["dependent"] and len(d["timing"]["counts"]) == 13


def test_timing_chi2_matches_scipy():
    # reference: scipy.stats.chisquare on counts and expected counts reported by the result
    index = pd.date_range(T0, periods=3 * 8766, freq="h")
    h = _hours(index)
    tp = _m2_turning_points(h[0], h[-1])
    hw = tp.loc[tp["kind"] == "high", "time"]
    s = _storm_surge(np.random.default_rng(3), index.size, storms_per_year=40)
    ntr = _series(index, s)
    skew = surge.skew_surges_from_turning_points(_series(index, _m2(h) + s), tp)
    skew["predicted_high_water_m"] += np.random.default_rng(4).normal(0, 0.1, len(skew))
    with pytest.warns(ExtremesWarning, match="timing chi-square test needs"):
        res = surge.interaction_tests_from_series(ntr, hw, skew, peak_quantile=0.97)
    ref = stats.chisquare(res.timing_counts, res.timing_expected)
    assert res.timing_chi2 == pytest.approx(ref.statistic) and res.timing_p_value == pytest.approx(ref.pvalue)
    # hourly samples of a pure M2: the -6 and +6 bins only hold 0.71 h of each 12.42-h cycle
    assert res.timing_expected[0] < res.timing_expected[6] * 0.8


# ------------------------------------------------------------------------------------------------------
# mean sea level
# ------------------------------------------------------------------------------------------------------
def _annual(rng, n=40, slope=0.003, noise=0.02, phi=0.0, nodal_amp=0.0):
    years = np.arange(1980, 1980 + n) + 0.5
    e = signal.lfilter([1.0], [1.0, -phi], rng.normal(0.0, noise, n))
    y = 7.0 + slope * (years - 2000) + nodal_amp * np.cos(2 * np.pi * (years - 1990) / 18.613) + e
    return pd.Series(y, index=years)


def test_trend_matches_linregress_without_autocorrelation_adjustment():
    # reference: scipy.stats.linregress slope, stderr and intercept_stderr
    means = _annual(np.random.default_rng(1))
    ref = stats.linregress(means.index, means.to_numpy())
    trend = surge.msl_trend(means, adjust_autocorrelation=False)
    assert trend.trend_m_per_year == pytest.approx(ref.slope, rel=1e-10)
    assert trend.trend_se_m_per_year == pytest.approx(ref.stderr, rel=1e-8)
    assert trend.msl_at(0.0) == pytest.approx(ref.intercept, rel=1e-8)
    assert trend.msl_at_se(0.0) == pytest.approx(ref.intercept_stderr, rel=1e-6)
    assert trend.se_inflation == 1.0 and trend.n_years == 40
    assert "mm/yr" in repr(trend) and trend.to_dict()["nodal_amplitude_m"] is None


def test_trend_se_inflated_by_effective_sample_size():
    # METHODS sec. 7 [CP]: n_eff = n (1 - r1)/(1 + r1); residual variance over n_eff - 2 (Santer et al. 2000).
    means = _annual(np.random.default_rng(5), phi=0.6)
    ref = stats.linregress(means.index, means.to_numpy())
    e = means.to_numpy() - (ref.intercept + ref.slope * means.index.to_numpy())
    r1 = np.sum(e[:-1] * e[1:]) / np.sum(e * e)
    assert r1 > 0.2
    n = means.size
    n_eff = n * (1 - r1) / (1 + r1)
    trend = surge.msl_trend(means)
    assert trend.r1 == pytest.approx(r1) and trend.n_effective == pytest.approx(n_eff)
    assert trend.trend_se_m_per_year == pytest.approx(ref.stderr * math.sqrt((n - 2) / (n_eff - 2)), rel=1e-8)
    assert trend.trend_m_per_year == pytest.approx(ref.slope, rel=1e-10)


def test_effective_sample_size_formula():
    # [C] from n_eff = n (1 - r1)/(1 + r1): n = 50, r1 = 0.5 -> 16.667; r1 = 0 -> n; negative r1 not used.
    assert surge.effective_sample_size(50, 0.5) == pytest.approx(50 / 3)
    assert surge.effective_sample_size(50, 0.0) == 50
    assert surge.effective_sample_size(50, -0.3) == 50


def test_nodal_term_recovered_exactly():
    # [C] noise-free annual means with a 3 mm/yr trend and a 2-cm 18.613-yr cycle
    years = np.arange(1960, 2020) + 0.5
    y = 1.5 + 0.003 * (years - 1990) + 0.02 * np.cos(2 * np.pi * (years - 1990) / 18.613 - np.radians(40))
    trend = surge.msl_trend(pd.Series(y, index=years), nodal=True, reference_year=1990.0,
                             adjust_autocorrelation=False)
    assert trend.trend_m_per_year == pytest.approx(0.003, abs=1e-12)
    assert trend.nodal_amplitude_m == pytest.approx(0.02, abs=1e-12)
    assert trend.nodal_phase_deg == pytest.approx(40.0, abs=1e-8)
    assert trend.msl_at(2000.0) == pytest.approx(1.53, abs=1e-12)


def test_trend_needs_enough_years():
    with pytest.raises(FitError, match="at least 3"):
        surge.msl_trend(pd.Series([1.0, 1.1], index=[2000.5, 2001.5]))


def test_annual_means_and_completeness_rule():
    # reference: pandas resample of the same hourly values; 2001 has a 30% outage and fails the 0.75 rule
    index = pd.date_range("2000-01-01", "2002-12-31 23:00", freq="h", tz="UTC")
    rng = np.random.default_rng(0)
    level = pd.Series(rng.normal(2.0, 0.5, index.size) + 0.01 * (index.year - 2000), index=index)
    outage = (index >= "2001-02-01") & (index < "2001-05-21")
    level[outage] = np.nan
    table = surge.annual_mean_sea_level(level.drop(level.index[5000:5010]))
    ref = level.drop(level.index[5000:5010]).resample("YS").mean()
    assert list(table.index) == [2000, 2001, 2002]
    assert table.loc[2000, "n_expected"] == 8784 and table.loc[2001, "n_expected"] == 8760
    assert table.loc[2000, "n_samples"] == 8774
    assert table.loc[2001, "completeness"] == pytest.approx(1 - outage.sum() / 8760)
    assert not table.loc[2001, "complete"] and np.isnan(table.loc[2001, "mean_m"])
    assert table.loc[2002, "mean_m"] == pytest.approx(ref.iloc[2])
    assert table.loc[2002, "mean_time_year"] == pytest.approx(2002.5, abs=1e-3)
    assert surge.annual_mean_sea_level(level, min_completeness=0.6).loc[2001, "complete"]


def test_decimal_year_and_epoch_adjustment():
    # [C] 2000 is a leap year: 2000-07-02 00:00 is 183/366 of the way = 2000.5
    times = pd.DatetimeIndex(["2000-01-01", "2000-07-02", "2010-01-01"], tz="UTC")
    np.testing.assert_allclose(surge.decimal_year(times), [2000.0, 2000.5, 2010.0])
    series = pd.Series([1.0, 1.0, 1.0], index=times)
    out = surge.adjust_to_epoch(series, 0.003, 2010.0)
    np.testing.assert_allclose(out, [1.03, 1.0285, 1.0])
    assert out.attrs["epoch_year"] == 2010.0
    with pytest.raises(ValueError, match="naive"):
        surge.adjust_to_epoch(pd.Series([1.0], index=pd.DatetimeIndex(["2000-01-01"])), 0.003, 2010.0)


def test_residual_rejects_duplicates():
    index = pd.DatetimeIndex(["2000-01-01", "2000-01-01"], tz="UTC")
    with pytest.raises(DataError, match="duplicated"):
        surge.residual_from_prediction(pd.Series([1.0, 2.0], index=index), [0.0, 0.0])


# ------------------------------------------------------------------------------------------------------
# wrappers taking a TideModel (extremes.tide) and the invented harbour's demo record
# ------------------------------------------------------------------------------------------------------
def _model(datum="test"):
    from extremes.tide.constituents import get_constituent
    from extremes.tide.harmonic import FittedConstituent, TideModel

    consts = tuple(FittedConstituent(n, get_constituent(n).speed_deg_per_hour, h, g, 0.001, 0.1, 1e4)
                   for n, h, g in [("M2", 1.1, 95.0), ("S2", 0.38, 135.0), ("K1", 0.12, 205.0), ("O1", 0.1, 185.0)])
    return TideModel(z0_m=2.5, constituents=consts, datum=datum)


def test_wrappers_with_a_tide_model():
    # METHODS sec. 8 check [C] through the model path: obs = predicted tide + 0.25 m at 10-min steps ->
    # NTR = 0.25 everywhere and every skew surge = 0.25 (10-min sampling misses a crest by <= 1.6 mm here).
    model = _model()
    index = pd.date_range("2020-01-01", periods=60 * 144, freq="10min", tz="UTC")
    observed = _series(index, model.predict(index).to_numpy() + 0.25)
    ntr = surge.non_tidal_residual(observed, model)
    np.testing.assert_allclose(ntr, 0.25, atol=1e-9)
    skew = surge.skew_surges(observed, model)
    assert len(skew) >= 110 and skew.attrs["n_skipped"] == 0
    np.testing.assert_allclose(skew["skew_surge_m"], 0.25, atol=2.5e-3)
    with pytest.warns(ExtremesWarning):
        res = surge.interaction_tests(observed, model, skew)
    assert isinstance(res, surge.InteractionTests) and isinstance(res.verdict, str)
    from extremes.errors import DatumError
    with pytest.raises(DatumError, match="datum"):
        surge.non_tidal_residual(observed, _model(datum="other"))


def test_trend_of_the_demo_record_brackets_the_true_rate():
    # The invented harbour's demo record (example_records/README.md) was built with MSL rising 3.0 mm/yr
    # [scenario truth, example_records/truth.json]: the fitted trend should lie within 3 standard errors.
    import json

    from extremes.examples import example_record_path, example_records_folder

    truth = json.loads((example_records_folder() / "truth.json").read_text())
    df = pd.read_csv(example_record_path(), dtype={"level_m": str}, keep_default_na=False)
    t = pd.to_datetime(df["time"], utc=True, format="ISO8601")
    level = pd.Series(pd.to_numeric(df["level_m"], errors="coerce").to_numpy(), index=t)
    level = level[~level.index.duplicated()].sort_index()
    level[level < -90] = np.nan
    table = surge.annual_mean_sea_level(level)
    assert not table.loc[2009, "complete"]  # the long winter outage of 2009
    trend = surge.msl_trend(table)
    true_rate = truth["mean_sea_level"]["trend_m_per_year"]
    assert abs(trend.trend_m_per_year - true_rate) < 3 * trend.trend_se_m_per_year
    assert 0.0003 < trend.trend_se_m_per_year < 0.0015


def test_crest_refinement_of_hourly_records():
    # [C] hourly pure M2 (H = 1 m) + 0.25 m: the highest hourly sample misses the crest by up to
    # H (1 - cos(sigma * 30 min)) = 1 - cos(14.49 deg) = 0.0318 m; the three-point parabola recovers it.
    index = pd.date_range(T0 + pd.Timedelta(minutes=7), periods=24 * 60, freq="h")
    h = _hours(index)
    level = _series(index, _m2(h) + 0.25)
    tp = _m2_turning_points(h[0], h[-1])
    raw = surge.skew_surges_from_turning_points(level, tp, refine_crest=False)
    assert raw["skew_surge_m"].min() >= 0.25 - 0.0318 - 1e-9
    assert raw["skew_surge_m"].mean() < 0.25 - 0.005
    refined = surge.skew_surges_from_turning_points(level, tp)
    np.testing.assert_allclose(refined["skew_surge_m"], 0.25, atol=2e-3)
    np.testing.assert_array_equal(refined["observed_max_sample_m"], raw["observed_max_m"])
    lag = (refined["observed_max_time"] - refined["time"]).dt.total_seconds() / 60.0
    assert lag.abs().max() < 5.0
