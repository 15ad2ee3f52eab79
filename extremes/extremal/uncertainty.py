r"""Return levels with confidence intervals: delta method, profile likelihood and bootstrap.

:func:`return_levels` is the one entry point. For design levels the profile-likelihood interval is the default:
it follows the skewed shape of the likelihood of long return periods, where the delta method's symmetric
interval does not [1]_ sec. 3.3.3. Peaks-over-threshold intervals include the uncertainty of the event rate λ:
the Poisson likelihood of the number of clusters is part of the profile, its variance λ/years enters the delta
method, and the bootstrap redraws the count.

Profile intervals are computed for all periods and both sides at once: each bound is a root of the profile
deviance, bracketed by expanding steps from the estimate and closed by the Illinois variant of regula falsi,
where each evaluation maximises the likelihood over the nuisance parameters for all bounds together (batched
Newton, warm-started from the previous evaluation).

References
----------
.. [1] S. Coles, *An Introduction to Statistical Modeling of Extreme Values*. London, U.K.: Springer, 2001,
       doi: 10.1007/978-1-4471-3675-0.
.. [2] B. Efron and R. J. Tibshirani, *An Introduction to the Bootstrap*. New York, NY, USA: Chapman & Hall, 1993.
"""
from __future__ import annotations

import logging
import math
import warnings

import numpy as np
import pandas as pd
from scipy import special

from extremes.errors import ExtremesWarning
from extremes.extremal import distributions as D

logger = logging.getLogger(__name__)

#: interval methods of :func:`return_levels`
CI_METHODS = ("profile", "delta", "bootstrap")
#: resampling schemes of the bootstrap
BOOTSTRAP_METHODS = ("parametric", "nonparametric")
COLUMNS = ["return_period_years", "level_m", "lower_m", "upper_m", "confidence"]


# ----------------------------------------------------------------------------------------------------------
# delta method
# ----------------------------------------------------------------------------------------------------------
def gev_return_level_gradient(periods_years, *, loc, scale, shape):
    r"""Gradient of the GEV return level w.r.t. (loc, scale, shape) [1]_ eq. 3.11.

    :math:`\nabla z_p = [1, -\xi^{-1}(1 - y_p^{-\xi}), \sigma\xi^{-2}(1 - y_p^{-\xi})
    - \sigma\xi^{-1}y_p^{-\xi}\ln y_p]`; for |ξ| < 1e-6 its limit as ξ -> 0,
    :math:`[1, -\ln y_p, +\sigma(\ln y_p)^2/2]` (expand :math:`y_p^{-\xi} = 1 - \xi\ln y_p + \xi^2(\ln y_p)^2/2
    - \dots`: the return level grows with the shape at ξ = 0, so the last entry is positive).

    Returns
    -------
    numpy.ndarray, shape (len(periods_years), 3)
    """
    T = np.atleast_1d(np.asarray(periods_years, dtype=float))
    yp = -np.log1p(-1.0 / T)
    lny = np.log(yp)
    if abs(shape) < D.SHAPE_EPS:
        return np.stack([np.ones_like(lny), -lny, scale * lny**2 / 2], axis=1)
    ymx = np.exp(-shape * lny)
    return np.stack([np.ones_like(lny), -(1 - ymx) / shape,
                     scale / shape**2 * (1 - ymx) - scale / shape * ymx * lny], axis=1)


def _numeric_gradient(func, params, rel=1e-6):
    params = np.asarray(params, dtype=float)
    out = []
    for j in range(params.size):
        h = rel * max(1.0, abs(params[j]))
        e = np.zeros(params.size)
        e[j] = h
        out.append((func(params + e) - func(params - e)) / (2 * h))
    return np.stack(out, axis=-1)


def _z_crit(confidence):
    return special.ndtri(0.5 + confidence / 2)


# ----------------------------------------------------------------------------------------------------------
# profile likelihood (batched)
# ----------------------------------------------------------------------------------------------------------
def _heavy_start(d_log_scale, shape):
    return lambda ih: np.stack([ih[:, 0] + d_log_scale, np.full(len(ih), shape)], axis=1)


