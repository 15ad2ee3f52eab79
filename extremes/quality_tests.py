"""The row tests of quality control on the working series: sampling-era grids, spikes, flat lines, gaps.

Private helpers of :mod:`extremes.quality` (its module notes give the rules and their sources); each takes
plain arrays and the sampling eras of :func:`extremes.sampling.sampling_eras`.
"""
from __future__ import annotations

import logging
import warnings

import numpy as np
import pandas as pd

from extremes import sampling

logger = logging.getLogger(__name__)

#: consistency constant of the median absolute deviation for Gaussian data [CP]
MAD_TO_SIGMA = 1.4826
_MAD_TO_SIGMA = MAD_TO_SIGMA
#: a reading within this of its neighbours' running median is never a spike: on smooth fine-sampled records
#: the robust scale falls to millimetres and k times it to the gauge's own accuracy (about a centimetre;
#: common practice) [m]
SPIKE_FLOOR_M = 0.05


def _sorted_unique(values: np.ndarray) -> np.ndarray:
    ordered = np.sort(values)
    if len(ordered) < 2:
        return ordered
    return ordered[np.concatenate([[True], ordered[1:] != ordered[:-1]])]


def _half_window(interval: pd.Timedelta, hours: float) -> int:
    if pd.isna(interval) or interval <= pd.Timedelta(0):
        return 2
    return max(3, int(round(pd.Timedelta(hours=hours) / interval / 2.0)))


