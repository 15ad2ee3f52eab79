"""Time helpers shared by every stage: UTC indexes, level series, sampling intervals and decimal years.

One rule everywhere (STYLE.md sec. 3): times are tz-aware UTC; naive times are refused with
:class:`~extremes.errors.DataError` (a :class:`ValueError`); a level series is sorted into time order and
must not repeat a time stamp (removing duplicates is quality control's job, and it counts them).

A *decimal year* is the calendar year plus the elapsed fraction of that calendar year (365 or 366 days of
86 400 s, UTC, leap seconds ignored); a rate "per year" is per mean calendar year
(:data:`~extremes.constants.DAYS_PER_YEAR` days).
"""
from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from extremes.constants import DAYS_PER_YEAR
from extremes.errors import DataError, InputTypeError

__all__ = [
    "utc_index", "level_series", "sampling_interval", "decimal_year", "timestamp_of_decimal_year",
    "valid_years", "year_start_ns", "ns_to_utc",
]


def utc_index(times: Any, *, name: str = "times") -> pd.DatetimeIndex:
    """``times`` as a tz-aware UTC :class:`pandas.DatetimeIndex` in nanoseconds.

    Parameters
    ----------
    times : array-like of datetime, pandas.DatetimeIndex or pandas.Series
        Tz-aware times (any zone; converted to UTC). A level series gives its index.
    name : str, keyword-only
        Name of the input, for messages.

    Raises
    ------
    DataError
        If the times are naive or cannot be read as times.

    Examples
    --------
    >>> utc_index(["2020-01-01T10:00+10:00"]).strftime("%Y-%m-%d %H:%M %Z").tolist()
    ['2020-01-01 00:00 UTC']
    """
    if isinstance(times, pd.Series) and not pd.api.types.is_datetime64_any_dtype(times.dtype):
        times = times.index
    if isinstance(times, pd.Timestamp):
        times = [times]
    try:
        index = pd.DatetimeIndex(times)
    except (TypeError, ValueError) as err:
        raise DataError(f"{name}: expected tz-aware UTC times, got {type(times).__name__} ({err})") from None
    if index.tz is None:
        raise DataError(f"{name}: naive time stamps are refused; expected tz-aware UTC times "
                        "(localise or convert them first)")
    return index.tz_convert("UTC").as_unit("ns")


def level_series(values: Any, *, name: str = "level_m") -> pd.Series:
    """A float copy of a level series on a sorted, unique, tz-aware UTC index.

    Parameters
    ----------
    values : pandas.Series
        Levels [m] (NaN for missing) on a DatetimeIndex.
    name : str, keyword-only
        Name of the input, for messages.

    Returns
    -------
    pandas.Series
        Float values in time order, index named ``time``, ``attrs`` (units, datum) kept. [m]

    Raises
    ------
    InputTypeError
        If ``values`` is not a Series (a :class:`DataError` and a :class:`TypeError`).
    DataError
        If the times are not tz-aware, the values not numeric, or a time stamp repeats.
    """
    if not isinstance(values, pd.Series):
        raise InputTypeError(f"{name} must be a pandas Series of levels indexed by UTC times; "
                        f"got {type(values).__name__}")
    if not isinstance(values.index, pd.DatetimeIndex):
        raise DataError(f"{name} must have a DatetimeIndex; got {type(values.index).__name__}")
    index = utc_index(values.index, name=name)
    try:
        data = np.asarray(values.to_numpy(dtype=float, na_value=np.nan), dtype=float)
    except (TypeError, ValueError) as err:
        raise DataError(f"{name}: expected numeric levels [m] ({err})") from None
    out = pd.Series(data, index=index.rename("time"), name=values.name)
    if not out.index.is_monotonic_increasing:
        out = out.sort_index(kind="stable")
    if out.index.has_duplicates:
        n = int(out.index.duplicated().sum())
        raise DataError(f"{name} has {n} duplicated time stamps; expected unique times "
                        "(quality control removes and counts them)")
    out.attrs = dict(values.attrs)
    return out


def sampling_interval(times: Any) -> pd.Timedelta:
    """The most common positive spacing of sorted times (the sampling interval).

    Raises
    ------
    DataError
        If fewer than two distinct times are given.

    Examples
    --------
    >>> t = pd.date_range("2020-01-01", periods=5, freq="6min", tz="UTC")
    >>> sampling_interval(t.delete(2))
    Timedelta('0 days 00:06:00')
    """
    ns = np.sort(utc_index(times).asi8)
    diffs = np.diff(ns)
    diffs = diffs[diffs > 0]
    if diffs.size == 0:
        raise DataError("at least two distinct time stamps are needed to find the sampling interval")
    values, counts = np.unique(diffs, return_counts=True)
    return pd.Timedelta(int(values[np.argmax(counts)]), unit="ns")


def year_start_ns(years) -> np.ndarray:
    """UTC 1 January 00:00 of each calendar year [ns since 1970]."""
    return ((np.asarray(years, dtype=np.int64) - 1970).astype("datetime64[Y]")
            .astype("datetime64[ns]").astype(np.int64))


def ns_to_utc(ns) -> pd.DatetimeIndex:
    """UTC times of nanoseconds since 1970."""
    return pd.to_datetime(np.asarray(ns, dtype=np.int64), unit="ns", utc=True)


def decimal_year(times: Any) -> np.ndarray:
    """Decimal years of tz-aware times: calendar year plus the elapsed fraction of that year. [years]

    Raises
    ------
    DataError
        If the times are naive.

    Examples
    --------
    >>> float(decimal_year(["2021-07-02T12:00Z"])[0])
    2021.5
    """
    index = utc_index(times)
    years = index.year.to_numpy()
    start = year_start_ns(years)
    end = year_start_ns(years + 1)
    return years + (index.asi8 - start) / (end - start)


def timestamp_of_decimal_year(year: float) -> pd.Timestamp:
    """UTC time of decimal year ``year`` (the inverse of :func:`decimal_year`).

    Examples
    --------
    >>> timestamp_of_decimal_year(2021.5)
    Timestamp('2021-07-02 12:00:00+0000', tz='UTC')
    """
    whole = int(np.floor(year))
    start = pd.Timestamp(year=whole, month=1, day=1, tz="UTC")
    end = pd.Timestamp(year=whole + 1, month=1, day=1, tz="UTC")
    return start + (end - start) * (float(year) - whole)


def valid_years(series: pd.Series, *, interval: pd.Timedelta | None = None) -> float:
    """Time covered by the valid samples of a series [years]: valid samples x interval / mean year.

    Parameters
    ----------
    series : pandas.Series
        Levels on a UTC DatetimeIndex, NaN where missing.
    interval : pandas.Timedelta, optional
        Sampling interval; default :func:`sampling_interval` of the index.
    """
    step = sampling_interval(series.index) if interval is None else pd.Timedelta(interval)
    return float(int(series.notna().sum()) * step / pd.Timedelta(days=DAYS_PER_YEAR))
