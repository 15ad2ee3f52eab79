r"""Future return levels: a present curve raised by an offset, and how rare each raised level is today (Hunter 2012)."""
from __future__ import annotations

import logging
import math

import numpy as np

from extremes.curves import ReturnLevelCurve
from extremes.sealevel.scenarios import parse_offsets

logger = logging.getLogger(__name__)


def _present_period(curve: ReturnLevelCurve, levels) -> np.ndarray:
    """Present return period of levels; NaN where the level lies outside the curve's range."""
    levels = np.asarray(levels, dtype=float)
    periods = curve.period_of_level(levels)
    finite = curve.level_m[np.isfinite(curve.level_m)]
    outside = (levels < finite.min()) | (levels > finite.max())
    return np.where(outside, np.nan, periods)


def present_return_period(curve: ReturnLevelCurve, level_m) -> np.ndarray:
    """Return period [years] today of levels ``level_m`` [m] (e.g. future return levels).

    NaN where a level lies outside the curve's range (rarer than its longest period, or more common than its
    shortest).
    """
    return _present_period(curve, level_m)


def sea_level_rise_rows(curve: ReturnLevelCurve, *, offsets_m, periods_years) -> list[dict]:
    """The ``sea_level_rise`` rows of ``results.json`` for one curve.

    Parameters
    ----------
    curve : ReturnLevelCurve
        Present-day curve (levels at the epoch ``curve.epoch_year``).
    offsets_m : iterable of float
        Sea-level-rise offsets. [m]
    periods_years : iterable of float
        Return periods. [years]

    Returns
    -------
    list of dict
        One row per offset and period: ``offset_m``, ``return_period_years``, ``level_m`` (future level
        = present level + offset [1]_), ``present_return_period_years_of_level`` (how rare that level is
        today; ``None`` beyond the curve's range).
    """
    offsets = parse_offsets(offsets_m)
    periods = np.asarray(list(periods_years), dtype=float)
    present = curve.level_at(periods)
    rows = []
    for offset in offsets:
        future = present + offset
        present_periods = _present_period(curve, future)
        for period, level, present_period in zip(periods, future, present_periods):
            rows.append({
                "offset_m": float(offset),
                "return_period_years": float(period),
                "level_m": float(level),
                "present_return_period_years_of_level":
                    None if not math.isfinite(present_period) else float(present_period),
            })
    return rows


def future_return_levels(curve: ReturnLevelCurve, *, offsets_m, periods_years):
    """Table of future return levels for each offset (see :func:`sea_level_rise_rows`).

    Returns
    -------
    pandas.DataFrame
        Columns ``offset_m, return_period_years, level_m, lower_m, upper_m,
        present_return_period_years_of_level``.
    """
    import pandas as pd

    rows = []
    periods = np.asarray(list(periods_years), dtype=float)
    for offset in parse_offsets(offsets_m):
        table = curve.shifted(offset).table(periods)
        table.insert(0, "offset_m", offset)
        table["present_return_period_years_of_level"] = _present_period(curve, table["level_m"].to_numpy())
        rows.append(table.drop(columns=["method", "confidence"]))
    frame = pd.concat(rows, ignore_index=True)
    frame.attrs.update(units="m", datum=curve.datum, epoch_year=curve.epoch_year, method=curve.method)
    return frame


