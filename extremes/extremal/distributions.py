r"""Extreme-value distributions: GEV, Gumbel, GPD and exponential.

Log-likelihoods, maximum-likelihood and L-moment fits, return levels and annual exceedance probabilities.
One shape convention everywhere: the textbook sign of Coles [1]_ (``shape > 0``: heavy tail, Fréchet type;
``shape < 0``: bounded above). SciPy's ``genextreme`` uses ``c = -shape``; the only conversion is
:func:`_to_scipy_shape`.

Fits are vectorised: :func:`fit_gev_many` fits many samples of equal size at once (one batched damped Newton
iteration over all samples, closed-form gradients, Hessian by differences of the gradient), which is what the
bootstrap uses. A sample the batched iteration cannot fit is retried with :func:`scipy.optimize.minimize`.

References
----------
.. [1] S. Coles, *An Introduction to Statistical Modeling of Extreme Values*. London, U.K.: Springer, 2001,
       doi: 10.1007/978-1-4471-3675-0.
.. [2] J. R. M. Hosking, "L-moments: analysis and estimation of distributions using linear combinations of
       order statistics," *J. R. Stat. Soc. B*, vol. 52, no. 1, pp. 105-124, 1990.
.. [3] J. R. M. Hosking, J. R. Wallis and E. F. Wood, "Estimation of the generalized extreme-value distribution
       by the method of probability-weighted moments," *Technometrics*, vol. 27, no. 3, pp. 251-261, 1985.
.. [4] J. R. M. Hosking and J. R. Wallis, "Parameter and quantile estimation for the generalized Pareto
       distribution," *Technometrics*, vol. 29, no. 3, pp. 339-349, 1987.
"""
from __future__ import annotations

import logging
import math
import warnings
from dataclasses import dataclass, field

import numpy as np
from scipy import special

from extremes.errors import DataError, ExtremesWarning, FitError

logger = logging.getLogger(__name__)

#: fitting methods of :func:`fit_gev`, :func:`fit_gumbel`, :func:`fit_gpd`, :func:`fit_exponential`
FIT_METHODS = ("mle", "lmoments")
#: models for annual maxima (the ``extremes fit --model`` choices)
MODELS = ("gev", "gumbel")
#: below this |shape| the Gumbel / exponential limit formulas are used (METHODS.md sec. 9)
SHAPE_EPS = 1e-6
EULER_GAMMA = 0.5772156649015329


def _to_scipy_shape(shape, family="genextreme"):
    """The shape parameter in SciPy's convention: ``genextreme`` c = -shape; ``genpareto`` c = shape."""
    shape = np.asarray(shape, dtype=float)
    if family == "genextreme":
        return -shape
    if family == "genpareto":
        return shape
    raise ValueError(f"family must be 'genextreme' or 'genpareto'; got {family!r}")


# ----------------------------------------------------------------------------------------------------------
# input checks
# ----------------------------------------------------------------------------------------------------------
def _as_sample(values, *, name, min_n=3):
    if hasattr(values, "maxima"):  # AnnualMaxima
        values = values.maxima
    if hasattr(values, "peaks") and not isinstance(values, np.ndarray):  # Peaks
        values = values.peaks
    x = np.asarray(values, dtype=float).ravel()
    if x.size and not np.all(np.isfinite(x)):
        bad = int(np.sum(~np.isfinite(x)))
        raise DataError(f"{name} must be finite numbers; got {bad} NaN or infinite value(s) of {x.size}")
    if x.size < min_n:
        raise DataError(f"{name} needs at least {min_n} values to fit; got {x.size}")
    if np.ptp(x) == 0:
        raise DataError(f"{name} are all equal ({x[0]!r}); a fit needs spread in the values")
    return x


def _check_method(method):
    if method not in FIT_METHODS:
        raise ValueError(f"method must be one of {sorted(FIT_METHODS)}; got {method!r}")


def _periods(periods_years, *, name="periods_years", minimum=1.0):
    p = np.atleast_1d(np.asarray(periods_years, dtype=float))
    if p.ndim != 1 or not np.all(np.isfinite(p)) or np.any(p < minimum):
        raise ValueError(f"{name} must be finite numbers >= {minimum:g} [years]; got {list(np.ravel(p))}")
    return p


