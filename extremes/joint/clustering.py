r"""Storm clustering at the level being estimated: an extremal index as a function of total level.

A storm raises the surge over several consecutive tides, so exceedances of a level come in clusters and
the number of independent events per year is :math:`\theta(z)\,N\,Q(z)`, not :math:`N\,Q(z)` [1]_.
Clustering weakens as the level rises: at moderate levels several tides of one storm exceed, at extreme
levels only the tide that meets the storm peak does. So :math:`\theta` is estimated *as a function of the
total level*, not once for the surge.

Method (this package's choice). The observed surge sequence (skew surges, one per predicted high water, or
hourly residuals) is superimposed on the predicted tide of the nodal cycle at ``n_offsets`` random shifts, giving
``n_offsets`` synthetic total-level series that keep the observed storm sequences and the real tidal
sequence (spring-neap, diurnal inequality) but not their chance phase. Each skew surge is laid on the tide
sequence by the position of its own predicted high water in the full high-water sequence of the record
(:func:`high_water_positions`), never by a fixed 12.42-h step: with a diurnal tide a fixed step would put a
storm on every other high water and run the tide sequence at twice its real speed. At each level of a grid of high
levels the extremal index is estimated from the pooled exceedances by the blocks estimator [3]_ over blocks
of two spring-neap cycles (or by the intervals [2]_ or runs estimators). The blocks estimator is the
default because the spring-neap cycle groups independent exceedances in time, which the runs and intervals
estimators read as clustering. Levels are taken up to where the synthetic series exceed, on average,
``min_exceedances`` times; above that, :math:`\theta` follows the straight line fitted to the upper half of
the table when it rises, capped at 1 (default), or is held at its last estimate. The unclustered curve,
:math:`\theta = 1`, is the upper bound. In the Monte Carlo check (benchmarks/bench_joint.py) the estimates
follow the true :math:`\theta(z)` of the simulated process within the record, and holding the last value
under-reads the 100-year level by about 2 %, the trend by about 1 %.

References
----------
.. [1] J. A. Tawn and J. M. Vassie, "Extreme sea levels: the joint probabilities method revisited and
   revised," Proc. Inst. Civ. Eng. Pt 2, vol. 87, pp. 429-442, 1989.
.. [2] C. A. T. Ferro and J. Segers, "Inference for clusters of extreme values," J. R. Stat. Soc. B,
   vol. 65, no. 2, pp. 545-556, 2003, doi:10.1111/1467-9868.00401.
.. [3] R. L. Smith and I. Weissman, "Estimating the extremal index," J. R. Stat. Soc. B, vol. 56, no. 3,
   pp. 515-528, 1994, doi:10.1111/j.2517-6161.1994.tb01997.x.
"""
from __future__ import annotations

import logging

import numpy as np
import pandas as pd

from extremes.constants import DAYS_PER_YEAR
from extremes.errors import DataError

logger = logging.getLogger(__name__)

__all__ = ["extremal_index_by_level", "theta_function", "cycle_positions", "high_water_positions",
           "positions_from_spacing", "spring_neap_block_length"]

#: two spring-neap cycles (2 x 14.765 d, METHODS sec. 6) [d]: the default length of a block of the blocks estimator
SPRING_NEAP_PAIR_DAYS = 2 * 14.765
#: days per (tropical) year [d]
_DAYS_PER_YEAR = DAYS_PER_YEAR


def cycle_positions(times, *, step_hours) -> np.ndarray:
    """Integer position of each time on a regular step (tidal cycles or hours) from the first time.

    Parameters
    ----------
    times : pandas.DatetimeIndex
        tz-aware UTC times.
    step_hours : float
        Step [h] (12.42 for semidiurnal tidal cycles, 1 for hourly values).
    """
    idx = pd.DatetimeIndex(times)
    if idx.tz is None:
        raise ValueError("times must be tz-aware UTC; got naive times")
    hours = (idx - idx[0]) / pd.Timedelta(hours=1)
    return np.rint(np.asarray(hours, dtype=float) / step_hours).astype(np.int64)


