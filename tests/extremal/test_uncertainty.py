"""Tests of extremes.extremal.uncertainty against evd profile intervals and delta SEs, METHODS.md sec. 9 check
values, and a seeded coverage simulation."""
from __future__ import annotations

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy import stats

from extremes.extremal import distributions as D
from extremes.extremal.uncertainty import (
    CI_METHODS,
    bootstrap_parameters,
    delta_standard_errors,
    gev_return_level_gradient,
    profile_intervals_many,
    return_levels,
)

PERIODS = ("10", "50", "100", "1000")


def test_ci_methods():
    assert set(CI_METHODS) == {"profile", "delta", "bootstrap"}


def test_gradient_methods_check_value():
    # [C] METHODS.md sec. 9 (Coles 2001 eq. 3.11): mu = 2, sigma = 0.2, xi = 0.1, T = 100 -> (1, 5.84098, 2.89222)
    assert_allclose(gev_return_level_gradient([100], loc=2, scale=0.2, shape=0.1)[0], [1, 5.84098, 2.89222],
                    atol=6e-6)


@pytest.mark.parametrize("periods", [[2.0], [10.0, 100.0, 1000.0]])
def test_gradient_at_shape_exactly_zero_matches_finite_differences_and_published_limit(periods):
    # at shape exactly 0 the gradient must equal (a) central finite differences of the return level (Coles 2001
    # eq. 3.10, whose xi -> 0 branch is the Gumbel level), across the branch switch, and (b) the published
    # xi != 0 gradient (METHODS.md sec. 9, Coles 2001 eq. 3.11) in the limit xi -> 0 from either side
    loc, scale = 2.0, 0.2
    grad0 = gev_return_level_gradient(periods, loc=loc, scale=scale, shape=0.0)
    h = 1e-4
    fd_shape = (D.gev_return_level(periods, loc=loc, scale=scale, shape=h)
                - D.gev_return_level(periods, loc=loc, scale=scale, shape=-h)) / (2 * h)
    fd_scale = (D.gev_return_level(periods, loc=loc, scale=scale + h, shape=0.0)
                - D.gev_return_level(periods, loc=loc, scale=scale - h, shape=0.0)) / (2 * h)
    assert_allclose(grad0[:, 2], fd_shape, rtol=1e-6)
    assert_allclose(grad0[:, 1], fd_scale, rtol=1e-8)
    assert_allclose(grad0[:, 0], 1.0)
    for side in (1e-5, -1e-5):
        assert_allclose(grad0, gev_return_level_gradient(periods, loc=loc, scale=scale, shape=side), rtol=2e-4)
    # the shape entry is positive: a heavier tail raises every return level above the 1-year one
    assert np.all(grad0[:, 2] > 0)


def test_q50_delta_and_profile_methods_check_values(q50):
    # [C] METHODS.md sec. 9: Q50 SE(z_100) = 0.3223, delta 95 % CI (2.512, 3.776); profile (2.762, 4.435)
    fit = D.fit_gev(q50)
    assert delta_standard_errors(fit, [100])[0] == pytest.approx(0.3223, abs=6e-5)
    d = return_levels(fit, [100], ci="delta")
    assert (d.lower_m[0], d.upper_m[0]) == pytest.approx((2.512, 3.776), abs=6e-4)
    p = return_levels(fit, [100], ci="profile")
    assert (p.lower_m[0], p.upper_m[0]) == pytest.approx((2.762, 4.435), abs=6e-4)


@pytest.mark.parametrize("name, column", [("portpirie_gev", None), ("venice_r1_gev", "r1")])
def test_profile_and_delta_match_evd(name, column, ref, portpirie, venice):
    # evd 2.3-6.1 profile 95 % intervals and delta-method SEs (tests/data/evd_reference_values.json)
    r = ref[name]["return_levels"]
    fit = D.fit_gev(portpirie if column is None else venice[column])
    T = [float(k) for k in PERIODS]
    table = return_levels(fit, T)
    assert list(table.columns) == ["return_period_years", "level_m", "lower_m", "upper_m", "confidence"]
    assert_allclose(table.lower_m, [r[k]["profile_95"][0] for k in PERIODS], rtol=1e-4)
    assert_allclose(table.upper_m, [r[k]["profile_95"][1] for k in PERIODS], rtol=1e-4)
    assert_allclose(delta_standard_errors(fit, T), [r[k]["std_err_delta_method"] for k in PERIODS], rtol=1e-3)
    wald = return_levels(fit, T, ci="delta")
    assert_allclose(wald.lower_m, [r[k]["wald_95_evd"][0] for k in PERIODS], rtol=1e-3)


