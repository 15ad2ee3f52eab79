"""Maximum-likelihood and L-moment fits of the GEV, Gumbel, GPD, exponential and r-largest models.

Split from :mod:`extremes.extremal.distributions` (which keeps the formulas, log-likelihoods, their
derivatives and the fit objects, and re-exports these fitters): batched fitters on many samples at once
(damped Newton with closed-form derivatives, scipy's Nelder-Mead/BFGS as the rare fallback) and the
one-sample fits with their covariances. References as in :mod:`extremes.extremal.distributions`:

References
----------
.. [1] S. Coles, *An Introduction to Statistical Modeling of Extreme Values*. London, U.K.: Springer, 2001,
       doi: 10.1007/978-1-4471-3675-0.
"""
from __future__ import annotations

import logging
import math
import warnings

import numpy as np

from extremes.errors import DataError, ExtremesWarning, FitError
from extremes.extremal.distributions import (
    EULER_GAMMA,
    SHAPE_EPS,
    GEVFit,
    GPDFit,
    _as_sample,
    _check_method,
    _gev_nll_grad,
    _gev_nll_hess,
    _gev_nll_terms,
    _gpd_nll_grad,
    _gpd_nll_terms,
    _rlargest_nll,
    exponential_loglik,
    gev_loglik,
    gev_quantile,
    gpd_loglik,
    gumbel_loglik,
)
from extremes.extremal.gpd_mle import fit_gpd_many
from extremes.extremal.lmoments import gev_lmoment_parameters, sample_lmoments

logger = logging.getLogger(__name__)

# ----------------------------------------------------------------------------------------------------------
# batched fitters
# ----------------------------------------------------------------------------------------------------------
def _gev_start(x):
    lm = sample_lmoments(x)
    loc, scale, shape = gev_lmoment_parameters(lm[..., 0], lm[..., 1], np.clip(lm[..., 2], -0.9, 0.9))
    shape = np.clip(np.nan_to_num(np.atleast_1d(shape)), -0.45, 0.8)
    loc, scale = np.atleast_1d(loc), np.atleast_1d(scale)
    # make sure the start lies inside the support: widen the scale if needed
    t_min = 1 + shape[:, None] * (x - loc[:, None]) / scale[:, None]
    bad = np.any(t_min <= 0.05, axis=1)
    shape = np.where(bad, 0.0, shape)
    return np.stack([loc, np.log(np.maximum(scale, 1e-12)), shape], axis=1)


def fit_gev_many(samples, *, model="gev"):
    """Maximum-likelihood GEV (or Gumbel) fits of many samples of equal size at once.

    Parameters
    ----------
    samples : array-like, shape (B, n)
        One sample per row. [m]
    model : {"gev", "gumbel"}

    Returns
    -------
    params : numpy.ndarray, shape (B, 3)
        (loc, scale, shape) per row; NaN where the fit failed. [m, m, -]
    loglik : numpy.ndarray, shape (B,)
    """
    x = np.atleast_2d(np.asarray(samples, dtype=float))
    if model == "gumbel":
        lm = sample_lmoments(x)
        s0 = lm[:, 1] / math.log(2)
        theta0 = np.stack([lm[:, 0] - EULER_GAMMA * s0, np.log(s0)], axis=1)

        def fun(th, rows):
            return np.sum(_gev_nll_terms(x[rows], th[:, :1], np.exp(th[:, 1:2]), 0.0), axis=1)

        def grad(th, rows):
            g = _gev_nll_grad(x[rows], th[:, :1], np.exp(th[:, 1:2]), np.zeros((len(th), 1)))
            return np.stack([g[:, 0], g[:, 1] * np.exp(th[:, 1])], axis=1)
    else:
        theta0 = _gev_start(x)

        def fun(th, rows):
            return np.sum(_gev_nll_terms(x[rows], th[:, :1], np.exp(th[:, 1:2]), th[:, 2:3]), axis=1)

        def grad(th, rows):
            g = _gev_nll_grad(x[rows], th[:, :1], np.exp(th[:, 1:2]), th[:, 2:3])
            return np.stack([g[:, 0], g[:, 1] * np.exp(th[:, 1]), g[:, 2]], axis=1)

        def hess(th, rows):
            sig = np.exp(th[:, 1:2])
            xr = x[rows]
            H = _gev_nll_hess(xr, th[:, :1], sig, th[:, 2:3])
            g_sig = _gev_nll_grad(xr, th[:, :1], sig, th[:, 2:3])[:, 1]
            J = np.ones((len(th), 3))
            J[:, 1] = sig[:, 0]
            H = H * J[:, :, None] * J[:, None, :]
            H[:, 1, 1] += g_sig * sig[:, 0]
            return H

    theta, f, conv = _newton(fun, theta0, grad=grad, hess=hess if model == "gev" else None)
    bad = ~conv | ~np.isfinite(f)
    if model == "gev":
        bad |= theta[:, 2] <= -0.999
    for i in np.flatnonzero(bad):  # rare: fall back to scipy's Nelder-Mead + BFGS for that sample
        rows = np.array([i])
        th_i, f_i, ok = _scipy_refit(lambda t, rows=rows: float(fun(np.asarray(t)[None, :], rows)[0]), theta0[i])
        if ok and (model == "gumbel" or th_i[2] > -0.999):
            theta[i], f[i], bad[i] = th_i, f_i, False
    out = np.full((x.shape[0], 3), np.nan)
    out[:, 0] = theta[:, 0]
    out[:, 1] = np.exp(theta[:, 1])
    out[:, 2] = 0.0 if model == "gumbel" else theta[:, 2]
    out[bad] = np.nan
    ll = np.where(bad, np.nan, -f)
    return out, ll


