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

With ``shape_prior="geophysical"`` the fit is the generalized maximum likelihood (GML) estimator of Martins and
Stedinger [2]_ [3]_: the log-likelihood plus the log of a Beta(6, 9) prior on the shape over (-0.5, 0.5)
(mean +0.1, standard deviation 0.12: :func:`shape_log_prior`), which keeps the shape of a short sample within
the range met in geophysical data. For each θ the shape is then the root of
:math:`-1/\xi + m/\xi^2 + \pi'(\xi)/N = 0` (:math:`m = \bar{w}\log(1 + \theta y)`, N the total weight),
found by safeguarded Newton steps from the unpenalised :math:`\xi = m`; the rest is as above.

References
----------
.. [1] S. D. Grimshaw, "Computing maximum likelihood estimates for the generalized Pareto distribution,"
   Technometrics, vol. 35, no. 2, pp. 185-191, 1993, doi:10.1080/00401706.1993.10485040.
.. [2] E. S. Martins and J. R. Stedinger, "Generalized maximum-likelihood generalized extreme-value quantile
   estimators for hydrologic data," Water Resources Research, vol. 36, no. 3, pp. 737-744, 2000,
   doi:10.1029/1999WR900330.
.. [3] E. S. Martins and J. R. Stedinger, "Generalized maximum likelihood Pareto-Poisson estimators for partial
   duration series," Water Resources Research, vol. 37, no. 10, pp. 2551-2557, 2001,
   doi:10.1029/2001WR000367.