def test_gumbel_profile_contains_estimate_and_is_narrower_than_gev(portpirie):
    g = return_levels(D.fit_gumbel(portpirie), [10, 100])
    v = return_levels(D.fit_gev(portpirie), [10, 100])
    assert np.all(g.lower_m < g.level_m) and np.all(g.level_m < g.upper_m)
    assert np.all(g.upper_m - g.lower_m < v.upper_m - v.lower_m)
    # the Gumbel profile for one parameter less must still match the deviance rule: check by direct evaluation
    fit = D.fit_gumbel(portpirie)
    yp = -np.log1p(-1 / 100)
    z = g.upper_m[1]
    sig = np.linspace(0.15, 0.3, 3001)
    x = np.broadcast_to(portpirie.to_numpy(), (sig.size, len(portpirie)))
    ll = D.gumbel_loglik(x, loc=z + sig * np.log(yp), scale=sig)
    assert 2 * (fit.log_likelihood - ll.max()) == pytest.approx(stats.chi2.ppf(0.95, 1), abs=2e-3)


def test_rlargest_profile_interval_brackets_estimate(venice):
    fit = D.fit_gev_rlargest(venice.to_numpy(float), r=3)
    t = return_levels(fit, [10, 100])
    assert np.all(t.lower_m < t.level_m) and np.all(t.level_m < t.upper_m)
    d = return_levels(fit, [100], ci="delta")
    assert t.upper_m[1] - t.level_m[1] > d.upper_m[0] - d.level_m[0]  # skewed upward


def test_bootstrap_seeded_and_reasonable(portpirie, ref):
    fit = D.fit_gev(portpirie)
    a = return_levels(fit, [10, 100], ci="bootstrap", n_bootstrap=400, seed=7)
    b = return_levels(fit, [10, 100], ci="bootstrap", n_bootstrap=400, seed=7)
    assert a.equals(b)
    # bootstrap SE of the 10-year level close to the delta SE from evd (0.0550)
    P = bootstrap_parameters(fit, n_bootstrap=400, seed=7)
    z10 = D.gev_return_level(10, loc=P[:, 0], scale=P[:, 1], shape=P[:, 2])
    assert np.std(z10) == pytest.approx(ref["portpirie_gev"]["return_levels"]["10"]["std_err_delta_method"],
                                        rel=0.2)
    npb = return_levels(fit, [10], ci="bootstrap", n_bootstrap=300, seed=1, bootstrap="nonparametric")
    assert npb.lower_m[0] < fit.return_level(10)[0] < npb.upper_m[0]


def test_lmoment_fit_intervals(portpirie):
    fit = D.fit_gev(portpirie, method="lmoments")
    with pytest.raises(ValueError, match="maximum-likelihood"):
        return_levels(fit, [100], ci="profile")
    t = return_levels(fit, [100], ci="bootstrap", n_bootstrap=300, seed=3)
    assert t.lower_m[0] < t.level_m[0] < t.upper_m[0]


def test_pot_intervals_include_rate_uncertainty():
    # METHODS.md sec. 9 GPD check sample, 200 peaks over 50 observed years (rate 4/yr)
    p = (np.arange(1, 201) - 0.5) / 200
    y = 1.0 + (0.2 / 0.1) * ((1 - p) ** -0.1 - 1)
    fit = D.fit_gpd(y, threshold=1.0, years=50.0)
    d = return_levels(fit, [1, 10, 100], ci="delta")
    # the rate's Poisson variance (lambda/years) enters: compare with the GPD-only delta method
    grad_lam = fit.scale * 10 * (fit.rate_per_year * 10) ** (fit.shape - 1)
    se_total = (d.upper_m[1] - d.level_m[1]) / stats.norm.ppf(0.975)
    g = np.array([np.expm1(fit.shape * np.log(40)) / fit.shape,
                  -fit.scale / fit.shape**2 * np.expm1(fit.shape * np.log(40))
                  + fit.scale / fit.shape * 40**fit.shape * np.log(40)])
    se_gpd = np.sqrt(g @ fit.cov @ g)
    assert se_total**2 == pytest.approx(se_gpd**2 + grad_lam**2 * fit.rate_per_year / 50, rel=1e-4)
    prof = return_levels(fit, [10, 100], ci="profile")
    assert np.all(prof.lower_m < prof.level_m) and np.all(prof.level_m < prof.upper_m)
    # profile deviance at the upper bound equals chi2_1(0.95) [Coles 2001 sec. 3.3.3] when profiled over rate
    boot = return_levels(fit, [10, 100], ci="bootstrap", n_bootstrap=300, seed=2)
    assert np.all(boot.lower_m < boot.level_m) and np.all(boot.level_m < boot.upper_m)
    assert d.attrs["period_kind"] == "ARI"
    aep = return_levels(fit, [100], ci="delta", aep=True)
    assert aep.level_m[0] == pytest.approx(fit.return_level(100, aep=True)[0])