# ----------------------------------------------------------------------------------------------------------
# formulas (textbook shape sign)
# ----------------------------------------------------------------------------------------------------------
def gev_return_level(periods_years, *, loc, scale, shape):
    r"""GEV return level for return periods of annual maxima.

    Parameters
    ----------
    periods_years : array-like of float
        Return periods T; the annual exceedance probability is p = 1/T. [years]
    loc, scale, shape : float or array
        GEV parameters (textbook shape sign). [m, m, -]

    Returns
    -------
    numpy.ndarray
        :math:`z_p = \mu - (\sigma/\xi)[1 - y_p^{-\xi}]`, :math:`y_p = -\ln(1 - p)` [1]_ eq. 3.10;
        :math:`\mu - \sigma \ln y_p` for :math:`|\xi| < 10^{-6}`. T = 1 gives the lower end of the support. [m]
    """
    p = 1.0 / np.asarray(periods_years, dtype=float)
    with np.errstate(divide="ignore"):
        yp = -np.log1p(-p)
    return _gev_quantile_from_yp(yp, loc, scale, shape)


def _gev_quantile_from_yp(yp, loc, scale, shape):
    loc, scale, shape, yp = np.broadcast_arrays(*(np.asarray(a, dtype=float) for a in (loc, scale, shape, yp)))
    small = np.abs(shape) < SHAPE_EPS
    safe = np.where(small, 1.0, shape)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        lny = np.log(yp)
        general = loc - scale / safe * (-np.expm1(-safe * lny))
        gumbel = loc - scale * lny
    out = np.where(small, gumbel, general)
    return out[()] if out.ndim == 0 else out


def gev_quantile(prob, *, loc, scale, shape):
    """GEV quantile: the level not exceeded with probability ``prob`` (0 < prob < 1). [m]"""
    prob = np.asarray(prob, dtype=float)
    with np.errstate(divide="ignore"):
        return _gev_quantile_from_yp(-np.log(prob), loc, scale, shape)


def gev_cdf(level_m, *, loc, scale, shape):
    """GEV distribution function G(z) [1]_ eq. 3.2 (0 or 1 outside the support)."""
    z, loc, scale, shape = np.broadcast_arrays(*(np.asarray(a, dtype=float) for a in (level_m, loc, scale, shape)))
    y = (z - loc) / scale
    small = np.abs(shape) < SHAPE_EPS
    safe = np.where(small, 1.0, shape)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        t = 1.0 + safe * y
        general = np.where(t > 0, np.exp(-np.power(np.where(t > 0, t, 1.0), -1.0 / safe)),
                           np.where(safe > 0, 0.0, 1.0))
        gumbel = np.exp(-np.exp(-y))
    out = np.where(small, gumbel, general)
    return out[()] if out.ndim == 0 else out


def gev_exceedance_probability(level_m, *, loc, scale, shape):
    """Annual exceedance probability 1 - G(z) of a level by the annual maximum. [-]"""
    return 1.0 - gev_cdf(level_m, loc=loc, scale=scale, shape=shape)


def gpd_return_level(periods_years, *, threshold, scale, shape, rate_per_year, aep=False):
    r"""POT return level: the level exceeded on average once per T years [1]_ ch. 4.

    Parameters
    ----------
    periods_years : array-like of float
        Average recurrence interval T (ARI) [years]; with ``aep=True`` these are 1/AEP instead.
    threshold, scale, shape : float
        GPD threshold u, scale σ [m] and shape ξ (textbook sign).
    rate_per_year : float
        λ, independent exceedances (clusters) per observed year. [1/year]
    aep : bool
        If true, T is read as 1/AEP and λ/(-ln(1 - 1/T)) replaces λT (Poisson events).

    Returns
    -------
    numpy.ndarray
        :math:`x_T = u + (\sigma/\xi)[(\lambda T)^\xi - 1]`, :math:`u + \sigma\ln(\lambda T)` at ξ = 0. [m]
    """
    T = np.asarray(periods_years, dtype=float)
    if aep:
        with np.errstate(divide="ignore"):
            m = rate_per_year / (-np.log1p(-1.0 / T))
    else:
        m = rate_per_year * T
    return _gpd_level_from_m(m, threshold, scale, shape)


