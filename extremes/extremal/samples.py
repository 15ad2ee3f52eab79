r"""Extreme-value samples from a level series: annual maxima, r-largest events per year, peaks over threshold.

Inputs are ``pandas.Series`` of levels [m] on a tz-aware UTC ``DatetimeIndex`` (the regular grid with NaN gaps
that quality control produces). Event rates are per *observed* year: the valid-data time divided by
365.2425 days, not the calendar span, so gaps do not dilute the rate.

References
----------
.. [1] S. Coles, *An Introduction to Statistical Modeling of Extreme Values*. London, U.K.: Springer, 2001,
       secs. 3.5 and 5.3, doi: 10.1007/978-1-4471-3675-0.
"""
from __future__ import annotations

import logging
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from extremes.constants import DAYS_PER_YEAR, UNIT_TO_METRES
from extremes.errors import DataError
from extremes.timebase import level_series, sampling_interval

logger = logging.getLogger(__name__)

#: how a sample of extremes is drawn from a series (the ``--sample`` choices of ``extremes fit``)
SAMPLE_METHODS = ("annual-maxima", "peaks-over-threshold", "r-largest")


def _check_series(series, *, name="level_m"):
    values = level_series(series, name=name)
    if values.notna().sum() == 0:
        raise DataError(f"{name} holds no valid (non-NaN) values")
    return values


def _interval(index):
    return sampling_interval(index)


def _represented_ns(index):
    """Time each sample represents [ns]: its sampling era's interval (:mod:`extremes.sampling`)."""
    from extremes.sampling import sample_intervals_ns

    return sample_intervals_ns(index).astype(float)


def observed_years(series):
    """Valid-data time of a series in years: the sum over valid samples of their sampling era's interval,
    over 365.2425 d."""
    s = _check_series(series)
    _interval(s.index)  # at least two stamps
    return float(_represented_ns(s.index)[s.notna().to_numpy()].sum() / pd.Timedelta(days=DAYS_PER_YEAR).value)


def _year_labels(index, start_month):
    """Year label of each stamp: the calendar year in which its (water) year starts."""
    return np.asarray(index.year - (index.month < start_month).astype(int))


def _year_bounds(year, start_month):
    start = pd.Timestamp(year=int(year), month=start_month, day=1, tz="UTC")
    return start, start + pd.DateOffset(years=1)


@dataclass(frozen=True, eq=False)
class AnnualMaxima:
    """Annual maxima of a level series.

    Attributes
    ----------
    maxima : pandas.Series
        Maximum per retained year, indexed by year label (the calendar year in which the year starts). [m]
    times : pandas.Series
        UTC time of each maximum.
    coverage : pandas.Series
        Fraction of the year's expected samples that hold a valid value, for every year seen. [-]
    dropped : pandas.DataFrame
        Years left out: ``year``, ``coverage``, ``reason``.
    min_coverage : float
        Coverage rule applied. [-]
    water_year_start_month : int
        First month of the year (1 = calendar year).
    season_months : tuple of int
        Calendar months of the storm season whose coverage was checked (empty: no season rule).
    min_season_coverage : float or None
        Storm-season coverage rule applied. [-]
    season_coverage : pandas.Series or None
        Share of each year's storm-season samples that hold a valid value. [-]
    """

    maxima: pd.Series
    times: pd.Series = field(repr=False)
    coverage: pd.Series = field(repr=False)
    dropped: pd.DataFrame = field(repr=False)
    min_coverage: float = 0.9
    water_year_start_month: int = 1
    season_months: tuple = ()
    min_season_coverage: float | None = None
    season_coverage: pd.Series | None = field(default=None, repr=False)

    def __repr__(self):
        return (f"AnnualMaxima(n={len(self.maxima)}, dropped={len(self.dropped)}, "
                f"min_coverage={self.min_coverage:g}, water_year_start_month={self.water_year_start_month})")

    def __len__(self):
        return len(self.maxima)

    def to_dict(self):
        return {
            "year_definition": {"start_month": self.water_year_start_month, "label": "year in which it starts"},
            "min_coverage": self.min_coverage,
            "storm_season": {"months": list(self.season_months), "min_coverage": self.min_season_coverage},
            "maxima": [{"year": int(y), "level_m": float(v), "time": self.times[y].isoformat()}
                       for y, v in self.maxima.items()],
            "dropped": [{"year": int(r.year), "coverage": float(r.coverage), "reason": r.reason}
                        for r in self.dropped.itertuples()],
        }