#: extra starting points (log-scale offset, shape) of the inner maximisation: far up a long-period upper bound
#: the profile's maximum lies at a heavy shape that a warm start from the estimate can miss, which made the
#: upper bound too low and not monotone in the period
_HEAVY_STARTS = tuple(_heavy_start(ds, xi) for ds, xi in ((0.3, 0.3), (0.5, 0.4), (0.8, 0.6), (1.0, 0.8)))


def _profile_bounds(nll_full, to_params, inner_hat, z_hat, side, se, ll_hat, crit, *, extra_starts=(),
                    derivs=None):
    """Roots of the profile deviance 2[ℓ̂ - ℓ_p(z)] = crit, one per problem (vectorised).

    ``nll_full(params, rows)`` -> (k,), ``to_params(z, inner, rows)`` -> full params; problem ``i`` starts from
    ``inner_hat[i]`` at ``z_hat[i]`` and searches on ``side[i]`` (+1 upper, -1 lower). ``derivs(z, inner,
    rows)``, if given, returns the gradient and Hessian of the negative log-likelihood in the inner parameters.
    """
    K, q = inner_hat.shape
    inner_last = inner_hat.copy()

    def profile(z, rows):
        """Maximised log-likelihood at z for problems ``rows`` (warm-started)."""
        best_th = inner_last[rows].copy()
        # the warm start and every starting point, evaluated in one call (rows are independent problems),
        # then taken in turn where better
        starts = [best_th] + [start(inner_hat[rows]) for start in [lambda ih: ih] + list(extra_starts)]
        n_st = len(starts)
        values = nll_full(to_params(np.tile(z, n_st), np.concatenate(starts), np.tile(rows, n_st)),
                          np.tile(rows, n_st)).reshape(n_st, rows.size)
        best_val = values[0].copy()
        for st, val0 in zip(starts[1:], values[1:]):
            better = np.isfinite(val0) & ~(val0 >= best_val)
            best_th[better] = st[better]
            best_val[better] = val0[better]
        ok = np.isfinite(best_val)
        ll = np.full(rows.size, -np.inf)
        if ok.any():
            loc_rows = rows[ok]
            zz = z[ok]

            def fun(th, r):
                return nll_full(to_params(zz[r], th, loc_rows[r]), loc_rows[r])

            if derivs is None:
                th, f, _ = D._newton(fun, best_th[ok], max_iter=40)
            else:
                th, f, _ = D._newton(fun, best_th[ok], max_iter=40,
                                     grad_hess=lambda th, r: derivs(zz[r], th, loc_rows[r]))
            ll[ok] = -f
            inner_last[loc_rows] = th
        return ll

    def deviance(z, rows):
        return 2.0 * (ll_hat[rows] - profile(z, rows)) - crit

    with np.errstate(all="ignore"):
        return _find_roots(deviance, z_hat, side, se, crit, K)