def _newton(fun, theta0, *, grad=None, hess=None, grad_hess=None, max_iter=60):
    """Minimise ``fun(theta, rows)`` independently for every row of ``theta0`` by damped Newton steps.

    ``fun(theta, rows)`` gets parameter rows (k, p) and the indices ``rows`` (k,) of the problems they belong
    to, and returns (k,) values; ``grad(theta, rows)`` returns (k, p) (central differences of ``fun`` if None);
    ``hess(theta, rows)`` (k, p, p), or ``grad_hess`` returning both at once.
    The Hessian is taken by differences of the gradient; a Levenberg shift keeps the step a descent direction
    and a backtracking (Armijo) line search keeps every step inside the support.
    Returns (theta, value, converged).
    """
    theta = np.array(theta0, dtype=float, copy=True)
    B, p = theta.shape
    num = grad is None

    def F(th, rows):
        return fun(th, rows)

    def G(th, rows):
        if num:
            # central differences; every shifted point of every row in one call of ``fun`` (rows are
            # independent problems: the same numbers as one call per shift, without the per-call overhead)
            h = 1e-6 * np.maximum(1.0, np.abs(th))
            shifted = []
            for j in range(p):
                e = np.zeros_like(th)
                e[:, j] = h[:, j]
                shifted += [th + e, th - e]
            values = F(np.concatenate(shifted), np.tile(rows, 2 * p)).reshape(2 * p, th.shape[0])
            g = np.empty_like(th)
            for j in range(p):
                g[:, j] = (values[2 * j] - values[2 * j + 1]) / (2 * h[:, j])
            return g
        return grad(th, rows)

    def hessian_columns(th, g, h, idx):
        """Columns of the Hessian by differences of the gradient (central with a numeric gradient, whose
        shifted points all go in one call)."""
        H = np.empty((th.shape[0], p, p))
        shifts = []
        for j in range(p):
            e = np.zeros_like(th)
            e[:, j] = h[:, j]
            shifts.append(e)
        if num:
            both = G(np.concatenate([th + e for e in shifts] + [th - e for e in shifts]), np.tile(idx, 2 * p))
            up, down = both[:p * th.shape[0]], both[p * th.shape[0]:]
            for j in range(p):
                sl = slice(j * th.shape[0], (j + 1) * th.shape[0])
                H[:, :, j] = (up[sl] - down[sl]) / (2 * h[:, j, None])
        else:
            for j in range(p):
                H[:, :, j] = (G(th + shifts[j], idx) - g) / h[:, j, None]
        return H

    hrel = 1e-4 if num else 1e-6
    f = F(theta, np.arange(B))
    converged = np.zeros(B, bool)
    active = np.isfinite(f)
    for _ in range(max_iter):
        idx = np.flatnonzero(active)
        if idx.size == 0:
            break
        th = theta[idx]
        if grad_hess is not None:
            g, H_given = grad_hess(th, idx)
        else:
            g = G(th, idx)
        bad = ~np.all(np.isfinite(g), axis=1)
        h = hrel * np.maximum(1.0, np.abs(th))
        if hess is None and grad_hess is None:
            H = hessian_columns(th, g, h, idx)
        if grad_hess is not None:
            H = H_given
        elif hess is not None:
            H = hess(th, idx)
        H = 0.5 * (H + np.swapaxes(H, 1, 2))
        H = np.where(np.isfinite(H), H, 0.0)
        scale_g = np.maximum(1.0, np.abs(f[idx]))
        gmax = np.max(np.abs(np.where(np.isfinite(g), g, np.inf)), axis=1)
        done = gmax < 1e-9 * scale_g
        eig = np.linalg.eigvalsh(H)
        shift = np.where(eig[:, 0] > 1e-10 * np.maximum(1.0, np.abs(eig[:, -1])), 0.0,
                         np.abs(eig[:, 0]) + 1e-3 * np.maximum(1.0, np.abs(eig[:, -1])))
        gz = np.where(np.isfinite(g), g, 0.0)
        d = -np.linalg.solve(H + shift[:, None, None] * np.eye(p), gz[..., None])[..., 0]
        slope = np.sum(d * gz, axis=1)
        neg = slope < 0
        d = np.where(neg[:, None], d, -gz / np.maximum(1.0, np.abs(gz).max(axis=1, keepdims=True)))
        slope = np.sum(d * gz, axis=1)
        new_th, new_f, accepted = _line_search(F, th, f[idx], d, slope, idx, ~(done | bad))
        moved = np.max(np.abs(new_th - th), axis=1)
        tiny = moved <= 1e-12 * np.maximum(1.0, np.abs(th).max(axis=1))
        theta[idx] = new_th
        f[idx] = new_f
        finished = done | (accepted & tiny & (gmax < 1e-4 * scale_g)) | \
            (~accepted & ~bad & (gmax < 1e-4 * scale_g))
        converged[idx[finished]] = True
        stop = finished | bad | (~accepted & ~finished)
        active[idx[stop]] = False
    return theta, f, converged


