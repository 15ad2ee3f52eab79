r"""Non-stationary GEV for annual maxima: location linear in time, optionally log-scale linear in time.

μ(t) = μ0 + μ1 (t - t0), ln σ(t) = φ0 + φ1 (t - t0) (optional), ξ constant, with t the year and t0 a reference
year [1]_ sec. 6.2. A likelihood-ratio test compares the fit with the stationary GEV; return levels are stated
for a chosen year (the distribution of that year's maximum), with delta-method intervals.

References
----------
.. [1] S. Coles, *An Introduction to Statistical Modeling of Extreme Values*. London, U.K.: Springer, 2001,
       ch. 6, doi: 10.1007/978-1-4471-3675-0.
"""
from __future__ import annotations

import logging
import math
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
from scipy import special

from extremes.errors import DataError, FitError
from extremes.extremal import distributions as D

logger = logging.getLogger(__name__)


@dataclass(frozen=True, eq=False)
class NonStationaryGEVFit:
    """A GEV fit with time-varying location (and optionally scale).

    Attributes
    ----------
    loc0 : float
        Location at ``reference_year``. [m]
    loc_trend : float
        Location trend. [m/year]
    scale0 : float
        Scale at ``reference_year``. [m]
    log_scale_trend : float
        Trend of ln σ (0 when not fitted). [1/year]
    shape : float
        Shape (textbook sign). [-]
    reference_year : float
    cov : numpy.ndarray
        Covariance of (loc0, loc_trend, scale0, shape) or (loc0, loc_trend, scale0, log_scale_trend, shape).
    log_likelihood, stationary_log_likelihood : float
    deviance : float
        2(ℓ - ℓ_stationary), the likelihood-ratio statistic.
    p_value : float
        Against χ² with ``df`` = number of trend parameters.
    n : int
    years : numpy.ndarray
    data : numpy.ndarray
    """

    loc0: float
    loc_trend: float
    scale0: float
    log_scale_trend: float
    shape: float
    reference_year: float
    cov: np.ndarray = field(repr=False)
    log_likelihood: float = field(repr=False)
    stationary_log_likelihood: float = field(repr=False)
    deviance: float = field(repr=False)
    p_value: float = field(repr=False)
    n: int = field(repr=False)
    scale_trend_fitted: bool = field(default=False, repr=False)
    years: np.ndarray = field(default=None, repr=False)
    data: np.ndarray = field(default=None, repr=False)

    def __repr__(self):
        return (f"NonStationaryGEVFit(n={self.n}, loc0={self.loc0:.4g} m, loc_trend={self.loc_trend:.4g} m/yr, "
                f"scale0={self.scale0:.4g} m, shape={self.shape:.3f}, reference_year={self.reference_year:g}, "
                f"p_value={self.p_value:.3g})")

    @property
    def standard_errors(self):
        return np.sqrt(np.diag(self.cov))

    def parameters_at(self, year):
        """GEV (loc [m], scale [m], shape) of the annual maximum in ``year``."""
        dt = np.asarray(year, dtype=float) - self.reference_year
        return (self.loc0 + self.loc_trend * dt, self.scale0 * np.exp(self.log_scale_trend * dt), self.shape)

    def return_levels(self, periods_years, *, year, confidence=0.95):
        """Return levels of the annual maximum in ``year`` with delta-method intervals.

        Returns
        -------
        pandas.DataFrame
            ``return_period_years``, ``level_m``, ``lower_m``, ``upper_m``, ``confidence``; ``attrs["year"]``.
        """
        T = D._periods(periods_years)
        if np.any(T <= 1):
            raise ValueError(f"periods_years must all be > 1 [years]; got {list(T)}")
        theta = self._theta()

        def level(th):
            loc, scale, shape = _params_at(th, np.array([float(year)]) - self.reference_year,
                                           self.scale_trend_fitted)
            return D.gev_return_level(T, loc=loc[0], scale=scale[0], shape=shape)

        z = level(theta)
        grad = np.stack([(level(theta + e) - level(theta - e)) / (2 * h) for e, h in _steps(theta)], axis=1)
        se = np.sqrt(np.einsum("ki,ij,kj->k", grad, self.cov, grad))
        zc = special.ndtri(0.5 + confidence / 2)
        df = pd.DataFrame({"return_period_years": T, "level_m": z, "lower_m": z - zc * se, "upper_m": z + zc * se,
                           "confidence": confidence})
        df.attrs.update({"year": float(year), "ci": "delta", "model": "gev-nonstationary", "units": "m"})
        return df

    def _theta(self):
        if self.scale_trend_fitted:
            return np.array([self.loc0, self.loc_trend, self.scale0, self.log_scale_trend, self.shape])
        return np.array([self.loc0, self.loc_trend, self.scale0, self.shape])

    def to_dict(self):
        names = ["loc0", "loc_trend", "scale0"] + (["log_scale_trend"] if self.scale_trend_fitted else []) + ["shape"]
        return {"model": "gev-nonstationary", "reference_year": self.reference_year, "n": self.n,
                "parameters": dict(zip(names, map(float, self._theta()))),
                "standard_errors": dict(zip(names, map(float, self.standard_errors))),
                "log_likelihood": self.log_likelihood, "stationary_log_likelihood": self.stationary_log_likelihood,
                "deviance": self.deviance, "p_value": self.p_value}


