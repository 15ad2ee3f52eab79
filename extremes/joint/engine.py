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
    weight: np.ndarray | None = None  # weight of each surge value (seasonal coverage), mean 1; None: equal


def fit_tail(surge_m, *, threshold_m, years, method="mle", weights=None) -> SurgeDistribution:
    """Empirical body + GPD tail fitted to all exceedances of ``threshold_m`` (marginal tail).

    With ``weights`` (one per value): weighted empirical body (represented by the weighted quantiles at
    ``(i + 0.5)/n``), weighted tail probability and weighted maximum-likelihood GPD (:func:`gpd_mle_weighted`).
    """
    from extremes.extremal import distributions

    x = np.asarray(surge_m, dtype=float)
    if weights is not None:
        return _fit_tail_weighted(x, np.asarray(weights, dtype=float), threshold_m)
    exc = x[x > threshold_m]
    if exc.size < 10:
        raise FitError(f"only {exc.size} surge values exceed the threshold {threshold_m:.3f} m; "
                       "need >= 10 for a GPD tail (lower the threshold)")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ExtremesWarning)
        fit = distributions.fit_gpd(exc, threshold=threshold_m, method=method, years=max(years, 1e-6))
    return SurgeDistribution(x, threshold_m, exc.size / x.size, fit.scale, fit.shape)


def _fit_tail_weighted(x, w, threshold_m) -> SurgeDistribution:
    order = np.argsort(x, kind="stable")
    xs, ws = x[order], w[order]
    exc = xs > threshold_m
    if np.count_nonzero(exc) < 10:
        raise FitError(f"only {np.count_nonzero(exc)} surge values exceed the threshold {threshold_m:.3f} m; "
                       "need >= 10 for a GPD tail (lower the threshold)")
    cum = np.cumsum(ws) / ws.sum()
    body = xs[np.minimum(np.searchsorted(cum, (np.arange(xs.size) + 0.5) / xs.size), xs.size - 1)]
    scale, shape = gpd_mle_weighted(xs[exc] - threshold_m, ws[exc][None, :])[0]
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


def gpd_mle_weighted(exceedances_m, counts, *, n_grid=40, n_refine=32):
    r"""Maximum-likelihood GPD fits of many weighted copies of one exceedance sample, all at once.

    Used for the bootstrap refits, where each resample holds the original exceedances ``y`` with
    multiplicities ``counts`` (B, n). Grimshaw's reduction [1]_: with :math:`\theta = \xi/\sigma`,
    :math:`\hat\xi(\theta) = \bar w\,\log(1 + \theta y)` and the profile log-likelihood
    :math:`-n[\log(\hat\xi/\theta) + \hat\xi + 1]` is maximised over :math:`\theta` on a grid, then by
    golden-section search, for every row at once. Agrees with
    :func:`extremes.extremal.distributions.fit_gpd` on unweighted samples (tests).

    Returns
    -------
    numpy.ndarray
        (B, 2): scale [m], shape.

    References
    ----------
    .. [1] S. D. Grimshaw, "Computing maximum likelihood estimates for the generalized Pareto distribution,"
       Technometrics, vol. 35, no. 2, pp. 185-191, 1993, doi:10.1080/00401706.1993.10485040.
    """
    y = np.asarray(exceedances_m, dtype=float)
    c = np.asarray(counts, dtype=float)
    n = c.sum(axis=1)
    w = c / n[:, None]
    ymax = np.max(np.where(c > 0, y[None, :], 0.0), axis=1)
    ybar = w @ y

    def profile(theta):  # theta (B, G) -> profile log-likelihood per unit weight (B, G)
        small = np.abs(theta) < 1e-9
        th = np.where(small, 1e-9, theta)
        with np.errstate(invalid="ignore", divide="ignore"):
            xi = np.einsum("bn,bgn->bg", w, np.log1p(th[:, :, None] * y[None, None, :]))
            val = -(np.log(xi / th) + xi + 1.0)
        val = np.where(np.isfinite(val) & (xi > -1.0), val, -np.inf)  # xi <= -1: unbounded likelihood
        return np.where(small, -(np.log(ybar)[:, None] + 1.0), val)

    lo = -(1.0 - 1e-6) / ymax
    hi = 20.0 / ybar
    # geometric spacing from the lower bound (where bounded tails put the optimum) plus zero shape
    frac = np.concatenate([np.geomspace(1e-9, 0.05, n_grid // 2, endpoint=False),
                           np.linspace(0.05, 1.0, n_grid - n_grid // 2)])
    grid = lo[:, None] + (hi - lo)[:, None] * frac[None, :]
    grid = np.concatenate([grid, np.zeros((y.size and grid.shape[0], 1))], axis=1)
    grid.sort(axis=1)
    vals = np.concatenate([profile(grid[:, i:i + 8]) for i in range(0, grid.shape[1], 8)], axis=1)
    k = np.argmax(vals, axis=1)
    rows = np.arange(grid.shape[0])
    a = grid[rows, np.maximum(k - 1, 0)]
    b = grid[rows, np.minimum(k + 1, grid.shape[1] - 1)]
    g = (np.sqrt(5) - 1) / 2
    x1, x2 = b - g * (b - a), a + g * (b - a)
    f1, f2 = profile(x1[:, None])[:, 0], profile(x2[:, None])[:, 0]
    for _ in range(n_refine):  # keep the better point; one new evaluation per step
        left = f1 > f2
        b = np.where(left, x2, b)
        a = np.where(left, a, x1)
        new_x = np.where(left, b - g * (b - a), a + g * (b - a))
        f_new = profile(new_x[:, None])[:, 0]
        x1, x2, f1, f2 = (np.where(left, new_x, x2), np.where(left, x1, new_x),
                          np.where(left, f_new, f2), np.where(left, f1, f_new))
    theta = (a + b) / 2
    with np.errstate(invalid="ignore", divide="ignore"):
        xi = np.sum(w * np.log1p(theta[:, None] * y[None, :]), axis=1)
        scale = np.where(np.abs(theta) < 1e-9, ybar, xi / theta)
    out = np.stack([scale, xi], axis=1)
    out[~np.isfinite(out).all(axis=1) | (scale <= 0)] = np.nan
    return out


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
    if method == "mle":
        params[enough] = gpd_mle_weighted(y, exc_counts[enough])
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
