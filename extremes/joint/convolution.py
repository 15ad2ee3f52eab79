r"""Convolution cores of the joint-probability methods, on plain arrays.

The still-water level at a high water (or an hour) is tide plus surge, :math:`Z = X + S`, with the tide
:math:`X` deterministic and known over a full nodal cycle and the surge :math:`S` random and independent of
it. The per-tide (per-hour) exceedance probability is the discrete convolution [1]_, [2]_

.. math:: Q(z) = \sum_k w_k\, P(S > z - X_k), \qquad \sum_k w_k = 1,

and the expected number of independent exceedance events per year is
:math:`E(z) = \theta(z)\, N\, Q(z)`, with :math:`N` tides (hours) per year and :math:`\theta(z)` the
extremal index at level :math:`z` [3]_. The return period is :math:`T = 1/E` (``"1/rate"``) and the annual
exceedance probability :math:`1 - e^{-E}`.

Two evaluations of :math:`Q` are offered: ``exact`` (sum over every tide value, in chunks) and ``binned``
(tide values spread linearly onto a regular grid of step ``h``, then one FFT convolution with the surge
survival function sampled on the same grid; error of order :math:`h^2 S''/8`, far below 1 mm for
``h = 1 mm``). The binned form is what makes the bootstrap fast: the tide histogram is transformed once
and every resampled surge distribution costs one FFT.

References
----------
.. [1] D. T. Pugh and J. M. Vassie, "Extreme sea-levels from tide and surge probability," in Proc. 16th
   Coastal Eng. Conf., Hamburg, 1978. New York: ASCE, 1979, pp. 911-930.
.. [2] C. Batstone et al., "A UK best-practice approach for extreme sea-level analysis along complex
   topographic coastlines," Ocean Eng., vol. 71, pp. 28-39, 2013, doi:10.1016/j.oceaneng.2013.02.003.
.. [3] J. A. Tawn and J. M. Vassie, "Extreme sea levels: the joint probabilities method revisited and
   revised," Proc. Inst. Civ. Eng. Pt 2, vol. 87, pp. 429-442, 1989.
"""
from __future__ import annotations

import logging
from dataclasses import dataclass

import numpy as np
from scipy import stats

from extremes.errors import DataError

logger = logging.getLogger(__name__)

__all__ = ["SurgeDistribution", "exceedance_per_tide", "levels_for_rates", "rate_grid", "return_levels_by_convolution"]


@dataclass(frozen=True, repr=False)
class SurgeDistribution:
    r"""Surge distribution: empirical body below a threshold, generalised Pareto tail above it.

    :math:`P(S > s) = \#\{s_i > s\}/n` for :math:`s < u`, and
    :math:`P(S > s) = p_u\,[1 + \xi (s - u)/\sigma]_+^{-1/\xi}` for :math:`s \ge u` (Coles 2001, ch. 4).

    Attributes
    ----------
    sample_m : numpy.ndarray
        Sorted surge sample that makes the body (may be empty when the tail alone is used). [m]
    threshold_m : float
        Threshold u where the tail starts. [m]
    tail_probability : float
        :math:`p_u = P(S > u)`.
    scale_m : float
        GPD scale :math:`\sigma`. [m]
    shape : float
        GPD shape :math:`\xi` (textbook sign, > 0 heavy tail).
    """

    sample_m: np.ndarray
    threshold_m: float
    tail_probability: float
    scale_m: float
    shape: float

    def __post_init__(self):
        sample = np.sort(np.asarray(self.sample_m, dtype=float).ravel())
        if np.any(~np.isfinite(sample)):
            raise DataError("SurgeDistribution.sample_m must be finite; drop NaN first")
        if not (0 < self.tail_probability <= 1) or not self.scale_m > 0:
            raise DataError("SurgeDistribution needs 0 < tail_probability <= 1 and scale_m > 0; got "
                            f"{self.tail_probability!r}, {self.scale_m!r}")
        object.__setattr__(self, "sample_m", sample)

    def __repr__(self) -> str:
        return (f"SurgeDistribution(n={self.sample_m.size}, threshold={self.threshold_m:.3f} m, "
                f"p_u={self.tail_probability:.4g}, scale={self.scale_m:.3f} m, shape={self.shape:.3f})")

    def sf(self, surge_m) -> np.ndarray:
        """Survival function :math:`P(S > s)` at ``surge_m`` [m]."""
        s = np.asarray(surge_m, dtype=float)
        tail = self.tail_probability * stats.genpareto.sf(s - self.threshold_m, self.shape, scale=self.scale_m)
        n = self.sample_m.size
        if n:
            body = (n - np.searchsorted(self.sample_m, s, side="right")) / n
        else:
            body = np.ones_like(s)
        return np.where(s >= self.threshold_m, tail, np.maximum(body, self.tail_probability))

    def isf(self, probability) -> np.ndarray:
        """Surge [m] exceeded with ``probability`` (inverse of :meth:`sf`)."""
        p = np.asarray(probability, dtype=float)
        with np.errstate(divide="ignore", invalid="ignore"):
            tail = self.threshold_m + stats.genpareto.isf(np.minimum(p / self.tail_probability, 1.0),
                                                          self.shape, scale=self.scale_m)
        if self.sample_m.size:
            body = np.quantile(self.sample_m, np.clip(1.0 - p, 0.0, 1.0))
        else:
            body = np.full_like(p, self.threshold_m)
        return np.where(p <= self.tail_probability, tail, np.minimum(body, self.threshold_m))

    def to_dict(self) -> dict:
        """JSON-ready summary (the sample itself is not stored)."""
        return {"n": int(self.sample_m.size), "threshold_m": float(self.threshold_m),
                "tail_probability": float(self.tail_probability), "scale_m": float(self.scale_m),
                "shape": float(self.shape)}


