r"""Non-tidal residual, skew surge, tide-surge interaction and mean-sea-level trend.

The functions come in two layers:

* core functions that work on plain series and tables (an observed level series, a predicted tide
  series, a table of predicted high and low waters): :func:`residual_from_prediction`,
  :func:`skew_surges_from_turning_points`, :func:`interaction_tests_from_series`,
  :func:`annual_mean_sea_level`, :func:`msl_trend`, :func:`adjust_to_epoch`;
* thin wrappers that take a fitted :class:`~extremes.tide.harmonic.TideModel` and call the core:
  :func:`non_tidal_residual`, :func:`skew_surges`, :func:`interaction_tests`.

Conventions
-----------
* Levels in metres, times tz-aware UTC (naive times raise :class:`ValueError`).
* Non-tidal residual (NTR) = observed minus predicted tide at every sample; it is polluted by small
  timing and phase errors of the prediction. Skew surge = highest observed level within a tidal cycle minus
  the predicted high water of that cycle, regardless of timing [1]_, [2]_.
* A *decimal year* is the calendar year plus the elapsed fraction of that calendar year, the year being
  365 or 366 days of 86 400 s (UTC, leap seconds ignored). A trend "per year" is therefore per calendar
  year (on average 365.2425 days).

References
----------
.. [1] D. L. Pugh, *Tides, Surges and Mean Sea-Level*. Chichester, U.K.: Wiley, 1987.
.. [2] T. Howard and S. D. P. Williams, "Towards using state-of-the-art climate models to help constrain
   estimates of unprecedented UK storm surges," *Nat. Hazards Earth Syst. Sci.*, vol. 21, pp. 3693-3712,
   2021, doi:10.5194/nhess-21-3693-2021.
.. [3] K. J. Horsburgh and C. Wilson, "Tide-surge interaction and its role in the distribution of surge
   residuals in the North Sea," *J. Geophys. Res.*, vol. 112, C08003, 2007, doi:10.1029/2006JC004033.
.. [4] T. Mawdsley and I. D. Haigh, "Spatial and temporal variability and long-term trends in skew surges
   globally," *Front. Mar. Sci.*, vol. 3, 29, 2016, doi:10.3389/fmars.2016.00029.
.. [5] B. D. Santer et al., "Statistical significance of trends and trend differences in layer-average
   atmospheric temperature time series," *J. Geophys. Res.*, vol. 105, no. D6, pp. 7337-7356, 2000,
   doi:10.1029/1999JD901105.
.. [6] IOC, *Manual on Sea Level Measurement and Interpretation*, IOC Manuals and Guides 14. Paris: UNESCO.
"""
from __future__ import annotations

import logging
import math
import warnings
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd
from scipy import stats

from extremes.constants import NODAL_CYCLE_YEARS
from extremes.errors import DataError, DatumError, ExtremesWarning, FitError
from extremes.timebase import decimal_year, level_series, sampling_interval, utc_index
from extremes.timebase import ns_to_utc as _ns_to_utc
from extremes.timebase import year_start_ns as _year_start_ns

logger = logging.getLogger(__name__)

#: period of the lunar nodal cycle used for the optional nodal term of the MSL trend [years]
NODAL_PERIOD_YEARS = NODAL_CYCLE_YEARS

_NS_PER_HOUR = 3_600_000_000_000

__all__ = [
    "NODAL_PERIOD_YEARS",
    "InteractionTests",
    "MSLTrend",
    "adjust_to_epoch",
    "annual_mean_sea_level",
    "decimal_year",
    "effective_sample_size",
    "interaction_tests",
    "interaction_tests_from_series",
    "msl_trend",
    "non_tidal_residual",
    "residual_from_prediction",
    "skew_surges",
    "skew_surges_from_turning_points",
]


# ---------------------------------------------------------------------------------------------------------
# input checks and time helpers
# ---------------------------------------------------------------------------------------------------------
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


# ---------------------------------------------------------------------------------------------------------
# non-tidal residual
# ---------------------------------------------------------------------------------------------------------
def residual_from_prediction(level_m: pd.Series, predicted_m: Any) -> pd.Series:
    """Non-tidal residual: observed minus predicted tide, sample by sample.

    Parameters
    ----------
    level_m : pandas.Series
        Observed levels on a sorted unique UTC index; NaN where missing. [m]
    predicted_m : pandas.Series or array-like
        Predicted astronomical tide at the same times (a Series is aligned on the index). [m]

    Returns
    -------
    pandas.Series
        NTR(t) = observed(t) - predicted(t) [1]_, named ``surge_m``, NaN where either is missing. [m]
    """
    level = _check_level_series(level_m)
    if isinstance(predicted_m, pd.Series):
        pred_index = _utc_index(predicted_m.index, "predicted_m")
        pred = pd.Series(predicted_m.to_numpy(dtype=float), index=pred_index).reindex(level.index)
        values = pred.to_numpy()
    else:
        values = np.asarray(predicted_m, dtype=float)
        if values.shape != level.shape:
            raise DataError(f"predicted_m has shape {values.shape}; expected {level.shape} like level_m")
    out = pd.Series(level.to_numpy() - values, index=level.index, name="surge_m")
    out.attrs = {**level.attrs, "units": "m", "quantity": "non-tidal residual"}
    return out


