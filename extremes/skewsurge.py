r"""Skew surge of every tidal cycle: highest observed level in the cycle minus the predicted high water.

Skew surge = highest observed level within a tidal cycle minus the predicted high water of that cycle,
regardless of timing [1]_, [2]_. Each row also carries ``high_water_index``, the position of its predicted
high water in the full sequence of predicted high waters of the record (cycles skipped for missing data leave
gaps in it), which storm clustering uses to lay skew surges on the tide sequence whatever the tide type.

References
----------
.. [1] D. L. Pugh, *Tides, Surges and Mean Sea-Level*. Chichester, U.K.: Wiley, 1987.
.. [2] T. Howard and S. D. P. Williams, "Towards using state-of-the-art climate models to help constrain
   estimates of unprecedented UK storm surges," *Nat. Hazards Earth Syst. Sci.*, vol. 21, pp. 3693-3712,
   2021, doi:10.5194/nhess-21-3693-2021.
"""
from __future__ import annotations

import logging
from typing import Any

import numpy as np
import pandas as pd

from extremes._levels import (
    _check_level_series,
    _check_same_datum,
    _era_step,
    _ns_to_utc,
    _sampling_interval_ns,
    _times,
)
from extremes.errors import DataError

logger = logging.getLogger(__name__)

__all__ = ["skew_surges", "skew_surges_from_turning_points"]


def _check_turning_points(turning_points: Any) -> pd.DataFrame:
    if not isinstance(turning_points, pd.DataFrame):
        raise DataError("turning_points must be a DataFrame with columns time, level_m, kind; got "
                        f"{type(turning_points).__name__}")
    missing = {"time", "level_m", "kind"} - set(turning_points.columns)
    if missing:
        raise DataError(f"turning_points lacks column(s) {sorted(missing)}; expected time, level_m, kind")
    tp = pd.DataFrame({
        "time": _times(turning_points["time"], "turning_points['time']"),
        "level_m": turning_points["level_m"].to_numpy(dtype=float),
        "kind": turning_points["kind"].astype(str).str.lower().to_numpy(),
    })
    bad = set(tp["kind"]) - {"high", "low"}
    if bad:
        raise DataError(f"turning_points['kind'] holds {sorted(bad)}; expected only 'high' or 'low'")
    return tp.sort_values("time", kind="stable").reset_index(drop=True)


