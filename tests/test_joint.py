"""Joint-probability cores and the skew-surge JPM: METHODS.md toy check, analytic integrals, inputs."""
from __future__ import annotations

import warnings

import numpy as np
import pandas as pd
import pytest
from scipy import integrate, optimize, stats

from extremes.curves import period_from_aep
from extremes.errors import DataError, ExtremesWarning
from extremes.joint import SurgeDistribution, exceedance_per_tide, skew_surge_joint_probability
from extremes.joint.convolution import return_levels_by_convolution

# METHODS.md sec. 10 toy check [C] (Pugh & Vassie 1979 convolution; skew-surge method after Batstone et al.
# 2013): HW set {2.0, 2.4, 2.8, 3.2} m, P(S > s) = 0.01 exp(-(s - 0.3)/0.12) for s >= 0.3, N_t = 705.75.
TOY_HW = np.array([2.0, 2.4, 2.8, 3.2])
TOY_SURGE = stats.expon(loc=0.3 + 0.12 * np.log(0.01), scale=0.12)  # sf = 0.01 exp(-(s-0.3)/0.12) above 0.3
N_T = 705.75


@pytest.mark.parametrize("grid_step_m", [None, 0.001])
def test_toy_check_per_tide_exceedance_methods_sec10(grid_step_m):
    # METHODS.md sec. 10 [C]: z = 3.8 m -> Q = 2.1280e-4, E = 0.15019/yr
    q = exceedance_per_tide([3.8], TOY_HW, TOY_SURGE, grid_step_m=grid_step_m)[0]
    assert q == pytest.approx(2.1280e-4, abs=5e-9)
    assert N_T * q == pytest.approx(0.15019, abs=5e-5)


def test_toy_check_return_levels_methods_sec10():
    # METHODS.md sec. 10 [C]: E = 0.01/yr -> 4.12511 m; AEP 1 % -> 4.12451 m; theta = 0.5 -> 4.04194 m
    t_aep = period_from_aep(0.01, definition="1/rate")
    z = return_levels_by_convolution(TOY_HW, TOY_SURGE, events_per_year=N_T, periods_years=[100.0, t_aep])
    np.testing.assert_allclose(z, [4.12511, 4.12451], atol=1e-5)
    z_half = return_levels_by_convolution(TOY_HW, TOY_SURGE, events_per_year=N_T, periods_years=[100.0],
                                          extremal_index=0.5)
    assert z_half[0] == pytest.approx(4.04194, abs=1e-5)


def _quad_exceedance(z, amplitude, sf):
    # Q(z) = int f_X(x) P(S > z - x) dx with X ~ arcsine on [-A, A] (scipy.integrate.quad, algebraic weight
    # (x + A)^-1/2 (A - x)^-1/2, the arcsine density times pi)
    val, _ = integrate.quad(lambda x: sf(z - x), -amplitude, amplitude, weight="alg", wvar=(-0.5, -0.5),
                            epsabs=1e-14, epsrel=1e-11, limit=200)
    return val / np.pi


@pytest.mark.parametrize("surge", [stats.gumbel_r(loc=0.1, scale=0.15), stats.genpareto(0.1, loc=-0.2, scale=0.12)],
                         ids=["gumbel", "gpd"])
def test_sinusoidal_tide_matches_quad_integral(surge):
    # Analytic case (outside reference: scipy.integrate.quad with scipy.stats.arcsine): a pure sinusoid's
    # level has the arcsine distribution; the convolution over its quantile set must give the return levels
    # of the integral to 1 mm over 1 to 10,000 years.
    amplitude = 1.5
    arcsine = stats.arcsine(loc=-amplitude, scale=2 * amplitude)
    x = 0.7
    assert arcsine.pdf(x) == pytest.approx(1 / (np.pi * np.sqrt((x + amplitude) * (amplitude - x))))
    k = 20_000
    tide = arcsine.ppf((np.arange(k) + 0.5) / k)
    periods = np.array([1.5, 10.0, 100.0, 1000.0, 10_000.0])
    n = 705.75
    truth = []
    for t in periods:
        f = lambda z, t=t: np.log(n * _quad_exceedance(z, amplitude, surge.sf)) + np.log(t)  # noqa: E731
        truth.append(optimize.brentq(f, amplitude - 1, amplitude + 30, xtol=1e-9))
    got = return_levels_by_convolution(tide, surge, events_per_year=n, periods_years=periods)
    np.testing.assert_allclose(got, truth, atol=1e-3)
    # the exact (chunked) sum agrees with the integral too
    q_exact = exceedance_per_tide(np.array(truth), tide, surge)
    np.testing.assert_allclose(n * q_exact, 1 / periods, rtol=2e-3)