def _find_roots(deviance, z_hat, side, se, crit, K):
    allr = np.arange(K)
    step = np.where(np.isfinite(se) & (se > 0), 2.0 * se, 0.1 * np.maximum(np.abs(z_hat), 1e-3))
    a = z_hat.copy()
    fa = np.full(K, -crit)
    b = z_hat + side * step
    fb = deviance(b, allr)
    for _ in range(40):  # expand the bracket until the deviance exceeds the critical value
        need = np.flatnonzero(~(fb > 0))
        if need.size == 0:
            break
        a[need] = np.where(np.isfinite(fb[need]), b[need], a[need])
        fa[need] = np.where(np.isfinite(fb[need]), fb[need], fa[need])
        # double the distance while the deviance is finite; step back towards the estimate where the model has
        # no support (infinite deviance)
        b[need] = z_hat[need] + side[need] * np.where(
            np.isfinite(fb[need]), np.abs(b[need] - z_hat[need]) * 2.0, np.abs(b[need] - z_hat[need]) * 0.75)
        fb[need] = deviance(b[need], need)
    bracketed = fb > 0
    # an upper bound whose profile deviance stays below the cut over the whole expanding search (each step
    # doubles the distance: 40 doublings) is one the data cannot limit: +inf, never a number cut by a grid
    unbounded = (side > 0) & ~bracketed & np.isfinite(fb)
    # Illinois regula falsi on [a, b] with fa < 0 < fb (ga, gb: the values with Illinois halving applied)
    todo = np.flatnonzero(bracketed)
    ga, gb = fa.copy(), fb.copy()
    best = np.where(np.abs(fa) < np.abs(fb), a, b)
    best_f = np.minimum(np.abs(fa), np.abs(fb))
    last = np.zeros(K, int)
    for _ in range(80):
        if todo.size == 0:
            break
        ai, bi, gai, gbi = a[todo], b[todo], ga[todo], gb[todo]
        c = bi - gbi * (bi - ai) / (gbi - gai)
        c = np.where(np.isfinite(c) & (np.minimum(ai, bi) < c) & (c < np.maximum(ai, bi)), c, 0.5 * (ai + bi))
        fc = deviance(c, todo)
        fc = np.where(np.isfinite(fc), fc, 1e3)
        improved = np.abs(fc) < best_f[todo]
        best[todo[improved]] = c[improved]
        best_f[todo[improved]] = np.abs(fc[improved])
        pos = fc > 0
        # replace the endpoint with the same sign; halve the other's value when it is kept twice (Illinois)
        i_pos, i_neg = todo[pos], todo[~pos]
        b[i_pos], fb[i_pos], gb[i_pos] = c[pos], fc[pos], fc[pos]
        ga[i_pos] = np.where(last[i_pos] == 1, ga[i_pos] / 2, ga[i_pos])
        last[i_pos] = 1
        a[i_neg], fa[i_neg], ga[i_neg] = c[~pos], fc[~pos], fc[~pos]
        gb[i_neg] = np.where(last[i_neg] == -1, gb[i_neg] / 2, gb[i_neg])
        last[i_neg] = -1
        width = np.abs(b[todo] - a[todo])
        done = (width < 1e-9 * np.maximum(1.0, np.abs(a[todo]))) | (np.abs(fc) < 1e-8)
        todo = todo[~done]
    # a last secant step on the true values of the final bracket
    lin = a - fa * (b - a) / (fb - fa)
    out = np.where(np.isfinite(lin) & (np.minimum(a, b) <= lin) & (lin <= np.maximum(a, b)), lin, best)
    out[~bracketed] = np.nan
    out[unbounded] = np.inf
    return out


def _gev_profile_problems(fit, yp):
    """Arrays describing the profile problems of a GEV/Gumbel/r-largest fit for reduced variates ``yp``."""
    x = fit.data
    if fit.model == "gev-r-largest":
        X = x[None, :, :]

        def nll_full(params, rows):
            return D._rlargest_nll(X[np.zeros(len(rows), int)], params[:, :1], params[:, 1:2], params[:, 2:3])
    else:
        X = x[None, :]

        def nll_full(params, rows):
            return np.sum(D._gev_nll_terms(X[np.zeros(len(rows), int)], params[:, :1], params[:, 1:2],
                                           params[:, 2:3]), axis=1)
    return nll_full


