r"""Classic and revised joint probability method (hourly tide x hourly non-tidal residual).

Per-hour exceedance :math:`Q(z) = \sum_k P(T = t_k) P(S > z - t_k)` over the hourly predicted tide of a
nodal cycle and the hourly residual (empirical body, GPD tail) [1]_; revised form [2]_:
:math:`P(\text{annual max} \le z) \approx \exp\{-\theta(z)\, n_h\, Q(z)\}`, :math:`n_h = 8766` h/yr, with
:math:`\theta(z)` the extremal index of the hourly level at level z (:mod:`extremes.joint.clustering`, hours
as the step; blocks of 709 h = two spring-neap cycles). Residuals are assumed independent of the tide.

References
----------
.. [1] D. T. Pugh and J. M. Vassie, "Extreme sea-levels from tide and surge probability," in Proc. 16th
   Coastal Eng. Conf., Hamburg, 1978. New York: ASCE, 1979, pp. 911-930.
.. [2] J. A. Tawn and J. M. Vassie, "Extreme sea levels: the joint probabilities method revisited and
   revised," Proc. Inst. Civ. Eng. Pt 2, vol. 87, pp. 429-442, 1989.
"""
from __future__ import annotations

import logging
import warnings

import numpy as np

from extremes.constants import HOURS_PER_YEAR
from extremes.curves import DENSE_PERIODS_YEARS
from extremes.errors import DataError, ExtremesWarning
from extremes.joint import year_bootstrap
from extremes.joint.clustering import cycle_positions, extremal_index_by_level
from extremes.joint.result import JointProbabilityResult
from extremes.joint.skew import _utc_series, assemble, choose_threshold

logger = logging.getLogger(__name__)

__all__ = ["classic_joint_probability", "HOURS_PER_YEAR"]

#: hours in a mean year, n_h [h]


def classic_joint_probability(hourly_tide_m, hourly_residual, *, threshold_m=None, threshold_quantile=None,
                              tail_method="mle", clustering="level", extremal_index=None, n_offsets=16,
                              min_exceedances=10, estimator="blocks", theta_beyond="trend", n_bootstrap=1000,
                              confidence=0.95,
                              periods_years=DENSE_PERIODS_YEARS, grid_step_m=0.005, datum="unspecified",
                              epoch_year=None, seed=0) -> JointProbabilityResult:
    r"""Still-water return levels by the (revised) joint probability method on hourly values.

    Parameters
    ----------
    hourly_tide_m : array-like of float
        Hourly predicted tide over a full nodal cycle at the MSL epoch, in time order. [m]
    hourly_residual : pandas.Series
        Hourly non-tidal residual on a UTC index (NaN gaps allowed), de-trended to the epoch. [m]
    threshold_m, threshold_quantile, tail_method
        GPD tail of the residual above ``threshold_m`` [m]; default the ``threshold_quantile`` quantile if
        given, else :func:`extremes.extremal.threshold.select_threshold` (peaks 72 h apart).
    clustering : {"level", "constant", "none"}
        Extremal index of the hourly level as a function of level (revised JPM), a constant
        ``extremal_index``, or none (classic JPM: every exceeding hour is an event; very conservative).
    n_offsets, min_exceedances, estimator
        Options of :func:`extremes.joint.clustering.extremal_index_by_level` (hourly step, blocks of 709 h).
    theta_beyond : {"trend", "hold"}
        Extremal index above the highest estimable level (:func:`extremes.joint.clustering.theta_function`).
    n_bootstrap, confidence, periods_years, grid_step_m, datum, epoch_year, seed
        As in :func:`extremes.joint.skew_surge_joint_probability`.

    Returns
    -------
    JointProbabilityResult
        ``method="joint-probability"``; ``curve`` with clustering, ``curve_unclustered`` with theta = 1.
    """
    tide = np.asarray(hourly_tide_m, dtype=float).ravel()
    if tide.size < 24 * 365 or np.any(~np.isfinite(tide)):
        raise DataError(f"hourly_tide_m must hold >= 1 year of finite hourly values [m]; got {tide.size}")
    series = _utc_series(hourly_residual, "hourly_residual").dropna()
    if series.size < 24 * 365:
        raise DataError(f"hourly_residual has {series.size} finite hours; need >= 1 year")
    residual = series.to_numpy()
    record_years = series.size / HOURS_PER_YEAR
    notes = ["joint probability (hourly): hourly predicted tide of the nodal cycle convolved with the hourly "
             "non-tidal residual (empirical body, GPD tail), assumed independent of the tide",
             "return period = 1/(expected independent exceedance events per year); AEP = 1 - exp(-1/T)",
             "the residual carries timing errors of the prediction; the skew-surge method avoids them"]
    if record_years < 10:
        warnings.warn(f"the residual record covers {record_years:.1f} years; tail fit and extremal index are "
                      "uncertain below ~10 years", ExtremesWarning, stacklevel=2)
        notes.append(f"short record ({record_years:.1f} years)")
    diagnostics = {}
    threshold_m = choose_threshold(series, threshold_m, threshold_quantile, notes, diagnostics, "residual")
    year_ids, _ = year_bootstrap.check_year_ids(series.index)
    comp = year_bootstrap.Component("all", tide, 1.0, residual, year_ids)
    comp.surge = year_bootstrap.fit_tail(residual, threshold_m=float(threshold_m), years=record_years, method=tail_method)
    if clustering == "level":
        positions = cycle_positions(series.index, step_hours=1.0)
        theta_table = extremal_index_by_level(tide, residual, positions, n_offsets=n_offsets,
                                              min_exceedances=min_exceedances, estimator=estimator,
                                              block_length=709, run_length=24, seed=seed)
        notes.append("revised JPM: extremal index of the hourly level as a function of level, "
                     f"{theta_table['theta'].iloc[-1]:.2f} at {theta_table['level_m'].iloc[-1]:.2f} m; above: "
                     + ("held" if theta_beyond == "hold" else "extended along its rising trend, capped at 1"))
    elif clustering == "constant":
        if extremal_index is None or not 0 < float(extremal_index) <= 1:
            raise DataError(f"clustering='constant' needs 0 < extremal_index <= 1; got {extremal_index!r}")
        theta_table = float(extremal_index)
    elif clustering == "none":
        theta_table = None
        notes.append("classic JPM: no extremal index (every exceeding hour counted; conservative)")
    else:
        raise DataError(f"clustering must be 'level', 'constant' or 'none'; got {clustering!r}")
    diagnostics.update({"n_hours_tide": int(tide.size), "n_hours_residual": int(series.size),
                        "record_years": float(record_years)})
    return assemble("joint-probability", [comp], events_per_year=HOURS_PER_YEAR, theta_table=theta_table,
                    year_ids=year_ids, periods_years=periods_years, n_bootstrap=n_bootstrap,
                    confidence=confidence, seed=seed, grid_step_m=grid_step_m, datum=datum,
                    epoch_year=epoch_year, tail_method=tail_method, notes=notes, diagnostics=diagnostics,
                    threshold_m=float(threshold_m), theta_beyond=theta_beyond,
                    interval_method=f"bias-corrected percentile bootstrap of whole years of residual ({n_bootstrap} "
                                    "resamples; tail refitted, extremal index held)")