def high_water_positions(times, high_water_times, *, tolerance_hours=1.0) -> np.ndarray:
    """Position of each skew surge in the full sequence of predicted high waters of the record.

    Each skew surge is indexed by its own predicted high water, so consecutive tides of a storm fall on
    consecutive high waters of the tide sequence whatever the tide type (semidiurnal, mixed or diurnal), and
    cycles missing from the record leave gaps.

    Parameters
    ----------
    times : pandas.DatetimeIndex
        Predicted high-water times of the skew surges (tz-aware UTC).
    high_water_times : array-like of datetime
        Every predicted high water over the record, in time order (tz-aware UTC).
    tolerance_hours : float
        Largest distance from a skew surge's time to its high water. [h]

    Returns
    -------
    numpy.ndarray
        Integer positions, counted from the first skew surge's high water.

    Raises
    ------
    DataError
        If a skew surge lies farther than ``tolerance_hours`` from every predicted high water.
    """
    idx, hw = pd.DatetimeIndex(times), pd.DatetimeIndex(high_water_times)
    if idx.tz is None or hw.tz is None:
        raise ValueError("times and high_water_times must be tz-aware UTC; got naive times")
    t, h = idx.as_unit("ns").asi8, np.sort(hw.as_unit("ns").asi8)
    if h.size == 0:
        raise DataError("high_water_times is empty; expected the predicted high waters of the record")
    k = np.clip(np.searchsorted(h, t), 1, max(h.size - 1, 1))
    left = h[np.minimum(k - 1, h.size - 1)]
    right = h[np.minimum(k, h.size - 1)]
    pos = np.where(np.abs(t - left) <= np.abs(right - t), k - 1, k)
    pos = np.minimum(pos, h.size - 1)
    far = np.abs(h[pos] - t) > tolerance_hours * 3.6e12
    if np.any(far):
        raise DataError(f"{int(far.sum())} skew surge(s) lie more than {tolerance_hours:g} h from every predicted "
                        "high water; expected the high waters of the same tide prediction")
    return (pos - pos.min()).astype(np.int64) if pos.size else pos.astype(np.int64)


def positions_from_spacing(times) -> np.ndarray:
    """Positions of skew surges in their high-water sequence, inferred from their times alone (a fallback).

    The typical step is the median spacing of consecutive skew surges (12.42 h for a semidiurnal tide, 24.84 h
    for a diurnal one, about 12.4 h for a mixed tide whose spacings alternate); a spacing of ``d`` advances
    the position by ``max(1, round(d / step))``, so gaps are kept. Prefer :func:`high_water_positions` (or the
    ``high_water_index`` column of :func:`extremes.skewsurge.skew_surges_from_turning_points`), which is exact
    where the number of high waters per day changes (mixed tides near the diurnal limit).
    """
    idx = pd.DatetimeIndex(times)
    if idx.tz is None:
        raise ValueError("times must be tz-aware UTC; got naive times")
    ns = np.sort(idx.as_unit("ns").asi8)
    if ns.size < 2:
        return np.zeros(ns.size, dtype=np.int64)
    d = np.diff(ns).astype(float)
    step = float(np.median(d[d > 0])) if np.any(d > 0) else 1.0
    steps = np.maximum(1, np.rint(d / step)).astype(np.int64)
    return np.concatenate([[0], np.cumsum(steps)])


def spring_neap_block_length(high_waters_per_year) -> int:
    """Blocks-estimator block of two spring-neap cycles, in high waters (57 for a semidiurnal tide)."""
    return max(4, int(round(float(high_waters_per_year) * SPRING_NEAP_PAIR_DAYS / _DAYS_PER_YEAR)))


def _blocks_estimate(exceed, block, valid_blocks, n):
    """Blocks estimator [3]_: log(1 - Z/k) / (r log(1 - N/n)) over the complete blocks (n values in them)."""
    k = valid_blocks.sum()
    exc_per_block = np.bincount(block[exceed], minlength=valid_blocks.size)[valid_blocks]
    big_z, big_n = np.count_nonzero(exc_per_block), exc_per_block.sum()
    if big_z == k or big_n == 0:
        return np.nan
    r = n / k
    return float(min(1.0, np.log1p(-big_z / k) / (r * np.log1p(-big_n / n))))


def _estimate(positions, *, estimator, run_length):
    from extremes.extremal import dependence

    if estimator == "intervals":
        return float(dependence.extremal_index_intervals(positions))
    return float(dependence.extremal_index_runs(positions, run_length=int(run_length)))