#: step halvings of the line search tried in one call of the objective after the full step fails
_HALVINGS_PER_CALL = 8
#: most step halvings of the line search
_MAX_HALVINGS = 40


def _line_search(F, th, f, d, slope, idx, todo):
    """Backtracking (Armijo) line search along ``d`` from ``th`` for the rows ``todo``: the first of the steps
    1, 1/2, 1/4, ... (at most :data:`_MAX_HALVINGS`) that lowers ``F`` enough; returns the new parameters and
    values and which rows accepted a step.

    The full step is tried alone (Newton steps are mostly accepted); after it, :data:`_HALVINGS_PER_CALL`
    halvings at a time go in one call of ``F`` (a row's problems are independent, the steps exact powers of
    two): the same step as halving one at a time, without a call per halving.
    """
    new_th, new_f = th.copy(), f.copy()
    accepted = np.zeros(th.shape[0], bool)
    todo = todo.copy()
    first = 0
    while first < _MAX_HALVINGS and todo.any():
        count = 1 if first == 0 else min(_HALVINGS_PER_CALL, _MAX_HALVINGS - first)
        k = np.flatnonzero(todo)
        steps = 0.5 ** np.arange(first, first + count)
        cand = th[k][None, :, :] + steps[:, None, None] * d[k][None, :, :]
        fc = F(cand.reshape(-1, th.shape[1]), np.tile(idx[k], count)).reshape(count, k.size)
        ok = np.isfinite(fc) & (fc <= f[k][None, :] + 1e-4 * steps[:, None] * slope[k][None, :])
        hit = ok.any(axis=0)
        j = np.argmax(ok, axis=0)[hit]
        acc = k[hit]
        new_th[acc] = cand[j, np.flatnonzero(hit)]
        new_f[acc] = fc[j, np.flatnonzero(hit)]
        accepted[acc] = True
        todo[acc] = False
        first += count
    return new_th, new_f, accepted