def _coverage_by_year(s, start_month):
    _interval(s.index)  # at least two stamps
    # each valid sample counts the interval of its own sampling era, so hourly and 6-minute years compare
    represented = np.where(s.notna().to_numpy(), _represented_ns(s.index), 0.0)
    labels = _year_labels(s.index, start_month)
    years = np.arange(labels.min(), labels.max() + 1)
    valid = pd.Series(represented, index=labels).groupby(level=0).sum()
    cov = {}
    for y in years:
        start, end = _year_bounds(y, start_month)
        cov[int(y)] = float(valid.get(y, 0.0)) / float((end - start).value)
    return pd.Series(cov, name="coverage"), labels


def annual_maxima(level_m, *, min_coverage=0.9, water_year_start_month=1, season_months=None,
                  min_season_coverage=None):
    """Annual maxima by calendar year or by a water year starting in a chosen month.

    Parameters
    ----------
    level_m : pandas.Series
        Levels on a tz-aware UTC DatetimeIndex (regular grid, NaN gaps). [m]
    min_coverage : float
        Keep a year only if at least this fraction of its expected samples (year length / sampling interval)
        hold valid values. Default 0.9. [-]
    water_year_start_month : int
        First month of each year, 1-12 (1 = calendar year). Years are labelled by the year in which they start.
    season_months : sequence of int, optional
        Calendar months of the storm season (e.g. from :func:`extremes.season.storm_season`). A year then also
        needs its storm-season months at least ``min_season_coverage`` complete: a year that misses weeks of
        its storm season has a maximum biased low even when the year is 90 % complete (METHODS sec. 7, 14).
    min_season_coverage : float, optional
        Storm-season coverage rule; default :data:`extremes.season.MIN_SEASON_COVERAGE` (0.85). [-]

    Returns
    -------
    AnnualMaxima

    Raises
    ------
    DataError
        Naive times, no valid values, or no year meeting the coverage rule.
    """
    if not (isinstance(water_year_start_month, (int, np.integer)) and 1 <= water_year_start_month <= 12):
        raise ValueError(f"water_year_start_month must be an integer 1-12; got {water_year_start_month!r}")
    if not (0 <= min_coverage <= 1):
        raise ValueError(f"min_coverage must be between 0 and 1; got {min_coverage!r}")
    s = _check_series(level_m)
    coverage, labels = _coverage_by_year(s, water_year_start_month)
    season_cov = None
    if season_months:
        from extremes.season import MIN_SEASON_COVERAGE, season_coverage_by_year

        min_season_coverage = MIN_SEASON_COVERAGE if min_season_coverage is None else float(min_season_coverage)
        if not 0 <= min_season_coverage <= 1:
            raise ValueError(f"min_season_coverage must be between 0 and 1; got {min_season_coverage!r}")
        season_cov = season_coverage_by_year(s, season_months, water_year_start_month=water_year_start_month)
    maxima, times, dropped = {}, {}, []
    for y, c in coverage.items():
        if c < min_coverage:
            reason = "no data" if c == 0 else f"coverage {c:.3f} < {min_coverage:g}"
            dropped.append((y, c, reason))
            continue
        if season_cov is not None and season_cov.get(y, 0.0) < min_season_coverage:
            dropped.append((y, c, f"storm-season coverage {season_cov.get(y, 0.0):.3f} < {min_season_coverage:g} "
                                  f"(months {', '.join(str(m) for m in sorted(season_months))})"))
            continue
        pos = np.flatnonzero(labels == y)
        vals = s.to_numpy()[pos]
        k = int(np.nanargmax(vals))
        maxima[y] = float(vals[k])
        times[y] = s.index[pos[k]]
    if not maxima:
        raise DataError(f"no year has coverage >= {min_coverage:g} (best {coverage.max():.3f})"
                        + (f" and storm-season coverage >= {min_season_coverage:g}" if season_cov is not None else "")
                        + "; lower min_coverage or supply a longer record")
    dropped_df = pd.DataFrame(dropped, columns=["year", "coverage", "reason"])
    ser = pd.Series(maxima, name="annual_max_m", dtype=float)
    ser.index.name = "year"
    ser.attrs.update({"units": "m", "datum": s.attrs.get("datum", level_m.attrs.get("datum", "unspecified"))})
    logger.info("annual maxima: %d years kept, %d dropped", len(ser), len(dropped_df))
    return AnnualMaxima(ser, pd.Series(times), coverage, dropped_df, float(min_coverage), int(water_year_start_month),
                        tuple(sorted(int(m) for m in season_months or ())),
                        min_season_coverage if season_months else None, season_cov)