def _profile_gev(fit, T, crit, se):
    T = np.asarray(T, float)
    yp_all = -np.log1p(-1.0 / T)
    K = T.size
    side = np.concatenate([-np.ones(K), np.ones(K)])
    yp = np.concatenate([yp_all, yp_all])
    lny = np.log(yp)
    z_hat = np.tile(fit.return_level(T), 2)
    se2 = np.tile(se, 2)
    nll_full = _gev_profile_problems(fit, yp)
    if fit.model == "gumbel":
        def to_params(z, inner, rows):
            sig = np.exp(inner[:, 0])
            return np.stack([z + sig * lny[rows], sig, np.zeros_like(sig)], axis=1)
        inner_hat = np.tile([[math.log(fit.scale)]], (2 * K, 1))
        extra = ()
    else:
        def to_params(z, inner, rows):
            sig = np.exp(inner[:, 0])
            xi = inner[:, 1]
            small = np.abs(xi) < D.SHAPE_EPS
            safe = np.where(small, 1.0, xi)
            a = np.where(small, lny[rows], -np.expm1(-safe * lny[rows]) / safe)
            return np.stack([z + sig * a, sig, xi], axis=1)
        inner_hat = np.tile([[math.log(fit.scale), fit.shape]], (2 * K, 1))
        extra = (lambda ih: np.stack([ih[:, 0], np.zeros(len(ih))], axis=1),
                 lambda ih: np.stack([ih[:, 0] + 0.5, np.full(len(ih), 0.2)], axis=1)) + _HEAVY_STARTS
    derivs = None
    if fit.model == "gev":
        x = fit.data[None, :]
        derivs = _gev_profile_derivs(lambda rows: x[np.zeros(len(rows), int)], lambda rows: lny[rows])
    b = _profile_bounds(nll_full, to_params, inner_hat, z_hat, side, se2, np.full(2 * K, fit.log_likelihood),
                        crit, extra_starts=extra, derivs=derivs)
    return b[:K], b[K:]


def _gev_profile_derivs(data_of, lny_of):
    """Closed-form gradient and Hessian of the GEV nll in the inner parameters (ln σ, ξ) of the return-level
    profile, where μ = z + σ a(ξ), a(ξ) = (1 - y_p^(-ξ))/ξ (chain rule on the full-parameter derivatives)."""
    def derivs(z, inner, rows):
        x = data_of(rows)
        L = lny_of(rows)
        sig = np.exp(inner[:, 0])
        xi = inner[:, 1]
        small = np.abs(xi) < 1e-4
        safe = np.where(small, 1.0, xi)
        with np.errstate(over="ignore", invalid="ignore"):
            E = np.exp(-safe * L)
            N = safe * L * E - (1 - E)
            a = np.where(small, L - xi * L**2 / 2 + xi**2 * L**3 / 6, -np.expm1(-safe * L) / safe)
            a1 = np.where(small, -L**2 / 2 + xi * L**3 / 3, N / safe**2)
            a2 = np.where(small, L**3 / 3, -L**2 * E / safe - 2 * N / safe**3)
        mu = z + sig * a
        P = (mu[:, None], sig[:, None], xi[:, None])
        g = D._gev_nll_grad(x, *P)
        H = D._gev_nll_hess(x, *P)
        k = len(z)
        J = np.zeros((k, 3, 2))
        J[:, 0, 0] = sig * a
        J[:, 1, 0] = sig
        J[:, 0, 1] = sig * a1
        J[:, 2, 1] = 1.0
        gi = np.einsum("kij,ki->kj", J, g)
        Hi = np.einsum("kai,kab,kbj->kij", J, H, J)
        Hi[:, 0, 0] += g[:, 0] * sig * a + g[:, 1] * sig
        Hi[:, 0, 1] += g[:, 0] * sig * a1
        Hi[:, 1, 0] += g[:, 0] * sig * a1
        Hi[:, 1, 1] += g[:, 0] * sig * a2
        return gi, Hi
    return derivs


