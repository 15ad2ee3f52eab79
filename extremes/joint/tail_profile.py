r"""Profile-likelihood intervals of joint-probability return levels, adjusted for storm clustering.

The return level :math:`z_T` of the skew-surge joint probability method solves
:math:`E(z) = \theta(z)\,N\sum_k w_k P(S > z - X_k) = 1/T`, where above the threshold u
:math:`P(S > s) = p_u[1 + \xi(s - u)/\sigma]^{-1/\xi}`. For a candidate level z the constraint
:math:`E(z; \sigma, \xi) = 1/T` fixes σ for each ξ (E grows with σ), so the profile log-likelihood of z is
the GPD log-likelihood of the exceedances maximised along that curve [1]_ sec. 3.3.3 / 4.3.

The GPD is fitted to every exceedance, and storms make them come in clusters, so the plain deviance is too
sharp. Following Chandler and Bate [2]_, the deviance is scaled so that its curvature at the estimate
matches a variance of :math:`\hat z_T` that respects the clustering. With :math:`v_I = \nabla z^\top
H^{-1}\nabla z` the variance implied by the independence likelihood (observed information H) and :math:`v_C`
the clustered variance (:func:`level_variances`: the larger of the sandwich variance with years as clusters
and the whole-year bootstrap variance, which also carries the uncertainty of the exceedance probability
:math:`p_u` and of the extremal-index function θ(z), both held at their estimates in the profile), the
adjusted deviance is :math:`D_A(z) = \min(1, v_I / v_C)\,D(z)` and the interval is
:math:`\{z: D_A(z) \le \chi^2_1(1 - \alpha)\}`. An upper bound the adjusted deviance never reaches is
unbounded (+inf). With a generalized maximum likelihood tail (the geophysical shape prior of
:mod:`extremes.extremal.gpd_mle`) the log-likelihood is the penalised one and the shapes are those the prior
allows, (-0.5, 0.5).

References
----------
.. [1] S. Coles, *An Introduction to Statistical Modeling of Extreme Values*. London, U.K.: Springer, 2001.
.. [2] R. E. Chandler and S. Bate, "Inference for clustered data using the independence loglikelihood,"
   Biometrika, vol. 94, no. 1, pp. 167-183, 2007, doi:10.1093/biomet/asm015.
"""
from __future__ import annotations

import logging

import numpy as np
from scipy import special

logger = logging.getLogger(__name__)

__all__ = ["adjusted_profile_bounds"]

#: shapes of the inner maximisation (the profile follows the curve E(z; σ(ξ), ξ) = 1/T over this grid): plain
#: likelihood, and with the geophysical shape prior (which is zero outside (-0.5, 0.5))
_SHAPE_GRID = np.linspace(-0.6, 1.2, 19)
_PRIOR_SHAPE_GRID = np.linspace(-0.495, 0.495, 19)

#: smallest deviance scaling given a profile interval: below it the tail parameters carry less than a tenth of
#: the level's clustered variance (the exceedance probability and the extremal index carry the rest, near the
#: threshold), which the profile of the tail likelihood does not describe; the bootstrap interval is kept there
MIN_PROFILE_ADJUSTMENT = 0.1


def _tide_bins(tide_m, h=0.01):
    """Tide values binned to a grid of step h: (levels [m], probabilities)."""
    x0 = np.floor(tide_m.min() / h)
    idx = np.rint(tide_m / h - x0).astype(np.int64)
    w = np.bincount(idx) / tide_m.size
    keep = w > 0
    return (x0 + np.flatnonzero(keep)) * h, w[keep]


def _gpd_sf(y, scale, shape):
    """GPD survival at y >= 0 for broadcast (scale, shape); 0 beyond a bounded end."""
    small = np.abs(shape) < 1e-6
    safe = np.where(small, 1.0, shape)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        t = 1.0 + safe * y / scale
        general = np.where(t > 0, np.exp(-np.log(np.where(t > 0, t, 1.0)) / safe), 0.0)
    return np.where(small, np.exp(-y / scale), general)