def _gpd_level_from_m(m, threshold, scale, shape):
    m, threshold, scale, shape = np.broadcast_arrays(
        *(np.asarray(a, dtype=float) for a in (m, threshold, scale, shape)))
    small = np.abs(shape) < SHAPE_EPS
    safe = np.where(small, 1.0, shape)
    with np.errstate(divide="ignore", invalid="ignore"):
        lnm = np.log(m)
        general = threshold + scale / safe * np.expm1(safe * lnm)
        expo = threshold + scale * lnm
    out = np.where(small, expo, general)
    return out[()] if out.ndim == 0 else out


def gpd_exceedance_rate(level_m, *, threshold, scale, shape, rate_per_year):
    """Mean number of independent exceedances of ``level_m`` per year, λ[1 + ξ(x - u)/σ]^(-1/ξ). [1/year]"""
    x, u, s, k = np.broadcast_arrays(*(np.asarray(a, dtype=float) for a in (level_m, threshold, scale, shape)))
    y = (x - u) / s
    small = np.abs(k) < SHAPE_EPS
    safe = np.where(small, 1.0, k)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        t = 1.0 + safe * y
        general = np.where(t > 0, np.power(np.where(t > 0, t, 1.0), -1.0 / safe), 0.0)
        expo = np.exp(-y)
    surv = np.where(small, expo, general)
    surv = np.where(y < 0, 1.0, surv)  # below the threshold the model says nothing more than "at least λ"
    out = rate_per_year * surv
    return out[()] if out.ndim == 0 else out


def gpd_exceedance_probability(level_m, *, threshold, scale, shape, rate_per_year):
    """Annual exceedance probability of a level under Poisson events, AEP = 1 - exp(-rate). [-]"""
    return -np.expm1(-gpd_exceedance_rate(level_m, threshold=threshold, scale=scale, shape=shape,
                                          rate_per_year=rate_per_year))


# ----------------------------------------------------------------------------------------------------------
# log-likelihoods (vectorised: parameters broadcast against samples along the last axis)
# ----------------------------------------------------------------------------------------------------------
def _gev_nll_terms(x, loc, scale, shape):
    """Per-observation negative log-likelihood (inf outside the support)."""
    small = np.abs(shape) < SHAPE_EPS
    safe = np.where(small, 1.0, shape)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        y = (x - loc) / scale
        t = 1.0 + safe * y
        ok = t > 0
        L = np.log(np.where(ok, t, 1.0))
        general = np.where(ok, (1.0 + 1.0 / safe) * L + np.exp(-L / safe), np.inf)
        gumbel = y + np.exp(-y)
        return np.log(scale) + np.where(small, gumbel, general)


def gev_loglik(data, *, loc, scale, shape):
    r"""GEV log-likelihood [1]_ eq. 3.7 (Gumbel branch for |shape| < 1e-6); -inf outside the support.

    ``data`` may be 2-D (samples along the last axis) with parameters broadcast per sample.
    """
    x = np.asarray(data, dtype=float)
    loc, scale, shape = (np.asarray(a, dtype=float)[..., None] for a in (loc, scale, shape))
    out = -np.nansum(_gev_nll_terms(x, loc, scale, shape), axis=-1)
    return np.where(np.isnan(out), -np.inf, out)[()]


def gumbel_loglik(data, *, loc, scale):
    """Gumbel log-likelihood, -m ln σ - Σ y - Σ exp(-y) [1]_ sec. 3.3.3."""
    return gev_loglik(data, loc=loc, scale=scale, shape=np.zeros_like(np.asarray(loc, dtype=float)))


def _gpd_nll_terms(y, scale, shape):
    small = np.abs(shape) < SHAPE_EPS
    safe = np.where(small, 1.0, shape)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        w = y / scale
        t = 1.0 + safe * w
        ok = t > 0
        general = np.where(ok, (1.0 + 1.0 / safe) * np.log(np.where(ok, t, 1.0)), np.inf)
        return np.log(scale) + np.where(small, w, general)


def gpd_loglik(exceedances, *, scale, shape):
    """GPD log-likelihood of exceedances y = x - u > 0 [1]_ sec. 4.3.2; -inf outside the support."""
    y = np.asarray(exceedances, dtype=float)
    scale, shape = (np.asarray(a, dtype=float)[..., None] for a in (scale, shape))
    return (-np.sum(_gpd_nll_terms(y, scale, shape), axis=-1))[()]


def exponential_loglik(exceedances, *, scale):
    """Exponential log-likelihood of exceedances (the GPD with shape 0)."""
    return gpd_loglik(exceedances, scale=scale, shape=np.zeros_like(np.asarray(scale, dtype=float)))


