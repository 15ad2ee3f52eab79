"""Tide-by-tide pairs of site and reference skew surges over the overlap of two records.

Each site high water (predicted, with its skew surge) is matched with the reference's predicted high water
nearest to it once the reference is moved by a lag; pairs further apart than the matching window (half the
reference's tidal cycle, so every site tide finds its nearest reference tide when the reference has data)
are dropped. The lag is the one, on a grid of lags in the lag window, that maximises the correlation of
the paired skew surges: storms reach neighbouring gauges at different times, and their tides peak at
different times too (METHODS sec. 14, common practice).
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from extremes.errors import DataError
from extremes.jsonable import to_jsonable

__all__ = ["OverlapPairs", "match_skew_surges", "pair_overlap", "nearest_indices"]

#: default half-width of the lag window [h]
MAX_LAG_HOURS = 12.0
#: default step of the grid of lags [h]
LAG_STEP_HOURS = 1.0
#: fewest pairs for a correlation at one lag [-]
MIN_PAIRS = 30


@dataclass(frozen=True, repr=False)
class OverlapPairs:
    """Matched skew surges of the overlap and the lag that relates them best.

    Attributes
    ----------
    pairs : pandas.DataFrame
        One row per matched site tide: ``site_time``, ``reference_time`` (UTC), ``site_skew_surge_m``,
        ``reference_skew_surge_m``, ``site_high_water_m`` [m].
    lag_hours : float
        Hours by which the site's storms follow the reference's (positive: the site later).
    correlation : float
        Pearson correlation of the paired skew surges at that lag.
    lag_scan : pandas.DataFrame
        ``lag_hours, n_pairs, correlation`` over the lag window.
    window_hours : float
        Largest distance between a site tide and its (lagged) reference tide [h].
    n_site_tides : int
        Site skew surges offered (matched or not).
    """

    pairs: pd.DataFrame
    lag_hours: float
    correlation: float
    lag_scan: pd.DataFrame
    window_hours: float
    n_site_tides: int = 0
    notes: tuple = field(default_factory=tuple)

    def __repr__(self) -> str:
        return (f"OverlapPairs(n={len(self.pairs)}, lag={self.lag_hours:g} h, "
                f"correlation={self.correlation:.3f})")

    @property
    def n_pairs(self) -> int:
        return int(len(self.pairs))

    def to_dict(self) -> dict:
        """JSON-ready summary (the pairs themselves go to a table)."""
        return to_jsonable({"n_pairs": self.n_pairs, "n_site_tides": self.n_site_tides,
                            "lag_hours": self.lag_hours, "correlation": self.correlation,
                            "window_hours": self.window_hours, "lag_scan": self.lag_scan,
                            "notes": list(self.notes)})


def _skew_series(skew, name):
    """(times ns, values, predicted high waters or None) of a skew-surge frame or Series, finite values only."""
    if isinstance(skew, pd.DataFrame):
        frame = skew.set_index("time") if "time" in skew.columns else skew
        if "skew_surge_m" not in frame.columns:
            raise DataError(f"{name}: expected a 'skew_surge_m' column; got {list(frame.columns)}")
        values = frame["skew_surge_m"]
        tide = frame["predicted_high_water_m"] if "predicted_high_water_m" in frame.columns else None
    elif isinstance(skew, pd.Series):
        values, tide = skew, None
    else:
        raise DataError(f"{name}: expected skew surges as a DataFrame or Series; got {type(skew).__name__}")
    index = values.index
    if not isinstance(index, pd.DatetimeIndex) or index.tz is None:
        raise DataError(f"{name}: expected skew surges indexed by tz-aware UTC times")
    v = values.to_numpy(dtype=float)
    ok = np.isfinite(v)
    t = index.tz_convert("UTC").as_unit("ns").asi8[ok]
    order = np.argsort(t, kind="stable")
    hw = None if tide is None else tide.to_numpy(dtype=float)[ok][order]
    return t[order], v[ok][order], hw


def nearest_indices(reference_ns, target_ns, window_ns):
    """Index of the reference time nearest each target time, -1 where none lies within ``window_ns``."""
    reference_ns = np.asarray(reference_ns)
    if reference_ns.size == 0:
        return np.full(np.shape(target_ns), -1)
    k = np.clip(np.searchsorted(reference_ns, target_ns), 1, reference_ns.size - 1)
    left, right = reference_ns[k - 1], reference_ns[k]
    pick = np.where(np.abs(target_ns - left) <= np.abs(right - target_ns), k - 1, k)
    if reference_ns.size == 1:
        pick = np.zeros_like(pick)
    dist = np.abs(reference_ns[pick] - target_ns)
    return np.where(dist <= window_ns, pick, -1)


def _window_ns(reference_ns):
    spacing = np.diff(reference_ns)
    spacing = spacing[spacing > 0]
    if spacing.size == 0:
        raise DataError("reference skew surges: fewer than two tides")
    return int(np.median(spacing) // 2)


def match_skew_surges(site_skew, reference_skew, *, lag_hours: float = 0.0,
                      window_hours: float | None = None) -> pd.DataFrame:
    """Pairs of site and reference skew surges, each site tide with the lagged reference tide nearest it.

    Parameters
    ----------
    site_skew, reference_skew : pandas.DataFrame or pandas.Series
        Skew surges (frames of :func:`extremes.surge.skew_surges_from_turning_points`, or Series on UTC
        times of the predicted high waters) [m].
    lag_hours : float, keyword-only
        The site's storms follow the reference's by this many hours: a site tide at t is matched with the
        reference tide nearest t - lag.
    window_hours : float, optional
        Largest distance allowed [h]; default half the reference's median spacing of tides.

    Returns
    -------
    pandas.DataFrame
        See :attr:`OverlapPairs.pairs`.
    """
    st, sv, shw = _skew_series(site_skew, "site skew surges")
    rt, rv, _ = _skew_series(reference_skew, "reference skew surges")
    window = _window_ns(rt) if window_hours is None else int(window_hours * 3.6e12)
    j = nearest_indices(rt, st - int(round(lag_hours * 3.6e12)), window)
    ok = j >= 0
    return pd.DataFrame({
        "site_time": pd.to_datetime(st[ok], utc=True),
        "reference_time": pd.to_datetime(rt[j[ok]], utc=True),
        "site_skew_surge_m": sv[ok],
        "reference_skew_surge_m": rv[j[ok]],
        "site_high_water_m": np.full(int(ok.sum()), np.nan) if shw is None else shw[ok],
    })


def pair_overlap(site_skew, reference_skew, *, max_lag_hours: float = MAX_LAG_HOURS,
                 step_hours: float = LAG_STEP_HOURS, window_hours: float | None = None) -> OverlapPairs:
    """Match site and reference skew surges over their overlap at the lag of highest correlation.

    Parameters
    ----------
    site_skew, reference_skew : pandas.DataFrame or pandas.Series
        Skew surges of the two gauges [m] (see :func:`match_skew_surges`).
    max_lag_hours : float, keyword-only
        Lags from -max_lag_hours to +max_lag_hours are tried [h].
    step_hours : float, keyword-only
        Step of the lags tried [h].
    window_hours : float, optional
        Matching window [h]; default half the reference's tidal cycle.

    Returns
    -------
    OverlapPairs

    Raises
    ------
    DataError
        If the records do not overlap by at least ``MIN_PAIRS`` tides at any lag.
    """
    if not (max_lag_hours >= 0 and step_hours > 0):
        raise DataError(f"max_lag_hours must be >= 0 and step_hours > 0; got {max_lag_hours}, {step_hours}")
    st, sv, shw = _skew_series(site_skew, "site skew surges")
    rt, rv, _ = _skew_series(reference_skew, "reference skew surges")
    window = _window_ns(rt) if window_hours is None else int(window_hours * 3.6e12)
    lags = np.arange(-max_lag_hours, max_lag_hours + step_hours / 2, step_hours)
    rows = []
    for lag in lags:
        j = nearest_indices(rt, st - int(round(lag * 3.6e12)), window)
        ok = j >= 0
        n = int(ok.sum())
        r = float(np.corrcoef(sv[ok], rv[j[ok]])[0, 1]) if n >= MIN_PAIRS else np.nan
        rows.append((float(lag), n, r))
    scan = pd.DataFrame(rows, columns=["lag_hours", "n_pairs", "correlation"])
    if scan["correlation"].notna().sum() == 0:
        raise DataError(f"site and reference records overlap by fewer than {MIN_PAIRS} tides with skew surges "
                        f"at every lag within +/-{max_lag_hours:g} h; a transfer needs a common period "
                        "(a year or more)")
    # lags that pair the same tides tie: take the middle of the run of lags with the highest correlation
    top = scan["correlation"].max()
    tied = scan.index[scan["correlation"] >= top - 1e-12]
    run = tied[tied - tied[0] == np.arange(tied.size)] if tied.size else tied
    best = scan.loc[run[(run.size - 1) // 2]]
    notes = []
    if abs(best["lag_hours"]) >= max_lag_hours:
        notes.append(f"the best lag ({best['lag_hours']:g} h) lies at the edge of the lag window; the storms "
                     "may be related at a longer lag, or not at all")
    pairs = match_skew_surges(site_skew, reference_skew, lag_hours=float(best["lag_hours"]),
                              window_hours=window / 3.6e12)
    return OverlapPairs(pairs=pairs, lag_hours=float(best["lag_hours"]), correlation=float(best["correlation"]),
                        lag_scan=scan, window_hours=window / 3.6e12, n_site_tides=int(st.size),
                        notes=tuple(notes))
