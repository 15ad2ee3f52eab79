"""Shared machinery of the joint-probability methods: tail fits, block bootstrap and curve assembly.

A *component* is one tide set (all high waters, or those of one tide band or month) with its weight in the
year and the surge sample that goes with it. The per-tide exceedance is the weighted sum of the components'
convolutions; the bootstrap redraws whole years of surge, refits the tail of every component by maximum
likelihood (all resamples at once, :func:`extremes.extremal.gpd_mle.fit_gpd_many`) and redoes the
binned convolution with one FFT per block of resamples.
"""
from __future__ import annotations

import logging
import warnings
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass

import numpy as np
from scipy import special

from extremes.errors import DataError, ExtremesWarning, FitError
from extremes.extremal import gpd_mle
from extremes.joint.convolution import SurgeDistribution, _binned_exceedance, levels_for_rates

logger = logging.getLogger(__name__)


@dataclass
class Component:
    """One tide set with its share of the tides and its surge sample (with the year index of each)."""

    label: str
    tide_m: np.ndarray
    share: float
    surge_m: np.ndarray
    year_index: np.ndarray
    surge: SurgeDistribution | None = None
    weight: np.ndarray | None = None  # weight of each surge value (seasonal coverage), mean 1; None: equal


#: tail fits by likelihood and the shape prior of each (the rest: L-moments)
SHAPE_PRIOR_OF = {"mle": None, "gml": "geophysical"}


def fit_tail(surge_m, *, threshold_m, years, method="mle", weights=None) -> SurgeDistribution:
    """Empirical body + GPD tail fitted to all exceedances of ``threshold_m`` (marginal tail).

    ``method``: ``"mle"`` (maximum likelihood), ``"gml"`` (generalized maximum likelihood: the geophysical
    shape prior of :func:`extremes.extremal.gpd_mle.shape_log_prior`) or ``"lmoments"``. With ``weights``
    (one per value): weighted empirical body (represented by the weighted quantiles at ``(i + 0.5)/n``),
    weighted tail probability and weighted (generalized) maximum-likelihood GPD
    (:func:`extremes.extremal.gpd_mle.fit_gpd_many`).
    """
    from extremes.extremal import distributions

    x = np.asarray(surge_m, dtype=float)
    if weights is not None or method == "gml":
        w = np.ones_like(x) if weights is None else np.asarray(weights, dtype=float)
        return _fit_tail_weighted(x, w, threshold_m, shape_prior=SHAPE_PRIOR_OF.get(method))
    exc = x[x > threshold_m]
    if exc.size < 10:
        raise FitError(f"only {exc.size} surge values exceed the threshold {threshold_m:.3f} m; "
                       "need >= 10 for a GPD tail (lower the threshold)")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ExtremesWarning)
        fit = distributions.fit_gpd(exc, threshold=threshold_m, method=method, years=max(years, 1e-6))
    return SurgeDistribution(x, threshold_m, exc.size / x.size, fit.scale, fit.shape)


def _fit_tail_weighted(x, w, threshold_m, shape_prior=None) -> SurgeDistribution:
    order = np.argsort(x, kind="stable")
    xs, ws = x[order], w[order]
    exc = xs > threshold_m
    if np.count_nonzero(exc) < 10:
        raise FitError(f"only {np.count_nonzero(exc)} surge values exceed the threshold {threshold_m:.3f} m; "
                       "need >= 10 for a GPD tail (lower the threshold)")
    cum = np.cumsum(ws) / ws.sum()
    body = xs[np.minimum(np.searchsorted(cum, (np.arange(xs.size) + 0.5) / xs.size), xs.size - 1)]
    scale, shape = gpd_mle.fit_gpd_many(xs[exc] - threshold_m, weights=ws[exc][None, :],
                                        shape_prior=shape_prior)[0][0]
    if not np.isfinite(scale):
        raise FitError("the weighted GPD fit of the surge tail failed")
    return SurgeDistribution(body, threshold_m, float(ws[exc].sum() / ws.sum()), float(scale), float(shape))


def grid_limits(components, *, events_per_year, theta_min, min_rate, h):
    """Level range [m] that covers rates from above 1/year down to below ``min_rate``, and the step."""
    lo, hi = [], []
    for c in components:
        s = c.surge
        p_hi = min(0.9, 3.0 / (max(theta_min, 1e-3) * events_per_year * max(c.share, 1e-9)))
        lo.append(c.tide_m.min() + float(s.isf(p_hi)))
        hi.append(c.tide_m.max() + float(s.isf(min_rate / events_per_year / 1000.0)))
    z_lo, z_hi = min(lo), max(hi)
    if not np.isfinite(z_hi):
        raise FitError("the fitted surge tail has no finite level for the rarest return period")
    step = max(h, (z_hi - z_lo) / 2 ** 15)
    return z_lo, z_hi, step