def non_tidal_residual(level_m: pd.Series, model: Any) -> pd.Series:
    """Non-tidal residual of a record against a fitted tide model.

    Parameters
    ----------
    level_m : pandas.Series
        Observed levels on a sorted unique UTC index. [m]
    model : TideModel
        Fitted model; ``model.predict(times, include_mean=True)`` gives the predicted tide. [m]

    Returns
    -------
    pandas.Series
        Observed minus predicted, see :func:`residual_from_prediction`. [m]

    Raises
    ------
    DatumError
        If the series and the model name different datums.
    """
    level = _check_level_series(level_m)
    _check_same_datum(level, model)
    predicted = model.predict(level.index, include_mean=True)
    return residual_from_prediction(level, np.asarray(predicted, dtype=float))


# ---------------------------------------------------------------------------------------------------------
# skew surge
# ---------------------------------------------------------------------------------------------------------
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
        sample itself) [m], ``window_start``, ``window_end``, ``complete``. ``attrs`` holds ``n_cycles`` (high waters with a low water on each side inside the record),
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
    # neighbouring predicted low waters of each high water
    k = np.searchsorted(low_ns, hi_ns, side="left")
    has_both = (k > 0) & (k < low_ns.size)
    hi_ns, hi_level, k = hi_ns[has_both], hi_level[has_both], k[has_both]
    win_a, win_b = low_ns[k - 1], low_ns[k]
    inside = (win_a >= t0) & (win_b <= t_last)
    hi_ns, hi_level, win_a, win_b = hi_ns[inside], hi_level[inside], win_a[inside], win_b[inside]
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

    hi_ns, hi_level, win_a, win_b = hi_ns[keep], hi_level[keep], win_a[keep], win_b[keep]
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


# ---------------------------------------------------------------------------------------------------------
# tide-surge interaction
# ---------------------------------------------------------------------------------------------------------
@dataclass(frozen=True, repr=False)
class InteractionTests:
    """Tests of tide-surge interaction.

    Attributes
    ----------
    timing_bins_hours : tuple of float
        Bin centres of the surge-peak timing relative to the nearest predicted high water (-6 ... +6). [h]
    timing_counts : tuple of int
        Independent NTR peaks per bin (outer bins collect everything beyond +/-5.5 h).
    timing_expected : tuple of float
        Expected counts if peaks were timed independently of the tide (share of all valid samples per bin).
    timing_chi2, timing_p_value : float
        Chi-square statistic and p-value of the timing test.
    n_peaks : int
        Independent NTR peaks used.
    peak_threshold_m : float
        NTR threshold of the peaks (the ``peak_quantile`` quantile). [m]
    kendall_tau, kendall_p_value : float
        Kendall rank correlation of skew surge and predicted high-water level, and its p-value.
    n_skew_surges : int
        Skew surges available (all enter the tide-band quantiles).
    n_skew_surges_tested : int
        Skew surges at least ``min_separation_hours`` apart that enter the Kendall test.
    band_edges_m : tuple of float
        Predicted high-water levels bounding the tide bands (low ... high). [m]
    band_quantiles_m : dict
        ``{band label: {quantile: skew surge [m]}}`` upper-tail quantiles of skew surge per tide band.
    alpha : float
        Significance level of both tests.
    timing_dependent, level_dependent : bool
        Whether each test rejects independence at ``alpha``.
    verdict : str
        Plain-words summary.
    """

    timing_bins_hours: tuple
    timing_counts: tuple
    timing_expected: tuple
    timing_chi2: float
    timing_p_value: float
    n_peaks: int
    peak_threshold_m: float
    kendall_tau: float
    kendall_p_value: float
    n_skew_surges: int
    n_skew_surges_tested: int
    band_edges_m: tuple
    band_quantiles_m: dict = field(default_factory=dict)
    alpha: float = 0.05
    timing_dependent: bool = False
    level_dependent: bool = False
    verdict: str = ""

    def __repr__(self) -> str:
        return (f"InteractionTests(timing_p={self.timing_p_value:.3g}, n_peaks={self.n_peaks}, "
                f"kendall_tau={self.kendall_tau:.3f}, kendall_p={self.kendall_p_value:.3g}, "
                f"timing_dependent={self.timing_dependent}, level_dependent={self.level_dependent})")

    def to_dict(self) -> dict:
        """JSON-ready dictionary."""
        return {
            "timing": {"bins_hours": list(self.timing_bins_hours), "counts": list(self.timing_counts),
                       "expected": [float(x) for x in self.timing_expected], "chi2": float(self.timing_chi2),
                       "p_value": float(self.timing_p_value), "n_peaks": int(self.n_peaks),
                       "peak_threshold_m": float(self.peak_threshold_m), "dependent": bool(self.timing_dependent)},
            "level": {"kendall_tau": float(self.kendall_tau), "p_value": float(self.kendall_p_value),
                      "n_skew_surges": int(self.n_skew_surges),
                      "n_skew_surges_tested": int(self.n_skew_surges_tested), "band_edges_m": [float(x) for x in self.band_edges_m],
                      "band_quantiles_m": {b: {str(q): float(v) for q, v in d.items()}
                                           for b, d in self.band_quantiles_m.items()},
                      "dependent": bool(self.level_dependent)},
            "alpha": float(self.alpha),
            "verdict": self.verdict,
        }


