r"""The extreme-value stage for one sample: draw the sample, fit the model, return levels with intervals.

One function, :func:`fit_sample`, serves the ``fit`` command and the study's direct methods, so that a
sample of the same record gives the same numbers everywhere. Three samples (Coles 2001 [1]_):

* ``annual-maxima``: the maximum of each sufficiently complete year (or a table of annual maxima), fitted
  by a GEV or Gumbel distribution; return period T = 1/AEP of the annual maximum;
* ``peaks-over-threshold``: declustered peaks above a threshold, fitted by a GPD (or exponential) with a
  Poisson rate of events; return period = average recurrence interval 1/rate;
* ``r-largest``: the r largest independent events of each year, fitted by the r-largest GEV likelihood
  (Smith 1986; Coles 2001 sec. 3.5); T = 1/AEP of the annual maximum.

References
----------
.. [1] S. Coles, An Introduction to Statistical Modeling of Extreme Values. London, U.K.: Springer, 2001,
   chs. 3-4, doi:10.1007/978-1-4471-3675-0.
"""
from __future__ import annotations

import logging
import math
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from extremes.constants import DEFAULT_CONFIDENCE, DEFAULT_PERIODS_YEARS, DEFAULT_SEED
from extremes.errors import DataError

logger = logging.getLogger(__name__)

__all__ = ["SampleFit", "fit_sample", "default_ci", "invalid_choice", "read_fit_input"]

#: the period definition of each sample's return levels (CONTRACT.md ``period_definition``)
PERIOD_DEFINITIONS = {"annual-maxima": "1/AEP", "r-largest": "1/AEP", "peaks-over-threshold": "1/rate"}


def default_ci(method: str) -> str:
    """The interval method used when none is asked: profile likelihood for maximum likelihood, else bootstrap."""
    return "profile" if method == "mle" else "bootstrap"


def _num(value):
    if value is None:
        return None
    value = float(value)
    return value if math.isfinite(value) else None


@dataclass(frozen=True, eq=False, repr=False)
class SampleFit:
    """A sample of extremes, its fitted model and its return levels.

    Attributes
    ----------
    sample_kind : {"annual-maxima", "peaks-over-threshold", "r-largest"}
    sample : AnnualMaxima, Peaks or RLargest
        The sample as drawn (or the annual-maxima table as read).
    fit : GEVFit or GPDFit
        The fitted model.
    return_levels : pandas.DataFrame
        ``return_period_years``, ``level_m``, ``lower_m``, ``upper_m``, ``confidence`` [years, m].
    ci : str
        Interval method (profile, delta or bootstrap).
    seed : int
        Seed of the bootstrap (recorded whatever the interval method).
    details : dict
        Sample details (threshold and its rule, rate, years dropped, r, separation).
    """

    sample_kind: str
    sample: object
    fit: object
    return_levels: pd.DataFrame
    ci: str
    seed: int
    details: dict = field(default_factory=dict)

    def __repr__(self) -> str:
        return f"SampleFit(sample={self.sample_kind!r}, model={self.fit.model!r}, n={self.fit.n}, ci={self.ci!r})"

    @property
    def period_definition(self) -> str:
        """``"1/AEP"`` (annual-maximum models) or ``"1/rate"`` (peaks over threshold)."""
        return PERIOD_DEFINITIONS[self.sample_kind]

    @property
    def values(self) -> pd.Series:
        """The sample values fitted [m]: annual maxima by year, peaks by time, or r-largest flattened."""
        s = self.sample
        if hasattr(s, "maxima"):
            return s.maxima.rename("annual_max_m")
        if hasattr(s, "peaks"):
            return s.peaks.rename("peak_m")
        if hasattr(s, "values") and isinstance(s.values, pd.DataFrame):
            return s.values.stack().rename("level_m")
        return pd.Series(np.asarray(getattr(s, "values", s), dtype=float), name="level_m")

    def to_dict(self) -> dict:
        """The ``fit`` command's JSON (CONTRACT.md keys, textbook shape sign) plus the sample details."""
        d = self.fit.to_dict()
        if self.sample_kind == "peaks-over-threshold":
            se = d["standard_errors"]
            out = {"model": d["model"], "method": d["method"], "n": d["n"],
                   "parameters": {"location": _num(self.fit.threshold), "scale": _num(self.fit.scale),
                                  "shape": _num(self.fit.shape)},
                   "standard_errors": {"location": None, "scale": se["scale"], "shape": se["shape"]},
                   "log_likelihood": _num(self.fit.log_likelihood), "rate_per_year": _num(self.fit.rate_per_year),
                   "rate_per_year_se": se["rate_per_year"]}
        else:
            out = {k: d[k] for k in ("model", "method", "n", "parameters", "standard_errors", "log_likelihood")}
        out["sample"] = self.sample_kind
        out["ci"] = self.ci
        out["period_definition"] = self.period_definition
        out["period_kind"] = self.return_levels.attrs.get("period_kind")
        out["seed"] = int(self.seed)
        out["details"] = {k: (_num(v) if isinstance(v, float) else v) for k, v in self.details.items()}
        out["return_levels"] = [
            {"return_period_years": _num(row.return_period_years), "level_m": _num(row.level_m),
             "lower_m": _num(row.lower_m), "upper_m": _num(row.upper_m), "confidence": _num(row.confidence),
             "period_definition": self.period_definition}
            for row in self.return_levels.itertuples()]
        return out


