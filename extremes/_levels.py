"""Input checks and time helpers shared by the residual, skew-surge, interaction and mean-sea-level modules.

Levels in metres, times tz-aware UTC (naive times raise :class:`ValueError`). A *decimal year* is the calendar
year plus the elapsed fraction of that calendar year, the year being 365 or 366 days of 86 400 s (UTC, leap
seconds ignored).
"""
from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from extremes.errors import DataError, DatumError
from extremes.timebase import decimal_year, level_series, sampling_interval, utc_index
from extremes.timebase import ns_to_utc as _ns_to_utc
from extremes.timebase import year_start_ns as _year_start_ns

__all__ = ["decimal_year", "_ns_to_utc", "_year_start_ns"]

_NS_PER_HOUR = 3_600_000_000_000


def _utc_index(index: Any, name: str) -> pd.DatetimeIndex:
    if not isinstance(index, pd.DatetimeIndex):
        raise DataError(f"{name} must have a DatetimeIndex; got {type(index).__name__}")
    return utc_index(index, name=name)


def _check_level_series(level_m: Any, name: str = "level_m") -> pd.Series:
    """Float series on a sorted, unique, tz-aware UTC index (a converted copy)."""
    return level_series(level_m, name=name)


def _times(values: Any, name: str) -> pd.DatetimeIndex:
    return utc_index(values, name=name)


def _era_step(times_ns: np.ndarray, positions: np.ndarray, eras: pd.DataFrame, default: int) -> np.ndarray:
    """Sampling interval [ns] of the era of each sample ``times_ns[positions]`` (``default`` with one era)."""
    if len(eras) <= 1:
        return np.full(positions.shape, default, dtype=np.int64)
    era_start = pd.DatetimeIndex(eras["start"]).as_unit("ns").asi8
    era_dt = pd.TimedeltaIndex(eras["interval"]).as_unit("ns").asi8
    which = np.clip(np.searchsorted(era_start, times_ns[positions], side="right") - 1, 0, len(era_start) - 1)
    return era_dt[which]


def _sampling_interval_ns(index: pd.DatetimeIndex) -> int:
    """Most common positive spacing of the index [ns]."""
    return int(sampling_interval(index).value)


def _datum_of(obj: Any) -> str | None:
    datum = getattr(obj, "datum", None)
    if datum is None and hasattr(obj, "attrs"):
        datum = obj.attrs.get("datum")
    if datum in (None, "", "unspecified"):
        return None
    return str(datum)


def _check_same_datum(level_m: pd.Series, model: Any) -> None:
    a, b = _datum_of(level_m), _datum_of(model)
    if a is not None and b is not None and a != b:
        raise DatumError(f"level_m is on datum {a!r} but the tide model on datum {b!r}; expected the same datum")