def _steps(theta):
    for j in range(theta.size):
        h = 1e-6 * max(1.0, abs(theta[j]))
        e = np.zeros(theta.size)
        e[j] = h
        yield e, h


def _params_at(theta, dt, scale_trend):
    loc = theta[0] + theta[1] * dt
    if scale_trend:
        return loc, theta[2] * np.exp(theta[3] * dt), theta[4]
    return loc, np.full_like(dt, theta[2]), theta[3]


def fit_gev_nonstationary(maxima, *, years=None, reference_year=None, scale_trend=False):
    r"""Maximum-likelihood GEV with location linear in time (and optionally ln-scale linear in time).

    Parameters
    ----------
    maxima : pandas.Series, AnnualMaxima or array-like
        Annual maxima, indexed by year (or with ``years``). [m]
    years : array-like, optional
        Year of each maximum when ``maxima`` carries none. [year]
    reference_year : float, optional
        t0 of the trend (default: the mean year, rounded).
    scale_trend : bool
        Also fit ln σ linear in time.

    Returns
    -------
    NonStationaryGEVFit
        Including the likelihood-ratio test against the stationary GEV [1]_ sec. 6.3.

    Raises
    ------
    DataError
        Fewer than 10 maxima, NaN, or years missing.
    FitError
        The likelihood could not be maximised.
    """
    if hasattr(maxima, "maxima"):
        maxima = maxima.maxima
    if years is None:
        if not isinstance(maxima, pd.Series):
            raise DataError("give years= or pass the maxima as a Series indexed by year")
        years = np.asarray(maxima.index, dtype=float)
    x = D._as_sample(maxima, name="maxima", min_n=10)
    t = np.asarray(years, dtype=float).ravel()
    if t.size != x.size or not np.all(np.isfinite(t)):
        raise DataError(f"years must be {x.size} finite numbers; got {t.size}")
    t0 = float(round(t.mean())) if reference_year is None else float(reference_year)
    dt = t - t0
    stat = D.fit_gev(x)
    X = x[None, :]

    def fun(th, rows):
        # th: (k, p) with ln σ0 in column 2
        loc = th[:, :1] + th[:, 1:2] * dt[None, :]
        if scale_trend:
            lsig = th[:, 2:3] + th[:, 3:4] * dt[None, :]
            shape = th[:, 4:5]
        else:
            lsig = np.broadcast_to(th[:, 2:3], loc.shape)
            shape = th[:, 3:4]
        sig = np.exp(lsig)
        return np.sum(D._gev_nll_terms(np.broadcast_to(X, loc.shape), loc, sig, shape), axis=1)

    th0 = [stat.loc, 0.0, math.log(stat.scale)] + ([0.0] if scale_trend else []) + [stat.shape]
    theta, f, conv = D._newton(fun, np.array([th0]), max_iter=100)
    if not conv[0] or not np.isfinite(f[0]):
        th_s, f_s, ok = D._scipy_refit(lambda v: float(fun(np.asarray(v)[None, :], None)[0]), np.array(th0))
        if not ok:
            raise FitError(f"non-stationary GEV maximum likelihood failed for {x.size} maxima")
        theta, f = th_s[None, :], np.array([f_s])
    th = theta[0].copy()
    th[2] = math.exp(th[2])  # natural scale for reporting

    def nll(v):
        w = np.array(v, dtype=float)
        if w[2] <= 0:
            return np.inf
        w[2] = math.log(w[2])
        return float(fun(w[None, :], None)[0])

    cov = D._observed_cov(nll, th)
    ll = float(-f[0])
    dev = 2.0 * (ll - stat.log_likelihood)
    df = 2 if scale_trend else 1
    pval = float(special.chdtrc(df, max(dev, 0.0)))
    return NonStationaryGEVFit(float(th[0]), float(th[1]), float(th[2]), float(th[3]) if scale_trend else 0.0,
                               float(th[-1]), t0, cov, ll, float(stat.log_likelihood), float(dev), pval, x.size,
                               bool(scale_trend), t, x)


__all__ = ["NonStationaryGEVFit", "fit_gev_nonstationary"]
