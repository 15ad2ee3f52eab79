r"""Allowance for an uncertain sea-level rise solved on the fitted return-level curve itself.

Hunter's allowance [1]_ is the height :math:`A` that keeps the expected number of exceedances of a design
level unchanged when the rise :math:`\Delta` is uncertain. With a Gumbel tail of scale :math:`\lambda` it has
the closed form :math:`A = \lambda \ln E[\exp(\Delta/\lambda)]` (:func:`extremes.sealevel.allowance_normal`,
:func:`extremes.sealevel.allowance_from_samples`), evaluated with the curve's local Gumbel slope
(:func:`extremes.sealevel.gumbel_scale_of_curve`). A local slope misstates the curve away from the design
level, where a wide rise distribution reaches: for a heavy (or bounded) tail the closed form errs.

Here the same definition is solved on the curve itself: with :math:`E(z)` the expected number of exceedances
per year of level :math:`z` read from the curve (:math:`1/T` under ``1/rate``, :math:`-\ln(1 - 1/T)` under
``1/AEP``), the allowance for design level :math:`z_0` solves

.. math:: \frac1n \sum_i E(z_0 + A - \Delta_i) = E(z_0)

over samples (or equally weighted quadrature nodes) :math:`\Delta_i` of the rise (sample form). For a Gumbel
curve it equals Hunter's closed form (tests: METHODS sec. 11 check values). Outside the curve's levels,
:math:`\ln E` is extended along the straight line of its first or last decade of return periods.

The study reports both and uses the allowance on the curve.

References
----------
.. [1] J. Hunter, "A simple technique for estimating an allowance for uncertain sea-level rise," *Climatic
   Change*, vol. 113, pp. 239-252, 2012, doi:10.1007/s10584-011-0332-1.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import optimize

from extremes.curves import ReturnLevelCurve
from extremes.errors import DataError

__all__ = ["CurveAllowance", "allowance_on_curve", "normal_rise_nodes"]


@dataclass(frozen=True, repr=False)
class CurveAllowance:
    """Allowance solved on a return-level curve, with Hunter's closed form beside it.

    Attributes
    ----------
    allowance_m : float
        Allowance on the curve (the one to use). [m]
    closed_form_m : float
        Hunter's closed form with the curve's local Gumbel scale at ``period_years``. [m]
    gumbel_scale_m : float
        That local Gumbel scale. [m]
    period_years : float
        Return period of the design level. [years]
    level_m : float
        Present design level. [m]
    mean_rise_m, sd_rise_m : float
        Mean and standard deviation of the rise. [m]
    n_samples : int
        Samples (or quadrature nodes) of the rise.
    rise_form : str
        ``"samples"`` or ``"normal"`` (Gauss-Hermite nodes of a normal rise).
    method : str
        What the study uses, in words.
    """

    allowance_m: float
    closed_form_m: float
    gumbel_scale_m: float
    period_years: float
    level_m: float
    mean_rise_m: float
    sd_rise_m: float
    n_samples: int
    rise_form: str
    method: str = ("allowance solved on the fitted return-level curve (expected exceedances with the uncertain "
                   "rise equal to today's; sample form); Hunter's closed form with the local Gumbel scale beside it")

    def __repr__(self) -> str:
        return (f"CurveAllowance(allowance={self.allowance_m:.4f} m, closed_form={self.closed_form_m:.4f} m, "
                f"period={self.period_years:g} yr)")

    def to_dict(self) -> dict:
        """JSON-ready dictionary."""
        return {"allowance_m": self.allowance_m, "closed_form_m": self.closed_form_m,
                "gumbel_scale_m": self.gumbel_scale_m, "period_years": self.period_years, "level_m": self.level_m,
                "mean_rise_m": self.mean_rise_m, "sd_rise_m": self.sd_rise_m, "n_samples": self.n_samples,
                "rise_form": self.rise_form, "method": self.method, "used": "allowance_m"}


def normal_rise_nodes(mean_m, sd_m, *, n_nodes=80):
    """Gauss-Hermite nodes and weights of a normal rise N(mean, sd^2) (``numpy.polynomial.hermite_e``)."""
    x, w = np.polynomial.hermite_e.hermegauss(int(n_nodes))
    return mean_m + sd_m * x, w / w.sum()


def _log_rate_function(curve: ReturnLevelCurve):
    """ln E(z) [ln 1/year] of a curve, linear in z between grid levels and along the end decades beyond."""
    periods = curve.periods_years
    levels = curve.level_m
    ok = np.isfinite(levels)
    periods, levels = periods[ok], levels[ok]
    keep = np.concatenate([[True], np.diff(levels) > 0])
    periods, levels = periods[keep], levels[keep]
    if levels.size < 4:
        raise DataError(f"the {curve.method} curve has too few increasing levels for an allowance")
    if curve.period_definition == "1/AEP":
        log_rate = np.log(-np.log1p(-1.0 / periods))
    else:
        log_rate = -np.log(periods)

    def end_slope(sel):
        return float(np.polyfit(levels[sel], log_rate[sel], 1)[0])

    lo_sel = periods <= periods[0] * 10
    hi_sel = periods >= periods[-1] / 10
    s_lo = end_slope(lo_sel) if lo_sel.sum() >= 2 else (log_rate[1] - log_rate[0]) / (levels[1] - levels[0])
    s_hi = end_slope(hi_sel) if hi_sel.sum() >= 2 else (log_rate[-1] - log_rate[-2]) / (levels[-1] - levels[-2])

    def log_rate_of(z):
        z = np.asarray(z, dtype=float)
        inside = np.interp(z, levels, log_rate)
        out = np.where(z < levels[0], log_rate[0] + s_lo * (z - levels[0]), inside)
        return np.where(z > levels[-1], log_rate[-1] + s_hi * (z - levels[-1]), out)

    return log_rate_of


def allowance_on_curve(curve: ReturnLevelCurve, *, rise_samples_m=None, mean_m=None, sd_m=None,
                       weights=None, period_years=100.0) -> CurveAllowance:
    """Allowance for an uncertain rise solved on the curve (module notes), with Hunter's closed form beside it.

    Parameters
    ----------
    curve : ReturnLevelCurve
        Present return-level curve.
    rise_samples_m : array-like, optional
        Samples (equally likely, or with ``weights``) of the rise over the design life. [m]
    mean_m, sd_m : float, optional
        A normal rise instead of samples (Gauss-Hermite nodes, :func:`normal_rise_nodes`). [m]
    weights : array-like, optional
        Weights of the samples.
    period_years : float
        Return period of the design level. [years]

    Returns
    -------
    CurveAllowance
    """
    from extremes import sealevel

    if rise_samples_m is not None:
        rise = np.asarray(rise_samples_m, dtype=float).ravel()
        w = np.full(rise.size, 1.0 / max(rise.size, 1)) if weights is None else np.asarray(weights, float).ravel()
        form = "samples"
    elif mean_m is not None and sd_m is not None:
        if not (math.isfinite(mean_m) and sd_m >= 0):
            raise DataError(f"allowance: need a finite mean_m and sd_m >= 0 [m]; got {mean_m!r}, {sd_m!r}")
        rise, w = normal_rise_nodes(float(mean_m), float(sd_m))
        form = "normal"
    else:
        raise DataError("allowance: give rise_samples_m, or mean_m and sd_m [m]")
    if rise.size == 0 or not np.all(np.isfinite(rise)) or w.shape != rise.shape or np.any(w < 0) or w.sum() <= 0:
        raise DataError(f"allowance: rise samples must be finite numbers [m] with non-negative weights; got "
                        f"{rise.size} values")
    w = w / w.sum()
    log_rate_of = _log_rate_function(curve)
    z0 = float(curve.level_at([period_years])[0])
    target = float(log_rate_of(z0))

    def excess(a):
        return float(np.log(np.sum(w * np.exp(log_rate_of(z0 + a - rise) - target))))

    lo, hi = float(rise.min()) - 1e-9, float(rise.max()) + 1e-9
    allowance = lo if abs(hi - lo) < 1e-8 else float(optimize.brentq(excess, lo, hi, xtol=1e-7))
    scale = sealevel.gumbel_scale_of_curve(curve, period_years=period_years)
    closed = scale * (math.log(float(np.sum(w * np.exp((rise - rise.max()) / scale)))) + rise.max() / scale)
    mean = float(np.sum(w * rise))
    return CurveAllowance(allowance_m=allowance, closed_form_m=float(closed), gumbel_scale_m=float(scale),
                          period_years=float(period_years), level_m=z0, mean_rise_m=mean,
                          sd_rise_m=float(math.sqrt(max(np.sum(w * (rise - mean) ** 2), 0.0))),
                          n_samples=int(rise.size), rise_form=form)