# ----------------------------------------------------------------------------------------------------------
# peaks over threshold
# ----------------------------------------------------------------------------------------------------------
@dataclass(frozen=True, eq=False)
class Peaks:
    """Declustered peaks over a threshold.

    Attributes
    ----------
    peaks : pandas.Series
        Cluster maxima, indexed by UTC time of the maximum. [m]
    threshold : float
        Threshold. [m]
    rate_per_year : float
        Peaks per observed year. [1/year]
    years : float
        Observed (valid-data) years. [years]
    n_exceedances : int
        Samples above the threshold (before declustering).
    cluster_sizes : numpy.ndarray
        Exceedances per cluster.
    min_separation_hours, run_length :
        Declustering rule used. [h], [samples]
    """

    peaks: pd.Series
    threshold: float
    rate_per_year: float
    years: float
    n_exceedances: int = field(repr=False)
    cluster_sizes: np.ndarray = field(repr=False)
    min_separation_hours: float | None = field(default=72.0, repr=False)
    run_length: int | None = field(default=None, repr=False)

    def __repr__(self):
        return (f"Peaks(n={len(self.peaks)}, threshold={self.threshold:.4g} m, "
                f"rate={self.rate_per_year:.3g}/yr, years={self.years:.3g})")

    def __len__(self):
        return len(self.peaks)

    def to_dict(self):
        return {"threshold_m": self.threshold, "rate_per_year": self.rate_per_year, "years": self.years,
                "n_peaks": len(self.peaks), "n_exceedances": self.n_exceedances,
                "min_separation_hours": self.min_separation_hours, "run_length": self.run_length}


def _clusters(values, times_ns, threshold, min_separation_hours, run_length):
    """Start index (into the exceedance list) of each cluster, and the exceedance positions."""
    exc = np.flatnonzero(values > threshold)
    if exc.size == 0:
        return exc, np.zeros(0, int)
    new = np.ones(exc.size, bool)
    if exc.size > 1:
        sep = np.ones(exc.size - 1, bool)
        if min_separation_hours is not None:
            sep &= np.diff(times_ns[exc]) >= min_separation_hours * 3.6e12
        if run_length is not None:
            sep &= (np.diff(exc) - 1) >= run_length
        new[1:] = sep
    return exc, np.flatnonzero(new)


def peaks_over_threshold(series, *, threshold, min_separation_hours=72.0, run_length=None):
    """Declustered peaks over a threshold (runs declustering [1]_ sec. 5.3.2).

    Exceedances (values > threshold) belong to one cluster until the next exceedance is at least
    ``min_separation_hours`` later and/or at least ``run_length`` samples (valid or missing) lie between them;
    when both are given both must hold. Each cluster keeps its maximum.

    Parameters
    ----------
    series : pandas.Series
        Levels or residuals on a tz-aware UTC DatetimeIndex. [m]
    threshold : float
        Threshold. [m]
    min_separation_hours : float or None
        Minimum time between the last exceedance of one cluster and the first of the next. [h]
    run_length : int or None
        Minimum number of samples between clusters. [samples]

    Returns
    -------
    Peaks
        With the rate per observed year.

    Raises
    ------
    DataError
        Naive times or no valid values.
    """
    if min_separation_hours is None and run_length is None:
        raise ValueError("give min_separation_hours [h] and/or run_length [samples] to decluster")
    if min_separation_hours is not None and not min_separation_hours >= 0:
        raise ValueError(f"min_separation_hours must be >= 0 [h]; got {min_separation_hours!r}")
    if run_length is not None and not (isinstance(run_length, (int, np.integer)) and run_length >= 1):
        raise ValueError(f"run_length must be a positive integer [samples]; got {run_length!r}")
    if threshold is None or not np.isfinite(threshold):
        raise ValueError(f"threshold must be a finite level [m]; got {threshold!r}")
    s = _check_series(series, name="series")
    values = s.to_numpy()
    times = s.index.as_unit("ns").asi8
    with np.errstate(invalid="ignore"):
        exc, starts = _clusters(values, times, threshold, min_separation_hours, run_length)
    years = s.notna().sum() * _interval(s.index) / pd.Timedelta(days=DAYS_PER_YEAR)
    if exc.size == 0:
        peaks = pd.Series([], dtype=float, index=pd.DatetimeIndex([], tz="UTC", name="time"), name="peak_m")
        sizes = np.zeros(0, int)
    else:
        ends = np.append(starts[1:], exc.size)
        vals = values[exc]
        # position of each cluster's maximum: reduceat on values, then the first position reaching it
        cmax = np.maximum.reduceat(vals, starts)
        cluster_id = np.repeat(np.arange(starts.size), ends - starts)
        is_max = vals == cmax[cluster_id]
        first = np.full(starts.size, -1)
        for_pos = np.flatnonzero(is_max)
        _, first_idx = np.unique(cluster_id[for_pos], return_index=True)
        first = exc[for_pos[first_idx]]
        peaks = pd.Series(cmax, index=s.index[first], name="peak_m")
        sizes = ends - starts
    peaks.attrs.update({"units": "m", "threshold_m": float(threshold)})
    rate = len(peaks) / years if years > 0 else np.nan
    logger.info("POT above %.4g m: %d exceedances, %d clusters, %.3g per observed year", threshold, exc.size,
                len(peaks), rate)
    return Peaks(peaks, float(threshold), float(rate), float(years), int(exc.size), sizes,
                 None if min_separation_hours is None else float(min_separation_hours), run_length)