class _Problem:
    """The constraint and likelihood pieces of one tail (one component with all its exceedances)."""

    def __init__(self, component, *, theta_of_z, events_per_year, shape_prior=None):
        c = component
        self.shape_prior = shape_prior
        self.shape_grid = _SHAPE_GRID if shape_prior is None else _PRIOR_SHAPE_GRID
        self.u = c.surge.threshold_m
        self.p_u = c.surge.tail_probability
        x = np.sort(c.surge_m)
        self.body = x[x <= self.u]
        self.n_all = x.size
        self.y = x[x > self.u] - self.u
        self.tide, self.tide_w = _tide_bins(np.asarray(c.tide_m, dtype=float))
        self.factor = events_per_year * c.share
        self.theta_of_z = theta_of_z

    def body_rate(self, z):
        """Rate contribution of the tides where z - X_k is below the threshold (empirical body) (P,)."""
        s = z[:, None] - self.tide[None, :]
        below = s < self.u
        # empirical P(S > s) for s < u: share of all values above s (body values above s, plus the tail)
        above = (self.n_all - np.searchsorted(np.sort(np.concatenate([self.body, self.u + self.y])), s,
                                              side="right")) / self.n_all
        return self.factor * self.theta_of_z(z) * np.sum(np.where(below, above, 0.0) * self.tide_w, axis=1)

    def tail_rate(self, z, scale, shape):
        """Rate from the GPD tail (P, G) for levels z (P,) and parameters (P, G)."""
        s = z[:, None, None] - self.tide[None, None, :]
        tail = np.where(s >= self.u, _gpd_sf(np.maximum(s - self.u, 0.0), scale[..., None], shape[..., None]), 0.0)
        return (self.factor * self.theta_of_z(z))[:, None] * self.p_u * np.sum(tail * self.tide_w, axis=2)

    def loglik(self, scale, shape):
        """GPD log-likelihood of the exceedances at parameters (P, G) (plus the log shape prior, if any)."""
        from extremes.extremal.distributions import _gpd_nll_terms

        terms = _gpd_nll_terms(self.y[None, None, :], scale[..., None], shape[..., None])
        if self.shape_prior is None:
            return -np.sum(terms, axis=-1)
        from extremes.extremal.gpd_mle import shape_log_prior

        return -np.sum(terms, axis=-1) + shape_log_prior(shape)

    def _scale_for(self, z, need, shape):
        """Scale σ [m] (P,) with tail rate ``need`` at level z for each shape (P,); NaN where none."""
        from scipy.optimize import elementwise

        def f(log_scale, r):
            r = r.astype(np.int64)
            rate = self.tail_rate(z[r], np.exp(log_scale)[:, None], shape[r][:, None])[:, 0]
            return np.log(np.maximum(rate, 1e-300)) - np.log(np.maximum(need[r], 1e-300))

        rows = np.arange(z.size, dtype=float)
        res = elementwise.find_root(f, (np.full(z.size, np.log(1e-4)), np.full(z.size, np.log(50.0))),
                                    args=(rows,), tolerances=dict(xatol=1e-9, xrtol=1e-9))
        # no scale in [0.1 mm, 50 m] meets the constraint: no support at this level
        return np.where((res.status == 0) & (need > 0), np.exp(res.x), np.nan)

    def _loglik_on_curve(self, z, need, shape):
        scale = self._scale_for(z, need, shape)
        with np.errstate(invalid="ignore"):
            ll = self.loglik(np.where(np.isfinite(scale), scale, 1.0)[:, None], shape[:, None])[:, 0]
        return np.where(np.isfinite(scale) & np.isfinite(ll), ll, -np.inf)

    def profile(self, z, target):
        """Profile log-likelihood of levels z (P,) with rates ``target`` (P,): the maximum over the shape of
        the likelihood along E(z; σ(ξ), ξ) = 1/T (a grid brackets it, scipy's vectorised minimiser closes it)."""
        from scipy.optimize import elementwise

        grid = self.shape_grid
        P, G = z.size, grid.size
        need = target - self.body_rate(z)  # what the tail must supply
        zz, nn = np.repeat(z, G), np.repeat(need, G)
        ll = self._loglik_on_curve(zz, nn, np.tile(grid, P)).reshape(P, G)
        k = np.argmax(ll, axis=1)
        best = ll[np.arange(P), k]
        inner = (k > 0) & (k < G - 1) & np.isfinite(best)
        i = np.flatnonzero(inner)
        if i.size:
            def negative(xi, r):
                r = r.astype(np.int64)
                value = -self._loglik_on_curve(z[i][r], need[i][r], xi)
                return np.where(np.isfinite(value), value, 1e300)

            res = elementwise.find_minimum(
                negative, (grid[k[i] - 1], grid[k[i]], grid[k[i] + 1]),
                args=(np.arange(i.size, dtype=float),), tolerances=dict(xatol=1e-6, xrtol=0.0))
            found = -res.f_x
            best[i] = np.where(np.isfinite(found) & (found > best[i]), found, best[i])
        # the maximum at the heaviest shape allowed: the likelihood would still rise beyond it, so the data do
        # not limit this level (the caller treats it as inside the interval); with the shape prior the profile
        # falls to -inf at the prior's end, so the maximum on the grid is the profile
        if self.shape_prior is not None:
            return best
        return np.where((k == G - 1) & np.isfinite(best), np.nan, best)


