"""Tests of extremes.extremal.distributions against evd, METHODS.md sec. 9, scipy.stats, lmoments3 and Coles."""
from __future__ import annotations

import dataclasses
import warnings

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy import stats

from extremes.errors import DataError
from extremes.extremal import distributions as D
from extremes.extremal.distributions import (
    FIT_METHODS,
    MODELS,
    fit_exponential,
    fit_gev,
    fit_gev_many,
    fit_gev_rlargest,
    fit_gpd,
    fit_gumbel,
    gev_lmoment_parameters,
    gev_loglik,
    gev_return_level,
    gpd_return_level,
    gumbel_loglik,
    sample_lmoments,
)


def test_lists():
    assert set(FIT_METHODS) == {"mle", "lmoments"} and set(MODELS) == {"gev", "gumbel"}


def test_scipy_shape_helper_is_the_only_conversion():
    # [C] METHODS sec. 9: SciPy genextreme c = -xi; genpareto c = +xi
    assert D._to_scipy_shape(0.1, "genextreme") == -0.1
    assert D._to_scipy_shape(0.1, "genpareto") == 0.1
    z = gev_return_level(100, loc=2, scale=0.2, shape=0.1)
    assert z == pytest.approx(stats.genextreme.ppf(0.99, -0.1, loc=2, scale=0.2), rel=1e-12)


@pytest.mark.parametrize("shape, expected", [
    (0.0, [2.45007, 2.92003, 3.38145]), (0.1, [2.50474, 3.16820, 3.99033]), (-0.1, [2.40303, 2.73745, 2.99758]),
])
def test_gev_return_levels_methods_check_values(shape, expected):
    # [C] METHODS.md sec. 9, Coles (2001) eq. 3.10, mu = 2, sigma = 0.2, T = 10/100/1000
    assert_allclose(gev_return_level([10, 100, 1000], loc=2.0, scale=0.2, shape=shape), expected, atol=6e-6)


def test_gev_exceedance_probability_inverts_return_level():
    for shape in (-0.2, 0.0, 0.15):
        z = gev_return_level([5, 50, 500], loc=3, scale=0.3, shape=shape)
        assert_allclose(D.gev_exceedance_probability(z, loc=3, scale=0.3, shape=shape), [0.2, 0.02, 0.002])


@pytest.mark.parametrize("shape, expected, aep100", [
    (0.0, [2.01018, 2.35557], 2.35481), (0.1, [2.10767, 2.65340], 2.65207), (-0.1, [1.93247, 2.15203], 2.15161),
])
def test_gpd_return_levels_methods_check_values(shape, expected, aep100):
    # [C] METHODS.md sec. 9: u = 1.5, sigma = 0.15, lambda = 3/yr; AEP 1 % uses lambda / -ln(1 - p)
    kw = dict(threshold=1.5, scale=0.15, shape=shape, rate_per_year=3.0)
    assert_allclose(gpd_return_level([10, 100], **kw), expected, atol=6e-6)
    assert gpd_return_level(100, aep=True, **kw) == pytest.approx(aep100, abs=6e-6)
    rate = D.gpd_exceedance_rate(gpd_return_level([10, 100], **kw), **kw)
    assert_allclose(rate, [0.1, 0.01], rtol=1e-10)


def test_loglik_methods_check_values(x10):
    # [C] METHODS.md sec. 9: -l(1.4, 0.25, 0.1) = 2.06831; Gumbel -l(1.4, 0.25) = 1.99021
    assert -gev_loglik(x10, loc=1.4, scale=0.25, shape=0.1) == pytest.approx(2.06831, abs=6e-6)
    assert -gumbel_loglik(x10, loc=1.4, scale=0.25) == pytest.approx(1.99021, abs=6e-6)
    assert gev_loglik(x10, loc=1.4, scale=0.25, shape=0.1) == pytest.approx(
        stats.genextreme.logpdf(x10, -0.1, loc=1.4, scale=0.25).sum(), rel=1e-12)
    assert gev_loglik(x10, loc=1.4, scale=0.1, shape=-0.5) == -np.inf  # 2.2 beyond the upper end point