def _profile_gpd(fit, T, crit, se, *, aep):
    """Joint profile over (λ, shape) of the POT level, with the Poisson likelihood of the cluster count."""
    T = np.asarray(T, float)
    K = T.size
    y = (fit.data - fit.threshold)[None, :]
    N, years = fit.n, fit.years
    per = 1.0 / np.concatenate([-np.log1p(-1.0 / T)] * 2) if aep else np.concatenate([T, T])
    side = np.concatenate([-np.ones(K), np.ones(K)])
    z_hat = np.tile(fit.return_level(T, aep=aep), 2)
    ll_hat = fit.log_likelihood + N * math.log(N / years) - N

    def nll_full(params, rows):  # params: (scale, shape, rate)
        g = np.sum(D._gpd_nll_terms(y[np.zeros(len(rows), int)], params[:, :1], params[:, 1:2]), axis=1)
        with np.errstate(divide="ignore", invalid="ignore"):
            pois = -(N * np.log(params[:, 2]) - params[:, 2] * years)
            out = g + pois
        return np.where(params[:, 0] > 0, out, np.inf)

    u = fit.threshold
    if fit.model == "exponential":
        def to_params(z, inner, rows):
            lam = np.exp(inner[:, 0])
            with np.errstate(divide="ignore", invalid="ignore"):
                sig = (z - u) / np.log(lam * per[rows])
            return np.stack([np.where(sig > 0, sig, np.nan), np.zeros_like(lam), lam], axis=1)
        inner_hat = np.tile([[math.log(fit.rate_per_year)]], (2 * K, 1))
        extra = ()
    else:
        def to_params(z, inner, rows):
            lam = np.exp(inner[:, 0])
            xi = inner[:, 1]
            lm = np.log(lam * per[rows])
            small = np.abs(xi) < D.SHAPE_EPS
            safe = np.where(small, 1.0, xi)
            with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
                denom = np.where(small, lm, np.expm1(safe * lm) / safe)
                sig = (z - u) / denom
            return np.stack([np.where(sig > 0, sig, np.nan), xi, lam], axis=1)
        inner_hat = np.tile([[math.log(fit.rate_per_year), fit.shape]], (2 * K, 1))
        # inner parameters here are (log rate, shape): heavy shapes at the estimated rate
        extra = (lambda ih: np.stack([ih[:, 0], np.zeros(len(ih))], axis=1),) + tuple(
            _heavy_start(0.0, xi) for xi in (0.3, 0.5, 0.8))

    def nll_safe(params, rows):
        v = nll_full(params, rows)
        return np.where(np.isnan(v), np.inf, v)

    b = _profile_bounds(nll_safe, to_params, inner_hat, z_hat, side, np.tile(se, 2), np.full(2 * K, ll_hat),
                        crit, extra_starts=extra)
    return b[:K], b[K:]


def profile_intervals_many(samples, periods_years, *, confidence=0.95):
    """Profile-likelihood intervals of GEV return levels for many samples at once (e.g. a simulation study).

    Parameters
    ----------
    samples : array-like, shape (B, n)
        Annual-maximum samples. [m]
    periods_years : float
        One return period. [years]

    Returns
    -------
    level, lower, upper : numpy.ndarray, shape (B,)
        Estimate and interval bounds; NaN where a fit or bound failed. [m]
    """
    x = np.atleast_2d(np.asarray(samples, dtype=float))
    B = x.shape[0]
    params, ll = D.fit_gev_many(x)
    T = float(periods_years)
    yp = -math.log1p(-1.0 / T)
    lny = math.log(yp)
    z_hat = D.gev_return_level(T, loc=params[:, 0], scale=params[:, 1], shape=params[:, 2])
    crit = special.chdtri(1, 1 - confidence)
    rows_data = np.concatenate([np.arange(B), np.arange(B)])

    def nll_full(p, rows):
        return np.sum(D._gev_nll_terms(x[rows_data[rows]], p[:, :1], p[:, 1:2], p[:, 2:3]), axis=1)

    def to_params(z, inner, rows):
        sig = np.exp(inner[:, 0])
        xi = inner[:, 1]
        small = np.abs(xi) < D.SHAPE_EPS
        safe = np.where(small, 1.0, xi)
        a = np.where(small, lny, -np.expm1(-safe * lny) / safe)
        return np.stack([z + sig * a, sig, xi], axis=1)

    inner_hat = np.tile(np.stack([np.log(params[:, 1]), params[:, 2]], axis=1), (2, 1))
    se = np.tile(params[:, 1] * (1 + np.abs(lny)) / math.sqrt(x.shape[1]), 2)
    ok = np.tile(np.isfinite(ll), 2)
    inner_hat[~ok] = 0.0
    zz = np.where(np.isfinite(z_hat), z_hat, 0.0)
    derivs = _gev_profile_derivs(lambda rows: x[rows_data[rows]], lambda rows: np.full(len(rows), lny))
    b = _profile_bounds(nll_full, to_params, inner_hat, np.tile(zz, 2), np.repeat([-1.0, 1.0], B), se,
                        np.tile(np.where(np.isfinite(ll), ll, 0.0), 2), crit,
                        extra_starts=(lambda ih: np.stack([ih[:, 0], np.zeros(len(ih))], axis=1),), derivs=derivs)
    b[~ok] = np.nan
    return z_hat, b[:B], b[B:]


