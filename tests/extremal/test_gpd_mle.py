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
