r"""Exceedance-frequency amplification for a rise, the curve's Gumbel slope, and Hunter's closed-form allowance.

References
----------
.. [1] J. Hunter, *Climatic Change*, vol. 99, pp. 331-350, 2010, doi:10.1007/s10584-009-9671-6.
.. [2] J. Hunter, *Climatic Change*, vol. 113, pp. 239-252, 2012, doi:10.1007/s10584-011-0332-1.
"""
from __future__ import annotations

import logging
import math
import warnings
from dataclasses import dataclass

import numpy as np
from scipy.special import logsumexp

from extremes.curves import ReturnLevelCurve
from extremes.errors import DataError, ExtremesWarning
from extremes.sealevel._numbers import _clean

logger = logging.getLogger(__name__)


@dataclass(frozen=True, repr=False)
class Amplification:
    """How often a present-day level is exceeded after a rise.

    Attributes
    ----------
    level_m : float
        The level (e.g. today's 100-year level). [m]
    rise_m : float
        The rise of mean sea level. [m]
    present_aep, future_aep : float
        Annual exceedance probability of the level today and after the rise.
    present_events_per_year, future_events_per_year : float
        Expected exceedance events per year, ``-ln(1 - AEP)``. [1/year]
    factor : float
        ``future_events_per_year / present_events_per_year`` (NaN when the future frequency lies beyond
        the curve's range).
    """

    level_m: float
    rise_m: float
    present_aep: float
    future_aep: float
    present_events_per_year: float
    future_events_per_year: float
    factor: float

    def __repr__(self) -> str:
        return f"Amplification(level={self.level_m:.3f} m, rise={self.rise_m:.3f} m, factor={self.factor:.4g})"

    def to_dict(self) -> dict:
        """JSON-ready dictionary (NaN and inf become None)."""
        return {k: _clean(getattr(self, k))[0] for k in (
            "level_m", "rise_m", "present_aep", "future_aep", "present_events_per_year",
            "future_events_per_year", "factor")}


def amplification_from_curve(curve: ReturnLevelCurve, *, rise_m: float, level_m: float | None = None,
                             period_years: float = 100.0) -> Amplification:
    r"""Amplification of the exceedance frequency of a present level after a rise, read from the curve.

    The future AEP of level :math:`z` is the present AEP of :math:`z - \Delta z` (offset rule [1]_), so no
    tail form is assumed: this is the general version of Hunter's :math:`\exp(\Delta z/\lambda)` [2]_.

    Parameters
    ----------
    curve : ReturnLevelCurve
        Present-day curve.
    rise_m : float, keyword-only
        Rise of mean sea level. [m]
    level_m : float, optional
        The level; default the present ``period_years`` level. [m]
    period_years : float
        Return period of the level when ``level_m`` is not given (default 100). [years]

    Returns
    -------
    Amplification
        ``factor`` is NaN (with an :class:`~extremes.errors.ExtremesWarning`) when the lowered level
        lies below the curve's shortest period: the level would then be exceeded in most years.
    """
    rise = float(rise_m)
    if not math.isfinite(rise):
        raise DataError(f"rise_m must be a finite number [m]; got {rise_m!r}")
    level = float(curve.level_at(period_years)) if level_m is None else float(level_m)
    present_aep = float(curve.aep_of_level(level))
    future_aep = float(curve.aep_of_level(level - rise))
    lowest = np.nanmin(curve.level_m)
    present_rate = -math.log1p(-present_aep) if present_aep < 1 else math.inf
    future_rate = -math.log1p(-future_aep) if future_aep < 1 else math.inf
    if level - rise < lowest:
        warnings.warn(f"amplification: the level {level:.3f} m lowered by the rise {rise:.3f} m lies below the "
                      f"{curve.method} curve's range (shortest period {curve.periods_years[0]:g} years); "
                      f"the factor is not defined there", ExtremesWarning, stacklevel=2)
        factor = math.nan
    elif present_rate == 0:
        factor = math.inf
    else:
        factor = future_rate / present_rate
    return Amplification(level_m=level, rise_m=rise, present_aep=present_aep, future_aep=future_aep,
                         present_events_per_year=present_rate, future_events_per_year=future_rate,
                         factor=factor)