def gev_rlargest_loglik(data, *, loc, scale, shape):
    r"""r-largest order-statistics log-likelihood [1]_ sec. 3.5 (Smith 1986; Tawn 1988).

    ``data`` is (years, r) with each row sorted decreasing and NaN padding where a year has fewer events.
    ℓ = -Σ_i { r_i ln σ + (1 + 1/ξ) Σ_k ln t_ik + t_{i,r_i}^(-1/ξ) }.
    """
    x = np.asarray(data, dtype=float)
    return (-_rlargest_nll(x, np.asarray(loc, float)[..., None], np.asarray(scale, float)[..., None],
                           np.asarray(shape, float)[..., None]))[()]


def _rlargest_nll(x, loc, scale, shape):
    # x: (..., m, r); params broadcast with shape (..., 1) -> per batch
    loc, scale, shape = (a[..., None] for a in (loc, scale, shape))
    valid = ~np.isnan(x)
    xx = np.where(valid, x, 0.0)
    y = (xx - loc) / scale
    small = np.abs(shape) < SHAPE_EPS
    safe = np.where(small, 1.0, shape)
    idx_last = valid.sum(axis=-1) - 1  # (..., m)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        t = 1.0 + safe * y
        ok = (t > 0) | ~valid
        L = np.log(np.where(ok & valid, t, 1.0))
        body = np.where(small, y, (1.0 + 1.0 / safe) * L)
        body = np.where(valid, body, 0.0)
        tail_all = np.where(small, np.exp(-y), np.exp(-L / safe))
        tail = np.take_along_axis(np.broadcast_to(tail_all, np.broadcast_shapes(tail_all.shape, x.shape)),
                                  idx_last[..., None], axis=-1)[..., 0]
        per_year = valid.sum(axis=-1) * np.log(scale[..., 0]) + body.sum(axis=-1) + tail
        per_year = np.where(np.all(ok, axis=-1), per_year, np.inf)
    return per_year.sum(axis=-1)


# ----------------------------------------------------------------------------------------------------------
# gradients (closed form) of the summed negative log-likelihood
# ----------------------------------------------------------------------------------------------------------
def _gev_nll_grad(x, loc, scale, shape):
    """Gradient of the GEV negative log-likelihood w.r.t. (loc, scale, shape); x (B, n), params (B, 1)."""
    y = (x - loc) / scale
    small = np.abs(shape) < SHAPE_EPS
    safe = np.where(small, 1.0, shape)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        t = 1.0 + safe * y
        L = np.log(t)
        s = np.exp(-L / safe)
        dt = ((1.0 + 1.0 / safe) - s / safe) / t
        g_mu = dt.sum(-1) * (-safe[:, 0] / scale[:, 0])
        dty = (dt * y).sum(-1)
        g_sig = x.shape[-1] / scale[:, 0] - safe[:, 0] / scale[:, 0] * dty
        g_xi = dty + ((s - 1.0) * L).sum(-1) / safe[:, 0] ** 2
        g = np.stack([g_mu, g_sig, g_xi], axis=-1)
        if np.any(small):
            k = np.flatnonzero(small[:, 0])
            yk = y[k]
            e = np.exp(-yk)
            sk = scale[k, 0]
            g[k, 0] = -(1.0 - e).sum(-1) / sk
            g[k, 1] = x.shape[-1] / sk - ((1.0 - e) * yk).sum(-1) / sk
            g[k, 2] = (yk - yk * yk / 2 + e * yk * yk / 2).sum(-1)
    return g


