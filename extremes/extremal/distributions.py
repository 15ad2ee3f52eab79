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
from dataclasses import dataclass, field

import numpy as np

from extremes.constants import EULER_GAMMA, SHAPE_EPS  # noqa: F401 (shape-zero branch; re-exported)
from extremes.errors import DataError
from extremes.extremal.gpd_mle import fit_gpd_many  # the one GPD maximum-likelihood fitter

logger = logging.getLogger(__name__)

#: fitting methods of :func:`fit_gev`, :func:`fit_gumbel`, :func:`fit_gpd`, :func:`fit_exponential`
FIT_METHODS = ("mle", "lmoments")
#: models for annual maxima (the ``extremes fit --model`` choices)
MODELS = ("gev", "gumbel")
#: below this |shape| the Gumbel / exponential limit formulas are used (METHODS.md sec. 9)


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


def gpd_quantile(prob, *, threshold, scale, shape):
    r"""Quantile of the GPD of excesses above ``threshold``: the level [m] with P(X <= x | X > u) = ``prob``.

    :math:`x_p = u + (\sigma/\xi)[(1 - p)^{-\xi} - 1]`, :math:`u - \sigma\ln(1 - p)` at ξ = 0 [1]_ ch. 4 (the
    POT return level with :math:`\lambda T = 1/(1 - p)`).
    """
    with np.errstate(divide="ignore"):
        return _gpd_level_from_m(1.0 / (1.0 - np.asarray(prob, dtype=float)), threshold, scale, shape)


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


# the fitters live in extremes.extremal.fitting (split for size); re-exported here
from extremes.extremal.fitting import (  # noqa: E402, F401
    _gev_cov_analytic,
    _gev_start,
    _gpd_cov,
    _newton,
    _observed_cov,
    _peaks_input,
    _rlargest_array,
    _scipy_refit,
    fit_exponential,
    fit_gev,
    fit_gev_many,
    fit_gev_rlargest,
    fit_gev_rlargest_many,
    fit_gpd,
    fit_gumbel,
)
from extremes.extremal.lmoments import _gev_t3, gev_lmoment_parameters, sample_lmoments  # noqa: E402,F401

__all__ = [
    "FIT_METHODS", "MODELS", "GEVFit", "GPDFit", "fit_gev", "fit_gumbel", "fit_gpd", "fit_exponential",
    "fit_gev_many", "fit_gpd_many", "gev_loglik", "gumbel_loglik", "gpd_loglik", "exponential_loglik",
    "gev_rlargest_loglik", "fit_gev_rlargest", "fit_gev_rlargest_many", "gev_return_level", "gev_quantile",
    "gev_cdf", "gev_exceedance_probability",
    "gpd_return_level", "gpd_quantile", "gpd_exceedance_rate", "gpd_exceedance_probability", "sample_lmoments",
    "gev_lmoment_parameters",
]
