r"""Direct methods on the total level, as return-level curves for comparison with the joint methods.

Built from this package's samples, fits and intervals (:mod:`extremes.extremal.sample_fit`): sample, fit by
maximum likelihood, return levels with profile-likelihood intervals [1]_. Profiles are computed on a coarse set of periods
(``profile_periods_years``) and interpolated linearly in log period onto the dense grid (profiles on all
250 periods would be slow; the curves are smooth in log period).

References
----------
.. [1] S. Coles, An Introduction to Statistical Modeling of Extreme Values. London, U.K.: Springer, 2001,
   chs. 3-4.
"""
from __future__ import annotations

import logging
from dataclasses import dataclass

import numpy as np
import pandas as pd

from extremes.curves import DENSE_PERIODS_YEARS, ReturnLevelCurve

logger = logging.getLogger(__name__)

__all__ = ["DirectFit", "INTERVAL_METHODS", "interp_log_period", "direct_annual_maxima",
           "direct_peaks_over_threshold", "direct_r_largest", "PROFILE_PERIODS_YEARS"]

#: periods at which profile-likelihood intervals are computed before interpolation [years]
PROFILE_PERIODS_YEARS = (1.001, 1.01, 1.1, 1.5, 2, 3, 5, 10, 20, 50, 100, 200, 500, 1000, 2000, 5000, 10_000)


#: how each interval method is stated on the curve (``model`` filled in per method)
INTERVAL_METHODS = {
    "profile": "profile likelihood of the return level ({model}; chi-square(1) cut; an upper bound the "
               "likelihood cannot limit is unbounded)",
    "delta": "delta method ({model}; symmetric normal interval)",
    "bootstrap": "parametric percentile bootstrap ({model})",
}


def interp_log_period(log_periods, values, log_dense):
    """Values at coarse log periods interpolated linearly onto dense log periods (NaN outside, NaN values
    skipped); an unbounded value (+inf) stays unbounded between it and its neighbours."""
    v = np.asarray(values, dtype=float)
    ok = ~np.isnan(v)
    if ok.sum() < 2:
        return np.full(np.shape(log_dense), np.nan)
    xs, vs = np.asarray(log_periods, dtype=float)[ok], v[ok]
    x = np.asarray(log_dense, dtype=float)
    with np.errstate(invalid="ignore"):
        out = np.interp(x, xs, vs, left=np.nan, right=np.nan)
    j = np.clip(np.searchsorted(xs, x), 1, xs.size - 1)
    near_inf = np.isinf(vs[j]) | np.isinf(vs[j - 1])
    return np.where(near_inf & (x >= xs[0]) & (x <= xs[-1]),
                    np.where(x == xs[j - 1], vs[j - 1], np.where(x == xs[j], vs[j], np.inf)), out)


def _curve(method, table, *, periods_years, confidence, definition, datum, epoch_year, interval, notes):
    t = table.dropna(subset=["level_m"])
    lp = np.log(t["return_period_years"].to_numpy())
    dense = np.asarray(periods_years, dtype=float)
    x = np.log(dense)

    def interp(col):
        return interp_log_period(lp, t[col].to_numpy(dtype=float), x)

    return ReturnLevelCurve(method=method, periods_years=dense, level_m=interp("level_m"),
                            lower_m=interp("lower_m"), upper_m=interp("upper_m"), confidence=confidence,
                            period_definition=definition, datum=datum, epoch_year=epoch_year,
                            interval_method=interval, notes=tuple(notes))


def _coarse(periods_years, profile_periods_years):
    dense = np.asarray(periods_years, dtype=float)
    coarse = np.asarray(profile_periods_years, dtype=float)
    return np.unique(np.concatenate([coarse[(coarse >= dense.min()) & (coarse <= dense.max())],
                                     [dense.min(), dense.max()]]))