def _gev_nll_hess(x, loc, scale, shape):
    """Hessian (B, 3, 3) of the GEV negative log-likelihood w.r.t. (loc, scale, shape), closed form.

    Rows with |shape| < 1e-3 (where the closed form cancels badly) use central differences of the gradient.
    """
    B, n = x.shape
    y = (x - loc) / scale
    xi = shape
    safe = np.where(np.abs(xi) < 1e-3, 1e-3, xi)
    sig = scale
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        t = 1.0 + safe * y
        L = np.log(t)
        s = np.exp(-L / safe)
        h_t = ((1.0 + 1.0 / safe) - s / safe) / t
        h_tt = (1.0 + 1.0 / safe) * (s / safe - 1.0) / t**2
        h_tx = (s * (1.0 - L / safe) - 1.0) / (safe**2 * t)
        h_xx = s * L**2 / safe**4 - 2.0 * (s - 1.0) * L / safe**3
        a = (-safe / sig, -safe * y / sig, y)
        H = np.empty((B, 3, 3))
        # second derivatives of t: t_mm = 0, t_ms = xi/sig^2, t_mx = -1/sig, t_ss = 2 xi y/sig^2,
        # t_sx = -y/sig, t_xx = 0
        t2 = {(0, 0): 0.0, (0, 1): safe / sig**2, (0, 2): -1.0 / sig, (1, 1): 2 * safe * y / sig**2,
              (1, 2): -y / sig, (2, 2): 0.0}
        for i in range(3):
            for j in range(i, 3):
                v = h_tt * a[i] * a[j] + h_t * t2[(i, j)]
                if j == 2:
                    v = v + h_tx * a[i]
                if i == 2:
                    v = v + h_tx * a[j] + h_xx
                tot = v.sum(-1)
                if i == 1 and j == 1:
                    tot = tot - n / sig[:, 0] ** 2
                H[:, i, j] = H[:, j, i] = tot
    near = np.flatnonzero(np.abs(xi[:, 0]) < 1e-3)
    if near.size:
        params = np.concatenate([loc[near], scale[near], shape[near]], axis=1)
        for j in range(3):
            h = 1e-5 * (scale[near, 0] if j < 2 else np.ones(near.size))
            e = np.zeros_like(params)
            e[:, j] = h
            gp = _gev_nll_grad(x[near], *(params + e)[:, :, None].transpose(1, 0, 2))
            gm = _gev_nll_grad(x[near], *(params - e)[:, :, None].transpose(1, 0, 2))
            H[near, :, j] = (gp - gm) / (2 * h[:, None])
        H[near] = 0.5 * (H[near] + np.swapaxes(H[near], 1, 2))
    return H


def _gpd_nll_grad(y, scale, shape):
    """Gradient of the GPD negative log-likelihood w.r.t. (scale, shape); y (B, n), params (B, 1)."""
    w = y / scale
    small = np.abs(shape) < SHAPE_EPS
    safe = np.where(small, 1.0, shape)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        t = 1.0 + safe * w
        L = np.log(np.where(t > 0, t, 1.0))
        g_sig = 1.0 / scale - (1.0 + safe) * w / (scale * t)
        g_xi = -L / safe**2 + (1.0 + 1.0 / safe) * w / t
        e_sig = 1.0 / scale - w / scale
        e_xi = w - w * w / 2
    return np.stack([np.where(small, e_sig, g_sig).sum(-1), np.where(small, e_xi, g_xi).sum(-1)], axis=-1)


# ----------------------------------------------------------------------------------------------------------
# batched damped Newton minimiser
# ----------------------------------------------------------------------------------------------------------
# ----------------------------------------------------------------------------------------------------------
# L-moments
# ----------------------------------------------------------------------------------------------------------
def sample_lmoments(data):
    r"""Sample L-moments l1, l2 and ratios t3, t4 from unbiased probability-weighted moments [2]_.

    Parameters
    ----------
    data : array-like
        Sample, or 2-D array with samples along the last axis.

    Returns
    -------
    numpy.ndarray
        (..., 4): l1 [m], l2 [m], t3 [-], t4 [-].
    """
    x = np.sort(np.asarray(data, dtype=float), axis=-1)
    n = x.shape[-1]
    j = np.arange(1, n + 1, dtype=float)
    b0 = x.mean(axis=-1)
    b1 = np.sum((j - 1) / (n - 1) * x, axis=-1) / n
    b2 = np.sum((j - 1) * (j - 2) / ((n - 1) * (n - 2)) * x, axis=-1) / n
    b3 = np.sum((j - 1) * (j - 2) * (j - 3) / ((n - 1) * (n - 2) * (n - 3)) * x, axis=-1) / n if n > 3 else b2 * np.nan
    l1 = b0
    l2 = 2 * b1 - b0
    l3 = 6 * b2 - 6 * b1 + b0
    l4 = 20 * b3 - 30 * b2 + 12 * b1 - b0
    return np.stack([l1, l2, l3 / l2, l4 / l2], axis=-1)