def _decluster_peaks(residual: pd.Series, threshold: float, min_separation_ns: int) -> np.ndarray:
    """Times [ns] of cluster maxima of exceedances; a new cluster starts after a gap > min_separation."""
    values = residual.to_numpy()
    above = np.flatnonzero(np.isfinite(values) & (values > threshold))
    if above.size == 0:
        return np.empty(0, dtype=np.int64)
    t = residual.index.asi8[above]
    v = values[above]
    new = np.concatenate([[True], np.diff(t) > min_separation_ns])
    cluster = np.cumsum(new) - 1
    # position of the maximum within each cluster: sort by (cluster, -value)
    order = np.lexsort((-v, cluster))
    first = np.concatenate([[True], np.diff(cluster[order]) != 0])
    return t[order[first]]


def _thin(t_ns: np.ndarray, min_separation_ns: int) -> np.ndarray:
    """Mask keeping, greedily in time order, values at least ``min_separation_ns`` after the last kept one."""
    keep = np.zeros(t_ns.size, dtype=bool)
    last = None
    for i, t in enumerate(t_ns.tolist()):
        if last is None or t - last >= min_separation_ns:
            keep[i] = True
            last = t
    return keep


def _offsets_hours(t_ns: np.ndarray, hw_ns: np.ndarray) -> np.ndarray:
    """Signed time from the nearest predicted high water [h]."""
    k = np.searchsorted(hw_ns, t_ns)
    left = hw_ns[np.clip(k - 1, 0, hw_ns.size - 1)]
    right = hw_ns[np.clip(k, 0, hw_ns.size - 1)]
    nearest = np.where(np.abs(t_ns - left) <= np.abs(right - t_ns), left, right)
    return (t_ns - nearest) / _NS_PER_HOUR