def invalid_choice(*, sample: str, model: str, method: str, ci: str) -> tuple[str, str] | None:
    """``(option name, message)`` of the first unknown choice or impossible combination, or None.

    Examples
    --------
    >>> invalid_choice(sample="annual-maxima", model="gev", method="lmoments", ci="profile")
    ('ci', "profile intervals need maximum likelihood (method 'mle'); use ci 'bootstrap' or 'delta'")
    """
    from extremes.extremal import CI_METHODS, FIT_METHODS, MODELS, SAMPLE_METHODS

    for name, value, allowed in (("sample", sample, SAMPLE_METHODS), ("model", model, MODELS),
                                 ("method", method, FIT_METHODS), ("ci", ci, CI_METHODS)):
        if value not in allowed:
            return name, f"{name} must be one of {sorted(allowed)}; got {value!r}"
    if ci == "profile" and method != "mle":
        return "ci", "profile intervals need maximum likelihood (method 'mle'); use ci 'bootstrap' or 'delta'"
    if sample == "r-largest" and model != "gev":
        return "model", "r-largest fits the GEV only (model 'gev')"
    if sample == "r-largest" and method != "mle":
        return "method", "r-largest fits use maximum likelihood only (method 'mle')"
    return None


def _draw_and_fit(data, *, sample, model, method, threshold_m, min_separation_hours, r, min_coverage,
                  water_year_start_month, season_months=None):
    """The sample of ``data`` and its fit, with the sample's details."""
    from extremes import extremal

    details: dict = {}
    if sample == "annual-maxima":
        if isinstance(data, extremal.AnnualMaxima):
            drawn = data
        elif isinstance(data, pd.Series) and isinstance(data.index, pd.DatetimeIndex):
            drawn = extremal.annual_maxima(data, min_coverage=min_coverage,
                                           water_year_start_month=water_year_start_month, season_months=season_months)
            details["years_dropped"] = [{"year": int(row.year), "reason": row.reason}
                                        for row in drawn.dropped.itertuples()]
        else:  # a table of annual maxima (one value a year)
            drawn = data
        fitter = extremal.fit_gev if model == "gev" else extremal.fit_gumbel
        return drawn, fitter(drawn, method=method), details
    if sample == "r-largest":
        drawn = extremal.r_largest(data, r=r, min_separation_hours=min_separation_hours, min_coverage=min_coverage,
                                   water_year_start_month=water_year_start_month, season_months=season_months)
        details.update(years=len(drawn.values), r=r, min_separation_hours=min_separation_hours)
        return drawn, extremal.fit_gev_rlargest(drawn), details
    details["min_separation_hours"] = min_separation_hours
    if threshold_m is None:
        # a fixed rate of peaks a year: the choice does not condition the fit (benchmarks/bench_coverage.py)
        choice = extremal.threshold_for_rate(data, min_separation_hours=min_separation_hours)
        threshold_m = choice.threshold_m
        details["threshold_rule"] = choice.rule
    drawn = extremal.peaks_over_threshold(data, threshold=float(threshold_m),
                                          min_separation_hours=min_separation_hours)
    fitter = extremal.fit_gpd if model == "gev" else extremal.fit_exponential
    fit = fitter(drawn, method=method)
    details.update(threshold_m=fit.threshold, rate_per_year=fit.rate_per_year, observed_years=fit.years)
    return drawn, fit, details