def amplification_gumbel(rise_m, *, scale_m: float) -> np.ndarray:
    r"""Hunter's amplification of exceedance frequency for a Gumbel (exponential) tail [2]_.

    :math:`N = \exp(\Delta z / \lambda)`.

    Parameters
    ----------
    rise_m : float or array-like
        Rise of mean sea level. [m]
    scale_m : float, keyword-only
        Gumbel scale :math:`\lambda` (GEV with ξ = 0 or GPD with ξ = 0). [m]
    """
    if not (scale_m > 0):
        raise DataError(f"scale_m must be > 0 [m]; got {scale_m!r}")
    return np.exp(np.asarray(rise_m, dtype=float) / scale_m)


def amplification_gpd(rise_m, *, level_m: float, threshold_m: float, scale_m: float, shape: float) -> np.ndarray:
    r"""Amplification of exceedance frequency of ``level_m`` for a generalised Pareto tail [4]_.

    :math:`N = \{[1 + \xi(z - \Delta z - u)/\sigma] / [1 + \xi(z - u)/\sigma]\}^{-1/\xi}`, with the
    exponential limit :math:`\exp(\Delta z/\sigma)` at ξ = 0. Both levels must lie above the threshold.
    Beyond a bounded tail's end (ξ < 0) the present frequency is zero and ``inf`` is returned.

    Parameters
    ----------
    rise_m : float or array-like
        Rise. [m]
    level_m, threshold_m, scale_m : float
        Level :math:`z`, threshold :math:`u`, GPD scale :math:`\sigma`. [m]
    shape : float
        GPD shape ξ (Coles sign: ξ > 0 heavy tail).
    """
    if not (scale_m > 0):
        raise DataError(f"scale_m must be > 0 [m]; got {scale_m!r}")
    rise = np.asarray(rise_m, dtype=float)
    if np.any(level_m - rise < threshold_m):
        raise DataError(f"amplification_gpd: level_m - rise_m must stay above the threshold {threshold_m:g} m; "
                        f"got level {level_m:g} m and rises {np.atleast_1d(rise).tolist()}")
    if abs(shape) < 1e-9:
        return np.exp(rise / scale_m)
    now = 1.0 + shape * (level_m - threshold_m) / scale_m
    then = 1.0 + shape * (level_m - rise - threshold_m) / scale_m
    with np.errstate(divide="ignore", invalid="ignore"):
        out = (np.maximum(then, 0.0) / now) ** (-1.0 / shape) if now > 0 else np.full(rise.shape, np.inf)
    return out


def gumbel_scale_of_curve(curve: ReturnLevelCurve, *, period_years: float = 100.0, span: float = 2.0) -> float:
    r"""Local Gumbel scale :math:`\lambda` [m] of a curve around ``period_years``.

    The slope of the level against the Gumbel reduced variate :math:`y = -\ln[-\ln(1 - \mathrm{AEP})]`
    between ``period_years / span`` and ``period_years * span`` (clipped to the curve). For a Gumbel curve it
    is exactly the Gumbel scale, under either period definition; for other tails it is the scale of the
    Gumbel tail that matches the curve locally, which Hunter's allowance needs [1]_. (A Gumbel fit to the
    annual maxima is the other common choice; pass its scale directly.)
    """
    lo = max(period_years / span, curve.periods_years[0])
    hi = min(period_years * span, curve.periods_years[-1])
    if not hi > lo:
        raise DataError(f"period_years {period_years:g} gives no span within the curve's periods")
    periods = np.array([lo, hi])
    levels = curve.level_at(periods)
    aep = 1.0 / periods if curve.period_definition == "1/AEP" else -np.expm1(-1.0 / periods)
    reduced = -np.log(-np.log1p(-aep))
    scale = float((levels[1] - levels[0]) / (reduced[1] - reduced[0]))
    if not scale > 0:
        raise DataError(f"the {curve.method} curve is not increasing near {period_years:g} years; "
                        f"no Gumbel scale (got {scale:g} m)")
    return scale