def interaction_tests_from_series(residual_m: pd.Series, high_water_times: Any, skew: pd.DataFrame, *,
                                  peak_quantile: float = 0.99, min_separation_hours: float = 48.0,
                                  n_bands: int = 3, tail_quantiles: tuple = (0.5, 0.9, 0.99),
                                  alpha: float = 0.05) -> InteractionTests:
    r"""Tests of tide-surge interaction from a residual series, predicted HW times and skew surges.

    Parameters
    ----------
    residual_m : pandas.Series
        Non-tidal residual on a sorted unique UTC index. [m]
    high_water_times : array-like of datetime
        Predicted high-water times (UTC) covering the record.
    skew : pandas.DataFrame
        Skew surges with columns ``skew_surge_m`` and ``predicted_high_water_m`` [m], from :func:`skew_surges`.
    peak_quantile : float, default 0.99
        Quantile of the residual above which independent peaks are taken for the timing test.
    min_separation_hours : float, default 48.0
        Exceedances closer than this belong to one storm; only its largest is kept. The Kendall test also uses
        only skew surges at least this far apart (see Notes). [h]
    n_bands : int, default 3
        Number of tide bands (quantile bands of predicted high water; 3 = terciles: neap-like, middle,
        spring-like).
    tail_quantiles : tuple of float, default (0.5, 0.9, 0.99)
        Quantiles of skew surge reported per band.
    alpha : float, default 0.05
        Significance level.

    Returns
    -------
    InteractionTests

    Notes
    -----
    (i) Timing [3]_, [4]_: the time of each independent NTR peak relative to the nearest predicted high water
    is put into 13 hourly bins centred on -6 ... +6 h (outer bins open-ended). The expected count of a bin is
    the share of all valid residual samples that fall in it (the exact "uniform in time" null, which accounts for
    cycles shorter or longer than 13 h), and the counts are compared by a chi-square test
    (``scipy.stats.chisquare``, 12 degrees of freedom). Clustering of peaks on the rising tide is the classic
    sign of interaction. (ii) Level [4]_: Kendall's tau between skew surge and predicted high-water level
    (``scipy.stats.kendalltau``), plus upper-tail quantiles of skew surge in tide bands (all cycles). Kendall's
    null distribution assumes independent pairs; skew surges of consecutive cycles are correlated within a storm
    and high-water levels follow the spring-neap cycle, so with every cycle the p-value is far too small. The
    test therefore uses cycles at least ``min_separation_hours`` apart (every fourth semidiurnal cycle with the
    default), which makes the skew surges close to independent; if either series of a pair is serially
    independent, the usual null distribution holds. Hourly samples under-read each crest by up to
    :math:`H(1 - \cos(\sigma \Delta t / 2))` (about 4 cm for a 1.3-m spring M2+S2 tide), more at springs than at
    neaps, which alone makes hourly skew surges fall slightly with HW level; use the native sub-hourly sampling
    where there is one (METHODS sec. 7). The chi-square test
    needs about 5 expected peaks per bin; fewer than 65 peaks gives an :class:`ExtremesWarning`.
    """
    residual = _check_level_series(residual_m, "residual_m")
    hw_ns = np.sort(_times(high_water_times, "high_water_times").asi8)
    if hw_ns.size < 2:
        raise DataError(f"high_water_times needs at least 2 predicted high waters; got {hw_ns.size}")
    if not 0.5 < peak_quantile < 1.0:
        raise ValueError(f"peak_quantile must be in (0.5, 1); got {peak_quantile}")
    if not 0.0 < alpha < 1.0:
        raise ValueError(f"alpha must be in (0, 1); got {alpha}")
    if not isinstance(skew, pd.DataFrame) or not {"skew_surge_m", "predicted_high_water_m"} <= set(skew.columns):
        raise DataError("skew must be a DataFrame with columns skew_surge_m and predicted_high_water_m "
                        "(from skew_surges)")

    # (i) timing of independent NTR peaks
    valid = residual.dropna()
    if valid.size == 0:
        raise DataError("residual_m holds no valid values")
    threshold = float(np.quantile(valid.to_numpy(), peak_quantile))
    peaks_ns = _decluster_peaks(valid, threshold, int(min_separation_hours * _NS_PER_HOUR))
    edges = np.concatenate([[-np.inf], np.arange(-5.5, 6.0, 1.0), [np.inf]])
    counts = np.histogram(_offsets_hours(peaks_ns, hw_ns), bins=edges)[0]
    share = np.histogram(_offsets_hours(valid.index.asi8, hw_ns), bins=edges)[0].astype(float)
    share /= share.sum()
    n_peaks = int(counts.sum())
    if n_peaks < 65:
        warnings.warn(f"only {n_peaks} independent residual peaks above the {peak_quantile} quantile; the timing "
                      "chi-square test needs about 65 (5 per bin)", ExtremesWarning, stacklevel=2)
    if n_peaks > 0:
        expected = share * n_peaks
        chi2, p_timing = stats.chisquare(counts, expected)
    else:
        expected = share * 0.0
        chi2, p_timing = float("nan"), float("nan")

    # (ii) level dependence
    ss = skew[["skew_surge_m", "predicted_high_water_m"]].astype(float)
    keep = np.isfinite(ss.to_numpy()).all(axis=1)
    if "time" in skew.columns:
        skew_ns = _times(skew["time"], "skew['time']").asi8[keep]
        ss = ss[keep]
        order = np.argsort(skew_ns, kind="stable")
        ss, skew_ns = ss.iloc[order], skew_ns[order]
        spaced = _thin(skew_ns, int(min_separation_hours * _NS_PER_HOUR))
    else:
        ss = ss[keep]
        spaced = np.ones(len(ss), dtype=bool)
    n_skew = int(len(ss))
    thin = ss[spaced]
    if len(thin) < 3:
        raise DataError(f"skew holds {len(thin)} usable skew surges {min_separation_hours} h apart; expected at "
                        "least 3")
    tau_res = stats.kendalltau(thin["skew_surge_m"].to_numpy(), thin["predicted_high_water_m"].to_numpy())
    tau, p_tau = float(tau_res.statistic), float(tau_res.pvalue)
    band_edges = np.quantile(ss["predicted_high_water_m"].to_numpy(), np.linspace(0, 1, n_bands + 1))
    band = np.clip(np.searchsorted(band_edges[1:-1], ss["predicted_high_water_m"].to_numpy(), side="right"),
                   0, n_bands - 1)
    band_quantiles: dict = {}
    for b in range(n_bands):
        sel = ss["skew_surge_m"].to_numpy()[band == b]
        label = f"{band_edges[b]:.3f}-{band_edges[b + 1]:.3f} m"
        band_quantiles[label] = {float(q): (float(np.quantile(sel, q)) if sel.size else float("nan"))
                                 for q in tail_quantiles}

    timing_dep = bool(np.isfinite(p_timing) and p_timing < alpha)
    level_dep = bool(np.isfinite(p_tau) and p_tau < alpha)
    parts = []
    if timing_dep:
        peak_bin = int(np.argmax(counts - expected)) - 6
        parts.append(f"surge peaks are not timed independently of the tide (chi-square p = {p_timing:.3g}; "
                     f"most excess peaks about {peak_bin:+d} h from high water)")
    else:
        parts.append(f"surge-peak timing shows no dependence on the tide (chi-square p = {p_timing:.3g})")
    if level_dep:
        parts.append(f"skew surge depends on the predicted high-water level (Kendall tau = {tau:.3f}, "
                     f"p = {p_tau:.3g}); treat tide and skew surge as dependent")
    else:
        parts.append(f"skew surge shows no dependence on the predicted high-water level (Kendall tau = "
                     f"{tau:.3f}, p = {p_tau:.3g}); skew surge may be combined with the tide as independent")
    verdict = f"At the {alpha:g} level: " + "; ".join(parts) + "."
    return InteractionTests(
        timing_bins_hours=tuple(float(x) for x in range(-6, 7)), timing_counts=tuple(int(c) for c in counts),
        timing_expected=tuple(float(x) for x in expected), timing_chi2=float(chi2), timing_p_value=float(p_timing),
        n_peaks=n_peaks, peak_threshold_m=threshold, kendall_tau=tau, kendall_p_value=p_tau,
        n_skew_surges=n_skew, n_skew_surges_tested=int(len(thin)), band_edges_m=tuple(float(x) for x in band_edges), band_quantiles_m=band_quantiles,
        alpha=float(alpha), timing_dependent=timing_dep, level_dependent=level_dep, verdict=verdict)