def test_mle_methods_check_values(x10):
    # [C] METHODS.md sec. 9: GEV MLE (1.38858, 0.24974, 0.00251), -l = 1.98021; Gumbel MLE (1.38891, 0.24998)
    f = fit_gev(x10)
    assert_allclose([f.loc, f.scale, f.shape], [1.38858, 0.24974, 0.00251], atol=2e-5)
    assert -f.log_likelihood == pytest.approx(1.98021, abs=1e-5)
    g = fit_gumbel(x10)
    assert_allclose([g.loc, g.scale], [1.38891, 0.24998], atol=1e-5)


def test_mle_q50_methods_check_values(q50):
    # [C] METHODS.md sec. 9, sample Q50: z_1 = 1.71674, z_50 = 3.16820, MLE (2.00043, 0.19737, 0.09669),
    # -l = 0.60151, z_100 = 3.14389, observed-information SEs (0.0318, 0.0241, 0.1151)
    assert q50[0] == pytest.approx(1.71674, abs=1e-5) and q50[-1] == pytest.approx(3.16820, abs=1e-5)
    f = fit_gev(q50)
    assert_allclose([f.loc, f.scale, f.shape], [2.00043, 0.19737, 0.09669], atol=1e-5)
    assert -f.log_likelihood == pytest.approx(0.60151, abs=1e-5)
    assert f.return_level(100)[0] == pytest.approx(3.14389, abs=1e-5)
    assert_allclose(f.standard_errors, [0.0318, 0.0241, 0.1151], atol=6e-5)


def test_port_pirie_matches_evd(portpirie, ref):
    # evd 2.3-6.1 reference fit (tests/data/evd_reference_values.json): estimates, SEs, log-likelihood
    r = ref["portpirie_gev"]
    f = fit_gev(portpirie)
    # evd stops at a slightly lower likelihood (its shape differs by 7e-6): 1e-3 relative on the estimates
    assert_allclose([f.loc, f.scale, f.shape], [r["mle"][k] for k in ("loc", "scale", "shape")], rtol=1e-3)
    assert_allclose(f.standard_errors, [r["std_err"][k] for k in ("loc", "scale", "shape")], rtol=1e-3)
    assert f.log_likelihood == pytest.approx(r["loglik"], abs=1e-6)
    assert f.log_likelihood >= r["loglik"] - 1e-9
    assert_allclose(f.return_level([10, 50, 100, 1000]),
                    [r["return_levels"][k]["estimate"] for k in ("10", "50", "100", "1000")], rtol=1e-5)
    g = fit_gumbel(portpirie)
    assert_allclose([g.loc, g.scale], [r["gumbel"]["estimate"]["loc"], r["gumbel"]["estimate"]["scale"]], rtol=1e-5)
    assert_allclose(g.standard_errors[:2], [r["gumbel"]["std_err"]["loc"], r["gumbel"]["std_err"]["scale"]],
                    rtol=1e-3)
    assert g.log_likelihood == pytest.approx(r["gumbel"]["loglik"], abs=1e-7)
    assert 2 * (f.log_likelihood - g.log_likelihood) == pytest.approx(r["gumbel"]["deviance_stat_vs_gev"], abs=1e-5)


def test_port_pirie_coles_2001_from_memory(portpirie, ref):
    # Coles (2001) sec. 3.4.1, values recalled from memory (reference_values.json "coles_2001_from_memory")
    c = ref["coles_2001_from_memory"]["portpirie_gev"]
    f = fit_gev(portpirie)
    assert f.loc == pytest.approx(c["loc"], abs=0.005)
    assert f.scale == pytest.approx(c["scale"], abs=0.0005)
    assert f.shape == pytest.approx(c["shape"], abs=0.0005)
    assert_allclose(f.standard_errors, c["se"], atol=0.0006)
    assert_allclose(f.return_level([10, 100]), [c["rl10"], c["rl100"]], atol=0.005)