def test_period_one_year_is_nan_with_warning(portpirie):
    fit = D.fit_gev(portpirie)
    with pytest.warns(Warning, match="no return level"):
        t = return_levels(fit, [1, 10], ci="delta")
    assert np.isnan(t.level_m[0]) and np.isfinite(t.level_m[1])


def test_bad_options(portpirie):
    fit = D.fit_gev(portpirie)
    with pytest.raises(ValueError, match="ci must be"):
        return_levels(fit, [10], ci="wald")
    with pytest.raises(ValueError, match="confidence"):
        return_levels(fit, [10], confidence=95)
    with pytest.raises(ValueError, match="periods_years"):
        return_levels(fit, [0.5])
    with pytest.raises(ValueError, match="n_bootstrap"):
        return_levels(fit, [10], ci="bootstrap", n_bootstrap=2)


def test_profile_many_equals_single(q50):
    z, lo, hi = profile_intervals_many(np.vstack([q50, q50[::-1]]), 100)
    assert_allclose(lo, 2.761919, atol=1e-5)
    assert_allclose(hi, 4.435186, atol=1e-5)


@pytest.mark.parametrize("shape", [0.1, 0.0])
def test_profile_interval_coverage(shape):
    # Simulation with known parameters: the 95 % profile interval should cover the true 100-year level in
    # about 95 % of samples (accept 90-98 %); 300 seeded samples of n = 50 [Coles 2001 sec. 3.3.3].
    rng = np.random.default_rng(20261202)
    x = stats.genextreme.rvs(-shape, loc=2.0, scale=0.2, size=(300, 50), random_state=rng)
    _, lo, hi = profile_intervals_many(x, 100)
    true = D.gev_return_level(100, loc=2.0, scale=0.2, shape=shape)
    assert np.isnan(lo).sum() + np.isnan(hi).sum() <= 3
    cover = np.mean((lo <= true) & (true <= hi))
    assert 0.90 <= cover <= 0.98, cover


def test_profile_upper_bounds_increase_with_period_for_a_heavy_tail():
    # a short heavy-tailed sample (n = 29, shape about 0.16, like 29 annual maxima of a stormy harbour): the
    # profile-likelihood upper bound must grow with the return period (Coles 2001 sec. 3.3: the profile
    # interval of z_p widens as p falls); a poorly maximised profile gave a lower bound at 500 than at 200 years
    from extremes.extremal.distributions import fit_gev, gev_return_level

    p = (np.arange(1, 30) - 0.44) / (29 + 0.12)  # Gringorten positions of a GEV(4.82, 0.15, 0.16) sample
    sample = gev_return_level(1.0 / (1.0 - p), loc=4.82, scale=0.15, shape=0.16)
    table = return_levels(fit_gev(sample), [50, 100, 200, 300, 500, 1000, 5000], ci="profile")
    upper = table["upper_m"].to_numpy()
    assert np.all(np.isfinite(upper)) and np.all(np.diff(upper) > 0)


def test_profile_root_search_reports_an_upper_bound_the_deviance_never_reaches_as_unbounded():
    # a profile deviance that levels off below the chi-square cut above the estimate (the data cannot limit the
    # upper bound) gives +inf, never a number cut by the search; below the estimate it crosses as usual
    from extremes.extremal.uncertainty import _find_roots

    crit = 3.841459

    def deviance(z, rows):
        return np.where(z > 1.0, 2.0 * (1 - np.exp(-(z - 1.0))), 4.0 * (z - 1.0) ** 2) - crit

    with np.errstate(all="ignore"):  # as in the library's callers
        bounds = _find_roots(deviance, np.array([1.0, 1.0]), np.array([-1.0, 1.0]), np.array([0.2, 0.2]), crit, 2)
    assert bounds[0] == pytest.approx(1.0 - np.sqrt(crit / 4.0), abs=1e-6)
    assert np.isposinf(bounds[1])