def interaction_tests(level_m: pd.Series, model: Any, skew: pd.DataFrame, *, step_minutes: float = 10.0,
                      **options: Any) -> InteractionTests:
    """Tests of tide-surge interaction for a record and its fitted tide model.

    Parameters
    ----------
    level_m : pandas.Series
        Observed levels on a sorted unique UTC index. [m]
    model : TideModel
        Fitted tide model (residual and predicted high waters).
    skew : pandas.DataFrame
        Skew surges from :func:`skew_surges`.
    step_minutes : float, default 10.0
        Step used to locate predicted high waters. [min]
    **options
        Keyword options of :func:`interaction_tests_from_series`.

    Returns
    -------
    InteractionTests
    """
    from extremes.tide.datums import high_low_waters

    residual = non_tidal_residual(level_m, model)
    pad = pd.Timedelta(hours=30)
    table = high_low_waters(model, residual.index[0] - pad, residual.index[-1] + pad, step_minutes=step_minutes)
    hw = table.loc[table["kind"] == "high", "time"]
    return interaction_tests_from_series(residual, hw, skew, **options)


# ---------------------------------------------------------------------------------------------------------
# mean sea level
# ---------------------------------------------------------------------------------------------------------
def annual_mean_sea_level(level_m: pd.Series, *, min_completeness: float = 0.75) -> pd.DataFrame:
    """Calendar-year (UTC) means of a level record with a completeness rule.

    Parameters
    ----------
    level_m : pandas.Series
        Levels on a sorted unique UTC index, regularly sampled; NaN or absent rows are missing. [m]
    min_completeness : float, default 0.75
        Minimum share of the year's expected samples (year length / sampling interval) for a year to count [6]_.

    Returns
    -------
    pandas.DataFrame
        Indexed by ``year``: ``mean_m`` [m] (NaN when the year fails the rule), ``n_samples``, ``n_expected``,
        ``completeness`` (0-1), ``complete`` (bool), ``mean_time_year`` (mean decimal year of the samples used,
        [years]). Every calendar year from the first to the last sample appears.
    """
    level = _check_level_series(level_m)
    if not 0.0 <= min_completeness <= 1.0:
        raise ValueError(f"min_completeness must be within [0, 1]; got {min_completeness}")
    from extremes.sampling import sample_intervals_ns

    _sampling_interval_ns(level.index)  # at least two stamps
    # each sample weighted by the time it represents (its sampling era's interval), so a year that changed
    # from hourly to 6-minute readings is neither dropped nor dominated by its 6-minute part (METHODS sec. 14)
    weight = sample_intervals_ns(level.index).astype(float)
    finite = level.notna().to_numpy()
    valid = level[finite]
    w_valid = weight[finite]
    years = np.arange(level.index[0].year, level.index[-1].year + 1)
    yr_start = _year_start_ns(years)
    yr_end = _year_start_ns(years + 1)
    if valid.size:
        vy = valid.index.year.to_numpy()
        vt = decimal_year(valid.index)
        frame = pd.DataFrame({"y": vy, "wv": w_valid * valid.to_numpy(), "wt": w_valid * vt, "w": w_valid,
                              "n": 1})
        grouped = frame.groupby("y").sum()
        sums = pd.DataFrame({"mean_m": grouped["wv"] / grouped["w"], "n_samples": grouped["n"],
                             "mean_time_year": grouped["wt"] / grouped["w"], "w": grouped["w"]})
    else:
        sums = pd.DataFrame(columns=["mean_m", "n_samples", "mean_time_year", "w"], dtype=float)
    out = sums.reindex(years)
    out.index.name = "year"
    out["n_samples"] = out["n_samples"].fillna(0).astype(int)
    represented = out["w"].fillna(0.0).to_numpy(dtype=float)
    length = (yr_end - yr_start).astype(float)
    # expected samples at the year's own (time-weighted mean) interval
    with np.errstate(invalid="ignore", divide="ignore"):
        mean_interval = np.where(out["n_samples"] > 0, represented / np.maximum(out["n_samples"], 1), np.nan)
    out["n_expected"] = np.where(np.isfinite(mean_interval), length / mean_interval, 0.0)
    out["completeness"] = np.minimum(represented / length, 1.0)
    out["complete"] = out["completeness"] >= min_completeness
    out.loc[~out["complete"], "mean_m"] = np.nan
    out = out[["mean_m", "n_samples", "n_expected", "completeness", "complete", "mean_time_year"]]
    out.attrs = {"units": "m", "datum": level.attrs.get("datum", "unspecified"),
                 "min_completeness": float(min_completeness), "year": "calendar year, UTC"}
    return out