def test_venice_r1_matches_evd(venice, ref):
    r = ref["venice_r1_gev"]
    f = fit_gev(venice["r1"])
    assert_allclose([f.loc, f.scale, f.shape], [r["mle"][k] for k in ("loc", "scale", "shape")], rtol=1e-3)
    assert_allclose(f.standard_errors, [r["std_err"][k] for k in ("loc", "scale", "shape")], rtol=1e-3)
    assert f.log_likelihood == pytest.approx(r["loglik"], abs=1e-6)


@pytest.mark.parametrize("r", [1, 2, 3, 5, 10])
def test_venice_r_largest_matches_reference(venice, ref, r):
    # independent implementation of the r-largest likelihood (Coles 2001 sec. 3.5), reference_values.json
    rv = ref["venice_r_largest"]["venice_own_implementation"][f"r{r}"]
    f = fit_gev_rlargest(venice.to_numpy(float), r=r)
    assert_allclose([f.loc, f.scale, f.shape], [rv["estimate"][k] for k in ("loc", "scale", "shape")], rtol=1e-4,
                    atol=1e-5)
    assert_allclose(f.standard_errors, [rv["std_err"][k] for k in ("loc", "scale", "shape")], rtol=2e-3)
    assert f.log_likelihood == pytest.approx(rv["loglik"], abs=1e-5)


def test_rlargest_loglik_r1_equals_gev_loglik(venice):
    x = venice[["r1"]].to_numpy(float)
    assert D.gev_rlargest_loglik(x, loc=111.0, scale=17.0, shape=-0.07) == pytest.approx(
        gev_loglik(x[:, 0], loc=111.0, scale=17.0, shape=-0.07), rel=1e-12)


def test_mle_agrees_with_scipy_on_simulated_samples():
    # scipy.stats.genextreme.fit on the same data: our likelihood at our optimum is at least as high
    rng = np.random.default_rng(42)
    samples = stats.genextreme.rvs(-0.1, loc=2, scale=0.2, size=(5, 60), random_state=rng)
    P, ll = fit_gev_many(samples)
    for i in range(5):
        c, loc, scale = stats.genextreme.fit(samples[i])
        ll_scipy = stats.genextreme.logpdf(samples[i], c, loc, scale).sum()
        assert ll[i] >= ll_scipy - 1e-7
        assert_allclose(P[i], [loc, scale, -c], rtol=2e-3, atol=2e-3)


def test_batched_fit_equals_single_fits(q50):
    rng = np.random.default_rng(0)
    samples = np.vstack([q50, rng.permutation(q50), q50 * 2 + 1])
    P, ll = fit_gev_many(samples)
    assert_allclose(P[0], P[1], rtol=1e-7)
    assert_allclose(P[2], [2 * P[0, 0] + 1, 2 * P[0, 1], P[0, 2]], rtol=1e-6)


def test_lmoments_methods_check_values(x10, q50):
    # [C] METHODS.md sec. 9 (Hosking 1990; Hosking, Wallis & Wood 1985)
    l1, l2, t3, _ = sample_lmoments(x10)
    assert (l1, l2, t3) == pytest.approx((1.535, 0.193889, 0.189112), abs=1e-6)
    loc, scale, shape = gev_lmoment_parameters(l1, l2, t3, exact=False)
    assert (loc, scale, -shape) == pytest.approx((1.369804, 0.271923, -0.029789), abs=1e-6)
    _, _, shape_exact = gev_lmoment_parameters(l1, l2, t3)
    assert -shape_exact == pytest.approx(-0.029635, abs=1e-6)
    g = fit_gumbel(x10, method="lmoments")
    assert (g.loc, g.scale) == pytest.approx((1.373540, 0.279723), abs=1e-6)
    lq = sample_lmoments(q50)
    assert lq[2] == pytest.approx(0.233315, abs=1e-6)
    # METHODS' Q50 values use the approximation for k; fit_gev solves the t3 equation exactly (as lmoments3)
    loc, scale, shape = gev_lmoment_parameters(lq[0], lq[1], lq[2], exact=False)
    assert (shape, scale, loc) == pytest.approx((0.096761, 0.201060, 1.997683), abs=2e-6)


