r"""Sampling eras of a record: spans of constant sampling interval, and the time each sample represents.

Long gauge records change their sampling interval (hourly, then 15-minute, then 6-minute readings) and may
hold stretches of irregular stamps. :func:`sampling_eras` finds the eras from the stamps alone: the modal
spacing of each calendar month, and whether the month's stamps lie on a grid of that spacing (at most 10 % of
them off it); consecutive months with the same spacing are merged, and the change between two regular eras is
placed at the sample that best separates the old spacing from the new one (METHODS sec. 14, common
practice). Gaps do not change an era: a month with gaps still has the era's spacing as its mode.

Every quality test, completeness figure and gap count then uses the interval of each sample's own era
(:func:`sample_intervals_ns`), and analyses over several eras weight each sample by the time it represents
(its era's interval), so that a 6-minute decade does not outweigh an hourly one tenfold in a least-squares
harmonic analysis or an annual mean [1]_.

References
----------
.. [1] D. T. Pugh and P. L. Woodworth, Sea-Level Science. Cambridge, U.K.: Cambridge Univ. Press, 2014
   (data processing chapter; weighting of mixed sampling is common practice). [from memory]
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from extremes.constants import DAYS_PER_YEAR
from extremes.errors import DataError

__all__ = ["sampling_eras", "sample_intervals_ns", "represented_years", "eras_to_list",
           "MAX_OFF_GRID_FRACTION"]

#: share of a month's stamps that may lie off its modal grid for the month to count as regular [-]
MAX_OFF_GRID_FRACTION = 0.10
_NS_PER_MINUTE = 60_000_000_000
_YEAR_NS = DAYS_PER_YEAR * 86400e9
_DAY_NS = 86_400_000_000_000


def _as_ns(times) -> np.ndarray:
    if isinstance(times, pd.Series):
        times = times.index
    if isinstance(times, pd.DatetimeIndex):
        if times.tz is None:
            raise DataError("times must be tz-aware UTC; got naive times")
        return times.as_unit("ns").asi8
    return np.asarray(times, dtype=np.int64)


def _sorted_unique(t: np.ndarray) -> np.ndarray:
    if t.size > 1 and not np.all(t[1:] >= t[:-1]):
        t = np.sort(t)
    if t.size > 1:
        t = t[np.concatenate([[True], t[1:] != t[:-1]])]
    return t


def _empty() -> pd.DataFrame:
    return pd.DataFrame({"start": pd.DatetimeIndex([], tz="UTC"), "end": pd.DatetimeIndex([], tz="UTC"),
                         "interval": pd.TimedeltaIndex([]), "regular": np.array([], dtype=bool),
                         "n_stamps": np.array([], dtype=np.int64)})


def _month_table(t: np.ndarray) -> pd.DataFrame:
    """Per calendar month: first sample position, modal spacing [ns], regular (on the modal grid)."""
    month = t.view("datetime64[ns]").astype("datetime64[M]").astype(np.int64)
    starts = np.flatnonzero(np.concatenate([[True], month[1:] != month[:-1]]))
    ends = np.append(starts[1:], t.size)
    rows = []
    for a, b in zip(starts, ends):
        # spacings of the month's samples (the first to the previous month's last sample is left out)
        d = np.diff(t[a:b])
        if d.size == 0:
            rows.append((a, 0, True, 0))
            continue
        values, counts = np.unique(d, return_counts=True)
        mode = int(values[np.argmax(counts)])
        residue = t[a:b] % mode
        r_values, r_counts = np.unique(residue, return_counts=True)
        on_grid = r_counts.max() / (b - a)
        rows.append((a, mode, bool(on_grid >= 1.0 - MAX_OFF_GRID_FRACTION), int(np.median(d))))
    return pd.DataFrame(rows, columns=["first", "mode", "regular", "median"])


def _boundary(t: np.ndarray, lo: int, hi: int, old: int, new: int) -> int:
    """First sample of the new era within samples [lo, hi): best split of spacings ``old`` before, ``new`` after."""
    d = np.diff(t[lo:hi])
    if d.size < 2:
        return hi - 1 if hi - 1 > lo else lo
    is_old = np.concatenate([[0], np.cumsum(d == old)])    # old spacings among d[:k]
    is_new = np.concatenate([[0], np.cumsum(d == new)])
    # the new era starts at sample lo + j: spacings d[:j-1] old, d[j:] new (d[j-1] spans the change)
    j = np.arange(1, d.size + 1)
    score = is_old[j - 1] + (is_new[-1] - is_new[j])
    return lo + int(j[np.argmax(score)])


def _one_regular_era(t: np.ndarray) -> pd.DataFrame | None:
    """The single era of stamps ``t`` (sorted, unique) on one constant spacing of at most a day, else None.

    The month-by-month search of :func:`sampling_eras` finds exactly this era for such stamps (every month's
    modal spacing is the constant one and every stamp lies on its grid); found here in one pass, as model
    output and gap-filled grids are.
    """
    d = np.diff(t)
    step = int(d[0])
    if step > _DAY_NS or not bool(np.all(d == step)):
        return None
    return pd.DataFrame({
        "start": pd.to_datetime(t[[0]], unit="ns", utc=True),
        "end": pd.to_datetime(t[[-1]], unit="ns", utc=True),
        "interval": pd.to_timedelta([step], unit="ns"),
        "regular": np.array([True]),
        "n_stamps": np.array([t.size]),
    })


def sampling_eras(times) -> pd.DataFrame:
    """Eras of constant sampling interval of a set of stamps.

    Parameters
    ----------
    times : pandas.DatetimeIndex, pandas.Series or array of int64 nanoseconds
        Stamps (tz-aware UTC); sorted and made unique here.

    Returns
    -------
    pandas.DataFrame
        One row per era in time order: ``start`` and ``end`` (first and last stamp of the era, UTC),
        ``interval`` (Timedelta: the era's spacing; the median spacing for an irregular era), ``regular``
        (the era's stamps lie on a grid of its interval) and ``n_stamps``.
    """
    t = _sorted_unique(_as_ns(times))
    if t.size < 2:
        return _empty()
    one = _one_regular_era(t)
    if one is not None:
        return one
    months = _month_table(t)
    months = months[months["mode"] > 0].reset_index(drop=True)
    if months.empty:
        return _empty()
    # merge consecutive months: regular months with the same spacing, irregular months together
    key = np.where(months["regular"], months["mode"], -1)
    new = np.concatenate([[True], key[1:] != key[:-1]])
    group = np.cumsum(new) - 1
    firsts = months["first"].to_numpy()
    starts = [0]
    eras = []
    for g in range(group.max() + 1):
        sel = months[group == g]
        regular = bool(sel["regular"].iloc[0])
        interval = int(sel["mode"].iloc[0]) if regular else int(np.median(sel["median"]))
        eras.append([int(sel["first"].iloc[0]), regular, interval])
    for k in range(1, len(eras)):
        first = eras[k][0]
        if eras[k - 1][1] and eras[k][1]:
            # search from the previous month's first sample to the end of this month
            previous = firsts[max(0, np.searchsorted(firsts, first) - 1)]
            after = int(np.searchsorted(firsts, first, side="right"))
            following = firsts[after] if after < len(firsts) else t.size
            first = _boundary(t, int(previous), int(following), eras[k - 1][2], eras[k][2])
        eras[k][0] = max(first, eras[k - 1][0] + 1)
        starts.append(eras[k][0])
    ends = starts[1:] + [t.size]
    return pd.DataFrame({
        "start": pd.to_datetime(t[starts], unit="ns", utc=True),
        "end": pd.to_datetime(t[np.asarray(ends) - 1], unit="ns", utc=True),
        "interval": pd.to_timedelta([e[2] for e in eras], unit="ns"),
        "regular": np.array([e[1] for e in eras], dtype=bool),
        "n_stamps": np.asarray(ends) - np.asarray(starts),
    })


def sample_intervals_ns(times, eras: pd.DataFrame | None = None) -> np.ndarray:
    """The interval of each stamp's era [ns] (the time each sample represents).

    Parameters
    ----------
    times : pandas.DatetimeIndex or array of int64 nanoseconds
        Stamps, in any order.
    eras : pandas.DataFrame, optional
        From :func:`sampling_eras`; found from ``times`` when not given.

    Returns
    -------
    numpy.ndarray of int64
        One interval per stamp, in the order of ``times``; stamps before the first era take its interval.
    """
    t = _as_ns(times)
    if eras is None:
        eras = sampling_eras(t)
    if eras.empty:
        return np.zeros(t.size, dtype=np.int64)
    starts = pd.DatetimeIndex(eras["start"]).as_unit("ns").asi8
    intervals = pd.TimedeltaIndex(eras["interval"]).as_unit("ns").asi8
    position = np.clip(np.searchsorted(starts, t, side="right") - 1, 0, len(starts) - 1)
    return intervals[position]


def represented_years(level_m: pd.Series, eras: pd.DataFrame | None = None) -> float:
    """Time represented by the valid (finite) samples of ``level_m`` [years of 365.2425 days]."""
    finite = np.isfinite(level_m.to_numpy(dtype=float))
    weights = sample_intervals_ns(level_m.index, eras)
    return float(weights[finite].sum() / _YEAR_NS)


def eras_to_list(eras: pd.DataFrame) -> list[dict]:
    """The ``record.sampling`` list of the results: ``start``, ``end``, ``interval_minutes``, ``regular``,
    ``n_stamps``."""
    out = []
    for row in eras.itertuples():
        out.append({"start": row.start.strftime("%Y-%m-%dT%H:%M:%SZ"),
                    "end": row.end.strftime("%Y-%m-%dT%H:%M:%SZ"),
                    "interval_minutes": float(row.interval / pd.Timedelta(minutes=1)),
                    "regular": bool(row.regular), "n_stamps": int(row.n_stamps)})
    return out