def _spikes(work: np.ndarray, interval, k: float, hours: float, *, times) -> tuple[np.ndarray, float]:
    """Spikes: |x - x~| > k * 1.4826 * MAD of (x - x~), x~ the running median of the neighbours.

    x~ at sample i is the mean of the median of the ``h`` samples before i and the median of the ``h``
    samples after i (``2h`` samples spanning ``hours``), so a sample never predicts itself (on a steep tide a
    centred median equals the sample and the spread of x - x~ collapses) and a rising or falling tide is
    followed without lag.
    """
    half = _half_window(interval, hours)
    finite = ~np.isnan(work)
    if finite.sum() < 2 * half + 1:
        return np.zeros(len(work), dtype=bool), float("nan")
    rolling = pd.Series(work).rolling(half, min_periods=max(1, half // 2 + 1)).median().to_numpy()
    before = np.concatenate([[np.nan], rolling[:-1]])            # samples i-h .. i-1
    after = np.concatenate([rolling[half:], np.full(half, np.nan)])  # samples i+1 .. i+h
    predicted = 0.5 * (before + after)
    deviation = work - predicted
    ok = ~np.isnan(deviation)
    if not ok.any():
        return np.zeros(len(work), dtype=bool), float("nan")
    centre = np.median(deviation[ok])
    scale = _MAD_TO_SIGMA * np.median(np.abs(deviation[ok] - centre))
    if not scale > 0:
        logger.info("spike test skipped: the running-median deviations have zero spread")
        return np.zeros(len(work), dtype=bool), float(scale)
    # a spike stands alone: its neighbours agree with their own running median. Where they do not (a storm
    # surge rising or turning within the window) the local spread of the deviations sets the scale, so a
    # fast but smooth change is not taken for a spike
    magnitude = np.abs(deviation - centre)
    with np.errstate(invalid="ignore"):
        spikes = magnitude > max(k * scale, SPIKE_FLOOR_M)
    where = np.flatnonzero(spikes)
    if where.size:  # the local spread, only where the record-wide test fires
        offsets = np.arange(-half, half + 1)
        idx = where[:, None] + offsets[None, :]
        window = np.where((idx >= 0) & (idx < magnitude.size), magnitude[np.clip(idx, 0, magnitude.size - 1)],
                          np.nan)
        enough = np.isfinite(window).sum(axis=1) >= half + 1
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)  # all-NaN windows: not enough neighbours
            local = _MAD_TO_SIGMA * np.nanmedian(window, axis=1)
        spikes[where[enough & (magnitude[where] <= k * local)]] = False
    return spikes & ok, float(scale)


def _era_grids(stamps: np.ndarray, eras: pd.DataFrame, unit: str) -> tuple[np.ndarray, np.ndarray, int]:
    """The working time axis: each era's grid (regular eras whose stamps all lie on it) or its stamps.

    Returns the times, the grid step at each time (0 where the era keeps its stamps) and the number of
    stamps off their era's grid.
    """
    if eras.empty:
        return stamps, np.zeros(len(stamps), dtype=np.int64), 0
    starts = pd.DatetimeIndex(eras["start"]).as_unit(unit).asi8
    intervals = pd.TimedeltaIndex(eras["interval"]).as_unit(unit).asi8
    bounds = np.append(np.searchsorted(stamps, starts[1:]), len(stamps))
    lo = 0
    times, steps, off = [], [], 0
    for k, hi in enumerate(bounds):
        piece = stamps[lo:hi]
        step = int(intervals[k])
        misplaced = int(np.count_nonzero((piece - piece[0]) % step)) if step > 0 and len(piece) else len(piece)
        if bool(eras["regular"].iloc[k]) and misplaced == 0 and len(piece):
            n_grid = int((piece[-1] - piece[0]) // step) + 1
            times.append(piece[0] + step * np.arange(n_grid, dtype=np.int64))
            steps.append(np.full(n_grid, step, dtype=np.int64))
        else:
            off += misplaced if bool(eras["regular"].iloc[k]) else 0
            times.append(piece)
            steps.append(np.zeros(len(piece), dtype=np.int64))
        lo = hi
    return np.concatenate(times), np.concatenate(steps), off


def _spikes_by_era(work: np.ndarray, index: pd.DatetimeIndex, eras: pd.DataFrame, k: float, hours: float,
                   exclude: np.ndarray | None = None) -> tuple[np.ndarray, list]:
    """The spike test of :func:`_spikes` in each era with the era's interval and its own robust scale."""
    spikes = np.zeros(len(work), dtype=bool)
    scales = []
    if eras.empty:
        return spikes, scales
    starts = np.searchsorted(index.as_unit("ns").asi8, pd.DatetimeIndex(eras["start"]).as_unit("ns").asi8)
    bounds = np.append(starts[1:], len(work))
    for lo, hi, interval in zip(starts, bounds, eras["interval"]):
        piece = work[lo:hi].copy()
        if exclude is not None:
            piece[exclude[lo:hi]] = np.nan
        found, scale = _spikes(piece, interval, k, hours, times=index[lo:hi])
        spikes[lo:hi] = found
        scales.append(float(scale))
    return spikes, scales


def _flat_runs(work: np.ndarray, times: np.ndarray, *, min_run: int, min_span: int,
               steps: np.ndarray) -> np.ndarray:
    """Positions in runs of >= min_run consecutive identical readings spanning >= min_span (time units).

    ``steps`` is the grid step at each position (0 where the stamps are kept as read): on a grid, a run
    needs consecutive grid slots.
    """
    n = len(work)
    if n < min_run:
        return np.zeros(n, dtype=bool)
    same = work[1:] == work[:-1]  # NaN breaks a run
    same &= (steps[1:] == 0) | (np.diff(times) == steps[1:])
    new_run = np.concatenate([[True], ~same])
    run_id = np.cumsum(new_run) - 1
    run_start = np.flatnonzero(new_run)
    run_end = np.append(run_start[1:], n) - 1
    length = run_end - run_start + 1
    span = times[run_end] - times[run_start]
    flagged_run = (length >= min_run) & (span >= min_span) & ~np.isnan(work[run_start])
    return flagged_run[run_id]


#: an irregular era has a gap where the spacing exceeds this many times its median spacing [-]
IRREGULAR_GAP_FACTOR = 2.0


def _gaps(reading_times: np.ndarray, eras: pd.DataFrame, unit: str) -> pd.DataFrame:
    """Gaps: spacings between readings longer than the interval of the eras on both sides."""
    if eras.empty or len(reading_times) < 2:
        return pd.DataFrame({"start": pd.DatetimeIndex([], tz="UTC"), "end": pd.DatetimeIndex([], tz="UTC"),
                             "hours": np.array([], dtype=float)})
    step = sampling.sample_intervals_ns(reading_times, eras)
    regular = eras["regular"].to_numpy()[np.clip(np.searchsorted(
        pd.DatetimeIndex(eras["start"]).as_unit("ns").asi8, reading_times, side="right") - 1, 0, len(eras) - 1)]
    allowed = np.where(regular, step, IRREGULAR_GAP_FACTOR * step)
    spacing = np.diff(reading_times)
    limit = np.maximum(allowed[:-1], allowed[1:])
    where = np.flatnonzero(spacing > limit)
    before, after = step[where], step[where + 1]
    start = pd.to_datetime(reading_times[where] + before, unit=unit, utc=True)
    end = pd.to_datetime(reading_times[where + 1] - after, unit=unit, utc=True)
    hours = (spacing[where] - before) * (pd.Timedelta(1, unit=unit) / pd.Timedelta(hours=1))
    return pd.DataFrame({"start": start, "end": end, "hours": hours.astype(float)})