# ----------------------------------------------------------------------------------------------------------
# bootstrap
# ----------------------------------------------------------------------------------------------------------
def bootstrap_parameters(fit, *, n_bootstrap=1000, seed=None, kind="parametric"):
    """Refitted parameters of ``n_bootstrap`` resamples of the fitted data (vectorised, seeded).

    Parametric: samples drawn from the fitted model; non-parametric: the data resampled with replacement
    (whole years for r-largest fits) [2]_. POT fits also redraw the cluster count from a Poisson law with mean
    n, so the rate λ* = N*/years carries its own uncertainty.

    Returns
    -------
    numpy.ndarray, shape (n_bootstrap, 3)
        (loc, scale, shape) for GEV fits; (scale, shape, rate_per_year) for POT fits. NaN rows: failed refits.
    """
    if kind not in BOOTSTRAP_METHODS:
        raise ValueError(f"kind must be one of {list(BOOTSTRAP_METHODS)}; got {kind!r}")
    if not (isinstance(n_bootstrap, (int, np.integer)) and n_bootstrap >= 10):
        raise ValueError(f"n_bootstrap must be an integer >= 10; got {n_bootstrap!r}")
    rng = np.random.default_rng(seed)
    if isinstance(fit, D.GPDFit):
        y = fit.data - fit.threshold
        n = y.size
        if kind == "parametric":
            uu = rng.random((n_bootstrap, n))
            if fit.model == "exponential" or abs(fit.shape) < D.SHAPE_EPS:
                sims = -fit.scale * np.log1p(-uu)
            else:
                sims = fit.scale / fit.shape * np.expm1(-fit.shape * np.log1p(-uu))
        else:
            sims = y[rng.integers(0, n, (n_bootstrap, n))]
        if fit.method == "lmoments":
            lm = D.sample_lmoments(sims)
            if fit.model == "exponential":
                P = np.stack([2 * lm[:, 1], np.zeros(n_bootstrap)], axis=1)
            else:
                xi = 2 - lm[:, 0] / lm[:, 1]
                P = np.stack([(1 - xi) * lm[:, 0], xi], axis=1)
        else:
            P, _ = D.fit_gpd_many(sims, model=fit.model)
        lam = rng.poisson(fit.n, n_bootstrap) / fit.years
        return np.column_stack([P, lam])
    x = fit.data
    if fit.model == "gev-r-largest":
        idx = rng.integers(0, x.shape[0], (n_bootstrap, x.shape[0]))
        return D.fit_gev_rlargest_many(x[idx])[0]
    n = x.size
    if kind == "parametric":
        sims = D.gev_quantile(rng.random((n_bootstrap, n)), loc=fit.loc, scale=fit.scale, shape=fit.shape)
    else:
        sims = x[rng.integers(0, n, (n_bootstrap, n))]
    if fit.method == "lmoments":
        lm = D.sample_lmoments(sims)
        if fit.model == "gumbel":
            s = lm[:, 1] / math.log(2)
            return np.stack([lm[:, 0] - D.EULER_GAMMA * s, s, np.zeros(n_bootstrap)], axis=1)
        return np.stack(D.gev_lmoment_parameters(lm[:, 0], lm[:, 1], lm[:, 2]), axis=1)
    P, _ = D.fit_gev_many(sims, model="gumbel" if fit.model == "gumbel" else "gev")
    return P