def _gev_t3(k):
    """GEV L-skewness as a function of Hosking's k = -shape (limit ln(9/8)/ln 2 ... at k = 0)."""
    k = np.asarray(k, dtype=float)
    small = np.abs(k) < 1e-8
    kk = np.where(small, 1e-8, k)
    ratio = np.expm1(-kk * np.log(3.0)) / np.expm1(-kk * np.log(2.0))
    return 2 * ratio - 3


def gev_lmoment_parameters(l1, l2, t3, *, exact=True):
    r"""GEV parameters from L-moments [3]_ (textbook shape = -k).

    ``k ≈ 7.8590c + 2.9554c²``, ``c = 2/(3 + t3) - ln2/ln3``; with ``exact=True`` (default) k is then polished
    by Newton steps on ``t3 = 2(1 - 3^-k)/(1 - 2^-k) - 3``. α = l2·k/[(1 - 2^-k)Γ(1 + k)],
    location = l1 + α[Γ(1 + k) - 1]/k.

    Returns
    -------
    tuple of numpy.ndarray
        (loc [m], scale [m], shape [-]).
    """
    l1, l2, t3 = (np.asarray(a, dtype=float) for a in (l1, l2, t3))
    c = 2.0 / (3.0 + t3) - math.log(2) / math.log(3)
    k = 7.8590 * c + 2.9554 * c * c
    if exact:
        k = np.clip(k, -0.99, 5.0)
        for _ in range(30):
            h = 1e-6
            f = _gev_t3(k) - t3
            df = (_gev_t3(k + h) - _gev_t3(k - h)) / (2 * h)
            k_new = np.clip(k - f / df, -0.999, 10.0)
            if np.all(np.abs(k_new - k) < 1e-13):
                k = k_new
                break
            k = k_new
    small = np.abs(k) < SHAPE_EPS
    ks = np.where(small, 1.0, k)
    g = special.gamma(1 + ks)
    alpha = np.where(small, l2 / math.log(2), l2 * ks / (-np.expm1(-ks * math.log(2)) * g))
    loc = np.where(small, l1 - EULER_GAMMA * alpha, l1 + alpha * (g - 1) / ks)
    return loc[()], alpha[()], (-k)[()]


# ----------------------------------------------------------------------------------------------------------
# fit objects
# ----------------------------------------------------------------------------------------------------------
def _fmt(x):
    return f"{x:.4g}"


@dataclass(frozen=True, eq=False)
class GEVFit:
    """A GEV (or Gumbel) fit of annual maxima, or an r-largest fit of the annual-maximum GEV.

    Attributes
    ----------
    method : str
        ``"mle"`` or ``"lmoments"``.
    n : int
        Number of years (rows of data).
    loc, scale : float
        Location and scale. [m]
    shape : float
        Shape ξ, textbook sign (> 0 heavy tail); 0 for the Gumbel model. [-]
    cov : numpy.ndarray
        3x3 covariance of (loc, scale, shape) from the observed information (MLE) or a parametric bootstrap
        (L-moments); the shape row and column are NaN for the Gumbel model. [m², m², -]
    log_likelihood : float
        Maximised log-likelihood (for L-moment fits: evaluated at the estimates).
    model : str
        ``"gev"``, ``"gumbel"`` or ``"gev-r-largest"``.
    data : numpy.ndarray
        The fitted values (1-D annual maxima, or (years, r) for r-largest). [m]
    """

    method: str
    n: int
    loc: float
    scale: float
    shape: float
    cov: np.ndarray = field(repr=False)
    log_likelihood: float = field(repr=False)
    model: str = field(default="gev", repr=False)
    data: np.ndarray = field(default=None, repr=False)
    units: str = field(default="m", repr=False)

    def __repr__(self):
        name = "GumbelFit" if self.model == "gumbel" else "GEVFit"
        u = self.units
        return (f"{name}(method={self.method!r}, n={self.n}, loc={_fmt(self.loc)} {u}, "
                f"scale={_fmt(self.scale)} {u}, shape={self.shape:.3f})")

    @property
    def standard_errors(self):
        """Standard errors of (loc, scale, shape); shape is NaN for the Gumbel model."""
        return np.sqrt(np.diag(self.cov))

    @property
    def n_parameters(self):
        return 2 if self.model == "gumbel" else 3

    def return_level(self, periods_years):
        """Return level [m] for return periods T = 1/AEP of the annual maximum [years]."""
        return gev_return_level(_periods(periods_years), loc=self.loc, scale=self.scale, shape=self.shape)

    def exceedance_probability(self, level_m):
        """Annual exceedance probability of ``level_m`` [m]."""
        return gev_exceedance_probability(level_m, loc=self.loc, scale=self.scale, shape=self.shape)

    def to_scipy(self):
        """The fitted distribution as a frozen :data:`scipy.stats.genextreme`."""
        from scipy import stats

        return stats.genextreme(_to_scipy_shape(self.shape, "genextreme"), loc=self.loc, scale=self.scale)

    def to_dict(self):
        se = self.standard_errors
        return {
            "model": self.model,
            "method": self.method,
            "n": int(self.n),
            "parameters": {"location": float(self.loc), "scale": float(self.scale), "shape": float(self.shape)},
            "standard_errors": {k: (None if not np.isfinite(v) else float(v))
                                for k, v in zip(("location", "scale", "shape"), se)},
            "log_likelihood": float(self.log_likelihood),
        }


