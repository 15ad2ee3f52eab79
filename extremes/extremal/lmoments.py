r"""L-moments: sample L-moments (scipy) and the GEV parameters from them.

References
----------
.. [1] J. R. M. Hosking, "L-moments: analysis and estimation of distributions using linear combinations of
   order statistics," *J. R. Stat. Soc. B*, vol. 52, pp. 105-124, 1990.
.. [2] J. R. M. Hosking and J. R. Wallis, *Regional Frequency Analysis*. Cambridge, U.K.: Cambridge Univ. Press,
   1997.
.. [3] J. R. M. Hosking, J. R. Wallis and E. F. Wood, "Estimation of the generalized extreme-value distribution by
   the method of probability-weighted moments," *Technometrics*, vol. 27, pp. 251-261, 1985.
"""
from __future__ import annotations

import math

import numpy as np
from scipy import special, stats

from extremes.constants import EULER_GAMMA, SHAPE_EPS

__all__ = ["sample_lmoments", "gev_lmoment_parameters"]


def sample_lmoments(data):
    r"""Sample L-moments l1, l2 and ratios t3, t4 from unbiased probability-weighted moments [2]_.

    Parameters
    ----------
    data : array-like
        Sample, or 2-D array with samples along the last axis.

    Returns
    -------
    numpy.ndarray
        (..., 4): l1 [m], l2 [m], t3 [-], t4 [-].
    """
    x = np.asarray(data, dtype=float)
    if x.shape[-1] < 4:  # t4 needs four values; l1, l2, t3 from the unbiased PWMs b0..b2 (Hosking 1990)
        xs = np.sort(x, axis=-1)
        n = xs.shape[-1]
        j = np.arange(1, n + 1, dtype=float)
        b0 = xs.mean(axis=-1)
        b1 = np.sum((j - 1) / (n - 1) * xs, axis=-1) / n
        b2 = np.sum((j - 1) * (j - 2) / ((n - 1) * (n - 2)) * xs, axis=-1) / n
        l2 = 2 * b1 - b0
        return np.stack([b0, l2, (6 * b2 - 6 * b1 + b0) / l2, b0 * np.nan], axis=-1)
    # scipy.stats.lmoment: unbiased sample L-moments l1, l2 and ratios t3, t4 (standardize=True)
    return np.moveaxis(stats.lmoment(x, order=[1, 2, 3, 4], axis=-1, standardize=True), 0, -1)


def _gev_t3(k):
    """GEV L-skewness as a function of Hosking's k = -shape (limit ln(9/8)/ln 2 ... at k = 0)."""
    k = np.asarray(k, dtype=float)
    small = np.abs(k) < 1e-8
    kk = np.where(small, 1e-8, k)
    ratio = np.expm1(-kk * np.log(3.0)) / np.expm1(-kk * np.log(2.0))
    return 2 * ratio - 3


def gev_lmoment_parameters(l1, l2, t3, *, exact=True):
    r"""GEV parameters from L-moments [3]_ (textbook shape = -k).

    ``k ≈ 7.8590c + 2.9554c²``, ``c = 2/(3 + t3) - ln2/ln3``; with ``exact=True`` (default) k is then polished
    by Newton steps on ``t3 = 2(1 - 3^-k)/(1 - 2^-k) - 3``. α = l2·k/[(1 - 2^-k)Γ(1 + k)],
    location = l1 + α[Γ(1 + k) - 1]/k.

    Returns
    -------
    tuple of numpy.ndarray
        (loc [m], scale [m], shape [-]).
    """
    l1, l2, t3 = (np.asarray(a, dtype=float) for a in (l1, l2, t3))
    c = 2.0 / (3.0 + t3) - math.log(2) / math.log(3)
    k = 7.8590 * c + 2.9554 * c * c
    if exact:
        k = np.clip(k, -0.99, 5.0)
        for _ in range(30):
            h = 1e-6
            f = _gev_t3(k) - t3
            df = (_gev_t3(k + h) - _gev_t3(k - h)) / (2 * h)
            k_new = np.clip(k - f / df, -0.999, 10.0)
            if np.all(np.abs(k_new - k) < 1e-13):
                k = k_new
                break
            k = k_new
    small = np.abs(k) < SHAPE_EPS
    ks = np.where(small, 1.0, k)
    g = special.gamma(1 + ks)
    alpha = np.where(small, l2 / math.log(2), l2 * ks / (-np.expm1(-ks * math.log(2)) * g))
    loc = np.where(small, l1 - EULER_GAMMA * alpha, l1 + alpha * (g - 1) / ks)
    return loc[()], alpha[()], (-k)[()]