def _scipy_refit(objective, theta0):
    """Fallback for one sample: Nelder-Mead from the start, then BFGS."""
    def obj(t):
        v = objective(t)
        return v if np.isfinite(v) else 1e300

    from scipy import optimize  # imported here: rarely needed, and slow to import

    res = optimize.minimize(obj, theta0, method="Nelder-Mead",
                            options={"xatol": 1e-10, "fatol": 1e-12, "maxiter": 4000, "maxfev": 8000})
    res2 = optimize.minimize(obj, res.x, method="BFGS")
    best = res2 if res2.fun <= res.fun else res
    return best.x, best.fun, bool(np.isfinite(best.fun) and best.fun < 1e299)


def _observed_cov(nll, params, *, rel=1e-4):
    """Inverse of the numerical Hessian of ``nll`` (a function of a parameter vector) at ``params``."""
    params = np.asarray(params, dtype=float)
    p = params.size
    h = rel * np.maximum(np.abs(params), 1e-2 * np.max(np.abs(params)) + 1e-8)
    H = np.empty((p, p))
    f0 = nll(params)
    for i in range(p):
        for j in range(i, p):
            ei = np.zeros(p)
            ej = np.zeros(p)
            ei[i] = h[i]
            ej[j] = h[j]
            if i == j:
                H[i, i] = (nll(params + ei) - 2 * f0 + nll(params - ei)) / h[i] ** 2
            else:
                H[i, j] = H[j, i] = (nll(params + ei + ej) - nll(params + ei - ej) - nll(params - ei + ej)
                                     + nll(params - ei - ej)) / (4 * h[i] * h[j])
    try:
        cov = np.linalg.inv(H)
    except np.linalg.LinAlgError:
        return np.full((p, p), np.nan)
    if not np.all(np.isfinite(cov)) or np.any(np.diag(cov) <= 0):
        warnings.warn("the observed information matrix is not positive definite; standard errors are unreliable",
                      ExtremesWarning, stacklevel=3)
    return cov


def _gev_cov_analytic(x, loc, scale, shape, *, model="gev"):
    """Observed-information covariance by central differences of the closed-form gradient."""
    params = np.array([loc, scale, shape], dtype=float)
    p = 2 if model == "gumbel" else 3
    X = x[None, :]

    def grad(th):
        sh = th[2] if p == 3 else 0.0
        return _gev_nll_grad(X, np.array([[th[0]]]), np.array([[th[1]]]), np.array([[sh]]))[0, :p]

    H = np.empty((p, p))
    for j in range(p):
        h = 1e-6 * max(1.0, abs(params[j])) if j != 1 else 1e-6 * params[1]
        e = np.zeros(3)
        e[j] = h
        H[:, j] = (grad(params + e) - grad(params - e)) / (2 * h)
    H = 0.5 * (H + H.T)
    cov = np.full((3, 3), np.nan)
    try:
        inv = np.linalg.inv(H)
    except np.linalg.LinAlgError:
        return cov
    if np.any(np.diag(inv) <= 0):
        warnings.warn("the observed information matrix is not positive definite; standard errors are unreliable",
                      ExtremesWarning, stacklevel=3)
    cov[:p, :p] = inv
    return cov


