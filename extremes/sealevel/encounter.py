r"""Encounter probability over a design life and the design level for an accepted risk (Borgman 1963).

References
----------
.. [3] L. E. Borgman, "Risk criteria," *J. Waterways Harbors Div., ASCE*, vol. 89, pp. 1-35, 1963.
"""
from __future__ import annotations

import logging
import warnings
from dataclasses import dataclass

import numpy as np
from scipy.optimize import brentq

from extremes.curves import ReturnLevelCurve
from extremes.errors import DataError, ExtremesWarning
from extremes.sealevel._numbers import _clean
from extremes.sealevel.future import _present_period

logger = logging.getLogger(__name__)


def _check_life(design_life_years) -> int:
    life = int(design_life_years)
    if life != design_life_years or life < 1:
        raise DataError(f"design_life_years must be a whole number of years >= 1; got {design_life_years!r}")
    return life


def encounter_probability(aep, *, design_life_years) -> np.ndarray:
    r"""Probability of at least one exceedance in a design life [3]_: :math:`P = 1 - (1 - p)^L`.

    Parameters
    ----------
    aep : float or array-like
        Annual exceedance probability, 0 <= p <= 1.
    design_life_years : int, keyword-only
        Design life :math:`L`. [years]

    Examples
    --------
    A 1 % AEP level over 30 and 100 years (about 26 % and 63 %, common practice):

    >>> [round(float(encounter_probability(0.01, design_life_years=life)), 3) for life in (30, 100)]
    [0.26, 0.634]
    """
    p = np.asarray(aep, dtype=float)
    if np.any(~((p >= 0) & (p <= 1))):
        raise DataError(f"aep must lie in [0, 1]; got {np.atleast_1d(p).tolist()}")
    life = np.asarray(design_life_years, dtype=float)
    if np.any(~(life > 0)):
        raise DataError(f"design_life_years must be > 0; got {design_life_years!r}")
    return -np.expm1(life * np.log1p(-p))


def design_return_period(accepted_probability, *, design_life_years) -> np.ndarray:
    r"""Return period [years] whose encounter probability over the design life is the accepted risk [3]_.

    :math:`T = 1/[1 - (1 - R)^{1/L}]` (period as 1/AEP).

    Examples
    --------
    10 % risk over a 50-year life calls for about the 475-year level (common practice):

    >>> round(float(design_return_period(0.10, design_life_years=50)), 2)
    475.06
    """
    risk = np.asarray(accepted_probability, dtype=float)
    if np.any(~((risk > 0) & (risk < 1))):
        raise DataError(f"accepted_probability must lie strictly between 0 and 1; got {accepted_probability!r}")
    life = np.asarray(design_life_years, dtype=float)
    if np.any(~(life > 0)):
        raise DataError(f"design_life_years must be > 0; got {design_life_years!r}")
    return -1.0 / np.expm1(np.log1p(-risk) / life)


def _rise_vector(rise_m, life: int) -> np.ndarray:
    if callable(rise_m):
        rise = np.asarray(rise_m(np.arange(life)), dtype=float)
    else:
        rise = np.asarray(rise_m, dtype=float)
    if rise.ndim == 0:
        rise = np.full(life, float(rise))
    if rise.shape != (life,) or not np.all(np.isfinite(rise)):
        raise DataError(f"rise_m must be one finite number or one per year of the {life}-year design life [m]; "
                        f"got shape {rise.shape}")
    return rise


@dataclass(frozen=True, repr=False)
class EncounterProbability:
    """Chance that a level is exceeded at least once during a design life with a rising sea.

    Attributes
    ----------
    level_m : float
        The level. [m]
    design_life_years : int
        Design life. [years]
    rise_m : numpy.ndarray
        Rise in each year of the life, relative to the curve's epoch. [m]
    aep : numpy.ndarray
        Annual exceedance probability of the level in each year.
    probability : float
        :math:`1 - \\prod_y (1 - p_y)`.
    """

    level_m: float
    design_life_years: int
    rise_m: np.ndarray
    aep: np.ndarray
    probability: float

    def __repr__(self) -> str:
        return (f"EncounterProbability(level={self.level_m:.3f} m, life={self.design_life_years} years, "
                f"probability={self.probability:.4f})")

    def to_dict(self) -> dict:
        """JSON-ready dictionary."""
        return {"level_m": self.level_m, "design_life_years": self.design_life_years,
                "rise_m": _clean(self.rise_m), "aep": _clean(self.aep), "probability": self.probability}


def _encounter(curve: ReturnLevelCurve, level: float, rise: np.ndarray) -> tuple[np.ndarray, float]:
    aep = curve.aep_of_level(level - rise)  # present AEP of z - Δz_y = AEP of z on the shifted curve
    return aep, float(-np.expm1(np.sum(np.log1p(-np.minimum(aep, 1.0)))))