@dataclass(frozen=True, eq=False)
class GPDFit:
    """A GPD (or exponential) fit of declustered peaks over a threshold.

    Attributes
    ----------
    method : str
        ``"mle"`` or ``"lmoments"``.
    n : int
        Number of peaks (independent exceedances).
    threshold : float
        Threshold u. [m]
    scale : float
        GPD scale σ. [m]
    shape : float
        Shape ξ, textbook sign; 0 for the exponential model. [-]
    rate_per_year : float
        λ = peaks per observed year. [1/year]
    years : float
        Observed (valid-data) years behind the rate. [years]
    cov : numpy.ndarray
        2x2 covariance of (scale, shape); NaN shape entries for the exponential model.
    log_likelihood : float
        GPD log-likelihood at the estimates.
    """

    method: str
    n: int
    threshold: float
    scale: float
    shape: float
    rate_per_year: float
    years: float = field(repr=False)
    cov: np.ndarray = field(repr=False)
    log_likelihood: float = field(repr=False)
    model: str = field(default="gpd", repr=False)
    data: np.ndarray = field(default=None, repr=False)
    units: str = field(default="m", repr=False)

    def __repr__(self):
        name = "ExponentialFit" if self.model == "exponential" else "GPDFit"
        u = self.units
        return (f"{name}(method={self.method!r}, n={self.n}, threshold={_fmt(self.threshold)} {u}, "
                f"scale={_fmt(self.scale)} {u}, shape={self.shape:.3f}, rate={self.rate_per_year:.3g}/yr)")

    @property
    def standard_errors(self):
        """Standard errors of (scale, shape) and of the rate (Poisson: sqrt(λ/years))."""
        return np.append(np.sqrt(np.diag(self.cov)), math.sqrt(self.rate_per_year / self.years))

    @property
    def n_parameters(self):
        return 1 if self.model == "exponential" else 2

    def return_level(self, periods_years, *, aep=False):
        """Level exceeded on average once per T years (ARI; or T = 1/AEP with ``aep=True``). [m]"""
        return gpd_return_level(_periods(periods_years, minimum=0.0 if not aep else 1.0), threshold=self.threshold,
                                scale=self.scale, shape=self.shape, rate_per_year=self.rate_per_year, aep=aep)

    def exceedance_probability(self, level_m):
        """Annual exceedance probability of ``level_m`` (Poisson events). [-]"""
        return gpd_exceedance_probability(level_m, threshold=self.threshold, scale=self.scale, shape=self.shape,
                                          rate_per_year=self.rate_per_year)

    def to_scipy(self):
        """The fitted excess distribution of X given X > u as a frozen :data:`scipy.stats.genpareto`."""
        from scipy import stats

        return stats.genpareto(_to_scipy_shape(self.shape, "genpareto"), loc=self.threshold, scale=self.scale)

    def to_dict(self):
        se = self.standard_errors
        return {
            "model": self.model,
            "method": self.method,
            "n": int(self.n),
            "threshold_m": float(self.threshold),
            "rate_per_year": float(self.rate_per_year),
            "years": float(self.years),
            "parameters": {"scale": float(self.scale), "shape": float(self.shape)},
            "standard_errors": {k: (None if not np.isfinite(v) else float(v))
                                for k, v in zip(("scale", "shape", "rate_per_year"), se)},
            "log_likelihood": float(self.log_likelihood),
        }


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
            h = 1e-6 * np.maximum(1.0, np.abs(th))
            g = np.empty_like(th)
            for j in range(p):
                e = np.zeros_like(th)
                e[:, j] = h[:, j]
                g[:, j] = (F(th + e, rows) - F(th - e, rows)) / (2 * h[:, j])
            return g
        return grad(th, rows)

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
        H = np.empty((idx.size, p, p))
        for j in (range(p) if hess is None and grad_hess is None else ()):
            e = np.zeros_like(th)
            e[:, j] = h[:, j]
            if num:
                H[:, :, j] = (G(th + e, idx) - G(th - e, idx)) / (2 * h[:, j, None])
            else:
                H[:, :, j] = (G(th + e, idx) - g) / h[:, j, None]
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
        step = np.ones(idx.size)
        accepted = np.zeros(idx.size, bool)
        new_th = th.copy()
        new_f = f[idx].copy()
        todo = ~(done | bad)
        for _ls in range(40):
            if not todo.any():
                break
            k = np.flatnonzero(todo)
            cand = th[k] + step[k, None] * d[k]
            fc = F(cand, idx[k])
            ok = np.isfinite(fc) & (fc <= f[idx[k]] + 1e-4 * step[k] * slope[k])
            acc = k[ok]
            new_th[acc] = cand[ok]
            new_f[acc] = fc[ok]
            accepted[acc] = True
            todo[acc] = False
            step[k[~ok]] *= 0.5
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