def effective_sample_size(n: int, r1: float) -> float:
    """Effective number of independent values of an AR(1)-like series.

    Parameters
    ----------
    n : int
        Number of values.
    r1 : float
        Lag-1 autocorrelation (clipped below at 0: negative autocorrelation is not used to shrink errors).

    Returns
    -------
    float
        :math:`n_{eff} = n (1 - r_1) / (1 + r_1)` [5]_.
    """
    r = max(float(r1), 0.0)
    if r >= 1.0:
        return 0.0
    return n * (1.0 - r) / (1.0 + r)


@dataclass(frozen=True, repr=False)
class MSLTrend:
    """Linear mean-sea-level trend fitted to annual means.

    Attributes
    ----------
    trend_m_per_year, trend_se_m_per_year : float
        Trend and its standard error (inflated for lag-1 autocorrelation when asked). [m/year]
    reference_year : float
        Decimal year at which the intercept is stated. [years]
    msl_at_reference_m, msl_at_reference_se_m : float
        Fitted MSL at ``reference_year`` and its standard error. [m]
    n_years : int
        Annual means used.
    r1 : float
        Lag-1 autocorrelation of the residuals of the fit.
    n_effective : float
        Effective number of years used for the standard errors.
    se_inflation : float
        Factor applied to the ordinary least-squares standard errors (1 when not inflated).
    nodal : bool
        Whether an 18.613-year cos/sin term was fitted.
    nodal_amplitude_m, nodal_phase_deg : float
        Amplitude [m] and phase [deg] of the nodal term (``A cos(2 pi (t - t0)/18.613 - phase)``); NaN if not fitted.
    residual_std_m : float
        Standard deviation of the residuals of the fit. [m]
    first_year, last_year : int
        Span of the annual means used. [years]
    covariance : tuple
        Covariance of (intercept, trend) after inflation. [m^2, m^2/year, m^2/year^2]
    datum : str
        Datum of the annual means.
    """

    trend_m_per_year: float
    trend_se_m_per_year: float
    reference_year: float
    msl_at_reference_m: float
    msl_at_reference_se_m: float
    n_years: int
    r1: float
    n_effective: float
    se_inflation: float
    nodal: bool
    nodal_amplitude_m: float
    nodal_phase_deg: float
    residual_std_m: float
    first_year: int
    last_year: int
    covariance: tuple
    datum: str = "unspecified"

    def __repr__(self) -> str:
        return (f"MSLTrend(trend={1000 * self.trend_m_per_year:.2f} +/- {1000 * self.trend_se_m_per_year:.2f} "
                f"mm/yr, n_years={self.n_years}, reference_year={self.reference_year:.2f}, nodal={self.nodal})")

    def msl_at(self, year: Any) -> Any:
        """Mean sea level on the linear trend at decimal year(s) ``year`` (nodal term excluded). [m]"""
        y = np.asarray(year, dtype=float)
        out = self.msl_at_reference_m + self.trend_m_per_year * (y - self.reference_year)
        return float(out) if out.ndim == 0 else out

    def msl_at_se(self, year: Any) -> Any:
        """Standard error of :meth:`msl_at` from the (inflated) covariance of intercept and trend. [m]"""
        y = np.asarray(year, dtype=float) - self.reference_year
        (caa, cab), (_, cbb) = self.covariance
        out = np.sqrt(caa + 2.0 * y * cab + y * y * cbb)
        return float(out) if out.ndim == 0 else out

    def to_dict(self) -> dict:
        """JSON-ready dictionary."""
        return {
            "trend_m_per_year": self.trend_m_per_year, "trend_se_m_per_year": self.trend_se_m_per_year,
            "reference_year": self.reference_year, "msl_at_reference_m": self.msl_at_reference_m,
            "msl_at_reference_se_m": self.msl_at_reference_se_m, "n_years": self.n_years, "r1": self.r1,
            "n_effective": self.n_effective, "se_inflation": self.se_inflation, "nodal": self.nodal,
            "nodal_amplitude_m": None if math.isnan(self.nodal_amplitude_m) else self.nodal_amplitude_m,
            "nodal_phase_deg": None if math.isnan(self.nodal_phase_deg) else self.nodal_phase_deg,
            "residual_std_m": self.residual_std_m, "first_year": self.first_year, "last_year": self.last_year,
            "covariance": [list(r) for r in self.covariance], "datum": self.datum,
            "year": "calendar year (365 or 366 days), UTC",
        }