"""
from __future__ import annotations

import numpy as np

__all__ = ["fit_gpd_many", "shape_log_prior", "SHAPE_PRIORS"]

#: |θ| below this is treated as θ = 0 (the exponential limit) [1/m]
_THETA_EPS = 1e-9

#: shape priors of the generalized maximum likelihood fit (None: plain maximum likelihood)
SHAPE_PRIORS = (None, "geophysical")

#: Beta(p, q) prior of Martins & Stedinger [2]_ on (0.5 - ξ) in (0, 1), i.e. on ξ in (-0.5, 0.5)
_PRIOR_P, _PRIOR_Q = 6.0, 9.0


def shape_log_prior(shape, derivative=0):
    r"""Log of the geophysical prior of the GPD/GEV shape (ξ > 0 heavy; up to a constant), or its first or
    second derivative; -inf (or NaN) outside (-0.5, 0.5).

    :math:`\pi(\xi) \propto (0.5 - \xi)^{p-1}(0.5 + \xi)^{q-1}` with p = 6, q = 9 [2]_ (their κ = -ξ): mean
    +0.10, standard deviation 0.122.
    """
    xi = np.asarray(shape, dtype=float)
    inside = (xi > -0.5) & (xi < 0.5)
    a, b = np.where(inside, 0.5 - xi, np.nan), np.where(inside, 0.5 + xi, np.nan)
    if derivative == 0:
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(inside, (_PRIOR_P - 1) * np.log(a) + (_PRIOR_Q - 1) * np.log(b), -np.inf)
    if derivative == 1:
        return -(_PRIOR_P - 1) / a + (_PRIOR_Q - 1) / b
    return -(_PRIOR_P - 1) / a**2 - (_PRIOR_Q - 1) / b**2


def _penalised_shape(m, per_weight):
    """Shape maximising -log ξ - (1/ξ + 1) m + π(ξ)·per_weight with the sign of m (|ξ| < 0.5)."""
    sign = np.where(m < 0, -1.0, 1.0)
    lo, hi = np.where(sign > 0, 1e-9, -0.5 + 1e-9), np.where(sign > 0, 0.5 - 1e-9, -1e-9)
    xi = np.clip(np.where(np.abs(m) < 1e-9, sign * 1e-9, m), lo, hi)
    for _ in range(30):
        grad = -1.0 / xi + m / xi**2 + shape_log_prior(xi, 1) * per_weight
        curv = 1.0 / xi**2 - 2.0 * m / xi**3 + shape_log_prior(xi, 2) * per_weight
        # Newton where the function is concave there; otherwise a small step uphill
        step = np.where(curv < 0, -grad / np.where(curv < 0, curv, -1.0), 0.01 * np.sign(grad))
        new = np.clip(xi + step, lo, hi)
        if not np.any(np.abs(new - xi) > 1e-13):  # NaN rows (outside the support) do not hold the loop
            return new
        xi = new
    return xi


def _profile(theta, y, w, ybar, per_weight=None):
    """Profile log-likelihood per unit weight at θ (k, g) for rows of y (k, n) with weights w (k, n), and the
    shape there; with ``per_weight`` (k,) the log prior of the shape divided by the total weight is added."""
    small = np.abs(theta) < _THETA_EPS
    th = np.where(small, _THETA_EPS, theta)
    with np.errstate(invalid="ignore", divide="ignore"):
        m = np.einsum("kn,kgn->kg", w, np.log1p(th[:, :, None] * y[:, None, :]))
        if per_weight is None:
            xi = m
            val = -(np.log(xi / th) + xi + 1.0)
            at_zero = -(np.log(ybar)[:, None] + 1.0)
        else:
            xi = _penalised_shape(m, per_weight[:, None])
            val = -(np.log(xi / th) + (1.0 / xi + 1.0) * m) + shape_log_prior(xi) * per_weight[:, None]
            at_zero = -(np.log(ybar)[:, None] + 1.0) + shape_log_prior(0.0) * per_weight[:, None]
    val = np.where(np.isfinite(val) & (xi > -1.0), val, -np.inf)
    return np.where(small, at_zero, val), np.where(small, 0.0, xi)


def _rows_of(per_weight, rows):
    return None if per_weight is None else per_weight[rows]


def fit_gpd_many(exceedances, *, model="gpd", weights=None, n_grid=40, shape_prior=None):
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
    shape_prior : {None, "geophysical"}
        None: maximum likelihood; ``"geophysical"``: generalized maximum likelihood with the prior of
        :func:`shape_log_prior` (Martins & Stedinger [3]_); the returned log-likelihood then includes the log prior.

    Returns
    -------
    params : numpy.ndarray, shape (B, 2)
        Scale [m] and shape; NaN where the fit failed.
    loglik : numpy.ndarray, shape (B,)
        Maximised (weighted) log-likelihood.

    Notes
    -----
    Grimshaw [1]_; checked against :func:`scipy.stats.genpareto.fit` and METHODS.md sec. 9 (tests); the
    generalized maximum likelihood fit against a direct maximisation of the penalised likelihood with
    :func:`scipy.optimize.minimize` (tests).
    """
    y = np.atleast_2d(np.asarray(exceedances, dtype=float))
    if weights is None:
        w_abs = np.ones_like(y)
    else:
        w_abs = np.atleast_2d(np.asarray(weights, dtype=float))
        # a value a resample leaves out (weight 0) must not limit θ > -1/y: set it to 0 (it adds nothing)
        y = np.where(w_abs > 0, np.broadcast_to(y, w_abs.shape), 0.0)
    total = w_abs.sum(axis=1)
    if shape_prior not in SHAPE_PRIORS:
        raise ValueError(f"shape_prior must be one of {SHAPE_PRIORS}; got {shape_prior!r}")
    with np.errstate(invalid="ignore", divide="ignore"):
        w = w_abs / total[:, None]
        ybar = np.sum(w * y, axis=1)
        if model == "exponential":
            return np.stack([ybar, np.zeros_like(ybar)], axis=1), -total * (np.log(ybar) + 1.0)
        ymax = np.max(np.where(w_abs > 0, y, 0.0), axis=1)
        per_weight = None if shape_prior is None else 1.0 / total
        lo = -(1.0 - 1e-6) / ymax
        hi = 20.0 / ybar
    # geometric spacing from the lower end (where bounded tails put the maximum), plus θ = 0
    frac = np.concatenate([np.geomspace(1e-9, 0.05, n_grid // 2, endpoint=False),
                           np.linspace(0.05, 1.0, n_grid - n_grid // 2)])
    grid = np.concatenate([lo[:, None] + (hi - lo)[:, None] * frac[None, :], np.zeros((y.shape[0], 1))], axis=1)
    grid.sort(axis=1)
    vals = np.concatenate([_profile(grid[:, i:i + 8], y, w, ybar, _rows_of(per_weight, slice(None)))[0]
                           for i in range(0, grid.shape[1], 8)], axis=1)
    k = np.argmax(vals, axis=1)
    rows = np.arange(y.shape[0])
    theta = grid[rows, k]
    inner = (k > 0) & (k < grid.shape[1] - 1) & np.isfinite(vals[rows, k])
    if inner.any():
        from scipy.optimize import elementwise  # imported here: slow to import, needed only for fits

        def negative_profile(t, r):
            r = r.astype(np.int64)
            value = -_profile(t[:, None], y[r], w[r], ybar[r], _rows_of(per_weight, r))[0][:, 0]
            return np.where(np.isfinite(value), value, 1e300)  # outside the support: worse than any point

        idx = np.flatnonzero(inner)
        res = elementwise.find_minimum(
            negative_profile, (grid[idx, k[idx] - 1], grid[idx, k[idx]], grid[idx, k[idx] + 1]),
            args=(idx.astype(float),), tolerances=dict(xatol=0.0, xrtol=1e-12, fatol=0.0, frtol=0.0))
        better = np.isfinite(res.f_x) & (-res.f_x >= vals[idx, k[idx]])
        theta[idx[better]] = res.x[better]
    with np.errstate(invalid="ignore", divide="ignore"):
        value, xi = _profile(theta[:, None], y, w, ybar, per_weight)
        xi = xi[:, 0]
        scale = np.where(np.abs(theta) < _THETA_EPS, ybar, xi / theta)
        loglik = total * value[:, 0]
    out = np.stack([scale, xi], axis=1)
    bad = ~np.isfinite(out).all(axis=1) | ~(scale > 0) | ~(xi > -0.999) | ~(total > 0)
    for i in np.flatnonzero(bad & (total > 0) & (shape_prior is None)):  # rare (short, strongly bounded samples): scipy's own fit
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