def component_rates(component, *, z0, nz, h, events_per_year, year_draws=None, method="mle"):
    """Rate rows N*share*Q_c on the grid: the fit (row 0) and, with ``year_draws`` (B, n_years), resamples."""
    from extremes.extremal import distributions

    c = component
    s_dist = c.surge
    u = s_dist.threshold_m
    w = np.full(c.tide_m.size, 1.0 / c.tide_m.size)
    scale = factor = events_per_year * c.share

    if year_draws is None:
        def rows(s):
            return s_dist.sf(s)[None, :]
        return scale * _binned_exceedance(c.tide_m, w, rows, z0=z0, nz=nz, h=h)

    order = np.argsort(c.surge_m, kind="stable")
    x = c.surge_m[order]
    counts = year_draws[:, c.year_index[order]].astype(float)  # (B, n)
    if c.weight is not None:
        counts = counts * c.weight[order][None, :]  # seasonal-coverage weights ride on the year draws
    n_b = counts.sum(axis=1)
    exc = x > u
    y = x[exc] - u
    exc_counts = counts[:, exc] if c.weight is not None else counts[:, exc].astype(np.int64)
    n_exc = exc_counts.sum(axis=1)
    params = np.full((counts.shape[0], 2), np.nan)
    enough = n_exc >= 10
    if method in SHAPE_PRIOR_OF:
        params[enough] = gpd_mle.fit_gpd_many(y, weights=exc_counts[enough], shape_prior=SHAPE_PRIOR_OF[method])[0]
    else:
        w = exc_counts[enough] / n_exc[enough, None]
        ys = np.sort(y)
        order_y = np.argsort(y)
        cw = np.cumsum(w[:, order_y], axis=1)  # weighted probability-weighted moments (Hosking 1990)
        l1 = w @ y
        b1 = np.sum(w[:, order_y] * ys[None, :] * (cw - w[:, order_y] / 2), axis=1)
        l2 = 2 * b1 - l1
        xi = 2 - l1 / l2
        params[enough] = np.stack([(1 - xi) * l1, xi], axis=1)
    ok = np.all(np.isfinite(params), axis=1) & (n_b > 0)
    p_u = np.where(n_b > 0, n_exc / np.maximum(n_b, 1), np.nan)
    cum = np.concatenate([np.zeros((counts.shape[0], 1)), np.cumsum(counts, axis=1)], axis=1)

    def rows(s):
        out = np.empty((counts.shape[0], s.size))
        lo = s < u
        r = np.searchsorted(x, s[lo], side="right")
        out[:, lo] = np.maximum((n_b[:, None] - cum[:, r]) / np.maximum(n_b, 1)[:, None], p_u[:, None])
        # p_u times the GPD survival (Coles 2001 eq. 4.2), 0 beyond a bounded tail's end
        out[:, ~lo] = distributions.gpd_exceedance_rate(
            s[None, ~lo], threshold=u, scale=np.where(ok, params[:, 0], 1.0)[:, None],
            shape=np.where(ok, params[:, 1], 0.0)[:, None], rate_per_year=p_u[:, None])
        return out

    out = factor * _binned_exceedance(c.tide_m, w, rows, z0=z0, nz=nz, h=h)
    out[~ok] = np.nan
    return out


def _levels_beyond_grid(z_grid, rate, target):
    """Levels [m] of ``target`` rates on one rate curve; +inf where the target is rarer than the top of the
    grid (the level lies above it: counted, never dropped), -inf where more frequent than its bottom."""
    out = levels_for_rates(z_grid, rate, target)
    top, bottom = rate[-1], rate[0]
    out = np.where(np.isnan(out) & (target < top), np.inf, out)
    return np.where(np.isnan(out) & (target > bottom), -np.inf, out)


