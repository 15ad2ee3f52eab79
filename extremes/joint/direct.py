r"""Direct methods on the total level, as return-level curves for comparison with the joint methods.

Built from the extreme-value stage (:mod:`extremes.extremal`): sample, fit by maximum likelihood, return
levels with profile-likelihood intervals [1]_. Profiles are computed on a coarse set of periods
(``profile_periods_years``) and interpolated linearly in log period onto the dense grid (profiles on all
250 periods would be slow; the curves are smooth in log period).

References
----------
.. [1] S. Coles, An Introduction to Statistical Modeling of Extreme Values. London, U.K.: Springer, 2001,
   chs. 3-4.
"""
from __future__ import annotations

import logging

import numpy as np

from extremes.curves import DENSE_PERIODS_YEARS, ReturnLevelCurve

logger = logging.getLogger(__name__)

__all__ = ["direct_annual_maxima", "direct_peaks_over_threshold", "direct_r_largest", "PROFILE_PERIODS_YEARS"]

#: periods at which profile-likelihood intervals are computed before interpolation [years]
PROFILE_PERIODS_YEARS = (1.001, 1.01, 1.1, 1.5, 2, 3, 5, 10, 20, 50, 100, 200, 500, 1000, 2000, 5000, 10_000)


def _curve(method, table, *, periods_years, confidence, definition, datum, epoch_year, interval, notes):
    t = table.dropna(subset=["level_m"])
    lp = np.log(t["return_period_years"].to_numpy())
    dense = np.asarray(periods_years, dtype=float)
    x = np.log(dense)

    def interp(col):
        v = t[col].to_numpy(dtype=float)
        ok = np.isfinite(v)
        if ok.sum() < 2:
            return np.full(dense.shape, np.nan)
        out = np.interp(x, lp[ok], v[ok], left=np.nan, right=np.nan)
        return out

    return ReturnLevelCurve(method=method, periods_years=dense, level_m=interp("level_m"),
                            lower_m=interp("lower_m"), upper_m=interp("upper_m"), confidence=confidence,
                            period_definition=definition, datum=datum, epoch_year=epoch_year,
                            interval_method=interval, notes=tuple(notes))


def _coarse(periods_years, profile_periods_years):
    dense = np.asarray(periods_years, dtype=float)
    coarse = np.asarray(profile_periods_years, dtype=float)
    return np.unique(np.concatenate([coarse[(coarse >= dense.min()) & (coarse <= dense.max())],
                                     [dense.min(), dense.max()]]))


def direct_annual_maxima(level_m_at_epoch, *, min_coverage=0.9, water_year_start_month=1, ci="profile",
                         confidence=0.95, periods_years=DENSE_PERIODS_YEARS,
                         profile_periods_years=PROFILE_PERIODS_YEARS, datum="unspecified", epoch_year=None):
    """GEV fit (maximum likelihood) of annual maxima of the total level, as a curve (``1/AEP``).

    Parameters
    ----------
    level_m_at_epoch : pandas.Series
        Observed level adjusted to the MSL epoch, UTC index, NaN gaps. [m]
    min_coverage, water_year_start_month
        Year rules of :func:`extremes.extremal.samples.annual_maxima`.
    ci : {"profile", "delta", "bootstrap"}
        Interval method of :func:`extremes.extremal.uncertainty.return_levels`.
    confidence : float
        Interval level.
    periods_years, profile_periods_years : array-like
        Dense grid of the curve and the coarse periods where intervals are computed. [years]
    datum, epoch_year
        Carried into the curve.

    Returns
    -------
    ReturnLevelCurve
        ``method="annual-maxima"``.
    """
    from extremes.extremal import distributions, samples, uncertainty

    am = samples.annual_maxima(level_m_at_epoch, min_coverage=min_coverage,
                               water_year_start_month=water_year_start_month)
    fit = distributions.fit_gev(am.maxima, method="mle")
    table = uncertainty.return_levels(fit, _coarse(periods_years, profile_periods_years), ci=ci,
                                      confidence=confidence)
    notes = [f"GEV (maximum likelihood) of {fit.n} annual maxima: location {fit.loc:.3f} m, scale "
             f"{fit.scale:.3f} m, shape {fit.shape:.3f}",
             f"{ci} intervals at {len(table)} periods, interpolated in log period"]
    return _curve("annual-maxima", table, periods_years=periods_years, confidence=confidence,
                  definition="1/AEP", datum=datum, epoch_year=epoch_year, interval=f"{ci} likelihood"
                  if ci == "profile" else ci, notes=notes)