def test_lmoments_agree_with_lmoments3(q50, portpirie):
    # lmoments3 uses Hosking's sign: its GEV shape c = -xi (our textbook sign)
    lm3 = pytest.importorskip("lmoments3")
    from lmoments3 import distr

    for x in (q50, portpirie.to_numpy()):
        ours = sample_lmoments(x)
        theirs = lm3.lmom_ratios(x, nmom=4)
        assert_allclose(ours, theirs, rtol=1e-10)
        p = distr.gev.lmom_fit(x)
        f = fit_gev(x, method="lmoments")
        assert f.shape == pytest.approx(-p["c"], abs=1e-4)  # sign convention converted here
        assert_allclose([f.loc, f.scale], [p["loc"], p["scale"]], rtol=1e-4)


def test_gpd_methods_check_values():
    # [C] METHODS.md sec. 9: y_i = 2[(1 - p_i)^-0.1 - 1], p_i = (i - 0.5)/200: MLE (0.20154, 0.09040),
    # L-moments (0.19850, 0.10377), mean excess 0.22149
    p = (np.arange(1, 201) - 0.5) / 200
    y = (0.2 / 0.1) * ((1 - p) ** -0.1 - 1)
    f = fit_gpd(y + 1.0, threshold=1.0, years=50.0)
    assert (f.scale, f.shape) == pytest.approx((0.20154, 0.09040), abs=1e-5)
    assert f.rate_per_year == pytest.approx(4.0)
    g = fit_gpd(y + 1.0, threshold=1.0, years=50.0, method="lmoments")
    assert (g.scale, g.shape) == pytest.approx((0.19850, 0.10377), abs=1e-5)
    e = fit_exponential(y + 1.0, threshold=1.0, years=50.0)
    assert e.scale == pytest.approx(0.22149, abs=1e-5)
    c, loc, scale = stats.genpareto.fit(y, floc=0)
    assert (f.shape, f.scale) == pytest.approx((c, scale), rel=1e-3)
    assert f.to_scipy().ppf(0.5) == pytest.approx(stats.genpareto.ppf(0.5, f.shape, loc=1.0, scale=f.scale))


def test_fit_objects_repr_and_dict(portpirie):
    f = fit_gev(portpirie)
    assert repr(f) == "GEVFit(method='mle', n=65, loc=3.875 m, scale=0.198 m, shape=-0.050)"
    d = f.to_dict()
    assert set(d) == {"model", "method", "n", "parameters", "standard_errors", "log_likelihood"}
    g = fit_gumbel(portpirie).to_dict()
    assert g["parameters"]["shape"] == 0.0 and g["standard_errors"]["shape"] is None
    with pytest.raises(dataclasses.FrozenInstanceError):
        f.loc = 1.0  # frozen


def test_bad_inputs():
    with pytest.raises(DataError, match="NaN"):
        fit_gev([1.0, 2.0, np.nan, 3.0])
    with pytest.raises(DataError, match="at least 3"):
        fit_gev([1.0, 2.0])
    with pytest.raises(DataError, match="all equal"):
        fit_gev([1.0] * 10)
    with pytest.raises(ValueError, match="method"):
        fit_gev([1.0, 2.0, 3.0, 4.0], method="moments")
    with pytest.raises(DataError, match="exceed the threshold"):
        fit_gpd([0.5, 1.2, 1.3], threshold=1.0, years=3)
    with pytest.raises(ValueError, match="rate_per_year"):
        fit_gpd([1.1, 1.2, 1.3], threshold=1.0)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        with pytest.raises(Warning, match="only 5"):
            fit_gev([1.0, 1.5, 1.2, 2.0, 1.1])


@pytest.mark.parametrize("shape", [-0.2, 0.0, 0.3])
def test_gpd_quantile_matches_scipy_genpareto_ppf(shape):
    # outside reference: scipy.stats.genpareto (c = shape, the textbook sign for the GPD)
    p = np.array([0.1, 0.5, 0.99])
    got = D.gpd_quantile(p, threshold=1.5, scale=0.2, shape=shape)
    np.testing.assert_allclose(got, 1.5 + stats.genpareto.ppf(p, shape, scale=0.2), rtol=1e-12)