def test_surge_distribution_matches_scipy_genpareto_tail():
    # reference: scipy.stats.genpareto (c = xi, textbook sign)
    rng = np.random.default_rng(1)
    sample = rng.normal(0, 0.1, 5000)
    u = float(np.quantile(sample, 0.98))
    dist = SurgeDistribution(sample, u, 0.02, 0.05, 0.1)
    s = np.array([u + 0.01, u + 0.2, u + 1.0])
    np.testing.assert_allclose(dist.sf(s), 0.02 * stats.genpareto.sf(s - u, 0.1, scale=0.05), rtol=1e-12)
    np.testing.assert_allclose(dist.isf(dist.sf(s)), s, rtol=1e-10)
    # body: the empirical survival of the sample
    assert dist.sf(0.0) == pytest.approx(np.mean(sample > 0.0))


def _synthetic_inputs(years=12, seed=3):
    rng = np.random.default_rng(seed)
    k = np.arange(13_134)
    hw = 2.0 + 0.6 * np.cos(2 * np.pi * k / 28.53)
    n = int(years * 705.75)
    t = pd.Timestamp("2000-01-01", tz="UTC") + pd.to_timedelta(np.arange(n) * 12.4206, unit="h")
    return hw, pd.Series(rng.gumbel(0, 0.1, n), index=t)


def test_skew_surge_jpm_result_and_clustering_effect():
    hw, skew = _synthetic_inputs()
    res = skew_surge_joint_probability(hw, skew, n_bootstrap=40, seed=1)
    assert res.curve.method == "skew-surge-joint-probability"
    assert res.curve.period_definition == "1/rate"
    lv = res.curve.level_at([10, 100])
    assert np.all(res.curve.lower_m[50:] <= res.curve.level_m[50:])
    assert np.all(np.diff(res.curve.level_m) > 0)
    # clustering can only lower the level (theta <= 1)
    assert np.all(res.clustering_effect["difference_m"] <= 1e-12)
    assert set(res.to_dict()) >= {"curve", "curve_unclustered", "clustering_effect", "extremal_index"}
    assert lv[1] > lv[0]


@pytest.mark.filterwarnings("ignore:only .* peaks above the chosen threshold")  # a short synthetic record
def test_skew_surge_jpm_rejects_naive_times_and_bad_options():
    hw, skew = _synthetic_inputs()
    with pytest.raises(ValueError, match="naive"):
        skew_surge_joint_probability(hw, skew.tz_localize(None), n_bootstrap=0)
    with pytest.raises(DataError, match="stratify"):
        skew_surge_joint_probability(hw, skew, n_bootstrap=0, stratify="season")
    with pytest.raises(DataError, match="tide-band"):
        skew_surge_joint_probability(hw, skew, n_bootstrap=0, stratify="tide-band")
    with pytest.raises(DataError, match="high_waters_m"):
        skew_surge_joint_probability(hw[:10], skew, n_bootstrap=0)


def test_short_record_and_interaction_warn():
    hw, skew = _synthetic_inputs(years=4)

    class Interaction:  # stands for extremes.surge.InteractionTests
        level_dependent = True
        verdict = "skew surge falls with tide level"

    with pytest.warns(ExtremesWarning):
        res = skew_surge_joint_probability(hw, skew, n_bootstrap=0, interaction=Interaction())
    assert any("interaction" in note for note in res.notes)


def test_tide_band_stratified_variant_runs():
    hw, skew = _synthetic_inputs()
    rng = np.random.default_rng(0)
    tide_of_surge = rng.choice(hw, skew.size)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ExtremesWarning)
        res = skew_surge_joint_probability(hw, skew, n_bootstrap=0, stratify="tide-band",
                                           skew_surge_tide_m=tide_of_surge, threshold_quantile=0.95)
    plain = skew_surge_joint_probability(hw, skew, n_bootstrap=0, threshold_quantile=0.95)
    assert set(res.tail) == {"band 1", "band 2", "band 3"}
    # same independent surges in every band: the stratified answer is close to the pooled one
    np.testing.assert_allclose(res.curve.level_at([10, 100]), plain.curve.level_at([10, 100]), atol=0.1)


def test_classic_jpm_unclustered_matches_quad_for_sinusoidal_hourly_tide():
    # Classic JPM with theta = 1 and a GPD-only residual on a sinusoidal hourly tide: the level with
    # n_h Q(z) = 1/T must match scipy.integrate.quad over the arcsine density (outside reference).
    from extremes.joint import classic_joint_probability

    amplitude = 1.2
    hours = np.arange(int(18.61 * 8766))
    tide = amplitude * np.cos(2 * np.pi * hours / 12.4206)
    rng = np.random.default_rng(5)
    n = 12 * 8766
    times = pd.Timestamp("2001-01-01", tz="UTC") + pd.to_timedelta(np.arange(n), unit="h")
    residual = pd.Series(rng.gumbel(0.0, 0.08, n), index=times)
    # a Gumbel residual has no threshold where a GPD shape settles: the rule says so and takes the highest
    with pytest.warns(ExtremesWarning, match="no candidate threshold gives a stable shape"):
        res = classic_joint_probability(tide, residual, clustering="none", n_bootstrap=0)
    tail = res.tail["all"]
    dist = SurgeDistribution(residual.to_numpy(), tail["threshold_m"], tail["tail_probability"], tail["scale_m"],
                             tail["shape"])
    for t in (10.0, 100.0):
        z = res.curve.level_at([t])[0]
        # the sampled sinusoid is close to the arcsine law: compare with the integral at this level
        q = _quad_exceedance(z, amplitude, dist.sf)
        assert 8766 * q == pytest.approx(1 / t, rel=0.02)
    assert res.curve.method == "joint-probability"