def _bootstrap_levels(fit, T, *, n_bootstrap, seed, kind, aep):
    P = bootstrap_parameters(fit, n_bootstrap=n_bootstrap, seed=seed, kind=kind)
    good = np.all(np.isfinite(P), axis=1)
    if (~good).mean() > 0.01:
        warnings.warn(f"{int((~good).sum())} of {n_bootstrap} bootstrap refits failed and were left out",
                      ExtremesWarning, stacklevel=3)
    P = P[good]
    if isinstance(fit, D.GPDFit):
        return D.gpd_return_level(T[None, :], threshold=fit.threshold, scale=P[:, :1], shape=P[:, 1:2],
                                  rate_per_year=P[:, 2:3], aep=aep)
    return D.gev_return_level(T[None, :], loc=P[:, :1], scale=P[:, 1:2], shape=P[:, 2:3])


# ----------------------------------------------------------------------------------------------------------
# entry point
# ----------------------------------------------------------------------------------------------------------
def return_levels(fit, periods_years, *, ci="profile", confidence=0.95, n_bootstrap=1000, seed=None,
                  bootstrap="parametric", aep=False):
    r"""Return levels of a fit with confidence intervals.

    Parameters
    ----------
    fit : GEVFit or GPDFit
        From :func:`~extremes.extremal.distributions.fit_gev`, ``fit_gumbel``, ``fit_gev_rlargest``,
        ``fit_gpd`` or ``fit_exponential``.
    periods_years : array-like of float
        Return periods. Annual maxima / r-largest: T = 1/AEP of the annual maximum (T = 1 has no finite
        level: NaN). POT: average recurrence interval (ARI = 1/rate), or T = 1/AEP with ``aep=True``. [years]
    ci : {"profile", "delta", "bootstrap"}
        Profile likelihood (default; maximum-likelihood fits only) [1]_ sec. 3.3.3, delta method [1]_ eq. 3.11,
        or percentile bootstrap [2]_.
    confidence : float
        Confidence level of the interval, 0 < confidence < 1.
    n_bootstrap : int
        Bootstrap resamples.
    seed : int or None
        Seed of :func:`numpy.random.default_rng` for the bootstrap.
    bootstrap : {"parametric", "nonparametric"}
        Resampling scheme.
    aep : bool
        POT only: read ``periods_years`` as 1/AEP (Poisson events: AEP = 1 - exp(-1/ARI)).

    Returns
    -------
    pandas.DataFrame
        Columns ``return_period_years``, ``level_m``, ``lower_m``, ``upper_m``, ``confidence``; ``attrs`` hold
        ``ci``, ``model`` and ``period_kind`` (``"1/AEP"`` or ``"ARI"``).

    Raises
    ------
    ValueError
        Unknown ``ci``, a period < 1 (< 0 for POT ARI), a confidence outside (0, 1), or a profile interval for an
        L-moment fit.
    """
    if ci not in CI_METHODS:
        raise ValueError(f"ci must be one of {list(CI_METHODS)}; got {ci!r}")
    if not (0 < confidence < 1):
        raise ValueError(f"confidence must be between 0 and 1; got {confidence!r}")
    is_pot = isinstance(fit, D.GPDFit)
    if not isinstance(fit, (D.GEVFit, D.GPDFit)):
        raise TypeError(f"fit must be a GEVFit or GPDFit; got {type(fit).__name__}")
    if ci == "profile" and fit.method != "mle":
        raise ValueError(f"ci='profile' needs a maximum-likelihood fit; got method={fit.method!r} "
                         "(use ci='bootstrap' or 'delta')")
    T = D._periods(periods_years, minimum=1.0 if (aep or not is_pot) else 1e-9)
    level = np.full(T.size, np.nan)
    lower = np.full(T.size, np.nan)
    upper = np.full(T.size, np.nan)
    if is_pot:
        usable = (T * fit.rate_per_year > 1.0) if not aep else (T > 1)
        what = "periods where rate x period <= 1 (below the threshold)"
    else:
        usable = T > 1
        what = "periods of 1 year (AEP 1: no finite annual-maximum level)"
    if not usable.all():
        warnings.warn(f"no return level for {what}: {[float(t) for t in T[~usable]]}; reported as NaN", ExtremesWarning,
                      stacklevel=2)
    Tu = T[usable]
    if Tu.size:
        z = fit.return_level(Tu, aep=aep) if is_pot else fit.return_level(Tu)
        level[usable] = z
        se = _delta_se(fit, Tu, aep=aep)
        if ci == "delta":
            zc = _z_crit(confidence)
            lower[usable], upper[usable] = z - zc * se, z + zc * se
        elif ci == "profile":
            crit = special.chdtri(1, 1 - confidence)
            if is_pot:
                lo, hi = _profile_gpd(fit, Tu, crit, se, aep=aep)
            else:
                lo, hi = _profile_gev(fit, Tu, crit, se)
            if np.any(np.isnan(lo) | np.isnan(hi)):
                warnings.warn("a profile-likelihood bound was not found (the model has no support beyond it); "
                              "reported as NaN", ExtremesWarning, stacklevel=2)
            if np.any(np.isinf(hi)):
                warnings.warn("the profile likelihood cannot limit the upper bound at periods "
                              f"{[float(t) for t in Tu[np.isinf(hi)]]} years: reported as unbounded (+inf)",
                              ExtremesWarning, stacklevel=2)
            lower[usable], upper[usable] = lo, hi
        else:
            levels = _bootstrap_levels(fit, Tu, n_bootstrap=n_bootstrap, seed=seed, kind=bootstrap, aep=aep)
            alpha = (1 - confidence) / 2
            lower[usable], upper[usable] = np.quantile(levels, [alpha, 1 - alpha], axis=0)
    df = pd.DataFrame({"return_period_years": T, "level_m": level, "lower_m": lower, "upper_m": upper,
                       "confidence": float(confidence)})
    df.attrs.update({"ci": ci, "model": fit.model, "units": "m",
                     "period_kind": "ARI" if (is_pot and not aep) else "1/AEP"})
    logger.debug("return levels (%s, ci=%s): %s", fit.model, ci, df.to_dict("records"))
    return df


