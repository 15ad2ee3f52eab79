"""A known storm-surge process at high water, for Monte Carlo checks of the interval methods.

Tide at each high water: spring-neap (28.53 tides) and diurnal inequality (alternate tides). Skew surge: a
N(0, 0.07 m) background plus Poisson storms (6 a year) whose peak, 0.1 m + a generalised Pareto excess
(scale 0.18 m, shape ``tail_shape``; 0 is exponential), spreads over the neighbouring tides. Two clustering
forms: ``"fading"`` (the peak decays by 0.75 a tide over 3 tides either side, so at extreme levels only the tide
that meets the peak exceeds: clustering weakens with level) and ``"persistent"`` (the full peak on 3
consecutive tides, so a storm that exceeds an extreme level still exceeds it on about two tides: clustering
never fades). The truth is the empirical annual-maximum quantile of a long simulation of the same process.
Used by tests/test_joint_montecarlo.py, tests/test_coverage.py and benchmarks/bench_coverage.py.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

TIDES_PER_YEAR = 705.75
NODAL_SET_SIZE = 13_134  # high waters in 18.61 years
TIDAL_CYCLE_HOURS = 12.4206


@dataclass(frozen=True)
class StormProcess:
    """Parameters of the simulated skew-surge process (see the module docstring)."""

    name: str = "base"
    tail_shape: float = 0.0
    clustering: str = "fading"
    storms_per_year: float = 6.0
    peak_scale_m: float = 0.18

    def surge(self, n_tides, rng):
        """Skew surge [m] at ``n_tides`` consecutive tides."""
        surge = rng.normal(0.0, 0.07, n_tides)
        n_storms = rng.poisson(self.storms_per_year * n_tides / TIDES_PER_YEAR)
        centre = rng.integers(0, n_tides, n_storms)
        u = rng.random(n_storms)
        if self.tail_shape == 0.0:
            excess = -self.peak_scale_m * np.log1p(-u)
        else:
            excess = self.peak_scale_m / self.tail_shape * np.expm1(-self.tail_shape * np.log1p(-u))
        peak = 0.1 + excess
        if self.clustering == "fading":
            weights = {d: 0.75 ** abs(d) for d in range(-3, 4)}
        elif self.clustering == "persistent":
            weights = {-1: 1.0, 0: 1.0, 1: 1.0}
        else:
            raise ValueError(f"clustering must be 'fading' or 'persistent'; got {self.clustering!r}")
        for d, w in weights.items():
            idx = centre + d
            ok = (idx >= 0) & (idx < n_tides)
            np.add.at(surge, idx[ok], peak[ok] * w)
        return surge


#: the process of the issue (clustering that weakens at extreme levels) and its three variants
PROCESSES = {
    "base": StormProcess("base"),
    "bounded tail (shape -0.1)": StormProcess("bounded", tail_shape=-0.1),
    "heavier tail (shape +0.1)": StormProcess("heavy", tail_shape=0.1),
    "clustering never fades": StormProcess("persistent", clustering="persistent"),
}


def tide_at(k):
    """High-water tide [m]: spring-neap (28.53 tides) and diurnal inequality (alternate tides)."""
    k = np.asarray(k, dtype=float)
    return 2.0 + 0.6 * np.cos(2 * np.pi * k / 28.53) + 0.12 * np.cos(np.pi * k)


def true_levels(process, periods_years, *, years=8000, seed=12345, chunk_years=2000):
    """Empirical annual-maximum quantiles [m] at AEP 1/T of a long simulation of ``process`` (in chunks)."""
    rng = np.random.default_rng(seed)
    maxima = []
    for start in range(0, years, chunk_years):
        ny = min(chunk_years, years - start)
        first = int(round(start * TIDES_PER_YEAR))
        n = int(round((start + ny) * TIDES_PER_YEAR)) - first
        k = first + np.arange(n)
        total = tide_at(k) + process.surge(n, rng)
        year = (k / TIDES_PER_YEAR).astype(np.int64) - start
        annual = np.full(ny, -np.inf)
        np.maximum.at(annual, year[year < ny], total[year < ny])
        maxima.append(annual)
    return np.quantile(np.concatenate(maxima), 1 - 1 / np.asarray(periods_years, dtype=float))


def sample_record(process, seed, *, years=30):
    """A ``years``-long record of the process: (nodal high-water set [m], skew-surge Series, total-level
    Series at high water), both Series indexed by UTC time."""
    rng = np.random.default_rng(seed)
    n = int(years * TIDES_PER_YEAR)
    times = pd.Timestamp("1990-01-01", tz="UTC") + pd.to_timedelta(np.arange(n) * TIDAL_CYCLE_HOURS, unit="h")
    surge = process.surge(n, rng)
    skew = pd.Series(surge, index=times, name="skew_surge_m")
    total = pd.Series(tide_at(np.arange(n)) + surge, index=times, name="level_m")
    return tide_at(np.arange(NODAL_SET_SIZE)), skew, total