# ------------------------------------------------------------------------------------------------
# allowance for uncertain rise
# ------------------------------------------------------------------------------------------------
@dataclass(frozen=True, repr=False)
class Allowance:
    """Hunter's allowance for an uncertain rise.

    Attributes
    ----------
    allowance_m : float
        Height to add to present levels to keep the expected number of exceedances unchanged. [m]
    mean_rise_m, sd_rise_m : float
        Mean and standard deviation of the rise. [m]
    scale_m : float
        Gumbel scale used. [m]
    method : str
        ``"normal"`` (closed form) or ``"samples"``.
    n_samples : int
        Number of samples (0 for the closed form).
    """

    allowance_m: float
    mean_rise_m: float
    sd_rise_m: float
    scale_m: float
    method: str
    n_samples: int = 0

    def __repr__(self) -> str:
        return (f"Allowance(allowance={self.allowance_m:.4f} m, mean={self.mean_rise_m:.3f} m, "
                f"sd={self.sd_rise_m:.3f} m, scale={self.scale_m:.3f} m, method={self.method!r})")

    def to_dict(self) -> dict:
        """JSON-ready dictionary."""
        return {"allowance_m": self.allowance_m, "mean_rise_m": self.mean_rise_m, "sd_rise_m": self.sd_rise_m,
                "scale_m": self.scale_m, "method": self.method, "n_samples": self.n_samples}


def allowance_normal(*, mean_m: float, sd_m: float, scale_m: float) -> Allowance:
    r"""Allowance for a normally distributed rise [1]_: :math:`A = m + s^2/(2\lambda)`.

    The closed form of :math:`A = \lambda \ln E[\exp(\Delta z/\lambda)]` for
    :math:`\Delta z \sim N(m, s^2)`, with a Gumbel tail of scale :math:`\lambda` (from a Gumbel fit or
    :func:`gumbel_scale_of_curve`).

    Parameters
    ----------
    mean_m, sd_m : float, keyword-only
        Mean and standard deviation of the projected rise. [m]
    scale_m : float, keyword-only
        Gumbel scale :math:`\lambda`. [m]
    """
    if not (scale_m > 0) or not (sd_m >= 0) or not math.isfinite(mean_m):
        raise DataError(f"allowance: need scale_m > 0, sd_m >= 0 and a finite mean_m [m]; got scale_m={scale_m!r},"
                        f" sd_m={sd_m!r}, mean_m={mean_m!r}")
    return Allowance(allowance_m=mean_m + sd_m ** 2 / (2.0 * scale_m), mean_rise_m=float(mean_m),
                     sd_rise_m=float(sd_m), scale_m=float(scale_m), method="normal")


def allowance_from_samples(rise_samples_m, *, scale_m: float) -> Allowance:
    r"""Allowance from samples of the rise [1]_: :math:`A = \lambda \ln[\frac1n \sum_i \exp(\Delta z_i/\lambda)]`.

    Use this form for skewed or fat-tailed projections. Computed with a log-sum-exp for stability.

    Parameters
    ----------
    rise_samples_m : array-like
        Samples (or equally likely members) of the projected rise. [m]
    scale_m : float, keyword-only
        Gumbel scale :math:`\lambda`. [m]
    """
    samples = np.asarray(rise_samples_m, dtype=float).ravel()
    if samples.size == 0 or not np.all(np.isfinite(samples)):
        raise DataError(f"allowance: rise samples must be finite numbers [m]; got {samples.size} values "
                        f"({int(np.sum(~np.isfinite(samples)))} not finite)")
    if not (scale_m > 0):
        raise DataError(f"scale_m must be > 0 [m]; got {scale_m!r}")
    value = scale_m * (logsumexp(samples / scale_m) - math.log(samples.size))
    return Allowance(allowance_m=float(value), mean_rise_m=float(samples.mean()),
                     sd_rise_m=float(samples.std(ddof=1)) if samples.size > 1 else 0.0, scale_m=float(scale_m),
                     method="samples", n_samples=int(samples.size))