def bootstrap_levels(components, *, year_ids, z0, nz, h, events_per_year, theta_of_z, periods_years,
                     n_bootstrap, seed, method="mle", block_size=100, workers=1, clustering=None):
    """Block bootstrap of years: levels (B, P) with extremal index and with theta = 1.

    Each resample redraws whole years, refits every component's tail and its exceedance probability, and,
    when ``clustering`` (a :class:`ClusteringByYear`) is given, re-estimates the extremal-index function
    from the same years; otherwise ``theta_of_z`` is held. A level above the top of the grid is +inf (it is
    counted in the percentiles, not dropped); a failed refit (fewer than 10 exceedances) is NaN.
    """
    rng = np.random.default_rng(seed)
    n_years = int(year_ids.max()) + 1
    z = z0 + h * np.arange(nz)
    theta = theta_of_z(z)
    target = 1.0 / np.asarray(periods_years, dtype=float)
    out_c = np.full((n_bootstrap, target.size), np.nan)
    out_u = np.full_like(out_c, np.nan)
    picks_all = rng.integers(0, n_years, (n_bootstrap, n_years))  # drawn up front: same result for any workers

    def run_block(start):
        b = min(block_size, n_bootstrap - start)
        draws = np.zeros((b, n_years), dtype=np.int64)
        np.add.at(draws, (np.repeat(np.arange(b), n_years), picks_all[start:start + b].ravel()), 1)
        rate = sum(component_rates(c, z0=z0, nz=nz, h=h, events_per_year=events_per_year, year_draws=draws,
                                   method=method) for c in components)
        thetas = clustering.theta_rows(draws, z) if clustering is not None else None
        for i in range(b):
            if np.all(np.isfinite(rate[i])):
                out_u[start + i] = _levels_beyond_grid(z, rate[i], target)
                th = theta if thetas is None else thetas[i]
                out_c[start + i] = _levels_beyond_grid(z, th * rate[i], target)

    starts = range(0, n_bootstrap, block_size)
    if workers > 1 and len(starts) > 1:
        with ThreadPoolExecutor(max_workers=workers) as pool:
            list(pool.map(run_block, starts))
    else:
        for start in starts:
            run_block(start)
    return out_c, out_u