def fit_gev(maxima, *, method="mle", n_bootstrap=500, seed=0):
    r"""Fit a GEV to annual maxima.

    Parameters
    ----------
    maxima : array-like or AnnualMaxima
        Annual maxima. [m]
    method : {"mle", "lmoments"}
        Maximum likelihood [1]_ sec. 3.3 (started from the L-moment estimates), or L-moments [3]_.
    n_bootstrap, seed : int
        L-moment fits only: size and seed of the parametric bootstrap that gives their covariance.

    Returns
    -------
    GEVFit

    Raises
    ------
    DataError
        Fewer than 3 values, NaN, or no spread.
    FitError
        The likelihood could not be maximised.
    """
    _check_method(method)
    x = _as_sample(maxima, name="maxima")
    if x.size < 10:
        warnings.warn(f"only {x.size} annual maxima; GEV estimates are very uncertain below ~20 years",
                      ExtremesWarning, stacklevel=2)
    if method == "mle":
        params, ll = fit_gev_many(x[None, :])
        if not np.all(np.isfinite(params)):
            raise FitError(f"GEV maximum likelihood failed for {x.size} maxima (range {x.min():g}..{x.max():g})")
        loc, scale, shape = params[0]
        if shape < -0.5:
            warnings.warn(f"GEV shape {shape:.3f} < -0.5: maximum-likelihood theory is not regular (Smith 1985)",
                          ExtremesWarning, stacklevel=2)
        cov = _gev_cov_analytic(x, loc, scale, shape)
        return GEVFit("mle", x.size, float(loc), float(scale), float(shape), cov, float(ll[0]), "gev", x)
    lm = sample_lmoments(x)
    loc, scale, shape = (float(v) for v in gev_lmoment_parameters(lm[0], lm[1], lm[2]))
    rng = np.random.default_rng(seed)
    sims = gev_quantile(rng.random((n_bootstrap, x.size)), loc=loc, scale=scale, shape=shape)
    lms = sample_lmoments(sims)
    bp = np.stack(gev_lmoment_parameters(lms[:, 0], lms[:, 1], lms[:, 2]), axis=1)
    bp = bp[np.all(np.isfinite(bp), axis=1)]
    cov = np.cov(bp.T)
    ll = float(gev_loglik(x, loc=loc, scale=scale, shape=shape))
    return GEVFit("lmoments", x.size, loc, scale, shape, cov, ll, "gev", x)


def fit_gumbel(maxima, *, method="mle", n_bootstrap=500, seed=0):
    r"""Fit a Gumbel distribution (GEV with shape 0) to annual maxima.

    L-moments: σ = l2/ln 2, μ = l1 - 0.5772157σ [2]_. Returns a :class:`GEVFit` with ``model="gumbel"``.
    """
    _check_method(method)
    x = _as_sample(maxima, name="maxima")
    if method == "mle":
        params, ll = fit_gev_many(x[None, :], model="gumbel")
        if not np.all(np.isfinite(params)):
            raise FitError(f"Gumbel maximum likelihood failed for {x.size} maxima")
        loc, scale, _ = params[0]
        cov = _gev_cov_analytic(x, loc, scale, 0.0, model="gumbel")
        return GEVFit("mle", x.size, float(loc), float(scale), 0.0, cov, float(ll[0]), "gumbel", x)
    lm = sample_lmoments(x)
    scale = float(lm[1] / math.log(2))
    loc = float(lm[0] - EULER_GAMMA * scale)
    rng = np.random.default_rng(seed)
    sims = gev_quantile(rng.random((n_bootstrap, x.size)), loc=loc, scale=scale, shape=0.0)
    lms = sample_lmoments(sims)
    s = lms[:, 1] / math.log(2)
    cov = np.full((3, 3), np.nan)
    cov[:2, :2] = np.cov(np.stack([lms[:, 0] - EULER_GAMMA * s, s]))
    ll = float(gumbel_loglik(x, loc=loc, scale=scale))
    return GEVFit("lmoments", x.size, loc, scale, 0.0, cov, ll, "gumbel", x)


def _peaks_input(peaks, threshold, rate_per_year, years):
    if hasattr(peaks, "peaks") and hasattr(peaks, "rate_per_year"):
        threshold = peaks.threshold if threshold is None else threshold
        years = peaks.years if years is None else years
        values = np.asarray(peaks.peaks, dtype=float)
    else:
        values = np.asarray(peaks, dtype=float).ravel()
    if threshold is None or not np.isfinite(threshold):
        raise ValueError(f"threshold must be a finite level [m]; got {threshold!r}")
    x = _as_sample(values, name="peaks")
    if np.any(x <= threshold):
        raise DataError(f"peaks must all exceed the threshold {threshold:g} m; got minimum {x.min():g} m")
    if years is None:
        if rate_per_year is None:
            raise ValueError("give rate_per_year [1/year] or years [years] (or pass a Peaks object)")
        years = x.size / rate_per_year
    if not years > 0:
        raise ValueError(f"years must be > 0 [years]; got {years!r}")
    if x.size < 20:
        warnings.warn(f"only {x.size} peaks above {threshold:g} m; GPD fits need ~20-30 or more",
                      ExtremesWarning, stacklevel=3)
    return x, float(threshold), float(years)