def msl_trend(annual_means: Any, *, nodal: bool = False, reference_year: float | None = None,
              adjust_autocorrelation: bool = True) -> MSLTrend:
    r"""Linear trend of annual mean sea level by ordinary least squares.

    Parameters
    ----------
    annual_means : pandas.DataFrame or pandas.Series
        From :func:`annual_mean_sea_level` (rows with ``complete`` False or NaN ``mean_m`` are ignored; the time
        of each mean is ``mean_time_year`` when present, else ``year + 0.5``), or a Series of annual means [m]
        indexed by (decimal) year.
    nodal : bool, default False
        Also fit :math:`c \cos(2\pi(t - t_0)/18.613) + d \sin(\ldots)`.
    reference_year : float, optional
        :math:`t_0`, the decimal year of the intercept; default the mean time of the annual means used.
    adjust_autocorrelation : bool, default True
        Inflate the standard errors for positive lag-1 autocorrelation :math:`r_1` of the residuals.

    Returns
    -------
    MSLTrend

    Raises
    ------
    FitError
        With fewer than ``p + 1`` usable years (p = 2, or 4 with ``nodal``).

    Notes
    -----
    Model :math:`y = a + b (t - t_0) [+ c\cos + d\sin]` (METHODS sec. 7; [6]_). Ordinary standard errors use
    :math:`s^2 = RSS/(n - p)`. With autocorrelation, :math:`n_{eff} = n(1 - r_1)/(1 + r_1)` and the residual
    variance is divided by :math:`n_{eff} - p` instead of :math:`n - p`, i.e. the covariance is scaled by
    :math:`(n - p)/(n_{eff} - p)` [5]_; :math:`r_1 = \sum e_i e_{i+1} / \sum e_i^2` over the residuals in year
    order. If :math:`n_{eff} \le p` the standard errors are infinite and an :class:`ExtremesWarning` is given.
    """
    if isinstance(annual_means, pd.DataFrame):
        df = annual_means
        if "mean_m" not in df.columns:
            raise DataError("annual_means lacks column 'mean_m'; expected the table of annual_mean_sea_level")
        use = np.isfinite(df["mean_m"].to_numpy(dtype=float))
        if "complete" in df.columns:
            use &= df["complete"].to_numpy(dtype=bool)
        y = df["mean_m"].to_numpy(dtype=float)[use]
        if "mean_time_year" in df.columns:
            t = df["mean_time_year"].to_numpy(dtype=float)[use]
        else:
            t = np.asarray(df.index, dtype=float)[use] + 0.5
        datum = str(df.attrs.get("datum", "unspecified"))
    elif isinstance(annual_means, pd.Series):
        use = np.isfinite(annual_means.to_numpy(dtype=float))
        y = annual_means.to_numpy(dtype=float)[use]
        t = np.asarray(annual_means.index, dtype=float)[use]
        datum = str(annual_means.attrs.get("datum", "unspecified"))
    else:
        raise DataError(f"annual_means must be a DataFrame or Series; got {type(annual_means).__name__}")
    order = np.argsort(t)
    t, y = t[order], y[order]
    p = 4 if nodal else 2
    n = int(y.size)
    if n < p + 1:
        raise FitError(f"msl_trend needs at least {p + 1} complete annual means (nodal={nodal}); got {n}")
    t0 = float(np.mean(t)) if reference_year is None else float(reference_year)
    columns = [np.ones(n), t - t0]
    if nodal:
        w = 2.0 * np.pi * (t - t0) / NODAL_PERIOD_YEARS
        columns += [np.cos(w), np.sin(w)]
    x = np.column_stack(columns)
    beta, _, rank, _ = np.linalg.lstsq(x, y, rcond=None)
    if rank < p:
        raise FitError(f"msl_trend design matrix is rank {rank} < {p}; annual means span too short a time")
    resid = y - x @ beta
    rss = float(resid @ resid)
    s2 = rss / (n - p)
    cov = s2 * np.linalg.inv(x.T @ x)
    r1 = float(np.sum(resid[:-1] * resid[1:]) / rss) if rss > 0 else 0.0
    n_eff = effective_sample_size(n, r1) if adjust_autocorrelation else float(n)
    if adjust_autocorrelation and r1 > 0:
        if n_eff <= p:
            warnings.warn(f"msl_trend: effective sample size {n_eff:.2f} <= {p} parameters (r1 = {r1:.2f}); "
                          "standard errors are infinite", ExtremesWarning, stacklevel=2)
            inflation = float("inf")
        else:
            inflation = math.sqrt((n - p) / (n_eff - p))
    else:
        inflation = 1.0
    cov = cov * inflation ** 2 if math.isfinite(inflation) else np.full_like(cov, np.inf)
    if nodal:
        amp = float(math.hypot(beta[2], beta[3]))
        phase = float(np.degrees(np.arctan2(beta[3], beta[2])) % 360.0)
    else:
        amp = phase = float("nan")
    return MSLTrend(
        trend_m_per_year=float(beta[1]), trend_se_m_per_year=float(math.sqrt(cov[1, 1])), reference_year=t0,
        msl_at_reference_m=float(beta[0]), msl_at_reference_se_m=float(math.sqrt(cov[0, 0])), n_years=n,
        r1=r1, n_effective=float(n_eff), se_inflation=float(inflation), nodal=bool(nodal),
        nodal_amplitude_m=amp, nodal_phase_deg=phase, residual_std_m=float(math.sqrt(rss / n)),
        first_year=int(math.floor(t[0])), last_year=int(math.floor(t[-1])),
        covariance=((float(cov[0, 0]), float(cov[0, 1])), (float(cov[1, 0]), float(cov[1, 1]))), datum=datum)