def percentile_bounds(levels, confidence, *, estimate=None):
    """Percentile interval of bootstrap levels (B, P) [2]_ ch. 13.

    Failed resamples (NaN) are left out and counted by the caller; resamples whose level lies above the grid
    (+inf) stay in: when the upper percentile falls among them the upper bound is +inf (unbounded: the
    resamples cannot limit it). NaN where fewer than half the resamples succeeded.

    References
    ----------
    .. [2] B. Efron and R. J. Tibshirani, *An Introduction to the Bootstrap*. New York, NY, USA: Chapman &
       Hall, 1993.
    """
    alpha = (1 - confidence) / 2
    values = np.sort(np.asarray(levels, dtype=float), axis=0)  # NaN sort last, after +inf
    good = np.sum(~np.isnan(values), axis=0)
    lo = np.full(values.shape[1], np.nan)
    hi = np.full(values.shape[1], np.nan)
    z_alpha = special.ndtri(alpha)
    for j in range(values.shape[1]):
        col = values[:good[j], j]
        if good[j] < max(10, values.shape[0] // 2):
            continue
        q_lo, q_hi = alpha, 1 - alpha
        if estimate is not None and np.isfinite(estimate[j]):
            # bias correction [2]_ sec. 14.3: z0 from the share of resamples below the estimate
            share = (np.sum(col < estimate[j]) + 0.5 * np.sum(col == estimate[j])) / col.size
            z0 = special.ndtri(np.clip(share, 0.5 / col.size, 1 - 0.5 / col.size))
            q_lo, q_hi = special.ndtr(2 * z0 + z_alpha), special.ndtr(2 * z0 - z_alpha)
        with np.errstate(invalid="ignore"):
            # linear interpolation between order statistics (numpy's default), with inf where a neighbour is inf
            for q, out in ((q_lo, lo), (q_hi, hi)):
                pos = q * (col.size - 1)
                i0, i1 = int(np.floor(pos)), int(np.ceil(pos))
                a, b = col[i0], col[i1]
                if i0 == i1 or a == b or np.isinf(a):
                    out[j] = a
                else:
                    out[j] = b if np.isinf(b) else a + (pos - i0) * (b - a)
    return lo, hi


def check_year_ids(times):
    """Index 0..n_years-1 of the calendar year (UTC) of each time."""
    years = np.asarray(times.year)
    uniq, idx = np.unique(years, return_inverse=True)
    if uniq.size < 2:
        raise DataError(f"the surge record spans {uniq.size} calendar year; need >= 2 for a bootstrap of years")
    return idx, uniq


class ClusteringByYear:
    r"""The extremal-index function re-estimated in each resample of whole years.

    :func:`extremes.joint.clustering.extremal_index_by_level` (blocks estimator) pools, over the shifted
    tide series, four counts at each level z: the complete blocks k, the blocks with an exceedance Z(z),
    the exceedances N(z) and the values n in complete blocks; :math:`\hat\theta(z) = \log(1 - Z/k) /
    [(n/k)\log(1 - N/n)]` [1]_. Each block is given to the calendar year of its first value, so the counts
    are sums over years; a resample of years (counts of each year drawn) then has its own counts, its own
    :math:`\hat\theta^*(z)` on the same levels, and its own extension above the highest estimable level,
    without re-running the estimator. On the original years the counts give the table's estimates
    exactly (tests).

    References
    ----------
    .. [1] R. L. Smith and I. Weissman, "Estimating the extremal index," J. R. Stat. Soc. B, vol. 56, no. 3,
       pp. 515-528, 1994, doi:10.1111/j.2517-6161.1994.tb01997.x.
    """

    def __init__(self, tide_sequence_m, surge_m, positions, year_ids, levels_m, *, n_offsets, block_length,
                 seed, min_exceedances, beyond):
        tide = np.asarray(tide_sequence_m, dtype=float)
        surge = np.asarray(surge_m, dtype=float)
        pos = np.asarray(positions, dtype=np.int64)
        years = np.asarray(year_ids, dtype=np.int64)
        # the same shifts and blocks as extremal_index_by_level (same seed)
        rng = np.random.default_rng(seed)
        offsets = rng.integers(0, tide.size, n_offsets)
        run_length = 6
        span = int(pos.max() - pos.min()) + 10 * max(run_length, block_length, 1) + 1000
        span = block_length * (span // block_length + 1)
        gpos = ((pos[None, :] - pos.min()) + span * np.arange(n_offsets)[:, None]).ravel()
        total = (tide[(pos[None, :] + offsets[:, None]) % tide.size] + surge[None, :]).ravel()
        block = gpos // block_length
        n_blocks = int(block.max()) + 1
        per_block = np.bincount(block, minlength=n_blocks)
        valid = per_block >= 0.9 * block_length
        year_of_block = np.full(n_blocks, -1, dtype=np.int64)
        order = np.argsort(gpos, kind="stable")
        first = np.unique(block[order], return_index=True)
        year_of_block[first[0]] = np.tile(years, n_offsets)[order][first[1]]
        self.n_years = int(years.max()) + 1
        vb = np.flatnonzero(valid)
        yb = year_of_block[vb]
        self.levels = np.asarray(levels_m, dtype=float)
        self.k = np.bincount(yb, minlength=self.n_years).astype(float)
        self.n = np.bincount(yb, weights=per_block[vb], minlength=self.n_years)
        in_valid = valid[block]
        L = self.levels.size
        self.big_z = np.zeros((self.n_years, L))
        self.big_n = np.zeros((self.n_years, L))
        self.all_n = np.zeros((self.n_years, L))  # every exceedance (for the min_exceedances rule)
        value_years = np.tile(years, n_offsets)
        for j, z in enumerate(self.levels):
            above = total > z
            self.all_n[:, j] = np.bincount(value_years[above], minlength=self.n_years)
            sel = above & in_valid
            exc_per_block = np.bincount(block[sel], minlength=n_blocks)[vb]
            self.big_n[:, j] = np.bincount(yb, weights=exc_per_block, minlength=self.n_years)
            self.big_z[:, j] = np.bincount(yb, weights=(exc_per_block > 0), minlength=self.n_years)
        self.n_offsets = n_offsets
        self.min_exceedances = min_exceedances
        self.beyond = beyond

    def theta_table(self, draws):
        """Extremal index (B, L) on the levels for year draws (B, n_years); NaN where not estimable."""
        d = np.asarray(draws, dtype=float)
        k, n = d @ self.k, d @ self.n
        big_z, big_n = d @ self.big_z, d @ self.big_n
        per_series = (d @ self.all_n) / self.n_offsets
        with np.errstate(divide="ignore", invalid="ignore"):
            theta = np.log1p(-big_z / k[:, None]) / ((n / k)[:, None] * np.log1p(-big_n / n[:, None]))
        ok = (big_z < k[:, None]) & (big_n > 0) & (per_series >= self.min_exceedances) & np.isfinite(theta)
        return np.where(ok, np.minimum(theta, 1.0), np.nan)

    def theta_rows(self, draws, z):
        """Extremal index (B, len(z)) on the level grid z for year draws, as
        :func:`extremes.joint.clustering.theta_function` builds it from a table (held below, linear between,
        extended along the rising trend of the upper half, or held, above)."""
        table = self.theta_table(draws)
        out = np.ones((table.shape[0], z.size))
        for i, row in enumerate(table):
            ok = np.isfinite(row)
            if ok.sum() < 1:
                continue  # no estimable level: theta = 1 (the conservative end)
            lv, th = self.levels[ok], np.clip(row[ok], 1e-3, 1.0)
            slope = 0.0
            if self.beyond == "trend" and lv.size >= 4:
                half = lv.size // 2
                x, y = lv[half:], th[half:]
                xc = x - x.mean()
                slope = max(0.0, float(xc @ (y - y.mean()) / (xc @ xc)))
            inside = np.interp(z, lv, th)
            out[i] = np.where(z > lv[-1], np.minimum(1.0, th[-1] + slope * (z - lv[-1])), inside)
        return out
