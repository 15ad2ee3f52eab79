r"""The relation of site skew surge to reference skew surge, and the synthetic long site record.

Transfer (METHODS sec. 14, common practice): ordinary least squares of site skew surge on the paired
reference skew surge over the overlap,

.. math:: S_{site} = a + b\,S_{ref} + \varepsilon,

with the residual spread kept as noise: a synthetic site skew surge is :math:`a + b\,s_{ref} + e` with
:math:`e` drawn at random from the overlap's residuals. Residuals are drawn from the pairs whose reference
skew surge lies in the same band (quantile bands of the overlap's reference skew surges, the top band serving
every value above it), so a spread that grows with the storm is kept as observed. The regression (rather than
a quantile mapping) is used because a quantile mapping of one or two years is defined only up to the
overlap's largest storm and everything beyond it would rest on the tail rule alone, while the regression's
slope is fixed by every tide of the overlap and carries the reference's own tail shape, scaled, to the site.

The uncertainty of the relation (a short overlap) is carried by resampling the overlap pairs in blocks of
consecutive tides (storms span several tides): :func:`resample_relations`.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import stats

from extremes.errors import DataError

__all__ = ["SkewSurgeRelation", "fit_relation", "resample_relations", "N_RESIDUAL_BANDS", "BLOCK_DAYS"]

#: bands of reference skew surge whose residuals are drawn together [-]
N_RESIDUAL_BANDS = 5
#: length of the blocks of consecutive pairs resampled together [days]
BLOCK_DAYS = 10.0


@dataclass(frozen=True, repr=False)
class SkewSurgeRelation:
    """Least-squares relation of site to reference skew surge, with its residuals by band.

    Attributes
    ----------
    intercept_m : float
        a [m].
    slope : float
        b [-].
    residual_sd_m : float
        Standard deviation of the residuals [m].
    correlation : float
        Pearson correlation of the pairs.
    n_pairs : int
    band_edges_m : numpy.ndarray
        Inner edges of the bands of reference skew surge [m].
    residuals_m : tuple of numpy.ndarray
        Residuals of the pairs in each band [m].
    upper_spread_ratio : float
        Residual standard deviation in the top band over that of all pairs (1: even spread).
    """

    intercept_m: float
    slope: float
    residual_sd_m: float
    correlation: float
    n_pairs: int
    band_edges_m: np.ndarray
    residuals_m: tuple
    upper_spread_ratio: float

    def __repr__(self) -> str:
        return (f"SkewSurgeRelation(a={self.intercept_m:.3f} m, b={self.slope:.3f}, "
                f"sd={self.residual_sd_m:.3f} m, r={self.correlation:.3f}, n={self.n_pairs})")

    def predict(self, reference_m) -> np.ndarray:
        """The expected site skew surge a + b s_ref [m]."""
        return self.intercept_m + self.slope * np.asarray(reference_m, dtype=float)

    def draw(self, reference_m, rng: np.random.Generator) -> np.ndarray:
        """Synthetic site skew surges: a + b s_ref + a residual drawn from the band of s_ref [m]."""
        ref = np.asarray(reference_m, dtype=float)
        band = np.searchsorted(self.band_edges_m, ref, side="right")
        out = self.predict(ref)
        for k, pool in enumerate(self.residuals_m):
            sel = np.flatnonzero(band == k)
            if sel.size:
                out[sel] += pool[rng.integers(0, pool.size, sel.size)]
        return out

    def to_dict(self) -> dict:
        return {"transfer": "least-squares regression of site on reference skew surge, residuals kept as "
                            "noise drawn by band of reference skew surge",
                "intercept_m": float(self.intercept_m), "slope": float(self.slope),
                "residual_sd_m": float(self.residual_sd_m), "correlation": float(self.correlation),
                "n_pairs": int(self.n_pairs), "band_edges_m": [float(e) for e in self.band_edges_m],
                "upper_spread_ratio": float(self.upper_spread_ratio)}


def fit_relation(site_m, reference_m, *, n_bands: int = N_RESIDUAL_BANDS) -> SkewSurgeRelation:
    """Least-squares relation of paired skew surges (``scipy.stats.linregress``).

    Parameters
    ----------
    site_m, reference_m : array-like
        Paired skew surges [m].
    n_bands : int
        Quantile bands of the reference skew surge for drawing residuals.

    Returns
    -------
    SkewSurgeRelation
    """
    y = np.asarray(site_m, dtype=float)
    x = np.asarray(reference_m, dtype=float)
    if x.shape != y.shape or x.ndim != 1:
        raise DataError(f"paired skew surges must be two 1-d arrays of one length; got {x.shape}, {y.shape}")
    ok = np.isfinite(x) & np.isfinite(y)
    x, y = x[ok], y[ok]
    if x.size < 10 * n_bands or np.ptp(x) <= 0:
        raise DataError(f"{x.size} pairs of skew surges; a transfer needs at least {10 * n_bands} with some spread")
    fit = stats.linregress(x, y)
    resid = y - (fit.intercept + fit.slope * x)
    edges = np.quantile(x, np.linspace(0, 1, n_bands + 1)[1:-1])
    band = np.searchsorted(edges, x, side="right")
    pools = tuple(resid[band == k] for k in range(n_bands))
    if any(p.size == 0 for p in pools):  # ties in the reference values: fall back to one pool
        edges, pools = np.array([]), (resid,)
    sd = float(np.std(resid, ddof=2))
    upper = float(np.std(pools[-1], ddof=1)) / sd if pools[-1].size > 1 and sd > 0 else 1.0
    return SkewSurgeRelation(intercept_m=float(fit.intercept), slope=float(fit.slope), residual_sd_m=sd,
                             correlation=float(fit.rvalue), n_pairs=int(x.size), band_edges_m=np.asarray(edges),
                             residuals_m=pools, upper_spread_ratio=upper)


def block_ids(times_ns, *, block_days: float = BLOCK_DAYS) -> np.ndarray:
    """Index 0..k-1 of the block of ``block_days`` days that holds each time (from the first time)."""
    t = np.asarray(times_ns, dtype=np.int64)
    raw = (t - t.min()) // int(block_days * 86400e9)
    _, ids = np.unique(raw, return_inverse=True)
    return ids


def resample_relations(site_m, reference_m, blocks, *, n_resamples: int, rng: np.random.Generator,
                       n_bands: int = N_RESIDUAL_BANDS) -> list[SkewSurgeRelation]:
    """Relations refitted to block-bootstrap resamples of the overlap pairs.

    Whole blocks of consecutive pairs (``blocks``, e.g. from :func:`block_ids`) are drawn with replacement,
    as many as there are blocks (a moving-storm block bootstrap; Kunsch 1989, common practice for serially
    dependent data). A resample that cannot be fitted is skipped.
    """
    y = np.asarray(site_m, dtype=float)
    x = np.asarray(reference_m, dtype=float)
    blocks = np.asarray(blocks)
    members = [np.flatnonzero(blocks == b) for b in range(int(blocks.max()) + 1)]
    out = []
    for _ in range(n_resamples):
        pick = rng.integers(0, len(members), len(members))
        idx = np.concatenate([members[b] for b in pick])
        try:
            out.append(fit_relation(y[idx], x[idx], n_bands=n_bands))
        except DataError:
            continue
    return out
