"""Tests of extremes.extremal.diagnostics against scipy.stats (Anderson-Darling) and AIC definitions."""
from __future__ import annotations

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy import stats

from extremes.extremal import distributions as D
from extremes.extremal.diagnostics import aicc_table, anderson_darling, probability_plot


def test_anderson_darling_statistic_matches_scipy(portpirie):
    # scipy.stats.goodness_of_fit with all parameters known computes the same A^2
    fit = D.fit_gev(portpirie)
    ours = anderson_darling(fit, n_bootstrap=50, seed=1)
    res = stats.goodness_of_fit(stats.genextreme, portpirie.to_numpy(), statistic="ad", n_mc_samples=10,
                                known_params={"c": -fit.shape, "loc": fit.loc, "scale": fit.scale},
                                rng=np.random.default_rng(0))
    assert ours.statistic == pytest.approx(res.statistic, rel=1e-9)
    assert ours.p_value > 0.1  # Port Pirie is well described by the GEV (Coles 2001 sec. 3.4.1)
    assert anderson_darling(fit, n_bootstrap=50, seed=1) == ours  # seeded


def test_anderson_darling_rejects_wrong_model():
    rng = np.random.default_rng(0)
    x = np.concatenate([rng.normal(0, 0.1, 60), rng.normal(3, 0.1, 60)])  # bimodal: no GEV fits
    fit = D.fit_gumbel(x)
    assert anderson_darling(fit, n_bootstrap=100, seed=2).p_value < 0.05


def test_probability_plot(portpirie):
    fit = D.fit_gev(portpirie)
    t = probability_plot(fit)
    assert_allclose(t.model_probability, stats.genextreme.cdf(np.sort(portpirie), -fit.shape, fit.loc, fit.scale))
    assert_allclose(t.model_level_m, stats.genextreme.ppf(t.empirical_probability, -fit.shape, fit.loc, fit.scale))
    peaks = 1.0 + stats.genpareto.ppf((np.arange(1, 41) - 0.5) / 40, 0.1, scale=0.2)
    gp = D.fit_gpd(peaks, threshold=1.0, years=10)
    tg = probability_plot(gp)
    assert_allclose(tg.model_probability, stats.genpareto.cdf(peaks, gp.shape, 1.0, gp.scale))


def test_aicc_table(portpirie, ref):
    # evd: Gumbel loglik 4.21768 (k = 2), GEV loglik 4.33906 (k = 3), n = 65
    t = aicc_table(portpirie)
    n = 65
    g = ref["portpirie_gev"]
    for model, k, ll in (("gumbel", 2, g["gumbel"]["loglik"]), ("gev", 3, g["loglik"])):
        aicc = 2 * k - 2 * ll + 2 * k * (k + 1) / (n - k - 1)
        assert t.loc[model, "aicc"] == pytest.approx(aicc, abs=1e-5)
    assert t.loc["gumbel", "delta_aicc"] == 0.0  # the extra shape parameter is not worth it here