def fit_sample(data, *, sample: str = "annual-maxima", model: str = "gev", method: str = "mle",
               ci: str | None = None, periods_years=DEFAULT_PERIODS_YEARS, confidence: float = DEFAULT_CONFIDENCE,
               n_bootstrap: int = 1000, seed: int = DEFAULT_SEED, threshold_m: float | None = None,
               min_separation_hours: float = 72.0, r: int = 5, min_coverage: float = 0.9,
               water_year_start_month: int = 1, season_months=None) -> SampleFit:
    r"""Draw a sample of extremes from ``data``, fit its model and compute return levels with intervals.

    Parameters
    ----------
    data : pandas.Series or AnnualMaxima
        A level series on a UTC DatetimeIndex (NaN gaps) [m], or, for ``sample="annual-maxima"``, a table
        of annual maxima (an :class:`~extremes.extremal.samples.AnnualMaxima` or values by year) [m].
    sample : {"annual-maxima", "peaks-over-threshold", "r-largest"}, keyword-only
        How extremes are drawn (see the module notes).
    model : {"gev", "gumbel"}, keyword-only
        ``gev`` (GPD for peaks) or ``gumbel`` (exponential for peaks).
    method : {"mle", "lmoments"}, keyword-only
        Maximum likelihood [1]_ or L-moments (Hosking 1990).
    ci : {"profile", "delta", "bootstrap"}, optional
        Interval method; default :func:`default_ci` of ``method``.
    periods_years : array-like of float, keyword-only
        Return periods [years] (1/AEP for annual-maximum models, 1/rate for peaks over threshold).
    confidence : float, keyword-only
        Interval level.
    n_bootstrap, seed : int, keyword-only
        Bootstrap resamples and seed (the seed is recorded whatever the interval method).
    threshold_m : float, optional
        Peaks over threshold: the threshold [m]; default the fixed-rate rule of
        :func:`~extremes.extremal.threshold.threshold_for_rate` (1.5 declustered peaks a year, at least 30).
    min_separation_hours : float, keyword-only
        Minimum time between independent events (peaks over threshold, r-largest). [h]
    r : int, keyword-only
        r-largest: events per year.
    min_coverage : float, keyword-only
        Fraction of a year that must be valid for the year to count (series input).
    water_year_start_month : int, keyword-only
        First month of the year used for annual maxima and r-largest.
    season_months : sequence of int, optional
        Storm season whose coverage a year also needs (annual maxima, r-largest; :mod:`extremes.season`).

    Returns
    -------
    SampleFit

    Raises
    ------
    DataError
        An unknown choice, an impossible combination (profile intervals of an L-moment fit; r-largest with
        Gumbel or L-moments), or data too short for the sample.
    FitError
        If the fit fails.

    References
    ----------
    .. [1] S. Coles, An Introduction to Statistical Modeling of Extreme Values. London, U.K.: Springer, 2001,
       secs. 3.3, 3.5 and 4.3.
    """
    from extremes import extremal

    ci = default_ci(method) if ci is None else ci
    problem = invalid_choice(sample=sample, model=model, method=method, ci=ci)
    if problem is not None:
        raise DataError(problem[1])
    drawn, fit, details = _draw_and_fit(data, sample=sample, model=model, method=method, threshold_m=threshold_m,
                                        min_separation_hours=min_separation_hours, r=r, min_coverage=min_coverage,
                                        water_year_start_month=water_year_start_month, season_months=season_months)
    table = extremal.return_levels(fit, list(periods_years), ci=ci, confidence=confidence,
                                   n_bootstrap=n_bootstrap, seed=seed)
    return SampleFit(sample_kind=sample, sample=drawn, fit=fit, return_levels=table, ci=ci, seed=int(seed),
                     details=details)


def read_fit_input(path, *, sample: str = "annual-maxima", reader: dict | None = None):
    """Read the input of :func:`fit_sample` from a file.

    For ``sample="annual-maxima"`` a two-column table (year or time, value) with one row a year is read as
    annual maxima; a table with several rows a year, and every file for the other samples, is read as a
    gauge record with the reader options and quality-controlled (:func:`extremes.records.read_record`,
    :func:`extremes.quality.check_record`), giving the clean level series.

    Parameters
    ----------
    path : path-like
        The file.
    sample : str, keyword-only
        The sample to be drawn (see :func:`fit_sample`).
    reader : dict, optional
        Keyword arguments of :func:`extremes.records.read_record` (``units`` also applies to a table of
        annual maxima).

    Returns
    -------
    AnnualMaxima or pandas.Series
    """
    from extremes import extremal, quality, records

    reader = {k: v for k, v in (reader or {}).items() if v is not None}
    if sample == "annual-maxima":
        table = extremal.read_annual_maxima(path, units=reader.get("units", "m"), several_per_year="none")
        if table is not None:
            return table
    return quality.check_record(records.read_record(path, **reader)).level_m
