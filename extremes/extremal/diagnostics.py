r"""Goodness of fit: plotting positions, probability-plot data (PP and QQ), Anderson-Darling test with a
parametric-bootstrap p-value, and an AICc comparison of Gumbel and GEV.

References
----------
.. [1] S. Coles, *An Introduction to Statistical Modeling of Extreme Values*. London, U.K.: Springer, 2001,
       sec. 3.3.3, doi: 10.1007/978-1-4471-3675-0.
.. [4] I. I. Gringorten, "A plotting rule for extreme probability paper," *J. Geophys. Res.*, vol. 68,
       no. 3, pp. 813-814, 1963, doi: 10.1029/JZ068i003p00813.
.. [2] T. W. Anderson and D. A. Darling, "A test of goodness of fit," *J. Amer. Statist. Assoc.*, vol. 49,
       no. 268, pp. 765-769, 1954, doi: 10.1080/01621459.1954.10501232.
.. [3] C. M. Hurvich and C.-L. Tsai, "Regression and time series model selection in small samples,"
       *Biometrika*, vol. 76, no. 2, pp. 297-307, 1989, doi: 10.1093/biomet/76.2.297.
"""
from __future__ import annotations

import logging
import warnings
from dataclasses import dataclass

import numpy as np
import pandas as pd

from extremes.errors import DataError, ExtremesWarning
from extremes.extremal import distributions as D

logger = logging.getLogger(__name__)


def _cdf(fit, x, params=None):
    """Model CDF of the fitted quantity (annual maxima, or peaks given the threshold)."""
    if isinstance(fit, D.GPDFit):
        scale, shape = (fit.scale, fit.shape) if params is None else (params[..., 0:1], params[..., 1:2])
        rate = 1.0 - D.gpd_exceedance_rate(x, threshold=fit.threshold, scale=scale, shape=shape, rate_per_year=1.0)
        return rate
    loc, scale, shape = (fit.loc, fit.scale, fit.shape) if params is None else \
        (params[..., 0:1], params[..., 1:2], params[..., 2:3])
    return D.gev_cdf(x, loc=loc, scale=scale, shape=shape)


def _quantile(fit, p):
    if isinstance(fit, D.GPDFit):
        return D.gpd_quantile(p, threshold=fit.threshold, scale=fit.scale, shape=fit.shape)
    return D.gev_quantile(p, loc=fit.loc, scale=fit.scale, shape=fit.shape)


def _data(fit):
    if fit.model == "gev-r-largest":
        return np.sort(fit.data[:, 0])
    return np.sort(np.asarray(fit.data, dtype=float))


#: plotting-position rules of :func:`plotting_positions`
PLOTTING_POSITION_METHODS = ("weibull", "gringorten")


def plotting_positions_weibull(n: int) -> np.ndarray:
    r"""Weibull plotting positions :math:`p_i = i/(n + 1)`, i = 1..n (ascending) [1]_ sec. 3.3.3."""
    return _positions(n, 0.0, 1.0)


def plotting_positions_gringorten(n: int) -> np.ndarray:
    r"""Gringorten plotting positions :math:`p_i = (i - 0.44)/(n + 0.12)`, i = 1..n (ascending) [4]_.

    Non-exceedance probabilities for the sample sorted in ascending order.
    """
    return _positions(n, 0.44, 0.12)


def _positions(n, a, b):
    n = int(n)
    if n < 1:
        raise DataError(f"plotting positions need at least one value; got n={n}")
    return (np.arange(1, n + 1) - a) / (n + b)


def plotting_positions(n: int, *, method: str = "weibull") -> np.ndarray:
    """Non-exceedance probabilities of the ascending order statistics of ``n`` values by ``method``
    (:data:`PLOTTING_POSITION_METHODS`)."""
    if method == "weibull":
        return plotting_positions_weibull(n)
    if method == "gringorten":
        return plotting_positions_gringorten(n)
    raise ValueError(f"method must be one of {list(PLOTTING_POSITION_METHODS)}; got {method!r}")


def probability_plot(fit):
    r"""Data for probability (PP) and quantile (QQ) plots of a fit [1]_ sec. 3.3.3.

    Empirical probabilities are the Weibull plotting positions i/(n + 1) of the sorted data.

    Returns
    -------
    pandas.DataFrame
        ``empirical_probability``, ``model_probability``, ``empirical_level_m``, ``model_level_m``.
    """
    x = _data(fit)
    p = plotting_positions_weibull(x.size)
    return pd.DataFrame({"empirical_probability": p, "model_probability": _cdf(fit, x),
                         "empirical_level_m": x, "model_level_m": _quantile(fit, p)})


def _ad_statistic(F):
    """A² = -n - (1/n) Σ (2i - 1)[ln F_(i) + ln(1 - F_(n+1-i))] for sorted model CDF values (last axis)."""
    F = np.clip(np.sort(F, axis=-1), 1e-300, 1 - 1e-16)
    n = F.shape[-1]
    i = np.arange(1, n + 1)
    return -n - np.sum((2 * i - 1) * (np.log(F) + np.log1p(-F[..., ::-1])), axis=-1) / n