def adjusted_profile_bounds(component, *, theta_of_z, events_per_year, periods_years, level_m, loglik_hat,
                            scale_hat, shape_hat, bootstrap_levels, confidence, adjustment=None, shape_prior=None):
    """Chandler-Bate adjusted profile-likelihood bounds of the return levels (module docstring).

    Parameters
    ----------
    component : extremes.joint.year_bootstrap.Component
        The tide set and the skew surges with their fitted tail (``surge``) and the year of each.
    theta_of_z : callable
        Extremal index as a function of level (held at the estimate).
    events_per_year : float
        Tides per year. [1/year]
    periods_years : numpy.ndarray
        Return periods (``1/rate``). [years]
    level_m : numpy.ndarray
        Estimated return levels at those periods. [m]
    loglik_hat, scale_hat, shape_hat : float
        Maximised GPD log-likelihood (with the log prior, if any) and its estimates.
    bootstrap_levels : numpy.ndarray, shape (B, P)
        Whole-year bootstrap levels at the periods (+inf above the grid, NaN failed).
    confidence : float
        Interval level.
    adjustment : float, optional
        A given deviance scaling instead of :math:`v_I/v_C` (1: the plain profile likelihood).
    shape_prior : {None, "geophysical"}
        The shape prior of a generalized maximum likelihood tail (:mod:`extremes.extremal.gpd_mle`).

    Returns
    -------
    lower, upper, adjustment : numpy.ndarray
        Bounds [m] (+inf where the upper bound is unbounded, NaN where not found or where the scaling is below
        :data:`MIN_PROFILE_ADJUSTMENT`) and the deviance scaling :math:`v_I/v_C` per period.
    """
    prob = _Problem(component, theta_of_z=theta_of_z, events_per_year=events_per_year, shape_prior=shape_prior)
    periods = np.asarray(periods_years, dtype=float)
    target = 1.0 / periods
    z_hat = np.asarray(level_m, dtype=float)
    v_ind, v_clustered = level_variances(prob, component, z_hat, target, scale_hat, shape_hat, bootstrap_levels)
    if adjustment is None:
        adjustment = np.where(np.isfinite(v_ind) & (v_ind > 0) & np.isfinite(v_clustered) & (v_clustered > 0),
                              np.minimum(1.0, v_ind / v_clustered), np.nan)
        profiled = adjustment >= MIN_PROFILE_ADJUSTMENT
    else:
        adjustment = np.full(periods.size, float(adjustment))
        profiled = np.ones(periods.size, dtype=bool)
    crit = special.chdtri(1, 1 - confidence)
    lower = np.full(periods.size, np.nan)
    upper = np.full(periods.size, np.nan)
    idx = np.flatnonzero(np.isfinite(z_hat) & np.isfinite(adjustment) & profiled)
    if idx.size == 0:
        return lower, upper, adjustment
    K = idx.size
    side = np.concatenate([-np.ones(K), np.ones(K)])
    tt = np.tile(target[idx], 2)
    kk = np.tile(adjustment[idx], 2)

    def deviance(z, rows):
        with np.errstate(invalid="ignore"):
            ll = prob.profile(np.asarray(z, dtype=float), tt[rows])
            # NaN: the profile peaks at the heaviest shape allowed (not limited by the data): inside
            return np.where(np.isnan(ll), -crit, kk[rows] * 2.0 * (loglik_hat - ll) - crit)

    with np.errstate(all="ignore"):
        bounds = _roots(deviance, np.tile(z_hat[idx], 2), side, np.sqrt(np.tile(v_clustered[idx], 2)), crit=crit)
    lower[idx], upper[idx] = bounds[:K], bounds[K:]
    return lower, upper, adjustment