def adjust_to_epoch(series_m: pd.Series, trend: MSLTrend | float, epoch_year: float) -> pd.Series:
    """State a level series at the mean sea level of an epoch.

    Parameters
    ----------
    series_m : pandas.Series
        Levels (or residuals) on a tz-aware UTC index. [m]
    trend : MSLTrend or float
        The MSL trend, or its rate. [m/year]
    epoch_year : float
        Decimal year of the epoch. [years]

    Returns
    -------
    pandas.Series
        ``series_m + trend * (epoch_year - decimal_year(t))``: every value moved along the linear MSL trend to
        the epoch (METHODS sec. 7). ``attrs["epoch_year"]`` records the epoch.
    """
    if not isinstance(series_m, pd.Series):
        raise DataError(f"series_m must be a pandas Series; got {type(series_m).__name__}")
    index = _utc_index(series_m.index, "series_m")
    rate = float(trend.trend_m_per_year) if isinstance(trend, MSLTrend) else float(trend)
    epoch = float(epoch_year)
    if not (math.isfinite(rate) and math.isfinite(epoch)):
        raise ValueError(f"trend and epoch_year must be finite; got {rate} m/year and {epoch_year}")
    shift = rate * (epoch - decimal_year(index))
    out = pd.Series(series_m.to_numpy(dtype=float) + shift, index=index, name=series_m.name)
    out.index.name = series_m.index.name
    out.attrs = {**series_m.attrs, "epoch_year": epoch, "msl_trend_m_per_year": rate}
    return out
