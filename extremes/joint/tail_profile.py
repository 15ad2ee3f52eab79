r"""Profile-likelihood intervals of joint-probability return levels, adjusted for storm clustering.

The return level :math:`z_T` of the skew-surge joint probability method solves
:math:`E(z) = \theta(z)\,N\sum_k w_k P(S > z - X_k) = 1/T`, where above the threshold u
:math:`P(S > s) = p_u[1 + \xi(s - u)/\sigma]^{-1/\xi}`. For a candidate level z the constraint
:math:`E(z; \sigma, \xi) = 1/T` fixes σ for each ξ (E grows with σ), so the profile log-likelihood of z is
the GPD log-likelihood of the exceedances maximised along that curve [1]_ sec. 3.3.3 / 4.3.

The GPD is fitted to every exceedance, and storms make them come in clusters, so the plain deviance is too
sharp. Following Chandler and Bate [2]_, the deviance is scaled so that its curvature at the estimate
matches a variance of :math:`\hat z_T` that respects the clustering: here the variance of the whole-year
bootstrap (robust scale: interquartile range / 1.349), which also carries the uncertainty of the exceedance
probability :math:`p_u` and of the extremal-index function θ(z), both held at their estimates in the profile.
With :math:`v_I = \nabla z^\top H^{-1}\nabla z` the variance implied by the independence likelihood (observed
information H) and :math:`v_B` the bootstrap variance, the adjusted deviance is
:math:`D_A(z) = (v_I / v_B)\,D(z)` and the interval is :math:`\{z: D_A(z) \le \chi^2_1(1 - \alpha)\}`. An upper
bound the adjusted deviance never reaches is unbounded (+inf).

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

#: shapes of the inner maximisation (the profile follows the curve E(z; σ(ξ), ξ) = 1/T over this grid)
_SHAPE_GRID = np.linspace(-0.6, 1.2, 19)


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

    def __init__(self, component, *, theta_of_z, events_per_year):
        c = component
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
        """GPD log-likelihood of the exceedances at parameters (P, G)."""
        from extremes.extremal.distributions import _gpd_nll_terms

        terms = _gpd_nll_terms(self.y[None, None, :], scale[..., None], shape[..., None])
        return -np.sum(terms, axis=-1)

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

        P, G = z.size, _SHAPE_GRID.size
        need = target - self.body_rate(z)  # what the tail must supply
        zz, nn = np.repeat(z, G), np.repeat(need, G)
        ll = self._loglik_on_curve(zz, nn, np.tile(_SHAPE_GRID, P)).reshape(P, G)
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
                negative, (_SHAPE_GRID[k[i] - 1], _SHAPE_GRID[k[i]], _SHAPE_GRID[k[i] + 1]),
                args=(np.arange(i.size, dtype=float),), tolerances=dict(xatol=1e-6, xrtol=0.0))
            found = -res.f_x
            best[i] = np.where(np.isfinite(found) & (found > best[i]), found, best[i])
        # the maximum at the heaviest shape allowed: the likelihood would still rise beyond it, so the data do
        # not limit this level (the caller treats it as inside the interval)
        return np.where((k == G - 1) & np.isfinite(best), np.nan, best)


def adjusted_profile_bounds(component, *, theta_of_z, events_per_year, periods_years, level_m, loglik_hat,
                            scale_hat, shape_hat, bootstrap_levels, confidence, adjustment=None):
    """Chandler-Bate adjusted profile-likelihood bounds of the return levels (module docstring).

    Parameters
    ----------
    component : extremes.joint.year_bootstrap.Component
        The tide set and the skew surges with their fitted tail (``surge``).
    theta_of_z : callable
        Extremal index as a function of level (held at the estimate).
    events_per_year : float
        Tides per year. [1/year]
    periods_years : numpy.ndarray
        Return periods (``1/rate``). [years]
    level_m : numpy.ndarray
        Estimated return levels at those periods. [m]
    loglik_hat, scale_hat, shape_hat : float
        Maximised GPD log-likelihood and its estimates.
    bootstrap_levels : numpy.ndarray, shape (B, P)
        Whole-year bootstrap levels at the periods (+inf above the grid, NaN failed).
    confidence : float
        Interval level.
    adjustment : float, optional
        A given deviance scaling instead of :math:`v_I/v_B` (1: the plain profile likelihood).

    Returns
    -------
    lower, upper, adjustment : numpy.ndarray
        Bounds [m] (+inf where the upper bound is unbounded, NaN where not found) and the deviance scaling
        :math:`v_I/v_B` per period.
    """
    prob = _Problem(component, theta_of_z=theta_of_z, events_per_year=events_per_year)
    periods = np.asarray(periods_years, dtype=float)
    target = 1.0 / periods
    z_hat = np.asarray(level_m, dtype=float)
    # variance of z from the independence likelihood: delta method with the observed information
    from extremes.extremal.distributions import _gpd_cov

    cov = _gpd_cov(prob.y, scale_hat, shape_hat)
    grad = _level_gradient(prob, z_hat, target, scale_hat, shape_hat)
    v_ind = np.einsum("pi,ij,pj->p", grad, cov, grad)
    with np.errstate(invalid="ignore"):
        q25, q75 = np.nanquantile(np.where(np.isinf(bootstrap_levels), np.nan, bootstrap_levels), [0.25, 0.75],
                                  axis=0) if np.isfinite(bootstrap_levels).any() else (np.nan, np.nan)
    # robust bootstrap spread; resamples above the grid (+inf) sit above q75 unless they are a quarter
    v_boot = ((q75 - q25) / (2 * special.ndtri(0.75))) ** 2
    if adjustment is None:
        adjustment = np.where(np.isfinite(v_ind) & (v_ind > 0) & np.isfinite(v_boot) & (v_boot > 0),
                              np.minimum(1.0, v_ind / v_boot), np.nan)
    else:
        adjustment = np.full(periods.size, float(adjustment))
    crit = special.chdtri(1, 1 - confidence)
    usable = np.isfinite(z_hat) & np.isfinite(adjustment)
    lower = np.full(periods.size, np.nan)
    upper = np.full(periods.size, np.nan)
    idx = np.flatnonzero(usable)
    if idx.size == 0:
        return lower, upper, adjustment
    K = idx.size
    side = np.concatenate([-np.ones(K), np.ones(K)])
    zz = np.tile(z_hat[idx], 2)
    tt = np.tile(target[idx], 2)
    kk = np.tile(adjustment[idx], 2)
    se = np.sqrt(np.tile(v_boot[idx], 2))

    def deviance(z, rows):
        with np.errstate(invalid="ignore"):
            ll = prob.profile(np.asarray(z, dtype=float), tt[rows])
            # NaN: the profile peaks at the heaviest shape allowed (not limited by the data): inside
            return np.where(np.isnan(ll), -crit, kk[rows] * 2.0 * (loglik_hat - ll) - crit)

    with np.errstate(all="ignore"):
        bounds = _roots(deviance, zz, side, se)
    lower[idx], upper[idx] = bounds[:K], bounds[K:]
    return lower, upper, adjustment


def _roots(deviance, z_hat, side, se, *, tolerance_m=5e-4, max_doublings=30):
    """Where the adjusted deviance crosses the cut on each side of the estimate: brackets by doubling steps
    from the estimate (+inf for an upper side still below the cut after ``max_doublings``), then scipy's
    vectorised bracketing root finder (:func:`scipy.optimize.elementwise.find_root`) to ``tolerance_m``."""
    from scipy.optimize import elementwise

    K = z_hat.size
    rows = np.arange(K)
    step = np.where(np.isfinite(se) & (se > 0), 1.5 * se, 0.05)
    a = z_hat.copy()
    b = z_hat + side * step
    fb = deviance(b, rows)
    for _ in range(max_doublings):
        need = np.flatnonzero(~(np.isfinite(fb) & (fb > 0)))
        if need.size == 0:
            break
        finite = np.isfinite(fb[need])
        # the profile has support: move the near end up and double; no support (-inf likelihood): step back
        a[need] = np.where(finite, b[need], a[need])
        dist = np.abs(b[need] - z_hat[need])
        b[need] = z_hat[need] + side[need] * np.where(finite, 2.0 * dist, 0.6 * dist)
        fb[need] = deviance(b[need], need)
    bracketed = np.isfinite(fb) & (fb > 0)
    out = np.full(K, np.nan)
    out[(side > 0) & ~bracketed & np.isfinite(fb)] = np.inf  # the data cannot limit it
    idx = np.flatnonzero(bracketed)
    if idx.size:
        res = elementwise.find_root(lambda z, r: deviance(z, r.astype(np.int64)),
                                    (np.minimum(a[idx], b[idx]), np.maximum(a[idx], b[idx])),
                                    args=(idx.astype(float),), tolerances=dict(xatol=tolerance_m, xrtol=0.0))
        out[idx] = np.where(res.status == 0, res.x, np.nan)
    return out


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