def level_variances(prob, component, z_hat, target, scale, shape, bootstrap_levels):
    r"""Variance of the levels from the (penalised) likelihood, and the clustered variance.

    With :math:`H_d` the observed information of the data's log-likelihood and P that of the log shape prior
    (zero without one), the likelihood's own variance is :math:`v_I = \nabla z^\top (H_d + P)^{-1} \nabla z`.
    The clustered variance :math:`v_C` is the larger of (a) the Chandler & Bate variance with whole years as
    clusters [2]_ sec. 2, :math:`\nabla z^\top (H_d V^{-1} H_d + P)^{-1} \nabla z`, where
    :math:`V = \sum_j (S_j - \bar S)(S_j - \bar S)^\top` and :math:`S_j` sums the scores of year j's
    exceedances (the data part is adjusted for the storms' clustering, the prior is not data); and (b) the
    whole-year bootstrap variance of the level (interquartile range / 1.349), which also carries the
    uncertainty of the exceedance probability and of the extremal-index function, re-estimated in every
    resample. Resamples above the level grid (+inf) count as above the upper quartile; when they are more than
    a quarter of a period's resamples the bootstrap variance there is infinite (so the caller keeps the
    bootstrap interval, which the data cannot limit either).
    """
    from extremes.extremal.distributions import _gpd_cov, _gpd_nll_grad
    from extremes.extremal.gpd_mle import shape_log_prior

    cov_data = _gpd_cov(prob.y, scale, shape)
    grad = _level_gradient(prob, z_hat, target, scale, shape)
    prior_info = np.zeros((2, 2))
    if prob.shape_prior is not None:
        prior_info[1, 1] = -float(shape_log_prior(shape, 2))
    v_ind = v_sandwich = np.full(z_hat.size, np.nan)
    if np.all(np.isfinite(cov_data)):
        info_data = np.linalg.inv(cov_data)
        v_ind = np.einsum("pi,ij,pj->p", grad, np.linalg.inv(info_data + prior_info), grad)
        meat = _year_score_covariance(component, prob.u, scale, shape, _gpd_nll_grad)
        if np.linalg.cond(meat) < 1e12:
            adjusted = np.linalg.inv(info_data @ np.linalg.inv(meat) @ info_data + prior_info)
            v_sandwich = np.einsum("pi,ij,pj->p", grad, adjusted, grad)
    return v_ind, np.fmax(v_sandwich, _bootstrap_variance(bootstrap_levels, z_hat.size))


def _year_score_covariance(component, threshold_m, scale, shape, score_fn):
    """V: the sum over years of the centred outer products of each year's summed GPD scores (2, 2)."""
    x = np.asarray(component.surge_m, dtype=float)
    exc = x > threshold_m
    scores = score_fn((x[exc] - threshold_m)[:, None], np.array([[scale]]), np.array([[shape]]))  # (n, 2)
    years = np.unique(np.asarray(component.year_index))  # every year, with exceedances or not
    per_year = np.zeros((years.size, 2))
    np.add.at(per_year, np.searchsorted(years, np.asarray(component.year_index)[exc]), scores)
    centred = per_year - per_year.mean(axis=0)
    return centred.T @ centred


def _bootstrap_variance(bootstrap_levels, n_periods):
    """Robust variance (interquartile range / 1.349)^2 of the bootstrap levels per period; +inf (above the grid)
    sits above the upper quartile, and more than a quarter of them make the variance infinite."""
    boot = np.asarray(bootstrap_levels, dtype=float)
    if boot.ndim != 2 or not np.isfinite(boot).any():
        return np.full(n_periods, np.nan)
    out = np.full(boot.shape[1], np.nan)
    for j in range(boot.shape[1]):
        column = boot[~np.isnan(boot[:, j]), j]
        finite = column[np.isfinite(column)]
        if column.size == 0 or finite.size == 0:
            continue
        if np.mean(np.isposinf(column)) > 0.25:
            out[j] = np.inf
            continue
        q25, q75 = np.quantile(np.where(np.isposinf(column), finite.max(), column), [0.25, 0.75])
        out[j] = ((q75 - q25) / (2 * special.ndtri(0.75))) ** 2
    return out