@dataclass(frozen=True, eq=False, repr=False)
class DirectFit:
    """A direct method's sample, fit and return-level curve (the study keeps it for the report).

    Attributes
    ----------
    method : str
        ``annual-maxima``, ``peaks-over-threshold`` or ``r-largest``.
    curve : ReturnLevelCurve
        Levels and intervals on the dense period grid. [m]
    result : SampleFit
        The sample, fit and coarse return-level table of :func:`extremes.extremal.sample_fit.fit_sample`.
    notes : tuple of str
    """

    method: str
    curve: ReturnLevelCurve
    result: object
    notes: tuple = ()

    def __repr__(self) -> str:
        return f"DirectFit(method={self.method!r}, n={self.fit.n})"

    @property
    def fit(self):
        """The fitted distribution (GEVFit or GPDFit)."""
        return self.result.fit

    @property
    def sample(self) -> pd.Series:
        """The values fitted (annual maxima by year, peaks by time, r-largest flattened) [m]."""
        return self.result.values

    def cdf(self, x):
        """Distribution function of one sample value (GEV of annual maxima; GPD of peaks above threshold)."""
        from extremes.extremal import distributions

        f = self.fit
        if self.method in ("annual-maxima", "r-largest"):
            return distributions.gev_cdf(x, loc=f.loc, scale=f.scale, shape=f.shape)
        return 1.0 - distributions.gpd_exceedance_rate(x, threshold=f.threshold, scale=f.scale, shape=f.shape,
                                                       rate_per_year=1.0)

    def quantile(self, p):
        """Inverse of :meth:`cdf`."""
        from extremes.extremal import distributions

        f = self.fit
        p = np.asarray(p, dtype=float)
        if self.method in ("annual-maxima", "r-largest"):
            return distributions.gev_quantile(p, loc=f.loc, scale=f.scale, shape=f.shape)
        return distributions.gpd_quantile(p, threshold=f.threshold, scale=f.scale, shape=f.shape)

    def to_dict(self) -> dict:
        return {"method": self.method, "n": int(self.fit.n), "fit": self.fit,
                "interval_method": self.curve.interval_method, "details": self.result.details,
                "notes": list(self.notes)}


def _direct(method, level_m_at_epoch, *, ci, confidence, periods_years, profile_periods_years, datum,
            epoch_year, describe, model, extra_notes=(), **sample_options):
    from extremes.extremal.sample_fit import fit_sample

    result = fit_sample(level_m_at_epoch, sample=method, method="mle", ci=ci, confidence=confidence,
                        periods_years=_coarse(periods_years, profile_periods_years), **sample_options)
    notes = list(extra_notes) + describe(result) + [f"{ci} intervals at {len(result.return_levels)} periods, interpolated in log "
                                "period"]
    interval = INTERVAL_METHODS[ci].format(model=model)
    curve = _curve(method, result.return_levels, periods_years=periods_years, confidence=confidence,
                   definition=result.period_definition, datum=datum, epoch_year=epoch_year, interval=interval,
                   notes=notes)
    return DirectFit(method=method, curve=curve, result=result, notes=tuple(notes))


def direct_annual_maxima(level_m_at_epoch, *, min_coverage=0.9, water_year_start_month=1, season_months=None,
                         ci="profile", confidence=0.95, periods_years=DENSE_PERIODS_YEARS,
                         profile_periods_years=PROFILE_PERIODS_YEARS, datum="unspecified",
                         epoch_year=None) -> DirectFit:
    """GEV fit (maximum likelihood) of annual maxima of the total level, as a curve (``1/AEP``).

    Parameters
    ----------
    level_m_at_epoch : pandas.Series
        Observed level adjusted to the MSL epoch, UTC index, NaN gaps. [m]
    min_coverage, water_year_start_month, season_months
        Year rules of :func:`extremes.extremal.samples.annual_maxima` (``season_months``: the storm season whose
        coverage a year needs, :mod:`extremes.season`).
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
    DirectFit
        ``method="annual-maxima"``; its ``curve`` is the return-level curve.
    """
    def describe(r):
        f = r.fit
        return [f"GEV (maximum likelihood) of {f.n} annual maxima: location {f.loc:.3f} m, scale "
                f"{f.scale:.3f} m, shape {f.shape:.3f}"]

    return _direct("annual-maxima", level_m_at_epoch, ci=ci, confidence=confidence, periods_years=periods_years,
                   profile_periods_years=profile_periods_years, datum=datum, epoch_year=epoch_year,
                   describe=describe, model="GEV of annual maxima", min_coverage=min_coverage,
                   water_year_start_month=water_year_start_month, season_months=season_months)


