"""Tests of extremes.extremal.gpd_mle against scipy.stats.genpareto.fit and METHODS.md sec. 9 check values."""
from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from extremes.extremal.gpd_mle import fit_gpd_many


@pytest.mark.parametrize("shape", [-0.3, 0.0, 0.2])
def test_weighted_fits_match_scipy_genpareto_fit(shape):
    # weighted copies (the year bootstrap's resamples) must give scipy.stats.genpareto.fit's maximum-likelihood
    # estimates of the sample with each value repeated (outside reference)
    rng = np.random.default_rng(11)
    y = stats.genpareto.rvs(shape, scale=0.1, size=150, random_state=rng)
    counts = rng.multinomial(150, np.full(150, 1 / 150), size=3)
    got, loglik = fit_gpd_many(y, weights=counts)
    for row, ll, c in zip(got, loglik, counts):
        c_hat, _, scale_hat = stats.genpareto.fit(np.repeat(y, c), floc=0.0)
        assert row == pytest.approx([scale_hat, c_hat], abs=2e-4)
        assert ll == pytest.approx(np.sum(stats.genpareto.logpdf(np.repeat(y, c), row[1], scale=row[0])), abs=1e-8)


def test_many_unweighted_samples_match_scipy_and_methods_check_value():
    # [C] METHODS.md sec. 9: y_i = (0.2/0.1)[(1 - p_i)^-0.1 - 1], p_i = (i - 0.5)/200 -> MLE (0.20154, 0.09040)
    p = (np.arange(1, 201) - 0.5) / 200
    y = 2.0 * ((1 - p) ** -0.1 - 1)
    params, _ = fit_gpd_many(y)
    assert params[0] == pytest.approx([0.20154, 0.09040], abs=6e-6)
    rng = np.random.default_rng(5)
    samples = stats.genpareto.rvs(-0.1, scale=0.3, size=(4, 60), random_state=rng)
    params, _ = fit_gpd_many(samples)
    for row, sample in zip(params, samples):
        c_hat, _, scale_hat = stats.genpareto.fit(sample, floc=0.0)
        assert row == pytest.approx([scale_hat, c_hat], abs=2e-4)


def test_exponential_model_is_the_mean_excess_and_empty_weights_fail():
    y = np.array([0.1, 0.3, 0.2, 0.6])
    params, loglik = fit_gpd_many(y, model="exponential")
    assert params[0] == pytest.approx([0.3, 0.0])
    assert loglik[0] == pytest.approx(np.sum(stats.expon.logpdf(y, scale=0.3)))
    params, _ = fit_gpd_many(y, weights=np.zeros((1, 4)))
    assert np.all(np.isnan(params))


def test_shape_prior_is_the_beta_6_9_prior_of_martins_and_stedinger():
    # Martins & Stedinger (2000), eq. 11: pi(kappa) ~ Beta(6, 9) on (0.5 + kappa), kappa = -xi in their sign
    # convention: so the log prior of xi differs from scipy.stats.beta(6, 9).logpdf(0.5 - xi) by a constant
    from extremes.extremal.gpd_mle import shape_log_prior

    xi = np.array([-0.4, -0.1, 0.0, 0.1, 0.3, 0.45])
    ours = shape_log_prior(xi)
    reference = stats.beta(6, 9).logpdf(0.5 - xi)
    np.testing.assert_allclose(ours - ours[2], reference - reference[2], atol=1e-12)
    assert stats.beta(6, 9).mean() == pytest.approx(0.4)  # so the prior mean of xi is 0.5 - 0.4 = +0.1
    assert np.all(np.isneginf(shape_log_prior(np.array([-0.5, 0.5, 0.7]))))
    h = 1e-6  # derivatives against central differences
    np.testing.assert_allclose(shape_log_prior(xi, 1), (shape_log_prior(xi + h) - shape_log_prior(xi - h)) / (2 * h),
                               rtol=1e-6)
    np.testing.assert_allclose(shape_log_prior(xi, 2),
                               (shape_log_prior(xi + h, 1) - shape_log_prior(xi - h, 1)) / (2 * h), rtol=1e-6)


@pytest.mark.parametrize(("shape", "n"), [(0.1, 40), (-0.2, 60), (0.4, 30), (0.0, 300)])
def test_generalized_maximum_likelihood_maximises_the_penalised_likelihood(shape, n):
    # outside reference: a direct maximisation of log L(sigma, xi) + log pi(xi) with scipy's Nelder-Mead and
    # scipy.stats.genpareto's log density
    from scipy.optimize import minimize

    from extremes.extremal.gpd_mle import shape_log_prior

    rng = np.random.default_rng(7)
    y = stats.genpareto.rvs(shape, scale=0.2, size=n, random_state=rng)

    def negative(p):
        sigma, xi = p
        if sigma <= 0 or abs(xi) >= 0.5:
            return 1e10
        value = np.sum(stats.genpareto.logpdf(y, xi, scale=sigma)) + shape_log_prior(xi)
        return -value if np.isfinite(value) else 1e10

    reference = minimize(negative, [np.mean(y), 0.05], method="Nelder-Mead",
                         options=dict(xatol=1e-10, fatol=1e-12, maxiter=5000))
    (got,), (loglik,) = fit_gpd_many(y, shape_prior="geophysical")
    assert got == pytest.approx(reference.x, abs=1e-6)
    assert loglik == pytest.approx(-reference.fun, abs=1e-8)
    # weighted rows (the year bootstrap) give the fit of the sample with each value repeated
    counts = rng.integers(0, 3, (3, n))
    many, _ = fit_gpd_many(y, weights=counts, shape_prior="geophysical")
    for row, c in zip(many, counts):
        assert row == pytest.approx(fit_gpd_many(np.repeat(y, c), shape_prior="geophysical")[0][0], abs=1e-7)


def test_a_heavy_small_sample_is_drawn_towards_the_prior_and_a_large_one_is_not():
    rng = np.random.default_rng(8)
    small = stats.genpareto.rvs(0.45, scale=0.2, size=25, random_state=rng)
    large = stats.genpareto.rvs(0.45, scale=0.2, size=20000, random_state=rng)
    plain_small = fit_gpd_many(small)[0][0, 1]
    gml_small = fit_gpd_many(small, shape_prior="geophysical")[0][0, 1]
    assert abs(gml_small - 0.1) < abs(plain_small - 0.1) and gml_small < 0.5
    assert fit_gpd_many(large, shape_prior="geophysical")[0][0, 1] == pytest.approx(0.45, abs=0.03)
    with pytest.raises(ValueError, match="shape_prior"):
        fit_gpd_many(small, shape_prior="flat")


@pytest.mark.parametrize("shape_prior", [None, "geophysical"])
def test_a_value_left_out_of_a_resample_does_not_limit_the_fit(shape_prior):
    # a weight of 0 on the largest value: the fit must equal the fit of the sample without it (theta > -1/y is
    # the support of the values present only)
    rng = np.random.default_rng(12)
    y = np.sort(stats.genpareto.rvs(-0.3, scale=1.0, size=40, random_state=rng))
    y[-1] = 25.0
    weights = np.ones((1, y.size))
    weights[0, -1] = 0.0
    got = fit_gpd_many(y, weights=weights, shape_prior=shape_prior)[0][0]
    expected = fit_gpd_many(y[:-1], shape_prior=shape_prior)[0][0]
    assert got == pytest.approx(expected, abs=1e-7)
