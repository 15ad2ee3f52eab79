r"""Extremal index: how strongly exceedances of a high threshold cluster in time.

θ ∈ (0, 1]; 1/θ is roughly the mean cluster size, and P(M_n ≤ u_n) ≈ F(u_n)^{nθ} [1]_ sec. 5.2.

References
----------
.. [1] S. Coles, *An Introduction to Statistical Modeling of Extreme Values*. London, U.K.: Springer, 2001,
       ch. 5, doi: 10.1007/978-1-4471-3675-0.
.. [2] C. A. T. Ferro and J. Segers, "Inference for clusters of extreme values," *J. R. Stat. Soc. B*,
       vol. 65, no. 2, pp. 545-556, 2003, doi: 10.1111/1467-9868.00401.
"""
from __future__ import annotations

import logging

import numpy as np
import pandas as pd

from extremes.errors import DataError

logger = logging.getLogger(__name__)


def _exceedance_positions(data, threshold):
    """Sample positions (integers on the sampling grid) of exceedances."""
    if threshold is None:
        s = np.asarray(data, dtype=float).ravel()
        if s.size and (np.any(~np.isfinite(s)) or np.any(s != np.round(s)) or np.any(np.diff(s) <= 0)):
            raise DataError("exceedance positions must be increasing integers (sample numbers); "
                            "pass a series and a threshold instead")
        return s.astype(np.int64)
    if isinstance(data, pd.Series):
        if isinstance(data.index, pd.DatetimeIndex) and data.index.tz is None:
            raise DataError("series has naive time stamps; expected tz-aware UTC times")
        values = data.to_numpy(dtype=float)
    else:
        values = np.asarray(data, dtype=float).ravel()
    if not np.isfinite(threshold):
        raise ValueError(f"threshold must be a finite level [m]; got {threshold!r}")
    with np.errstate(invalid="ignore"):
        return np.flatnonzero(values > threshold)


def extremal_index_runs(data, *, threshold=None, run_length):
    r"""Runs estimator of the extremal index: number of clusters / number of exceedances [1]_ sec. 5.3.2.

    A new cluster starts when at least ``run_length`` samples lie between two exceedances.

    Parameters
    ----------
    data : pandas.Series, array-like
        A series on a regular sampling grid (with ``threshold``), or the increasing sample positions of the
        exceedances (``threshold=None``).
    threshold : float, optional
        Threshold. [m]
    run_length : int
        Run length r. [samples]

    Returns
    -------
    float
        θ̂ (NaN with fewer than 2 exceedances).
    """
    if not (isinstance(run_length, (int, np.integer)) and run_length >= 1):
        raise ValueError(f"run_length must be a positive integer [samples]; got {run_length!r}")
    S = _exceedance_positions(data, threshold)
    if S.size < 2:
        return float("nan")
    n_clusters = 1 + int(np.sum(np.diff(S) - 1 >= run_length))
    return n_clusters / S.size


def extremal_index_intervals(data, *, threshold=None):
    r"""Intervals estimator of the extremal index (Ferro & Segers 2003) [2]_.

    With exceedance times S_1 < ... < S_N and T_i = S_{i+1} - S_i:
    θ̂ = min{1, 2(ΣT_i)² / [(N - 1)ΣT_i²]} if max T_i ≤ 2, else
    min{1, 2[Σ(T_i - 1)]² / [(N - 1)Σ(T_i - 1)(T_i - 2)]}.

    Parameters
    ----------
    data : pandas.Series, array-like
        A series on a regular sampling grid (with ``threshold``), or the exceedance positions.
    threshold : float, optional
        Threshold. [m]

    Returns
    -------
    float
        θ̂ (NaN with fewer than 2 exceedances).
    """
    S = _exceedance_positions(data, threshold)
    if S.size < 2:
        return float("nan")
    T = np.diff(S).astype(float)
    N = S.size
    if T.max() <= 2:
        theta = 2 * T.sum() ** 2 / ((N - 1) * np.sum(T**2))
    else:
        den = (N - 1) * np.sum((T - 1) * (T - 2))
        theta = 2 * np.sum(T - 1) ** 2 / den if den > 0 else 1.0
    return float(min(1.0, theta))


__all__ = ["extremal_index_runs", "extremal_index_intervals"]
