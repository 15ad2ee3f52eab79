"""Tests of the clustering-adjusted profile-likelihood intervals of the joint methods
(extremes.joint.tail_profile) and of the year-bootstrap helpers (extremes.joint.year_bootstrap)."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy import optimize, special, stats

from extremes.joint import tail_profile, year_bootstrap
from extremes.joint.clustering import cycle_positions, extremal_index_by_level
from tests.simulated_storms import PROCESSES, sample_record


def _one_tide_component(seed=3, n=4000, threshold=1.0):
    rng = np.random.default_rng(seed)
    surge = stats.genpareto.rvs(0.1, scale=0.3, size=n, random_state=rng)
    comp = year_bootstrap.Component("all", np.zeros(200), 1.0, surge, np.arange(n) % 20)
    comp.surge = year_bootstrap.fit_tail(surge, threshold_m=threshold, years=20.0)
    return comp


def test_plain_profile_matches_independent_gpd_profile_with_one_tide_value():
    # with one tide value (0 m) and theta = 1 the level exceeded at rate 1/T is the GPD quantile u + q(sigma, xi)
    # at exceedance probability 1/(T N p_u); its profile interval (Coles 2001 sec. 4.3.3) is computed here
    # independently with scipy (minimize_scalar over the shape, sigma from the quantile constraint)
    comp = _one_tide_component()
    u, p_u, n_per_year = comp.surge.threshold_m, comp.surge.tail_probability, 200.0
    y = comp.surge_m[comp.surge_m > u] - u
    periods = np.array([10.0, 100.0])
    prob_exc = 1.0 / (periods * n_per_year * p_u)
    z_hat = u + stats.genpareto.isf(prob_exc, comp.surge.shape, scale=comp.surge.scale_m)
    ll_hat = np.sum(stats.genpareto.logpdf(y, comp.surge.shape, scale=comp.surge.scale_m))

    def profile(z, p):
        def negative(xi):
            scale = (z - u) / stats.genpareto.isf(p, xi, scale=1.0)
            return -np.sum(stats.genpareto.logpdf(y, xi, scale=scale))
        return -optimize.minimize_scalar(negative, bounds=(-0.6, 1.2), method="bounded",
                                         options={"xatol": 1e-8}).fun

    crit = special.chdtri(1, 0.05)
    expected = []
    for z0, p in zip(z_hat, prob_exc):
        f = lambda z, p=p: 2 * (ll_hat - profile(z, p)) - crit  # noqa: E731
        expected.append((optimize.brentq(f, z0 - 2, z0 - 1e-6), optimize.brentq(f, z0 + 1e-6, z0 + 20)))
    lo, hi, adj = tail_profile.adjusted_profile_bounds(
        comp, theta_of_z=lambda z: np.ones_like(np.asarray(z, dtype=float)), events_per_year=n_per_year,
        periods_years=periods, level_m=z_hat, loglik_hat=ll_hat, scale_hat=comp.surge.scale_m,
        shape_hat=comp.surge.shape, bootstrap_levels=np.tile(z_hat, (50, 1)), confidence=0.95, adjustment=1.0)
    assert np.all(adj == 1.0)
    np.testing.assert_allclose(np.column_stack([lo, hi]), np.array(expected), atol=3e-3)


def test_adjustment_widens_the_interval_and_unbounded_upper_is_inf():
    comp = _one_tide_component()
    u, p_u = comp.surge.threshold_m, comp.surge.tail_probability
    y = comp.surge_m[comp.surge_m > u] - u
    ll_hat = np.sum(stats.genpareto.logpdf(y, comp.surge.shape, scale=comp.surge.scale_m))
    z_hat = u + stats.genpareto.isf(1 / (100 * 200 * p_u), comp.surge.shape, scale=comp.surge.scale_m)
    common = dict(theta_of_z=lambda z: np.ones_like(np.asarray(z, dtype=float)), events_per_year=200.0,
                  periods_years=np.array([100.0]), level_m=np.array([z_hat]), loglik_hat=ll_hat,
                  scale_hat=comp.surge.scale_m, shape_hat=comp.surge.shape,
                  bootstrap_levels=np.full((50, 1), z_hat), confidence=0.95)
    lo1, hi1, _ = tail_profile.adjusted_profile_bounds(comp, adjustment=1.0, **common)
    lo2, hi2, _ = tail_profile.adjusted_profile_bounds(comp, adjustment=0.5, **common)
    assert lo2[0] < lo1[0] < z_hat < hi1[0] < hi2[0]
    # a deviance scaled almost to nothing never reaches the cut above: the data cannot limit the upper bound
    _, hi3, _ = tail_profile.adjusted_profile_bounds(comp, adjustment=1e-9, **common)
    assert np.isposinf(hi3[0])


@pytest.mark.slow  # a simulation
def test_clustering_by_year_reproduces_the_extremal_index_table():
    hw, skew, _ = sample_record(PROCESSES["base"], 11, years=12)
    positions = cycle_positions(skew.index, step_hours=12.4206)
    surge = skew.to_numpy()
    table = extremal_index_by_level(hw, surge, positions, n_offsets=8, seed=4)
    year_ids, _ = year_bootstrap.check_year_ids(skew.index)
    by_year = year_bootstrap.ClusteringByYear(hw, surge, positions, year_ids, table["level_m"].to_numpy(),
                                              n_offsets=8, block_length=57, seed=4, min_exceedances=10,
                                              beyond="trend")
    all_years = np.ones((1, int(year_ids.max()) + 1))
    np.testing.assert_allclose(by_year.theta_table(all_years)[0], table["theta"].to_numpy(), rtol=1e-12)
    # a resample of years gives other, still valid, estimates
    rng = np.random.default_rng(0)
    draws = np.zeros((5, all_years.shape[1]))
    for row in draws:
        np.add.at(row, rng.integers(0, all_years.shape[1], all_years.shape[1]), 1)
    theta = by_year.theta_rows(draws, np.linspace(2.5, 4.5, 50))
    assert np.all((theta > 0) & (theta <= 1)) and not np.allclose(theta, theta[0])


def test_percentile_bounds_keep_levels_above_the_grid_and_bias_correct():
    rng = np.random.default_rng(2)
    levels = rng.normal(3.0, 0.1, (1000, 2))
    levels[:40, 1] = np.inf  # 4 % of resamples above the grid: the 97.5 % point is among them
    levels[:5, 0] = np.nan   # failed refits are left out
    lo, hi = year_bootstrap.percentile_bounds(levels, 0.95)
    assert np.isposinf(hi[1]) and np.isfinite(lo[1])
    finite = levels[:, 0][np.isfinite(levels[:, 0])]
    np.testing.assert_allclose([lo[0], hi[0]], np.quantile(finite, [0.025, 0.975]))
    # bias correction (Efron & Tibshirani 1993 sec. 14.3): an estimate above most resamples moves both up
    lo_bc, hi_bc = year_bootstrap.percentile_bounds(levels[:, :1], 0.95, estimate=np.array([3.1]))
    z0 = special.ndtri(np.mean(finite < 3.1))
    expect = np.quantile(finite, special.ndtr([2 * z0 - 1.959964, 2 * z0 + 1.959964]))
    np.testing.assert_allclose([lo_bc[0], hi_bc[0]], expect, rtol=1e-6)
    assert lo_bc[0] > lo[0] and hi_bc[0] > hi[0]


@pytest.mark.slow  # a simulation
def test_skew_surge_result_states_its_interval_method_and_sensitivity():
    from extremes.joint import skew_surge_joint_probability

    hw, skew, _ = sample_record(PROCESSES["base"], 21, years=15)
    res = skew_surge_joint_probability(hw, skew, n_bootstrap=100, seed=1,
                                       periods_years=np.geomspace(1.01, 1000, 30))
    assert "Chandler & Bate" in res.curve.interval_method
    assert "re-estimated" in res.curve.interval_method
    assert res.curve.to_dict()["interval_method"] == res.curve.interval_method
    table = pd.DataFrame(res.diagnostics["threshold_sensitivity"])
    assert list(table["quantile"]) == [0.95, 0.97, 0.98, 0.985, 0.99, 0.995]
    ok = np.isfinite(res.curve.level_m)
    assert np.all(res.curve.lower_m[ok] <= res.curve.level_m[ok] + 1e-9)
    assert np.all(res.curve.upper_m[ok] >= res.curve.level_m[ok] - 1e-9)
    boot = skew_surge_joint_probability(hw, skew, n_bootstrap=100, seed=1, interval="bootstrap",
                                        periods_years=np.geomspace(1.01, 1000, 30))
    assert "bootstrap" in boot.curve.interval_method and "Chandler" not in boot.curve.interval_method


def _variances(comp, shape_prior=None, bootstrap_levels=None):
    prob = tail_profile._Problem(comp, theta_of_z=lambda z: np.ones_like(np.asarray(z, dtype=float)),
                                 events_per_year=200.0, shape_prior=shape_prior)
    periods = np.array([10.0, 100.0])
    z_hat = comp.surge.threshold_m + stats.genpareto.isf(1 / (periods * 200 * comp.surge.tail_probability),
                                                         comp.surge.shape, scale=comp.surge.scale_m)
    boot = np.full((20, 2), np.nan) if bootstrap_levels is None else bootstrap_levels
    return tail_profile.level_variances(prob, comp, z_hat, 1 / periods, comp.surge.scale_m, comp.surge.shape, boot)


def test_sandwich_variance_is_unchanged_when_every_exceedance_is_duplicated_within_its_year():
    # Chandler & Bate (2007) sec. 2: the independence likelihood of data whose every value appears twice (a
    # perfectly clustered pair) has twice the information, so its naive variance halves, while the sandwich
    # H^-1 V H^-1 (V from the per-year score sums, clusters = years) is that of the single data: the deviance
    # scaling v_I / v_C halves
    comp = _one_tide_component()
    v_ind, v_clustered = _variances(comp)
    twice = year_bootstrap.Component("all", comp.tide_m, 1.0, np.repeat(comp.surge_m, 2),
                                     np.repeat(comp.year_index, 2))
    twice.surge = year_bootstrap.fit_tail(twice.surge_m, threshold_m=comp.surge.threshold_m, years=20.0)
    v_ind2, v_clustered2 = _variances(twice)
    np.testing.assert_allclose(v_ind2, v_ind / 2, rtol=1e-3)
    np.testing.assert_allclose(v_clustered2, v_clustered, rtol=1e-3)
    # independent exceedances spread over many years: the sandwich is close to the naive variance
    assert np.all((v_clustered / v_ind > 0.6) & (v_clustered / v_ind < 1.6))
    # a wider bootstrap wins: the clustered variance is the larger of the two
    wide = np.column_stack([np.linspace(0, 10, 20), np.linspace(0, 20, 20)])
    assert np.all(_variances(comp, bootstrap_levels=wide)[1] > 10 * v_clustered)


def test_profile_with_the_shape_prior_peaks_at_the_generalized_maximum_likelihood_estimate():
    comp = _one_tide_component(n=1500)
    comp.surge = year_bootstrap.fit_tail(comp.surge_m, threshold_m=1.0, years=20.0, method="gml")
    prob = tail_profile._Problem(comp, theta_of_z=lambda z: np.ones_like(np.asarray(z, dtype=float)),
                                 events_per_year=200.0, shape_prior="geophysical")
    ll_hat = prob.loglik(np.array([[comp.surge.scale_m]]), np.array([[comp.surge.shape]]))[0, 0]
    z_hat = 1.0 + stats.genpareto.isf(1 / (100 * 200 * comp.surge.tail_probability), comp.surge.shape,
                                      scale=comp.surge.scale_m)
    z = z_hat + np.array([-0.3, -0.1, 0.0, 0.1, 0.3])
    ll = prob.profile(z, np.full(z.size, 1 / 100))
    assert ll[2] == pytest.approx(ll_hat, abs=1e-4)  # the profile's maximum is the penalised fit
    assert np.all(ll[[0, 1, 3, 4]] < ll[2])


def test_a_period_where_the_tail_carries_little_of_the_variance_gets_no_profile_bounds():
    # a bootstrap spread 100 times the tail's: the scaling v_I / v_C falls below MIN_PROFILE_ADJUSTMENT, and the
    # caller keeps the bootstrap interval there (no bounds from the profile)
    comp = _one_tide_component()
    u, p_u = comp.surge.threshold_m, comp.surge.tail_probability
    y = comp.surge_m[comp.surge_m > u] - u
    z_hat = u + stats.genpareto.isf(1 / (np.array([10.0, 100.0]) * 200 * p_u), comp.surge.shape,
                                    scale=comp.surge.scale_m)
    v_ind, _ = _variances(comp)
    rng = np.random.default_rng(1)
    boot = z_hat + rng.normal(0, 1, (200, 2)) * np.sqrt(v_ind) * np.array([1.0, 30.0])
    lo, hi, adj = tail_profile.adjusted_profile_bounds(
        comp, theta_of_z=lambda z: np.ones_like(np.asarray(z, dtype=float)), events_per_year=200.0,
        periods_years=np.array([10.0, 100.0]), level_m=z_hat,
        loglik_hat=np.sum(stats.genpareto.logpdf(y, comp.surge.shape, scale=comp.surge.scale_m)),
        scale_hat=comp.surge.scale_m, shape_hat=comp.surge.shape, bootstrap_levels=boot, confidence=0.95)
    assert adj[1] < tail_profile.MIN_PROFILE_ADJUSTMENT <= adj[0]
    assert np.isfinite(lo[0]) and np.isfinite(hi[0]) and np.isnan(lo[1]) and np.isnan(hi[1])


def test_with_the_shape_prior_independent_exceedances_get_no_clustering_adjustment():
    # Chandler & Bate adjust the data's information for clustering, not the prior's: with independent
    # exceedances spread over many years the adjusted variance (H V^-1 H + P)^-1 is close to (H + P)^-1
    comp = _one_tide_component(n=3000)
    comp.year_index = np.arange(comp.surge_m.size) % 150
    comp.surge = year_bootstrap.fit_tail(comp.surge_m, threshold_m=1.0, years=150.0, method="gml")
    v_ind, v_clustered = _variances(comp, shape_prior="geophysical")
    assert np.all((v_clustered / v_ind > 0.75) & (v_clustered / v_ind < 1.33)), v_clustered / v_ind


def test_many_resamples_above_the_grid_keep_the_bootstrap_interval():
    # more than a quarter of a period's resamples above the level grid: the bootstrap cannot give that period a
    # finite spread, its variance is infinite and the profile is not used there (NaN bounds: the caller keeps
    # the bootstrap interval, unbounded above); a few of them only sit above the upper quartile
    boot = np.tile(np.linspace(3.0, 3.4, 100)[:, None], (1, 3))
    boot[:10, 1] = np.inf
    boot[:40, 2] = np.inf
    v = tail_profile._bootstrap_variance(boot, 3)
    assert np.isfinite(v[0]) and np.isposinf(v[2])
    assert v[1] > v[0]  # the ten +inf count above the upper quartile