def extremal_index_by_level(tide_sequence_m, surge_m, positions, *, levels_m=None, n_offsets=64,
                            min_exceedances=10, max_exceedance_fraction=0.02, n_levels=20,
                            estimator="blocks", block_length=57, run_length=6, seed=0) -> pd.DataFrame:
    r"""Extremal index of total level (tide + surge) on a grid of high levels.

    Parameters
    ----------
    tide_sequence_m : array-like of float
        Predicted tide in time order over the nodal cycle (high waters, or hourly values). [m]
    surge_m : array-like of float
        Observed surge sequence (skew surges or hourly residuals), finite values only. [m]
    positions : array-like of int
        Position of each surge value in steps of the tide sequence (gaps are missing positions): for skew
        surges, the index of each one's own predicted high water in the full high-water sequence of the record
        (:func:`high_water_positions`), right for semidiurnal, mixed and diurnal tides alike.
    levels_m : array-like of float, optional
        Levels at which to estimate; by default ``n_levels`` levels from the level exceeded by
        ``max_exceedance_fraction`` of the values to the level exceeded ``min_exceedances`` times. [m]
    n_offsets : int
        Number of random shifts of the tide under the surge sequence.
    min_exceedances : int
        Fewest exceedances per synthetic series for an estimate.
    estimator : {"blocks", "intervals", "runs"}
        Blocks estimator [3]_ over blocks of ``block_length`` steps (default; 57 tidal cycles = two
        spring-neap cycles, so that the tide's own spring-neap grouping of exceedances, which is not storm
        clustering, averages out within a block), the Ferro-Segers intervals estimator [2]_, or the runs
        estimator with ``run_length`` steps (both from :mod:`extremes.extremal.dependence`; both read the
        spring-neap grouping of independent exceedances as clustering, so they understate theta at
        moderate levels).
    seed : int
        Seed of the shifts.

    Returns
    -------
    pandas.DataFrame
        Columns ``level_m``, ``theta``, ``exceedances_per_series``; ``attrs`` holds the method.
    """
    tide = np.asarray(tide_sequence_m, dtype=float).ravel()
    surge = np.asarray(surge_m, dtype=float).ravel()
    pos = np.asarray(positions, dtype=np.int64).ravel()
    if surge.size != pos.size or surge.size < 50 or np.any(~np.isfinite(surge)):
        raise DataError(f"surge_m must hold >= 50 finite values with one position each; got {surge.size} "
                        f"values and {pos.size} positions")
    if estimator not in ("blocks", "intervals", "runs"):
        raise DataError(f"estimator must be 'blocks', 'intervals' or 'runs'; got {estimator!r}")
    rng = np.random.default_rng(seed)
    offsets = rng.integers(0, tide.size, n_offsets)
    total = tide[(pos[None, :] + offsets[:, None]) % tide.size] + surge[None, :]
    span = int(pos.max() - pos.min()) + 10 * max(run_length, block_length, 1) + 1000
    span = block_length * (span // block_length + 1)
    gpos = (pos[None, :] - pos.min()) + span * np.arange(n_offsets)[:, None]
    flat_total, flat_pos = total.ravel(), gpos.ravel()
    if levels_m is None:
        counts = np.geomspace(max(max_exceedance_fraction * surge.size, 2 * min_exceedances), min_exceedances,
                              n_levels)
        levels = np.quantile(flat_total, 1.0 - counts / surge.size)
    else:
        levels = np.sort(np.asarray(levels_m, dtype=float))
    block = flat_pos // block_length
    n_per_block = np.bincount(block)
    valid_blocks = n_per_block >= 0.9 * block_length
    n_valid = int(n_per_block[valid_blocks].sum())
    rows = []
    for z in levels:
        above = flat_total > z
        per_series = np.count_nonzero(above) / n_offsets
        if per_series < min_exceedances or per_series * n_offsets < 3:
            continue
        if estimator == "blocks":
            theta = _blocks_estimate(above, block, valid_blocks, n_valid)
        else:
            theta = _estimate(np.sort(flat_pos[above]), estimator=estimator, run_length=run_length)
        if np.isfinite(theta):
            rows.append((float(z), theta, per_series))
    table = pd.DataFrame(rows, columns=["level_m", "theta", "exceedances_per_series"])
    table.attrs.update({"units": "m", "estimator": estimator, "n_offsets": int(n_offsets),
                        "method": "observed surge sequence superimposed on shifted predicted tide"})
    if table.empty:
        raise DataError(f"too few exceedances to estimate an extremal index (need >= {min_exceedances} "
                        "per synthetic series)")
    return table


def theta_function(table, *, beyond="hold"):
    """Callable level [m] -> extremal index from a table of :func:`extremal_index_by_level`.

    Linear between the table's levels and held below it. Above the highest level: ``beyond="hold"`` keeps
    the last estimate; ``beyond="trend"`` extends the straight line fitted (least squares) to the upper half
    of the table, when it rises, capped at 1 (clustering keeps weakening with level).
    """
    if table is None:
        return lambda z: np.ones_like(np.asarray(z, dtype=float))
    if np.isscalar(table):
        value = float(table)
        return lambda z: np.full_like(np.asarray(z, dtype=float), value)
    if beyond not in ("hold", "trend"):
        raise DataError(f"beyond must be 'hold' or 'trend'; got {beyond!r}")
    levels = np.asarray(table["level_m"], dtype=float)
    theta = np.clip(np.asarray(table["theta"], dtype=float), 1e-3, 1.0)
    slope = 0.0
    if beyond == "trend" and levels.size >= 4:
        half = levels.size // 2
        slope = max(0.0, float(np.polyfit(levels[half:], theta[half:], 1)[0]))
    top_z, top_t = levels[-1], theta[-1]

    def theta_of(z):
        z = np.asarray(z, dtype=float)
        inside = np.interp(z, levels, theta)
        return np.where(z > top_z, np.minimum(1.0, top_t + slope * (z - top_z)), inside)

    return theta_of