@dataclass(frozen=True)
class GoodnessOfFit:
    """Anderson-Darling test result.

    Attributes
    ----------
    statistic : float
        A² of the data under the fitted model.
    p_value : float
        Share of parametric-bootstrap A² (refitted each time) at least as large: (1 + #)/(B + 1).
    n_bootstrap : int
    seed : int or None
    """

    statistic: float
    p_value: float
    n_bootstrap: int
    seed: int | None = None

    def __repr__(self):
        return f"GoodnessOfFit(A2={self.statistic:.4g}, p_value={self.p_value:.3g}, n_bootstrap={self.n_bootstrap})"

    def to_dict(self):
        return {"test": "anderson-darling", "statistic": self.statistic, "p_value": self.p_value,
                "n_bootstrap": self.n_bootstrap, "seed": self.seed}


def anderson_darling(fit, *, n_bootstrap=200, seed=None):
    r"""Anderson-Darling statistic [2]_ with a parametric-bootstrap p-value (parameters re-estimated each time).

    Parameters
    ----------
    fit : GEVFit or GPDFit
        A maximum-likelihood or L-moment fit of annual maxima or of peaks over a threshold.
    n_bootstrap : int
        Bootstrap samples (drawn from the fitted model and refitted with the same method).
    seed : int, optional
        Seed of :func:`numpy.random.default_rng`.

    Returns
    -------
    GoodnessOfFit
    """

    if fit.model == "gev-r-largest":
        raise ValueError("anderson_darling tests fits of one value per year or per peak; got an r-largest fit")
    x = _data(fit)
    a2 = float(_ad_statistic(_cdf(fit, x)))
    rng = np.random.default_rng(seed)
    u = rng.random((n_bootstrap, x.size))
    if isinstance(fit, D.GPDFit):
        sims = fit.threshold + (fit.scale / fit.shape * np.expm1(-fit.shape * np.log1p(-u))
                                if abs(fit.shape) >= D.SHAPE_EPS else -fit.scale * np.log1p(-u))
        if fit.method == "mle":
            P, _ = D.fit_gpd_many(sims - fit.threshold, model=fit.model)
        else:
            lm = D.sample_lmoments(sims - fit.threshold)
            xi = 2 - lm[:, 0] / lm[:, 1] if fit.model == "gpd" else np.zeros(n_bootstrap)
            P = np.stack([(1 - xi) * lm[:, 0] if fit.model == "gpd" else 2 * lm[:, 1], xi], axis=1)
    else:
        sims = D.gev_quantile(u, loc=fit.loc, scale=fit.scale, shape=fit.shape)
        if fit.method == "mle":
            P, _ = D.fit_gev_many(sims, model=fit.model)
        else:
            lm = D.sample_lmoments(sims)
            if fit.model == "gumbel":
                s = lm[:, 1] / np.log(2)
                P = np.stack([lm[:, 0] - D.EULER_GAMMA * s, s, np.zeros(n_bootstrap)], axis=1)
            else:
                P = np.stack(D.gev_lmoment_parameters(lm[:, 0], lm[:, 1], lm[:, 2]), axis=1)
    good = np.all(np.isfinite(P), axis=1)
    if (~good).mean() > 0.01:
        warnings.warn(f"{int((~good).sum())} of {n_bootstrap} bootstrap refits failed and were left out",
                      ExtremesWarning, stacklevel=2)
    boot = _ad_statistic(_cdf(fit, sims[good], P[good]))
    p = (1 + np.sum(boot >= a2)) / (good.sum() + 1)
    return GoodnessOfFit(a2, float(p), int(n_bootstrap), seed)


def aicc_table(maxima):
    r"""Compare Gumbel and GEV fits of annual maxima by AICc [3]_: AIC + 2k(k + 1)/(n - k - 1).

    Returns
    -------
    pandas.DataFrame
        Index ``model`` (gumbel, gev): ``k``, ``log_likelihood``, ``aic``, ``aicc``, ``delta_aicc`` (0 for the
        preferred model).
    """
    x = D._as_sample(maxima, name="maxima", min_n=5)
    rows = []
    for name, fitter in (("gumbel", D.fit_gumbel), ("gev", D.fit_gev)):
        f = fitter(x)
        k = f.n_parameters
        aic = 2 * k - 2 * f.log_likelihood
        rows.append((name, k, f.log_likelihood, aic, aic + 2 * k * (k + 1) / (x.size - k - 1)))
    df = pd.DataFrame(rows, columns=["model", "k", "log_likelihood", "aic", "aicc"]).set_index("model")
    df["delta_aicc"] = df["aicc"] - df["aicc"].min()
    return df


__all__ = ["probability_plot", "anderson_darling", "GoodnessOfFit", "aicc_table", "PLOTTING_POSITION_METHODS",
           "plotting_positions", "plotting_positions_weibull", "plotting_positions_gringorten"]