# ----------------------------------------------------------------------------------------------------------
# r-largest
# ----------------------------------------------------------------------------------------------------------
@dataclass(frozen=True, eq=False)
class RLargest:
    """The r largest independent events of each year.

    Attributes
    ----------
    values : pandas.DataFrame
        Index year, columns ``r1`` ... ``r{r}`` in decreasing order; NaN where a year had fewer events. [m]
    times : pandas.DataFrame
        UTC time of each event.
    r : int
    dropped : pandas.DataFrame
        Years left out by the coverage rule: ``year``, ``coverage``, ``reason``.
    """

    values: pd.DataFrame
    times: pd.DataFrame = field(repr=False)
    r: int = 5
    dropped: pd.DataFrame = field(default=None, repr=False)
    min_separation_hours: float = field(default=72.0, repr=False)

    def __repr__(self):
        return f"RLargest(years={len(self.values)}, r={self.r}, min_separation_hours={self.min_separation_hours:g})"

    def to_dict(self):
        return {"r": self.r, "min_separation_hours": self.min_separation_hours,
                "values": {int(y): [None if np.isnan(v) else float(v) for v in row]
                           for y, row in zip(self.values.index, self.values.to_numpy())}}


def r_largest(level_m, *, r=5, min_separation_hours=72.0, min_coverage=0.9, water_year_start_month=1,
              season_months=None, min_season_coverage=None):
    """The r largest independent events of each year (declustered by a minimum separation) [1]_ sec. 3.5.

    Each year's largest value is taken, every value within ``min_separation_hours`` of it is removed, and so on
    r times. Years failing the coverage rule of :func:`annual_maxima` are left out.

    Parameters
    ----------
    level_m : pandas.Series
        Levels on a tz-aware UTC DatetimeIndex. [m]
    r : int
        Events per year (use r <= 5-10 and check the stability of the fit against r).
    min_separation_hours : float
        Minimum time between two events of the same year. [h]
    min_coverage, water_year_start_month, season_months, min_season_coverage
        Year rules of :func:`annual_maxima`.

    Returns
    -------
    RLargest
    """
    if not (isinstance(r, (int, np.integer)) and r >= 1):
        raise ValueError(f"r must be a positive integer; got {r!r}")
    if not min_separation_hours >= 0:
        raise ValueError(f"min_separation_hours must be >= 0 [h]; got {min_separation_hours!r}")
    am = annual_maxima(level_m, min_coverage=min_coverage, water_year_start_month=water_year_start_month,
                       season_months=season_months, min_season_coverage=min_season_coverage)
    s = _check_series(level_m)
    labels = _year_labels(s.index, water_year_start_month)
    vals_all = s.to_numpy()
    t_all = s.index.as_unit("ns").asi8
    sep = min_separation_hours * 3.6e12
    rows, trows = [], []
    for y in am.maxima.index:
        pos = np.flatnonzero(labels == y)
        v = np.where(np.isnan(vals_all[pos]), -np.inf, vals_all[pos])
        t = t_all[pos]
        out_v, out_t = [], []
        for _ in range(r):
            k = int(np.argmax(v))
            if not np.isfinite(v[k]):
                break
            out_v.append(v[k])
            out_t.append(t[k])
            # remove everything closer than the separation (events exactly ``sep`` apart stay eligible)
            lo = np.searchsorted(t, t[k] - sep, side="right")
            hi = np.searchsorted(t, t[k] + sep, side="left")
            v[min(lo, k):max(hi, k + 1)] = -np.inf
        rows.append(out_v + [np.nan] * (r - len(out_v)))
        trows.append([pd.Timestamp(x, tz="UTC") for x in out_t] + [pd.NaT] * (r - len(out_t)))
    cols = [f"r{i}" for i in range(1, r + 1)]
    values = pd.DataFrame(rows, index=am.maxima.index, columns=cols)
    values.attrs["units"] = "m"
    times = pd.DataFrame(trows, index=am.maxima.index, columns=cols)
    return RLargest(values, times, int(r), am.dropped, float(min_separation_hours))


