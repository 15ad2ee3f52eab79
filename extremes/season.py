r"""Storm season and seasonal coverage: which months matter, and how well the record covers them.

A year whose storm season is half missing has a maximum biased low, even when the year as a whole is 90 %
complete; a record whose outages fall in winter under-represents winter surges in the joint methods. Rules
(METHODS sec. 14, common practice [CP]; thresholds this package's choice):

* **Storm season** from the record's own monthly surge climate: for each calendar month, the mean over the
  years of that month's maximum skew surge (or residual); the season is the months whose mean exceeds the
  mean of the twelve monthly means. It needs at least ``min_years`` years with data in each month; months
  without enough years are left out of the climate.
* **Annual maxima** (:func:`extremes.extremal.samples.annual_maxima` with ``season_months``): a year counts
  only when its storm-season months hold at least ``min_season_coverage`` (default 0.85, within the 80-90 %
  of METHODS sec. 14) of their expected samples, besides the whole-year rule.
* **Joint methods**: the coverage of a calendar month is the share of its expected tides (days of that month
  in the record's span times tides per day) that have a skew surge. When coverage is uneven (the least-covered
  month below ``uneven_ratio`` = 0.9 of the best-covered one), each skew surge is weighted by the inverse of
  its month's coverage, normalised to a mean weight of 1, so that every month enters the surge distribution
  in proportion to its share of the year's tides, not to how much of it the gauge happened to record.

References
----------
.. [1] C. Batstone et al., "A UK best-practice approach for extreme sea-level analysis along complex
   topographic coastlines," *Ocean Eng.*, vol. 71, pp. 28-39, 2013, doi:10.1016/j.oceaneng.2013.02.003
   (seasonal convolution by month).
.. [2] S. Coles, *An Introduction to Statistical Modeling of Extreme Values*. London: Springer, 2001,
   sec. 6.2 (seasonal non-stationarity of extremes).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from extremes.constants import DAYS_PER_YEAR
from extremes.errors import DataError

__all__ = ["StormSeason", "storm_season", "storm_season_or_none", "monthly_coverage", "month_weights",
           "season_coverage_by_year", "MIN_SEASON_COVERAGE", "UNEVEN_RATIO"]

#: least share of a year's storm-season samples for its annual maximum to count (METHODS sec. 14: 80-90 %)
MIN_SEASON_COVERAGE = 0.85
#: months are weighted when the least-covered month has less than this share of the best-covered month's coverage
UNEVEN_RATIO = 0.9
_DAYS_PER_YEAR = DAYS_PER_YEAR


@dataclass(frozen=True, repr=False)
class StormSeason:
    """The storm season of a record.

    Attributes
    ----------
    months : tuple of int
        Calendar months (1-12) of the storm season.
    monthly_mean_max_m : dict
        ``{month: mean over the years of the month's maximum surge}`` for the months with enough years. [m]
    threshold_m : float
        Mean of the monthly means; months above it form the season. [m]
    years_per_month : dict
        ``{month: number of years with data in that month}``.
    quantity : str
        What the climate was computed from (``"skew surge"`` or ``"non-tidal residual"``).
    rule : str
        The rule in words.
    """

    months: tuple
    monthly_mean_max_m: dict
    threshold_m: float
    years_per_month: dict
    quantity: str
    rule: str

    def __repr__(self) -> str:
        return f"StormSeason(months={self.months}, threshold_m={self.threshold_m:.3f})"

    def to_dict(self) -> dict:
        """JSON-ready dictionary."""
        return {"months": list(self.months), "threshold_m": float(self.threshold_m),
                "monthly_mean_max_m": {str(k): float(v) for k, v in self.monthly_mean_max_m.items()},
                "years_per_month": {str(k): int(v) for k, v in self.years_per_month.items()},
                "quantity": self.quantity, "rule": self.rule}


def _utc_series(values, name):
    if not isinstance(values, pd.Series) or not isinstance(values.index, pd.DatetimeIndex):
        raise DataError(f"{name} must be a pandas Series on a UTC DatetimeIndex; got {type(values).__name__}")
    if values.index.tz is None:
        raise ValueError(f"{name} has naive time stamps; expected tz-aware UTC times")
    out = pd.Series(values.to_numpy(dtype=float), index=values.index.tz_convert("UTC"))
    return out[np.isfinite(out.to_numpy())]


def storm_season(surge_m, *, quantity="skew surge", min_years=2) -> StormSeason:
    """The storm season from the record's own monthly surge climate (module notes).

    Parameters
    ----------
    surge_m : pandas.Series
        Skew surges (or non-tidal residuals) on a UTC DatetimeIndex. [m]
    quantity : str, keyword-only
        Name of the quantity, for the record.
    min_years : int, keyword-only
        Fewest years with data for a month to enter the climate.

    Returns
    -------
    StormSeason

    Raises
    ------
    DataError
        If fewer than 6 calendar months have ``min_years`` years of data.
    """
    s = _utc_series(surge_m, "surge_m")
    frame = pd.DataFrame({"year": s.index.year, "month": s.index.month, "v": s.to_numpy()})
    monthly_max = frame.groupby(["year", "month"])["v"].max().reset_index()
    by_month = monthly_max.groupby("month")["v"].agg(["mean", "size"])
    enough = by_month[by_month["size"] >= min_years]
    if len(enough) < 6:
        raise DataError(f"surge_m covers {len(enough)} calendar months with >= {min_years} years of data; the storm "
                        "season needs at least 6")
    threshold = float(enough["mean"].mean())
    months = tuple(int(m) for m in enough.index[enough["mean"] > threshold])
    rule = (f"storm season: calendar months whose mean monthly maximum {quantity} exceeds the mean of the "
            f"monthly means ({threshold:.3f} m), from months with >= {min_years} years of data")
    return StormSeason(months=months, monthly_mean_max_m={int(m): float(v) for m, v in enough["mean"].items()},
                       threshold_m=threshold, years_per_month={int(m): int(n) for m, n in by_month["size"].items()},
                       quantity=str(quantity), rule=rule)


def monthly_coverage(times, *, tides_per_year, start=None, end=None) -> pd.Series:
    """Share of each calendar month's expected tides that have a value.

    Parameters
    ----------
    times : array-like of datetime
        UTC times of the skew surges present.
    tides_per_year : float, keyword-only
        Predicted high waters per year (705.75 for a semidiurnal tide, METHODS sec. 6). [1/year]
    start, end : datetime-like, optional
        Span of the record (default the first and last time).

    Returns
    -------
    pandas.Series
        Coverage (0-1) indexed by month 1-12 (NaN for a month the span does not reach).
    """
    idx = pd.DatetimeIndex(times)
    if idx.tz is None:
        raise ValueError("times must be tz-aware UTC; got naive times")
    if idx.size == 0:
        raise DataError("times is empty; expected the times of the skew surges")
    idx = idx.tz_convert("UTC")
    start = idx.min() if start is None else pd.Timestamp(start)
    end = idx.max() if end is None else pd.Timestamp(end)
    days = pd.date_range(start.floor("D"), end.floor("D"), freq="D")  # whole days of the span (to within a day)
    expected_days = pd.Series(1.0, index=days.month).groupby(level=0).sum()
    expected = expected_days * float(tides_per_year) / _DAYS_PER_YEAR
    observed = pd.Series(1.0, index=idx.month).groupby(level=0).sum()
    cov = (observed.reindex(range(1, 13)).fillna(0.0) / expected.reindex(range(1, 13))).clip(upper=1.0)
    cov.index.name = "month"
    return cov.rename("coverage")


def month_weights(times, coverage, *, uneven_ratio=UNEVEN_RATIO):
    """Inverse-coverage weights of values by calendar month, mean 1; ``None`` when coverage is even.

    Parameters
    ----------
    times : array-like of datetime
        UTC times of the values.
    coverage : pandas.Series
        Coverage by month (from :func:`monthly_coverage`).
    uneven_ratio : float, keyword-only
        Weights are returned when the least-covered month (among those with data) has less than this share of
        the best-covered month's coverage.

    Returns
    -------
    numpy.ndarray or None
        Weight of each value :math:`\\propto 1/c_m`, normalised to mean 1.
    """
    cov = coverage[coverage > 0].dropna()
    if cov.empty or cov.min() >= uneven_ratio * cov.max():
        return None
    months = np.asarray(pd.DatetimeIndex(times).month)
    w = 1.0 / coverage.reindex(months).to_numpy(dtype=float)
    return w / np.mean(w)


def season_coverage_by_year(level_m, season_months, *, water_year_start_month=1) -> pd.Series:
    """Share of the storm-season samples of each (water) year that hold a valid value.

    Parameters
    ----------
    level_m : pandas.Series
        Levels on a regular UTC grid with NaN gaps (rows may be absent). [m]
    season_months : sequence of int
        Calendar months of the storm season.
    water_year_start_month : int, keyword-only
        First month of each year (1 = calendar year); a year is labelled by the year in which it starts.

    Returns
    -------
    pandas.Series
        Coverage (0-1) indexed by year label: the time represented by the valid samples of the season months
        (each sample its sampling era's interval, :mod:`extremes.sampling`) over the season's length.
    """
    if not isinstance(level_m, pd.Series) or not isinstance(level_m.index, pd.DatetimeIndex):
        raise DataError("level_m must be a pandas Series on a UTC DatetimeIndex")
    months = sorted({int(m) for m in season_months})
    if not months or months[0] < 1 or months[-1] > 12:
        raise DataError(f"season_months must be calendar months 1-12; got {list(season_months)!r}")
    from extremes.sampling import sample_intervals_ns

    idx = level_m.index.tz_convert("UTC")
    if idx.size < 2:
        raise DataError("level_m needs at least two time stamps to infer its sampling interval")
    # each valid sample counts the time it represents (its sampling era's interval), as the whole-year rule
    represented = np.where(np.isfinite(level_m.to_numpy(dtype=float)), sample_intervals_ns(idx).astype(float), 0.0)
    labels = np.asarray(idx.year - (idx.month < water_year_start_month).astype(int))
    in_season = np.isin(idx.month, months)
    valid = pd.Series(np.where(in_season, represented, 0.0), index=labels).groupby(level=0).sum()
    out = {}
    for year in range(int(labels.min()), int(labels.max()) + 1):
        expected_ns = 0.0
        for m in months:
            y = year + (1 if m < water_year_start_month else 0)
            a = pd.Timestamp(year=y, month=m, day=1, tz="UTC")
            expected_ns += ((a + pd.offsets.MonthBegin(1)) - a).value
        out[year] = min(1.0, float(valid.get(year, 0.0)) / expected_ns)
    return pd.Series(out, name="season_coverage", dtype=float)


def storm_season_or_none(skew, notes) -> StormSeason | None:
    """The storm season of a skew-surge table (``time``, ``skew_surge_m``), noted in ``notes``; None when the
    record is too short for a monthly climate (the annual-maxima season rule is then not applied, and said so)."""
    series = pd.Series(skew["skew_surge_m"].to_numpy(dtype=float), index=pd.DatetimeIndex(skew["time"]))
    try:
        season = storm_season(series)
    except DataError as err:
        notes.append(f"storm season not defined ({err}); annual maxima use the whole-year coverage rule only")
        return None
    notes.append(f"{season.rule}: months {', '.join(str(m) for m in season.months)}; a year's annual maximum "
                 f"counts only when these months are at least {MIN_SEASON_COVERAGE:.0%} complete")
    return season