def fit_gpd(peaks, *, threshold=None, method="mle", rate_per_year=None, years=None, n_bootstrap=500, seed=0):
    r"""Fit a generalised Pareto distribution to declustered peaks over a threshold.

    Parameters
    ----------
    peaks : array-like or Peaks
        Cluster maxima above the threshold. [m]
    threshold : float
        Threshold u (taken from a :class:`~extremes.extremal.samples.Peaks` if not given). [m]
    method : {"mle", "lmoments"}
        Maximum likelihood [1]_ sec. 4.3, or L-moments with known threshold [4]_: ξ = 2 - l1/l2, σ = (1 - ξ)l1.
    rate_per_year, years : float
        Event rate λ [1/year] or the observed years [years] it is counted over (one is needed unless ``peaks``
        is a Peaks object).

    Returns
    -------
    GPDFit
    """
    _check_method(method)
    x, u, years = _peaks_input(peaks, threshold, rate_per_year, years)
    y = x - u
    rate = x.size / years
    if method == "mle":
        params, ll = fit_gpd_many(y[None, :])
        if not np.all(np.isfinite(params)):
            raise FitError(f"GPD maximum likelihood failed for {x.size} peaks above {u:g} m")
        scale, shape = params[0]

        def nll(t):
            return float(np.sum(_gpd_nll_terms(y, t[0], t[1])))

        cov = _gpd_cov(y, scale, shape)
        return GPDFit("mle", x.size, u, float(scale), float(shape), rate, years, cov, float(ll[0]), "gpd", x)
    lm = sample_lmoments(y)
    shape = float(2 - lm[0] / lm[1])
    scale = float((1 - shape) * lm[0])
    rng = np.random.default_rng(seed)
    sims = scale / shape * np.expm1(-shape * np.log1p(-rng.random((n_bootstrap, y.size)))) if abs(shape) > SHAPE_EPS \
        else -scale * np.log1p(-rng.random((n_bootstrap, y.size)))
    lms = sample_lmoments(sims)
    bs = 2 - lms[:, 0] / lms[:, 1]
    cov = np.cov(np.stack([(1 - bs) * lms[:, 0], bs]))
    ll = float(gpd_loglik(y, scale=scale, shape=shape))
    return GPDFit("lmoments", x.size, u, scale, shape, rate, years, cov, ll, "gpd", x)


def _gpd_cov(y, scale, shape):
    Y = y[None, :]

    def grad(th):
        return _gpd_nll_grad(Y, np.array([[th[0]]]), np.array([[th[1]]]))[0]

    params = np.array([scale, shape])
    H = np.empty((2, 2))
    for j, h in enumerate((1e-6 * scale, 1e-6)):
        e = np.zeros(2)
        e[j] = h
        H[:, j] = (grad(params + e) - grad(params - e)) / (2 * h)
    H = 0.5 * (H + H.T)
    try:
        return np.linalg.inv(H)
    except np.linalg.LinAlgError:
        return np.full((2, 2), np.nan)


def fit_exponential(peaks, *, threshold=None, method="mle", rate_per_year=None, years=None):
    """Fit an exponential distribution (GPD with shape 0) to peaks over a threshold.

    MLE and L-moments coincide for the scale when the threshold is known: σ = mean excess (MLE); L-moments
    σ = 2·l2. Returns a :class:`GPDFit` with ``model="exponential"``.
    """
    _check_method(method)
    x, u, years = _peaks_input(peaks, threshold, rate_per_year, years)
    y = x - u
    scale = float(y.mean()) if method == "mle" else float(2 * sample_lmoments(y)[1])
    cov = np.full((2, 2), np.nan)
    cov[0, 0] = scale**2 / y.size
    ll = float(exponential_loglik(y, scale=scale))
    return GPDFit(method, x.size, u, scale, 0.0, x.size / years, years, cov, ll, "exponential", x)