def fit_gpd_many(exceedances, *, model="gpd"):
    """Maximum-likelihood GPD (or exponential) fits of many exceedance samples (B, n) at once.

    Returns (params (B, 2): scale [m], shape [-]; loglik (B,)).
    """
    y = np.atleast_2d(np.asarray(exceedances, dtype=float))
    if model == "exponential":
        s = y.mean(axis=1)
        return np.stack([s, np.zeros_like(s)], axis=1), -y.shape[1] * (np.log(s) + 1)
    lm = sample_lmoments(y)
    xi0 = np.clip(2 - lm[:, 0] / lm[:, 1], -0.45, 0.8)
    s0 = (1 - xi0) * lm[:, 0]
    bad = (1 + xi0[:, None] * y / s0[:, None] <= 0.05).any(axis=1)
    xi0 = np.where(bad, 0.0, xi0)
    s0 = np.where(bad, y.mean(axis=1), s0)
    theta0 = np.stack([np.log(s0), xi0], axis=1)

    def fun(th, rows):
        return np.sum(_gpd_nll_terms(y[rows], np.exp(th[:, :1]), th[:, 1:2]), axis=1)

    def grad(th, rows):
        g = _gpd_nll_grad(y[rows], np.exp(th[:, :1]), th[:, 1:2])
        return np.stack([g[:, 0] * np.exp(th[:, 0]), g[:, 1]], axis=1)

    theta, f, conv = _newton(fun, theta0, grad=grad)
    bad = ~conv | ~np.isfinite(f) | (theta[:, 1] <= -0.999)
    for i in np.flatnonzero(bad):
        yi = y[i]

        def obj(t, yi=yi):
            return float(np.sum(_gpd_nll_terms(yi, math.exp(t[0]), t[1])))

        th_i, f_i, ok = _scipy_refit(obj, theta0[i])
        if ok and th_i[1] > -0.999:
            theta[i], f[i], bad[i] = th_i, f_i, False
    out = np.stack([np.exp(theta[:, 0]), theta[:, 1]], axis=1)
    out[bad] = np.nan
    return out, np.where(bad, np.nan, -f)


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


__all__ = [
    "FIT_METHODS", "MODELS", "GEVFit", "GPDFit", "fit_gev", "fit_gumbel", "fit_gpd", "fit_exponential",
    "fit_gev_many", "fit_gpd_many", "gev_loglik", "gumbel_loglik", "gpd_loglik", "exponential_loglik",
    "gev_rlargest_loglik", "fit_gev_rlargest", "fit_gev_rlargest_many", "gev_return_level", "gev_quantile",
    "gev_cdf", "gev_exceedance_probability",
    "gpd_return_level", "gpd_exceedance_rate", "gpd_exceedance_probability", "sample_lmoments",
    "gev_lmoment_parameters",
]