def encounter_probability_with_rise(curve: ReturnLevelCurve, *, level_m: float, design_life_years: int,
                                    rise_m=0.0) -> EncounterProbability:
    r"""Encounter probability of ``level_m`` over a design life in which mean sea level rises.

    :math:`P = 1 - \prod_y (1 - p_y)`, where :math:`p_y` is the AEP of the level on the curve shifted by
    the rise in year :math:`y` (offset rule [1]_; encounter probability [3]_).

    Parameters
    ----------
    curve : ReturnLevelCurve
        Present-day curve.
    level_m : float, keyword-only
        The level. [m]
    design_life_years : int, keyword-only
        Design life. [years]
    rise_m : float, array-like or callable
        Rise relative to the curve's epoch: one number for all years, one value per year of the life
        (e.g. from :func:`rise_by_year`), or a function of the year index ``0 .. L-1``. [m]
    """
    life = _check_life(design_life_years)
    rise = _rise_vector(rise_m, life)
    aep, probability = _encounter(curve, float(level_m), rise)
    return EncounterProbability(level_m=float(level_m), design_life_years=life, rise_m=rise, aep=aep,
                                probability=probability)


@dataclass(frozen=True, repr=False)
class DesignLevel:
    """Level whose chance of exceedance during the design life equals the accepted probability.

    Attributes
    ----------
    level_m : float
        The design still-water level. [m]
    accepted_probability : float
        Accepted chance of at least one exceedance during the life.
    design_life_years : int
        Design life. [years]
    present_return_period_years : float
        Return period of the level on the present curve. [years]
    design_return_period_years : float
        :math:`1/[1 - (1 - R)^{1/L}]`, the period that would be needed without rise. [years]
    rise_m : numpy.ndarray
        Rise in each year of the life. [m]
    """

    level_m: float
    accepted_probability: float
    design_life_years: int
    present_return_period_years: float
    design_return_period_years: float
    rise_m: np.ndarray

    def __repr__(self) -> str:
        return (f"DesignLevel(level={self.level_m:.3f} m, risk={self.accepted_probability:g}, "
                f"life={self.design_life_years} years)")

    def to_dict(self) -> dict:
        """JSON-ready dictionary."""
        return {"level_m": self.level_m, "accepted_probability": self.accepted_probability,
                "design_life_years": self.design_life_years,
                "present_return_period_years": _clean(self.present_return_period_years)[0],
                "design_return_period_years": self.design_return_period_years, "rise_m": _clean(self.rise_m)}


def design_level(curve: ReturnLevelCurve, *, accepted_probability: float, design_life_years: int,
                 rise_m=0.0) -> DesignLevel:
    """Level with the accepted chance of at least one exceedance over a design life with a rising sea.

    Solves :math:`1 - \\prod_y [1 - p_y(z)] = R` for :math:`z` with Brent's method, where
    :math:`p_y(z)` is the present AEP of :math:`z - \\Delta z_y` (see
    :func:`encounter_probability_with_rise`). Without rise the answer is the level of the design return
    period :math:`1/[1 - (1 - R)^{1/L}]` [3]_.

    Parameters
    ----------
    curve : ReturnLevelCurve
        Present-day curve.
    accepted_probability : float, keyword-only
        Accepted risk :math:`R`, 0 < R < 1.
    design_life_years : int, keyword-only
        Design life :math:`L`. [years]
    rise_m : float, array-like or callable
        Rise by year of the life (as in :func:`encounter_probability_with_rise`). [m]

    Raises
    ------
    DataError
        When the level lies beyond the range of the curve (risk too small or too large for its periods).
    """
    life = _check_life(design_life_years)
    risk = float(accepted_probability)
    period = float(design_return_period(risk, design_life_years=life))
    rise = _rise_vector(rise_m, life)
    finite = curve.level_m[np.isfinite(curve.level_m)]
    # above the curve's top a level has AEP 0, so the search ends where no year can exceed it
    low, high = float(finite.min() + rise.max()), float(finite.max() + rise.max()) + 1e-3

    def excess(z):
        return _encounter(curve, z, rise)[1] - risk

    beyond = DataError(f"design level for risk {risk:g} over {life} years lies beyond the {curve.method} curve "
                       f"(periods {curve.periods_years[0]:g}..{curve.periods_years[-1]:g} years)")
    if not high > low or excess(low) < 0:
        raise beyond
    level = float(brentq(excess, low, high, xtol=1e-7))
    if abs(excess(level)) > 1e-3 * risk or level - rise.max() >= finite.max():
        raise beyond  # stopped at the curve's end (every year beyond its longest period), not at a root
    if level - rise.min() > finite.max():
        warnings.warn(f"design level {level:.3f} m: in the years of least rise it lies above the {curve.method} "
                      f"curve's longest period ({curve.periods_years[-1]:g} years); those years count as "
                      "no chance of exceedance", ExtremesWarning, stacklevel=2)
    return DesignLevel(level_m=level, accepted_probability=risk, design_life_years=life,
                       present_return_period_years=float(_present_period(curve, level)),
                       design_return_period_years=period, rise_m=rise)
