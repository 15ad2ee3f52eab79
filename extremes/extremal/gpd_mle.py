r"""Maximum-likelihood fits of the generalised Pareto distribution, many (weighted) samples at once.

The one GPD maximum-likelihood fitter of the package: :func:`~extremes.extremal.distributions.fit_gpd` fits one
sample with it, the bootstrap of :mod:`extremes.extremal.uncertainty` and the year bootstrap of the joint
methods (:mod:`extremes.joint.year_bootstrap`, where each resample is the original exceedances with
multiplicities) fit all their resamples with one call.

Grimshaw's reduction [1]_: with :math:`\theta = \xi/\sigma`, the likelihood is maximised over ξ in closed form,
:math:`\hat\xi(\theta) = \bar{w}\,\log(1 + \theta y)` (weighted mean), leaving the one-dimensional profile
:math:`\ell_p(\theta)/N = -[\log(\hat\xi/\theta) + \hat\xi + 1]` (:math:`-[\log\bar y + 1]` at θ = 0). It is
evaluated on a grid to bracket the maximum, which scipy's vectorised scalar minimiser
(:func:`scipy.optimize.elementwise.find_minimum`) then closes for every sample at once. Shapes ξ <= -1 (where
the likelihood is unbounded) are excluded.

References
----------
.. [1] S. D. Grimshaw, "Computing maximum likelihood estimates for the generalized Pareto distribution,"
   Technometrics, vol. 35, no. 2, pp. 185-191, 1993, doi:10.1080/00401706.1993.10485040.
"""
from __future__ import annotations

import numpy as np

__all__ = ["fit_gpd_many"]

#: |θ| below this is treated as θ = 0 (the exponential limit) [1/m]
_THETA_EPS = 1e-9


def _profile(theta, y, w, ybar):
    """Profile log-likelihood per unit weight at θ (k, g) for rows of y (k, n) with weights w (k, n)."""
    small = np.abs(theta) < _THETA_EPS
    th = np.where(small, _THETA_EPS, theta)
    with np.errstate(invalid="ignore", divide="ignore"):
        xi = np.einsum("kn,kgn->kg", w, np.log1p(th[:, :, None] * y[:, None, :]))
        val = -(np.log(xi / th) + xi + 1.0)
    val = np.where(np.isfinite(val) & (xi > -1.0), val, -np.inf)
    return np.where(small, -(np.log(ybar)[:, None] + 1.0), val)


def fit_gpd_many(exceedances, *, model="gpd", weights=None, n_grid=40):
    r"""Maximum-likelihood GPD (or exponential) fits of many exceedance samples at once.

    Parameters
    ----------
    exceedances : array-like, shape (B, n) or (n,)
        Exceedances y = x - u > 0, one sample per row; a single row is shared by every row of ``weights``. [m]
    model : {"gpd", "exponential"}
        The GPD, or its shape-0 case.
    weights : array-like, shape (B, n), optional
        Non-negative weight (multiplicity) of each exceedance in each sample (default 1).
    n_grid : int
        Points of the bracketing grid in θ.

    Returns
    -------
    params : numpy.ndarray, shape (B, 2)
        Scale [m] and shape; NaN where the fit failed.
    loglik : numpy.ndarray, shape (B,)
        Maximised (weighted) log-likelihood.

    Notes
    -----
    Grimshaw [1]_; checked against :func:`scipy.stats.genpareto.fit` and METHODS.md sec. 9 (tests).
    """
    y = np.atleast_2d(np.asarray(exceedances, dtype=float))
    if weights is None:
        w_abs = np.ones_like(y)
    else:
        w_abs = np.atleast_2d(np.asarray(weights, dtype=float))
        y = np.broadcast_to(y, w_abs.shape)
    total = w_abs.sum(axis=1)
    with np.errstate(invalid="ignore", divide="ignore"):
        w = w_abs / total[:, None]
        ybar = np.sum(w * y, axis=1)
        if model == "exponential":
            return np.stack([ybar, np.zeros_like(ybar)], axis=1), -total * (np.log(ybar) + 1.0)
        ymax = np.max(np.where(w_abs > 0, y, 0.0), axis=1)
        lo = -(1.0 - 1e-6) / ymax
        hi = 20.0 / ybar
    # geometric spacing from the lower end (where bounded tails put the maximum), plus θ = 0
    frac = np.concatenate([np.geomspace(1e-9, 0.05, n_grid // 2, endpoint=False),
                           np.linspace(0.05, 1.0, n_grid - n_grid // 2)])
    grid = np.concatenate([lo[:, None] + (hi - lo)[:, None] * frac[None, :], np.zeros((y.shape[0], 1))], axis=1)
    grid.sort(axis=1)
    vals = np.concatenate([_profile(grid[:, i:i + 8], y, w, ybar) for i in range(0, grid.shape[1], 8)], axis=1)
    k = np.argmax(vals, axis=1)
    rows = np.arange(y.shape[0])
    theta = grid[rows, k]
    inner = (k > 0) & (k < grid.shape[1] - 1) & np.isfinite(vals[rows, k])
    if inner.any():
        from scipy.optimize import elementwise  # imported here: slow to import, needed only for fits

        def negative_profile(t, r):
            r = r.astype(np.int64)
            value = -_profile(t[:, None], y[r], w[r], ybar[r])[:, 0]
            return np.where(np.isfinite(value), value, 1e300)  # outside the support: worse than any point

        idx = np.flatnonzero(inner)
        res = elementwise.find_minimum(
            negative_profile, (grid[idx, k[idx] - 1], grid[idx, k[idx]], grid[idx, k[idx] + 1]),
            args=(idx.astype(float),), tolerances=dict(xatol=0.0, xrtol=1e-12, fatol=0.0, frtol=0.0))
        better = np.isfinite(res.f_x) & (-res.f_x >= vals[idx, k[idx]])
        theta[idx[better]] = res.x[better]
    with np.errstate(invalid="ignore", divide="ignore"):
        xi = np.sum(w * np.log1p(theta[:, None] * y), axis=1)
        scale = np.where(np.abs(theta) < _THETA_EPS, ybar, xi / theta)
        loglik = total * _profile(theta[:, None], y, w, ybar)[:, 0]
    out = np.stack([scale, xi], axis=1)
    bad = ~np.isfinite(out).all(axis=1) | ~(scale > 0) | ~(xi > -0.999) | ~(total > 0)
    for i in np.flatnonzero(bad & (total > 0)):  # rare (short, strongly bounded samples): scipy's own fit
        from scipy import stats

        sample = np.repeat(y[i], np.rint(w_abs[i]).astype(np.int64)) if weights is not None else y[i]
        if sample.size < 3 or (weights is not None and not np.allclose(w_abs[i], np.rint(w_abs[i]))):
            continue
        c_hat, _, scale_hat = stats.genpareto.fit(sample, floc=0.0)
        if np.isfinite(scale_hat) and scale_hat > 0 and c_hat > -0.999:
            out[i] = (scale_hat, c_hat)
            loglik[i] = float(np.sum(stats.genpareto.logpdf(sample, c_hat, scale=scale_hat)))
            bad[i] = False
    out[bad] = np.nan
    return out, np.where(bad, np.nan, loglik)