def direct_peaks_over_threshold(level_m_at_epoch, *, threshold_m=None, threshold_rule="rate", peaks_per_year=None,
                                min_separation_hours=72.0, ci="profile", confidence=0.95,
                                periods_years=DENSE_PERIODS_YEARS,
                                profile_periods_years=PROFILE_PERIODS_YEARS, datum="unspecified",
                                epoch_year=None) -> DirectFit:
    """GPD fit of declustered peaks of the total level over a threshold, as a curve (``1/rate``).

    Parameters
    ----------
    level_m_at_epoch : pandas.Series
        Observed level adjusted to the MSL epoch, UTC index, NaN gaps. [m]
    threshold_m : float, optional
        Threshold [m]; default by ``threshold_rule``.
    threshold_rule : {"rate", "stability"}
        ``rate`` (default): :func:`extremes.extremal.threshold.threshold_for_rate`, a fixed number of peaks
        a year (``peaks_per_year``, default 1.5, at least 30 peaks), which does not condition the fit;
        ``stability``: :func:`extremes.extremal.threshold.select_threshold` (the previous default; its
        intervals are too narrow, benchmarks/bench_coverage.py).
    peaks_per_year : float, optional
        Rate of the ``rate`` rule. [1/year]
    min_separation_hours : float
        Declustering separation. [h]
    ci, confidence, periods_years, profile_periods_years, datum, epoch_year
        As in :func:`direct_annual_maxima`.

    Returns
    -------
    DirectFit
        ``method="peaks-over-threshold"``; its curve is NaN at periods shorter than one event (rate x T <= 1).
    """
    def describe(r):
        f, rule = r.fit, r.details.get("threshold_rule")
        chosen = [f"threshold {f.threshold:.3f} m by the automatic rule: {rule}"] if rule else []
        return chosen + [f"GPD (maximum likelihood) of {f.n} peaks ({f.rate_per_year:.2f}/yr, "
                         f"{min_separation_hours:g} h apart): scale {f.scale:.3f} m, shape {f.shape:.3f}"]

    from extremes.extremal import threshold

    chosen = []
    if threshold_m is None:
        if threshold_rule == "rate":
            choice = threshold.threshold_for_rate(
                level_m_at_epoch, min_separation_hours=min_separation_hours,
                peaks_per_year=threshold.DEFAULT_PEAKS_PER_YEAR if peaks_per_year is None else peaks_per_year)
        elif threshold_rule == "stability":
            choice = threshold.select_threshold(level_m_at_epoch, min_separation_hours=min_separation_hours)
        else:
            raise ValueError(f"threshold_rule must be 'rate' or 'stability'; got {threshold_rule!r}")
        threshold_m = choice.threshold_m
        chosen = [f"threshold {threshold_m:.3f} m by the automatic rule: {choice.rule}"]
    rule_words = {"rate": "; threshold by a fixed rate", "stability": "; threshold by the stability rule"}
    return _direct("peaks-over-threshold", level_m_at_epoch, ci=ci, confidence=confidence,
                   periods_years=periods_years, profile_periods_years=profile_periods_years, datum=datum,
                   epoch_year=epoch_year, describe=describe, threshold_m=threshold_m,
                   min_separation_hours=min_separation_hours, extra_notes=chosen,
                   model="GPD of declustered peaks with the Poisson rate" + (rule_words.get(threshold_rule, "")
                                                                            if chosen else ""))


def direct_r_largest(level_m_at_epoch, *, r=5, min_separation_hours=72.0, min_coverage=0.9, season_months=None,
                     ci="profile", confidence=0.95, periods_years=DENSE_PERIODS_YEARS,
                     profile_periods_years=PROFILE_PERIODS_YEARS, datum="unspecified",
                     epoch_year=None) -> DirectFit:
    """Annual-maximum GEV fitted to the r largest independent events per year, as a curve (``1/AEP``).

    Parameters are those of :func:`direct_annual_maxima` plus ``r`` and ``min_separation_hours`` [h].

    Returns
    -------
    DirectFit
        ``method="r-largest"``.
    """
    def describe(res):
        f = res.fit
        return [f"r-largest GEV (r = {r}, events {min_separation_hours:g} h apart): location {f.loc:.3f} m, "
                f"scale {f.scale:.3f} m, shape {f.shape:.3f}"]

    return _direct("r-largest", level_m_at_epoch, ci=ci, confidence=confidence, periods_years=periods_years,
                   profile_periods_years=profile_periods_years, datum=datum, epoch_year=epoch_year,
                   describe=describe, model=f"r-largest GEV, r = {r}", r=r,
                   min_separation_hours=min_separation_hours, min_coverage=min_coverage,
                   season_months=season_months)