def direct_peaks_over_threshold(level_m_at_epoch, *, threshold_m=None, min_separation_hours=72.0, ci="profile",
                                confidence=0.95, periods_years=DENSE_PERIODS_YEARS,
                                profile_periods_years=PROFILE_PERIODS_YEARS, datum="unspecified",
                                epoch_year=None):
    """GPD fit of declustered peaks of the total level over a threshold, as a curve (``1/rate``).

    Parameters
    ----------
    level_m_at_epoch : pandas.Series
        Observed level adjusted to the MSL epoch, UTC index, NaN gaps. [m]
    threshold_m : float, optional
        Threshold [m]; default :func:`extremes.extremal.threshold.select_threshold`.
    min_separation_hours : float
        Declustering separation. [h]
    ci, confidence, periods_years, profile_periods_years, datum, epoch_year
        As in :func:`direct_annual_maxima`.

    Returns
    -------
    ReturnLevelCurve
        ``method="peaks-over-threshold"``; NaN at periods shorter than one event (rate x T <= 1).
    """
    from extremes.extremal import distributions, samples, threshold, uncertainty

    notes = []
    if threshold_m is None:
        choice = threshold.select_threshold(level_m_at_epoch, min_separation_hours=min_separation_hours)
        threshold_m = choice.threshold_m
        notes.append(f"threshold {threshold_m:.3f} m by the automatic rule: {choice.rule}")
    peaks = samples.peaks_over_threshold(level_m_at_epoch, threshold=float(threshold_m),
                                         min_separation_hours=min_separation_hours)
    fit = distributions.fit_gpd(peaks, method="mle")
    table = uncertainty.return_levels(fit, _coarse(periods_years, profile_periods_years), ci=ci,
                                      confidence=confidence)
    notes += [f"GPD (maximum likelihood) of {fit.n} peaks ({fit.rate_per_year:.2f}/yr, {min_separation_hours:g} h "
              f"apart): scale {fit.scale:.3f} m, shape {fit.shape:.3f}",
              f"{ci} intervals at {len(table)} periods, interpolated in log period"]
    return _curve("peaks-over-threshold", table, periods_years=periods_years, confidence=confidence,
                  definition="1/rate", datum=datum, epoch_year=epoch_year, interval=ci, notes=notes)


def direct_r_largest(level_m_at_epoch, *, r=5, min_separation_hours=72.0, min_coverage=0.9, ci="profile",
                     confidence=0.95, periods_years=DENSE_PERIODS_YEARS,
                     profile_periods_years=PROFILE_PERIODS_YEARS, datum="unspecified", epoch_year=None):
    """Annual-maximum GEV fitted to the r largest independent events per year, as a curve (``1/AEP``).

    Parameters are those of :func:`direct_annual_maxima` plus ``r`` and ``min_separation_hours`` [h].

    Returns
    -------
    ReturnLevelCurve
        ``method="r-largest"``.
    """
    from extremes.extremal import distributions, samples, uncertainty

    rl = samples.r_largest(level_m_at_epoch, r=r, min_separation_hours=min_separation_hours,
                           min_coverage=min_coverage)
    fit = distributions.fit_gev_rlargest(rl)
    table = uncertainty.return_levels(fit, _coarse(periods_years, profile_periods_years), ci=ci,
                                      confidence=confidence)
    notes = [f"r-largest GEV (r = {r}, events {min_separation_hours:g} h apart): location {fit.loc:.3f} m, "
             f"scale {fit.scale:.3f} m, shape {fit.shape:.3f}",
             f"{ci} intervals at {len(table)} periods, interpolated in log period"]
    return _curve("r-largest", table, periods_years=periods_years, confidence=confidence, definition="1/AEP",
                  datum=datum, epoch_year=epoch_year, interval=ci, notes=notes)