def _survival(surge):
    sf = getattr(surge, "sf", None)
    if not callable(sf):
        raise DataError(f"surge must have an sf method (a SurgeDistribution or a scipy frozen "
                        f"distribution); got {type(surge).__name__}")
    return sf


def _check_tide(tide_m, weights):
    tide = np.asarray(tide_m, dtype=float).ravel()
    if tide.size == 0 or np.any(~np.isfinite(tide)):
        raise DataError(f"tide_m must be a non-empty array of finite levels [m]; got {tide.size} values "
                        f"with {int(np.sum(~np.isfinite(tide)))} not finite")
    if weights is None:
        w = np.full(tide.size, 1.0 / tide.size)
    else:
        w = np.asarray(weights, dtype=float).ravel()
        if w.shape != tide.shape or np.any(w < 0) or not np.isfinite(w.sum()) or w.sum() <= 0:
            raise DataError("weights must be non-negative, finite and one per tide value; got shape "
                            f"{w.shape} for {tide.size} tide values")
        w = w / w.sum()
    return tide, w


def exceedance_per_tide(levels_m, tide_m, surge, *, weights=None, grid_step_m=None,
                        chunk_size=2_000_000) -> np.ndarray:
    r"""Per-tide (or per-hour) exceedance probability :math:`Q(z)` of total levels.

    Parameters
    ----------
    levels_m : array-like of float
        Total still-water levels z. [m]
    tide_m : array-like of float
        Tide values X_k (high waters of a nodal cycle, or hourly tide). [m]
    surge : SurgeDistribution or scipy.stats frozen distribution
        Surge distribution; only its ``sf`` is used. [m]
    weights : array-like of float, optional
        Probability of each tide value (default equal).
    grid_step_m : float, optional
        If given, the binned FFT convolution on a grid of this step [m] is used and Q is interpolated
        (linearly in log Q) to ``levels_m``; by default every tide value is summed exactly.
    chunk_size : int
        Number of (level, tide) pairs evaluated at once in the exact sum.

    Returns
    -------
    numpy.ndarray
        :math:`Q(z) = \sum_k w_k P(S > z - X_k)`, same shape as ``levels_m``.

    Notes
    -----
    Pugh and Vassie [1]_ for hourly values; Batstone et al. [2]_ for high waters and skew surges.
    """
    sf = _survival(surge)
    tide, w = _check_tide(tide_m, weights)
    levels = np.asarray(levels_m, dtype=float)
    flat = levels.ravel()
    if grid_step_m is None:
        out = np.empty(flat.size)
        step = max(1, int(chunk_size // tide.size))
        for start in range(0, flat.size, step):
            z = flat[start:start + step]
            out[start:start + step] = sf(z[:, None] - tide[None, :]) @ w
        return out.reshape(levels.shape)
    h = float(grid_step_m)
    z0 = np.floor(flat.min() / h) * h
    nz = int(np.ceil((flat.max() - z0) / h)) + 2
    z_grid = z0 + h * np.arange(nz)
    q_grid = _binned_exceedance(tide, w, lambda s: sf(s)[None, :], z0=z0, nz=nz, h=h)[0]
    return _interp_log(flat, z_grid, q_grid).reshape(levels.shape)


def _interp_log(x, xp, yp):
    with np.errstate(divide="ignore"):
        return np.exp(np.interp(x, xp, np.log(np.maximum(yp, 1e-300))))


def _tide_histogram(tide, w, h):
    """Spread tide values linearly onto a grid of step h (cloud-in-cell); returns (x0, histogram)."""
    x0 = np.floor(tide.min() / h) * h
    pos = (tide - x0) / h
    i = np.floor(pos).astype(np.int64)
    frac = pos - i
    nx = int(i.max()) + 2
    hist = np.bincount(i, weights=w * (1.0 - frac), minlength=nx) + np.bincount(i + 1, weights=w * frac,
                                                                                  minlength=nx)
    return x0, hist[:nx]


def _fft_convolve_rows(rows: np.ndarray, kernel: np.ndarray) -> np.ndarray:
    """Full linear convolution of each row of ``rows`` with ``kernel`` by real FFTs (numpy only, so that the
    slow import of scipy.signal is avoided)."""
    n = rows.shape[-1] + kernel.size - 1
    size = 1 << int(np.ceil(np.log2(max(n, 1))))
    spectrum = np.fft.rfft(rows, size, axis=-1) * np.fft.rfft(kernel, size)
    return np.fft.irfft(spectrum, size, axis=-1)[..., :n]


def _binned_exceedance(tide, w, sf_rows, *, z0, nz, h):
    """Q on the grid z0 + h*j (j < nz) for each row of ``sf_rows(s)`` (shape (B, len(s)))."""
    x0, hist = _tide_histogram(tide, w, h)
    nx = hist.size
    m = np.arange(-(nx - 1), nz)
    s = (z0 - x0) + h * m
    sfv = np.atleast_2d(sf_rows(s))
    conv = _fft_convolve_rows(sfv, hist)
    q = conv[:, nx - 1:nx - 1 + nz]
    return np.clip(q, 0.0, 1.0)


def rate_grid(tide, w, sf_rows, *, z_lo, z_hi, h, events_per_year):
    """Levels grid [m] and per-year exceedance rate N*Q on it (rows: one per surge distribution)."""
    nz = int(np.ceil((z_hi - z_lo) / h)) + 1
    z0 = np.floor(z_lo / h) * h
    z = z0 + h * np.arange(nz)
    q = _binned_exceedance(tide, w, sf_rows, z0=z0, nz=nz, h=h)
    return z, events_per_year * q


def levels_for_rates(z_grid, rate, target_rates) -> np.ndarray:
    """Invert a decreasing rate curve: the level [m] whose rate [1/year] equals each target.

    Linear in log rate between grid levels (exact for an exponential tail). Targets outside the rates
    on the grid give NaN.
    """
    rate = np.asarray(rate, dtype=float)
    target = np.log(np.asarray(target_rates, dtype=float))
    pos = rate > 0
    zr, lr = z_grid[pos][::-1], np.log(rate[pos])[::-1]
    # make -log rate increasing for np.interp: keep the running maximum and strict increases only
    lr = np.maximum.accumulate(lr)
    keep = np.concatenate([[True], np.diff(lr) > 0])
    zr, lr = zr[keep], lr[keep]
    if zr.size < 2:
        return np.full(target.shape, np.nan)
    out = np.interp(target, lr, zr, left=np.nan, right=np.nan)
    return out


def return_levels_by_convolution(tide_m, surge, *, events_per_year, periods_years, extremal_index=1.0,
                                 weights=None, grid_step_m=0.005) -> np.ndarray:
    r"""Return levels [m] of :math:`E(z) = \theta N Q(z)` for the periods (``1/rate`` definition).

    Parameters
    ----------
    tide_m : array-like of float
        Tide values (high waters or hours). [m]
    surge : SurgeDistribution or scipy.stats frozen distribution
        Needs ``sf`` and ``isf``. [m]
    events_per_year : float
        Tides (or hours) per year, N. [1/year]
    periods_years : array-like of float
        Return periods T = 1/E. [years]
    extremal_index : float or callable
        :math:`\theta`, a constant or a function of level.
    weights : array-like, optional
        Probability of each tide value (default equal).
    grid_step_m : float
        Step of the binned convolution. [m]

    Returns
    -------
    numpy.ndarray
        Level exceeded on average once per T years. [m]
    """
    tide, w = _check_tide(tide_m, weights)
    periods = np.asarray(periods_years, dtype=float)
    if np.any(~np.isfinite(periods)) or np.any(periods <= 0):
        raise DataError(f"periods_years must be finite and > 0; got {periods.tolist()}")
    theta = extremal_index if callable(extremal_index) else (lambda z: np.full_like(z, float(extremal_index)))
    n = float(events_per_year)
    z_lo = tide.min() + float(surge.isf(min(0.9, 3.0 / n)))
    z_hi = tide.max() + float(surge.isf(1.0 / periods.max() / n / 1000.0))
    h = max(float(grid_step_m), (z_hi - z_lo) / 2 ** 16)
    z, rate = rate_grid(tide, w, lambda s: np.asarray(surge.sf(s))[None, :], z_lo=z_lo, z_hi=z_hi, h=h,
                        events_per_year=n)
    return levels_for_rates(z, theta(z) * rate[0], 1.0 / periods)