def _rlargest_array(sample, r=None):
    if hasattr(sample, "values") and hasattr(sample, "r") and not isinstance(sample, np.ndarray):
        sample = sample.values  # RLargest
    arr = np.asarray(sample, dtype=float)
    if arr.ndim == 1:
        arr = arr[:, None]
    if arr.ndim != 2:
        raise DataError(f"r-largest data must be a (years, r) table; got an array of shape {arr.shape}")
    if r is not None:
        if not (isinstance(r, (int, np.integer)) and 1 <= r <= arr.shape[1]):
            raise ValueError(f"r must be an integer from 1 to {arr.shape[1]}; got {r!r}")
        arr = arr[:, :r]
    arr = arr[~np.isnan(arr[:, 0])]
    # each row: values sorted decreasing, NaN (fewer events that year) at the end
    arr = -np.sort(-np.where(np.isnan(arr), -np.inf, arr), axis=1)
    arr[np.isinf(arr)] = np.nan
    if arr.shape[0] < 3:
        raise DataError(f"r-largest fit needs at least 3 years; got {arr.shape[0]}")
    return arr


def fit_gev_rlargest_many(samples):
    """Maximum-likelihood r-largest GEV fits of many (years, r) tables at once, shape (B, years, r).

    Returns (params (B, 3): loc [m], scale [m], shape [-]; loglik (B,)).
    """
    X = np.asarray(samples, dtype=float)
    B = X.shape[0]
    p0, _ = fit_gev_many(X[:, :, 0])
    bad0 = ~np.all(np.isfinite(p0), axis=1)
    if bad0.any():
        lm = sample_lmoments(X[bad0, :, 0])
        p0[bad0] = np.stack([lm[:, 0], lm[:, 1] / math.log(2), np.zeros(int(bad0.sum()))], axis=1)
    theta0 = np.stack([p0[:, 0], np.log(p0[:, 1]), np.clip(p0[:, 2], -0.45, 0.8)], axis=1)

    def fun(th, rows):
        return _rlargest_nll(X[rows], th[:, :1], np.exp(th[:, 1:2]), th[:, 2:3])

    f0 = fun(theta0, np.arange(B))
    theta0[~np.isfinite(f0), 2] = 0.0
    theta, f, conv = _newton(fun, theta0)
    bad = ~conv | ~np.isfinite(f)
    for i in np.flatnonzero(bad):
        rows = np.array([i])
        th_i, f_i, ok = _scipy_refit(lambda t, rows=rows: float(fun(np.asarray(t)[None, :], rows)[0]), theta0[i])
        if ok:
            theta[i], f[i], bad[i] = th_i, f_i, False
    out = np.stack([theta[:, 0], np.exp(theta[:, 1]), theta[:, 2]], axis=1)
    out[bad] = np.nan
    return out, np.where(bad, np.nan, -f)


def fit_gev_rlargest(sample, *, r=None):
    r"""Fit the annual-maximum GEV to the r largest independent events of each year [1]_ sec. 3.5.

    Parameters
    ----------
    sample : RLargest or array-like, shape (years, r)
        Per year, the r largest declustered events (NaN where a year has fewer). [m]
    r : int, optional
        Use only the first r columns (check the stability of the estimates against r).

    Returns
    -------
    GEVFit
        ``model="gev-r-largest"``; parameters are those of the annual-maximum GEV, so return levels follow
        :func:`gev_return_level`.

    Notes
    -----
    Likelihood of Smith (1986) and Tawn (1988) as in [1]_ eq. 3.15; covariance from the numerical Hessian.
    """
    x = _rlargest_array(sample, r)
    params, ll = fit_gev_rlargest_many(x[None, :, :])
    if not np.all(np.isfinite(params)):
        raise FitError(f"r-largest GEV maximum likelihood failed for {x.shape[0]} years, r={x.shape[1]}")
    loc, scale, shape = params[0]

    def nll(p):
        return float(_rlargest_nll(x[None], np.array([[p[0]]]), np.array([[p[1]]]), np.array([[p[2]]]))[0])

    cov = _observed_cov(nll, params[0])
    return GEVFit("mle", x.shape[0], float(loc), float(scale), float(shape), cov, float(ll[0]), "gev-r-largest", x)