def skew_surges_from_turning_points(level_m: pd.Series, turning_points: pd.DataFrame, *,
                                    require_complete: bool = True, refine_crest: bool = True) -> pd.DataFrame:
    r"""Skew surge of every tidal cycle from observed levels and predicted high/low waters.

    Parameters
    ----------
    level_m : pandas.Series
        Observed levels on a sorted unique UTC index, sampled on a regular grid (gaps as NaN rows or as absent
        rows). [m]
    turning_points : pandas.DataFrame
        Predicted high and low waters: columns ``time`` (UTC), ``level_m`` [m], ``kind`` (``"high"``/``"low"``),
        as from :func:`extremes.tide.datums.high_low_waters`.
    require_complete : bool, default True
        Keep only cycles whose window holds a valid sample at every point of the sampling grid.
    refine_crest : bool, default True
        Refine the observed maximum by the parabola through the highest sample and its two neighbours (when
        both are valid, one sampling interval away and inside the window); see Notes.

    Returns
    -------
    pandas.DataFrame
        One row per predicted high water kept, with columns ``time`` (predicted HW time), ``predicted_high_water_m``,
        ``observed_max_m``, ``observed_max_time``, ``skew_surge_m`` [m], ``observed_max_sample_m`` (the highest
        sample itself) [m], ``window_start``, ``window_end``, ``complete``, ``high_water_index`` (position of the
        predicted high water in the full sequence of predicted high waters, counted from the first kept one;
        skipped cycles leave gaps). ``attrs`` holds ``n_cycles`` (high waters with a low water on each side
        inside the record),
        ``n_skipped`` (cycles dropped for incomplete data), ``units`` and ``datum``.

    Notes
    -----
    Skew surge = max observed level in the cycle - predicted high water, whatever their timing [1]_, [2]_. The
    cycle of a predicted high water runs from the preceding to the following predicted low water (about
    HW +/- 6.2 h for a semidiurnal tide). In mixed and diurnal regimes every predicted high water is used, each
    with the window between its neighbouring low waters, so the small high water of a mixed tidal day gives a
    short cycle of its own; its skew surge is kept and can be filtered on ``predicted_high_water_m``.
    Completeness: the window ``[LW_before, LW_after]`` must lie within the record and hold no missing sample on
    the sampling grid anchored at the first time stamp with the most common spacing.

    Crest refinement: hourly samples miss the crest by up to :math:`H(1 - \cos(\sigma \Delta t/2))` (about 4 cm
    for a 1.3 m semidiurnal tide; METHODS sec. 7), more at springs than at neaps, while the predicted high water
    is exact. Uncorrected, this biases skew surges low and makes them fall spuriously with the high-water level.
    The same three-point parabola used for predicted turning points [1]_ is applied to the observed crest:
    :math:`\delta = (y_{-1} - y_{+1}) / (2(y_{-1} - 2y_0 + y_{+1}))`, level :math:`y_0 - (y_{-1} - y_{+1})\delta/4`.
    The refinement never lowers the highest sample and moves the crest by at most half a sampling interval;
    for 10-min or finer data it changes skew surges by well under a millimetre.
    """
    level = _check_level_series(level_m)
    tp = _check_turning_points(turning_points)
    dt = _sampling_interval_ns(level.index)
    t_all = level.index.asi8
    t0, t_last = t_all[0], t_all[-1]

    kinds = tp["kind"].to_numpy()
    tp_ns = pd.DatetimeIndex(tp["time"]).as_unit("ns").asi8
    low_ns = tp_ns[kinds == "low"]
    hi_pos = np.flatnonzero(kinds == "high")
    hi_ns = tp_ns[hi_pos]
    hi_level = tp["level_m"].to_numpy()[hi_pos]
    hi_rank = np.arange(hi_ns.size, dtype=np.int64)  # position in the full high-water sequence
    # neighbouring predicted low waters of each high water
    k = np.searchsorted(low_ns, hi_ns, side="left")
    has_both = (k > 0) & (k < low_ns.size)
    hi_ns, hi_level, k, hi_rank = hi_ns[has_both], hi_level[has_both], k[has_both], hi_rank[has_both]
    win_a, win_b = low_ns[k - 1], low_ns[k]
    inside = (win_a >= t0) & (win_b <= t_last)
    hi_ns, hi_level, win_a, win_b = hi_ns[inside], hi_level[inside], win_a[inside], win_b[inside]
    hi_rank = hi_rank[inside]
    n_cycles = int(hi_ns.size)

    values = level.to_numpy()
    ok = np.isfinite(values)
    tv, vv = t_all[ok], values[ok]
    i0 = np.searchsorted(tv, win_a, side="left")
    i1 = np.searchsorted(tv, win_b, side="right")
    n_valid = i1 - i0
    # grid slots of each window on its own sampling era's grid (origin and interval; METHODS sec. 14)
    from extremes.sampling import sampling_eras

    eras = sampling_eras(t_all)
    if len(eras) > 1:
        era_start = pd.DatetimeIndex(eras["start"]).as_unit("ns").asi8
        era_dt = pd.TimedeltaIndex(eras["interval"]).as_unit("ns").asi8
        which = np.clip(np.searchsorted(era_start, win_a, side="right") - 1, 0, len(era_start) - 1)
        origin, step = era_start[which], era_dt[which]
    else:
        origin, step = t0, dt
    n_expected = (np.floor_divide(win_b - origin, step) - (-np.floor_divide(-(win_a - origin), step)) + 1)
    complete = n_valid >= n_expected
    keep = complete if require_complete else n_valid > 0
    n_skipped = int(n_cycles - np.count_nonzero(keep))

    hi_ns, hi_level, win_a, win_b, hi_rank = hi_ns[keep], hi_level[keep], win_a[keep], win_b[keep], hi_rank[keep]
    i0, i1, complete = i0[keep], i1[keep], complete[keep]
    obs_max = np.full(hi_ns.size, np.nan)
    obs_time = np.zeros(hi_ns.size, dtype=np.int64)
    if hi_ns.size:
        lengths = i1 - i0
        width = int(lengths.max())
        chunk = max(1, 4_000_000 // max(width, 1))
        for s in range(0, hi_ns.size, chunk):
            e = min(s + chunk, hi_ns.size)
            idx = i0[s:e, None] + np.arange(width)[None, :]
            mask = np.arange(width)[None, :] < lengths[s:e, None]
            block = np.where(mask, vv[np.minimum(idx, vv.size - 1)], -np.inf)
            j = np.argmax(block, axis=1)
            obs_max[s:e] = block[np.arange(e - s), j]
            obs_time[s:e] = tv[i0[s:e] + j]
    obs_sample = obs_max.copy()
    if refine_crest and hi_ns.size:
        pos = np.searchsorted(tv, obs_time)
        inner = (pos - 1 >= i0) & (pos + 1 < i1)
        p_in = np.where(inner, pos, 1)
        # neighbours one interval of the crest's own sampling era away (the same rule in every era)
        step_at = np.where(inner, _era_step(tv, p_in, eras, dt), dt)
        inner &= (tv[p_in] - tv[p_in - 1] == step_at) & (tv[np.minimum(p_in + 1, tv.size - 1)] - tv[p_in] == step_at)
        a, b, c = vv[p_in - 1], vv[p_in], vv[np.minimum(p_in + 1, vv.size - 1)]
        denom = a - 2.0 * b + c
        with np.errstate(divide="ignore", invalid="ignore"):
            delta = np.where(inner & (denom < 0), 0.5 * (a - c) / denom, 0.0)
        delta = np.clip(delta, -0.5, 0.5)
        obs_max = np.where(inner, b - 0.25 * (a - c) * delta, obs_max)
        obs_time = obs_time + np.rint(delta * step_at).astype(np.int64)
    out = pd.DataFrame({
        "time": _ns_to_utc(hi_ns),
        "predicted_high_water_m": hi_level,
        "observed_max_m": obs_max,
        "observed_max_time": _ns_to_utc(obs_time),
        "skew_surge_m": obs_max - hi_level,
        "observed_max_sample_m": obs_sample,
        "window_start": _ns_to_utc(win_a),
        "window_end": _ns_to_utc(win_b),
        "complete": complete,
        "high_water_index": hi_rank - (hi_rank[0] if hi_rank.size else 0),
    })
    out.attrs = {"n_cycles": n_cycles, "n_skipped": n_skipped, "units": "m",
                 "datum": level.attrs.get("datum", "unspecified"), "require_complete": bool(require_complete),
                 "refine_crest": bool(refine_crest)}
    if n_skipped:
        logger.info("skew surge: %d of %d tidal cycles skipped for incomplete data", n_skipped, n_cycles)
    return out


def skew_surges(level_m: pd.Series, model: Any, *, require_complete: bool = True, refine_crest: bool = True,
                step_minutes: float = 10.0) -> pd.DataFrame:
    """Skew surge of every tidal cycle of a record, against a fitted tide model.

    Parameters
    ----------
    level_m : pandas.Series
        Observed levels on a sorted unique UTC index. [m]
    model : TideModel
        Fitted tide model; its predicted high and low waters come from
        :func:`extremes.tide.datums.high_low_waters`.
    require_complete : bool, default True
        Skip (and count in ``attrs["n_skipped"]``) cycles with any missing sample.
    refine_crest : bool, default True
        Parabolic refinement of the observed crest (see :func:`skew_surges_from_turning_points`).
    step_minutes : float, default 10.0
        Step of the prediction used to locate high and low waters. [min]

    Returns
    -------
    pandas.DataFrame
        See :func:`skew_surges_from_turning_points`.
    """
    from extremes.tide.datums import high_low_waters

    level = _check_level_series(level_m)
    _check_same_datum(level, model)
    pad = pd.Timedelta(hours=30)
    table = high_low_waters(model, level.index[0] - pad, level.index[-1] + pad, step_minutes=step_minutes)
    return skew_surges_from_turning_points(level, table, require_complete=require_complete,
                                           refine_crest=refine_crest)