def _roots(deviance, z_hat, side, se, *, crit, tolerance_m=5e-4, max_expansions=30, max_steps=40):
    """Where the adjusted deviance crosses the cut on each side of the estimate, all sides at once.

    ``deviance(z, rows)`` is the adjusted deviance minus the cut (``-crit`` at the estimate, +inf where the
    model has no support). A bracket grows from the estimate by steps of 1.5 bootstrap standard errors,
    doubled while the deviance stays below the cut (stepping back where there is no support); an upper side
    still below the cut after ``max_expansions`` doublings is unbounded (+inf). The crossing is then closed by
    the Illinois variant of regula falsi [3]_ on the signed root :math:`\\sqrt{D_A(z)} - \\sqrt{c}`, which is
    close to linear in z, so that a few vectorised evaluations of the profile reach ``tolerance_m``.

    References
    ----------
    .. [3] M. Dowell and P. Jarratt, "A modified regula falsi method for computing the root of an equation,"
       BIT, vol. 11, pp. 168-174, 1971.
    """
    K = z_hat.size
    root_crit = np.sqrt(crit)

    def signed_root(z, rows):
        # +inf (no support) stays +inf; NaN never comes back from ``deviance``
        return np.sqrt(np.maximum(deviance(z, rows) + crit, 0.0)) - root_crit

    step = np.where(np.isfinite(se) & (se > 0), 1.5 * se, 0.05)
    a, ta = z_hat.copy(), np.full(K, -root_crit)
    b = z_hat + side * step
    tb = signed_root(b, np.arange(K))
    for _ in range(max_expansions):
        need = np.flatnonzero(~(np.isfinite(tb) & (tb > 0)))
        if need.size == 0:
            break
        finite = np.isfinite(tb[need])
        # the profile has support: move the near end up and double; no support (+inf): step back
        a[need] = np.where(finite, b[need], a[need])
        ta[need] = np.where(finite, tb[need], ta[need])
        dist = np.abs(b[need] - z_hat[need])
        b[need] = z_hat[need] + side[need] * np.where(finite, 2.0 * dist, 0.6 * dist)
        tb[need] = signed_root(b[need], need)
    bracketed = np.isfinite(tb) & (tb > 0)
    out = np.full(K, np.nan)
    # an upper side that never crossed: the data cannot limit it (levels without support up there come from
    # the scale's search range, not from the data)
    out[(side > 0) & ~bracketed] = np.inf
    _close_brackets(signed_root, a, b, ta, tb, np.flatnonzero(bracketed), tolerance_m, max_steps)
    with np.errstate(invalid="ignore", divide="ignore"):
        lin = a - ta * (b - a) / (tb - ta)
    inside = np.isfinite(lin) & (np.minimum(a, b) <= lin) & (lin <= np.maximum(a, b))
    out[bracketed] = np.where(inside, lin, 0.5 * (a + b))[bracketed]
    return out


def _close_brackets(signed_root, a, b, ta, tb, todo, tolerance_m, max_steps):
    """Illinois regula falsi on the brackets ``todo`` (near end a with ta <= 0, far end b with tb > 0), in
    place; ends where the model has no support count as past the crossing."""
    fa, fb = ta.copy(), tb.copy()          # end values with the Illinois halving applied
    last = np.zeros(a.size, dtype=int)
    for _ in range(max_steps):
        if todo.size == 0:
            break
        ai, bi, fai, fbi = a[todo], b[todo], fa[todo], fb[todo]
        with np.errstate(invalid="ignore", divide="ignore"):
            c = bi - fbi * (bi - ai) / (fbi - fai)
        c = np.where(np.isfinite(c) & (np.minimum(ai, bi) < c) & (c < np.maximum(ai, bi)), c, 0.5 * (ai + bi))
        tc = signed_root(c, todo)
        far = ~(tc <= 0)
        value = np.where(np.isfinite(tc), tc, np.maximum(fbi, 1e-3))
        i_far, i_near = todo[far], todo[~far]
        b[i_far], tb[i_far], fb[i_far] = c[far], value[far], value[far]
        fa[i_far] = np.where(last[i_far] == 1, fa[i_far] / 2, fa[i_far])
        last[i_far] = 1
        a[i_near], ta[i_near], fa[i_near] = c[~far], value[~far], value[~far]
        fb[i_near] = np.where(last[i_near] == -1, fb[i_near] / 2, fb[i_near])
        last[i_near] = -1
        with np.errstate(invalid="ignore", divide="ignore"):
            # distance from c to the crossing by the local slope of the bracket
            to_root = np.abs(value) * np.abs(b[todo] - a[todo]) / np.abs(tb[todo] - ta[todo])
        done = (np.abs(b[todo] - a[todo]) < tolerance_m) | (to_root < 0.25 * tolerance_m)
        todo = todo[~done]


def _level_gradient(prob, z_hat, target, scale, shape, rel=1e-4):
    """d z_T / d(scale, shape) by implicit differentiation of E(z; σ, ξ) = 1/T (central differences)."""
    def rate(z, s, k):
        return prob.body_rate(z) + prob.tail_rate(z, np.full((z.size, 1), s), np.full((z.size, 1), k))[:, 0]

    dz = 1e-4
    dE_dz = (rate(z_hat + dz, scale, shape) - rate(z_hat - dz, scale, shape)) / (2 * dz)
    hs, hk = rel * scale, 1e-4
    dE_ds = (rate(z_hat, scale + hs, shape) - rate(z_hat, scale - hs, shape)) / (2 * hs)
    dE_dk = (rate(z_hat, scale, shape + hk) - rate(z_hat, scale, shape - hk)) / (2 * hk)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.stack([-dE_ds / dE_dz, -dE_dk / dE_dz], axis=1)