def test_compare_methods_rule_and_table():
    from extremes.curves import DENSE_PERIODS_YEARS, ReturnLevelCurve
    from extremes.joint import compare_methods

    p = DENSE_PERIODS_YEARS

    def curve(method, shift):
        lv = 3.0 + shift + 0.2 * np.log(p)
        return ReturnLevelCurve(method=method, periods_years=p, level_m=lv, lower_m=lv - 0.1, upper_m=lv + 0.1,
                                period_definition="1/rate")

    curves = [curve("skew-surge-joint-probability", 0.0), curve("annual-maxima", 0.2),
              curve("peaks-over-threshold", -0.1)]
    cmp = compare_methods(curves, record_years=30.0)
    assert cmp.recommended_method == "skew-surge-joint-probability"
    assert set(cmp.table.columns) == {"method", "return_period_years", "level_m", "lower_m", "upper_m",
                                      "confidence", "period_definition", "native_return_period_years",
                                      "native_period_definition"}
    assert set(cmp.table["period_definition"]) == {"1/rate"}
    assert cmp.spread_m.loc[100.0] == pytest.approx(0.3)

    class Dependent:
        level_dependent = True

    cmp = compare_methods(curves, record_years=30.0, interaction=Dependent())
    assert cmp.recommended_method == "peaks-over-threshold"
    assert "depends on tide level" in cmp.reason
    assert compare_methods(curves, record_years=30.0, interaction=Dependent(),
                           stratified=True).recommended_method == "skew-surge-joint-probability"
    # short records: peaks over threshold (every storm) before annual maxima (one value a year)
    assert compare_methods(curves, record_years=8.0).recommended_method == "peaks-over-threshold"
    assert compare_methods(curves[:2], record_years=8.0).recommended_method == "annual-maxima"
    # no direct fit at all: the joint method is reported with a strong caution
    only_joint = compare_methods(curves[:1], record_years=3.0)
    assert only_joint.recommended_method == "skew-surge-joint-probability"
    assert "great care" in only_joint.reason
    with pytest.raises(DataError):
        compare_methods([], record_years=10.0)


def test_monthly_seasonal_variant_sums_monthly_rates():
    # seasonal convolution (monthly HW sets x monthly skew-surge distributions, rates summed): with surges
    # that are not seasonal, the monthly and pooled answers must agree within the monthly tail-fit noise
    hw, skew = _synthetic_inputs(years=12)
    times = pd.Timestamp("2000-01-01", tz="UTC") + pd.to_timedelta(np.arange(hw.size) * 12.4206, unit="h")
    hw_series = pd.Series(hw, index=times[: hw.size])
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ExtremesWarning)
        # plain maximum likelihood: the shape prior weighs more on a month's few exceedances than on the pooled
        # ones, and this checks the sum of the monthly rates, not the tail fit
        monthly = skew_surge_joint_probability(hw_series, skew, n_bootstrap=0, stratify="month",
                                               threshold_quantile=0.95, high_water_years=18.61, tail_method="mle")
        pooled = skew_surge_joint_probability(hw_series, skew, n_bootstrap=0, threshold_quantile=0.95,
                                              high_water_years=18.61, tail_method="mle")
    assert len(monthly.tail) == 12
    np.testing.assert_allclose(monthly.curve.level_at([10, 100]), pooled.curve.level_at([10, 100]), atol=0.08)


@pytest.mark.parametrize("estimator", ["blocks", "runs"])
def test_extremal_index_by_level_known_cluster_size(estimator):
    # by construction (definition of the extremal index, Leadbetter 1983, from memory: theta = 1 / mean
    # cluster size): every surge value repeated on 3 consecutive tides, constant tide -> theta = 1/3;
    # independent surges -> theta = 1
    from extremes.joint import extremal_index_by_level

    rng = np.random.default_rng(4)
    base = rng.exponential(0.1, 8000)
    tide = np.zeros(13_000)
    positions = np.arange(3 * base.size)
    clustered = extremal_index_by_level(tide, np.repeat(base, 3), positions, n_offsets=4, estimator=estimator,
                                        run_length=2)
    independent = extremal_index_by_level(tide, rng.exponential(0.1, 24_000), positions, n_offsets=4,
                                          estimator=estimator, run_length=2)
    np.testing.assert_allclose(clustered["theta"], 1 / 3, atol=0.06)
    np.testing.assert_allclose(independent["theta"], 1.0, atol=0.12)
