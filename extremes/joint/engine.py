"""Shared machinery of the joint-probability methods: tail fits, block bootstrap and curve assembly.

A *component* is one tide set (all high waters, or those of one tide band or month) with its weight in the
year and the surge sample that goes with it. The per-tide exceedance is the weighted sum of the components'
convolutions; the bootstrap redraws whole years of surge, refits the tail of every component by maximum
likelihood (all resamples at once, :func:`extremes.extremal.distributions.fit_gpd_many`) and redoes the
binned convolution with one FFT per block of resamples.
"""
from __future__ import annotations

import logging
import warnings
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass

import numpy as np

from extremes.errors import DataError, ExtremesWarning, FitError
from extremes.joint.core import SurgeDistribution, _binned_exceedance, levels_for_rates

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


def fit_tail(surge_m, *, threshold_m, years, method="mle") -> SurgeDistribution:
    """Empirical body + GPD tail fitted to all exceedances of ``threshold_m`` (marginal tail)."""
    from extremes.extremal import distributions

    x = np.asarray(surge_m, dtype=float)
    exc = x[x > threshold_m]
    if exc.size < 10:
        raise FitError(f"only {exc.size} surge values exceed the threshold {threshold_m:.3f} m; "
                       "need >= 10 for a GPD tail (lower the threshold)")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ExtremesWarning)
        fit = distributions.fit_gpd(exc, threshold=threshold_m, method=method, years=max(years, 1e-6))
    return SurgeDistribution(x, threshold_m, exc.size / x.size, fit.scale, fit.shape)


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


def _gpd_rows(s, u, p, scale, shape):
    """p_u times the GPD survival (Coles 2001 eq. 4.2) for rows of (p, scale, shape); 0 beyond a bounded end."""
    y = np.maximum(s[None, :] - u, 0.0)
    xi = shape[:, None]
    small = np.abs(xi) < 1e-6
    xi_safe = np.where(small, 1.0, xi)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        t = 1.0 + xi_safe * y / scale[:, None]
        sf = np.where(t > 0, np.exp(-np.log(np.maximum(t, 1e-300)) / xi_safe), 0.0)
        sf = np.where(small, np.exp(-y / scale[:, None]), sf)
    return p[:, None] * sf


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
    n_b = counts.sum(axis=1)
    exc = x > u
    y = x[exc] - u
    exc_counts = counts[:, exc].astype(np.int64)
    n_exc = exc_counts.sum(axis=1)
    params = np.full((counts.shape[0], 2), np.nan)
    for m in np.unique(n_exc):
        rows_b = np.flatnonzero(n_exc == m)
        if m < 10:
            continue
        samples = np.stack([np.repeat(y, exc_counts[b]) for b in rows_b])
        if method == "mle":
            params[rows_b], _ = distributions.fit_gpd_many(samples)
        else:
            lm = distributions.sample_lmoments(samples)
            xi = 2 - lm[:, 0] / lm[:, 1]
            params[rows_b] = np.stack([(1 - xi) * lm[:, 0], xi], axis=1)
    ok = np.all(np.isfinite(params), axis=1) & (n_b > 0)
    p_u = np.where(n_b > 0, n_exc / np.maximum(n_b, 1), np.nan)
    cum = np.concatenate([np.zeros((counts.shape[0], 1)), np.cumsum(counts, axis=1)], axis=1)

    def rows(s):
        out = np.empty((counts.shape[0], s.size))
        lo = s < u
        r = np.searchsorted(x, s[lo], side="right")
        out[:, lo] = np.maximum((n_b[:, None] - cum[:, r]) / np.maximum(n_b, 1)[:, None], p_u[:, None])
        out[:, ~lo] = _gpd_rows(s[~lo], u, p_u, np.where(ok, params[:, 0], 1.0), np.where(ok, params[:, 1], 0.0))
        return out

    out = factor * _binned_exceedance(c.tide_m, w, rows, z0=z0, nz=nz, h=h)
    out[~ok] = np.nan
    return out


def bootstrap_levels(components, *, year_ids, z0, nz, h, events_per_year, theta_of_z, periods_years,
                     n_bootstrap, seed, method="mle", block_size=100, workers=1):
    """Block bootstrap of years: levels (B, P) with extremal index and with theta = 1."""
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
        for i in range(b):
            if np.all(np.isfinite(rate[i])):
                out_u[start + i] = levels_for_rates(z, rate[i], target)
                out_c[start + i] = levels_for_rates(z, theta * rate[i], target)

    starts = range(0, n_bootstrap, block_size)
    if workers > 1 and len(starts) > 1:
        with ThreadPoolExecutor(max_workers=workers) as pool:
            list(pool.map(run_block, starts))
    else:
        for start in starts:
            run_block(start)
    return out_c, out_u


def percentile_bounds(levels, confidence):
    """Percentile interval of bootstrap levels (B, P); NaN where fewer than half the resamples succeeded."""
    alpha = (1 - confidence) / 2
    good = np.isfinite(levels).sum(axis=0)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        lo = np.nanquantile(levels, alpha, axis=0)
        hi = np.nanquantile(levels, 1 - alpha, axis=0)
    bad = good < max(10, levels.shape[0] // 2)
    lo[bad] = np.nan
    hi[bad] = np.nan
    return lo, hi


def check_year_ids(times):
    """Index 0..n_years-1 of the calendar year (UTC) of each time."""
    years = np.asarray(times.year)
    uniq, idx = np.unique(years, return_inverse=True)
    if uniq.size < 2:
        raise DataError(f"the surge record spans {uniq.size} calendar year; need >= 2 for a bootstrap of years")
    return idx, uniq