def _delta_se(fit, T, *, aep=False):
    """Delta-method standard errors of the return levels [m]."""
    if isinstance(fit, D.GPDFit):
        lam_var = fit.rate_per_year / fit.years
        if fit.model == "exponential":
            V = np.diag([fit.cov[0, 0], lam_var])
            p0 = [fit.scale, fit.rate_per_year]

            def f(p):
                return D.gpd_return_level(T, threshold=fit.threshold, scale=p[0], shape=0.0, rate_per_year=p[1],
                                          aep=aep)
        else:
            V = np.zeros((3, 3))
            V[:2, :2] = fit.cov
            V[2, 2] = lam_var
            p0 = [fit.scale, fit.shape, fit.rate_per_year]

            def f(p):
                return D.gpd_return_level(T, threshold=fit.threshold, scale=p[0], shape=p[1], rate_per_year=p[2],
                                          aep=aep)
        grad = _numeric_gradient(f, p0)
    elif fit.model == "gumbel":
        grad = gev_return_level_gradient(T, loc=fit.loc, scale=fit.scale, shape=0.0)[:, :2]
        V = fit.cov[:2, :2]
    else:
        grad = gev_return_level_gradient(T, loc=fit.loc, scale=fit.scale, shape=fit.shape)
        V = fit.cov
    var = np.einsum("ki,ij,kj->k", grad, V, grad)
    return np.sqrt(np.where(var >= 0, var, np.nan))


def delta_standard_errors(fit, periods_years, *, aep=False):
    """Delta-method standard errors of return levels [1]_ eq. 3.11 (POT: including Var λ = λ/years). [m]"""
    return _delta_se(fit, D._periods(periods_years), aep=aep)


__all__ = ["CI_METHODS", "BOOTSTRAP_METHODS", "return_levels", "gev_return_level_gradient",
           "delta_standard_errors", "bootstrap_parameters", "profile_intervals_many"]