_UNIT_FACTORS = UNIT_TO_METRES


def read_annual_maxima(path, *, units="m", several_per_year="raise"):
    """Read a two-column table of annual maxima: year (or a time stamp) and value; header optional.

    Parameters
    ----------
    path : str or pathlib.Path
        Delimited text (comma, semicolon, tab or whitespace). Blank lines and lines starting with ``#`` are
        skipped.
    units : {"m", "cm", "mm", "ft"}
        Units of the values; returned in metres.
    several_per_year : {"raise", "none"}
        What to do when a year appears on more than one row (the file is a time series, not annual maxima):
        raise :class:`DataError`, or return None so that the caller reads it as a record.

    Returns
    -------
    pandas.Series or None
        Maxima [m] indexed by year (int), sorted.

    Raises
    ------
    DataError
        Unreadable file, not two columns, a bad number or year (the message names the line).
    """
    from pathlib import Path

    if units not in _UNIT_FACTORS:
        raise ValueError(f"units must be one of {sorted(_UNIT_FACTORS)}; got {units!r}")
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8-sig")
    except (OSError, UnicodeDecodeError) as err:
        raise DataError(f"{path}: cannot read the file ({err})") from err
    rows = []
    for lineno, line in enumerate(text.splitlines(), start=1):
        line = line.strip()
        if not line or line.startswith("#"):
            continue
        for sep in (",", ";", "\t"):
            if sep in line:
                parts = [p.strip().strip('"').strip("'") for p in line.split(sep)]
                break
        else:
            parts = line.split()
        rows.append((lineno, parts))
    if not rows:
        raise DataError(f"{path}: no data rows; expected two columns (year or time, value)")
    years, values = [], []
    for k, (lineno, parts) in enumerate(rows):
        if len(parts) != 2:
            raise DataError(f"{path}, line {lineno}: expected 2 columns (year or time, value); got {len(parts)}")
        first, second = parts
        try:
            value = float(second)
        except ValueError:
            if k == 0:
                continue  # header row
            raise DataError(f"{path}, line {lineno}: value {second!r} is not a number") from None
        try:
            year = int(float(first)) if first.replace(".", "", 1).lstrip("-").isdigit() else None
            if year is None:
                year = pd.Timestamp(first).year
        except (ValueError, TypeError):
            raise DataError(f"{path}, line {lineno}: {first!r} is neither a year nor a time stamp") from None
        if not np.isfinite(value):
            raise DataError(f"{path}, line {lineno}: value {second!r} is not a finite number")
        years.append(year)
        values.append(value * _UNIT_FACTORS[units])
    if not values:
        raise DataError(f"{path}: no data rows; expected two columns (year or time, value)")
    ser = pd.Series(values, index=pd.Index(years, name="year"), name="annual_max_m", dtype=float)
    if ser.index.has_duplicates:
        if several_per_year == "none":
            return None
        dup = int(ser.index[ser.index.duplicated()][0])
        raise DataError(f"{path}: year {dup} appears on more than one row; expected one maximum per year")
    ser = ser.sort_index()
    ser.attrs["units"] = "m"
    return ser


__all__ = ["SAMPLE_METHODS", "AnnualMaxima", "Peaks", "RLargest", "annual_maxima", "peaks_over_threshold",
           "r_largest", "observed_years", "read_annual_maxima"]
