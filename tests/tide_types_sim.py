"""A simulated tide-and-storm process with known truth, for semidiurnal, mixed and diurnal tides.

Used by the tests (small sizes) and by ``benchmarks/bench_tide_types.py`` (long runs). The process is defined
in time, so one storm covers about twice as many high waters of a semidiurnal tide as of a diurnal one:

* predicted high waters at their own times: every 12.42 h (semidiurnal, mixed) or every 24.84 h (diurnal),
  levels modulated by the spring-neap cycle (14.765 d), the tropical fortnight (13.661 d: declination, which
  drives the diurnal inequality and the diurnal range) and the year (METHODS sec. 6 periods);
* skew surge at each high water = N(0, 0.07 m) background + storms: Poisson arrivals in time (optionally more
  in winter), peak 0.1 m + exponential, held for ``plateau_hours`` (26 h: a storm holds its peak for about a
  day, so at least one high water of any tide type meets it) and decaying as exp(-dt / 12 h) either side, so
  exceedances cluster over several high waters;
* optionally, a tide-level dependence: storm peaks damped at high predicted high waters.

The truth of a level is empirical: annual maxima of a long simulation of the same process whose tide runs
through the same 18.61-year high-water set again and again.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

DAY_H = 24.0
YEAR_DAYS = 365.2422
NODAL_YEARS = 18.61
SPACING_HOURS = {"semidiurnal": 12.4206, "mixed": 12.4206, "diurnal": 24.8412}
T0 = pd.Timestamp("1990-01-01", tz="UTC")


def high_water_levels(kind: str, hours: np.ndarray) -> np.ndarray:
    """Predicted high water [m] at ``hours`` after T0 for a tide of ``kind``."""
    d = np.asarray(hours, dtype=float) / DAY_H
    spring = np.cos(2 * np.pi * d / 14.765)
    tropic = np.cos(2 * np.pi * d / 13.661)
    annual = 0.05 * np.cos(2 * np.pi * d / YEAR_DAYS)
    if kind == "semidiurnal":
        return 1.2 + 0.35 * spring + annual
    if kind == "mixed":
        k = np.rint(np.asarray(hours) / SPACING_HOURS["mixed"]).astype(np.int64)
        return 0.9 + 0.2 * spring + 0.35 * np.abs(tropic) * np.where(k % 2 == 0, 1.0, -1.0) + annual
    if kind == "diurnal":
        return 0.5 + 0.45 * np.abs(tropic) + annual
    raise ValueError(f"kind must be semidiurnal, mixed or diurnal; got {kind!r}")


def nodal_set(kind: str) -> pd.Series:
    """Predicted high waters of one 18.61-year set, on their UTC times."""
    step = SPACING_HOURS[kind]
    hours = np.arange(int(NODAL_YEARS * YEAR_DAYS * DAY_H / step)) * step
    return pd.Series(high_water_levels(kind, hours), index=T0 + pd.to_timedelta(hours, unit="h"))


def storm_surge(hours: np.ndarray, rng, *, storms_per_year=6.0, peak_scale_m=0.2, plateau_hours=26.0,
                decay_hours=12.0, winter_factor=1.0, tide_m=None, damping_per_m=0.0) -> np.ndarray:
    """Skew surge [m] at each high-water time (``hours`` after T0, ascending).

    ``winter_factor``: storm rate in October-March relative to April-September (the mean rate stays
    ``storms_per_year``). ``damping_per_m``: storm peaks scaled by ``1 - damping_per_m * (tide - mean tide)``
    at each high water (a tide-level dependence confined to the storms, i.e. the upper tail).
    """
    hours = np.asarray(hours, dtype=float)
    n = hours.size
    surge = rng.normal(0.0, 0.07, n)
    span_h = hours[-1] - hours[0] + 10 * decay_hours
    rate = storms_per_year * (2 * winter_factor / (1 + winter_factor) if winter_factor > 1 else 1.0)
    n_storms = rng.poisson(rate * span_h / (YEAR_DAYS * DAY_H))
    t_storm = hours[0] - 5 * decay_hours + rng.random(n_storms) * span_h
    if winter_factor > 1:  # thin summer storms: rate ratio winter/summer = winter_factor
        phase = (t_storm / DAY_H / YEAR_DAYS) % 1.0  # T0 is 1 January: April-September is 0.2466-0.7474
        summer = (phase >= 90.0 / 365.2422) & (phase < 273.0 / 365.2422)
        keep = ~summer | (rng.random(n_storms) < 1.0 / winter_factor)
        t_storm = t_storm[keep]
    peak = 0.1 + rng.exponential(peak_scale_m, t_storm.size)
    step = np.median(np.diff(hours)) if n > 1 else 12.42
    width = int(np.ceil((plateau_hours / 2 + 6 * decay_hours) / step))
    centre = np.searchsorted(hours, t_storm)
    factor = np.ones(n) if tide_m is None else 1.0 - damping_per_m * (np.asarray(tide_m) - np.mean(tide_m))
    for j in range(-width - 1, width + 1):
        idx = centre + j
        ok = (idx >= 0) & (idx < n)
        dt = np.maximum(np.abs(hours[idx[ok]] - t_storm[ok]) - plateau_hours / 2, 0.0)
        np.add.at(surge, idx[ok], peak[ok] * np.exp(-dt / decay_hours) * factor[idx[ok]])
    return surge


def record(kind: str, years: float, seed: int, *, start_years: float = 3.0, **storm) -> pd.DataFrame:
    """A skew-surge record of ``years`` years: the frame of :func:`extremes.surge.skew_surges` (subset)."""
    rng = np.random.default_rng(seed)
    step = SPACING_HOURS[kind]
    k0 = int(start_years * YEAR_DAYS * DAY_H / step)
    k = k0 + np.arange(int(years * YEAR_DAYS * DAY_H / step))
    hours = k * step
    tide = high_water_levels(kind, hours)
    surge = storm_surge(hours, rng, tide_m=tide, **storm)
    return pd.DataFrame({"time": T0 + pd.to_timedelta(hours, unit="h"), "predicted_high_water_m": tide,
                         "skew_surge_m": surge, "high_water_index": k - k0})


def true_annual_maxima(kind: str, years: int, seed: int, **storm) -> np.ndarray:
    """Annual maxima of tide + skew surge over ``years`` simulated years (tide: the 18.61-year set repeated)."""
    rng = np.random.default_rng(seed)
    tide_set = nodal_set(kind).to_numpy()
    step = SPACING_HOURS[kind]
    per_year = YEAR_DAYS * DAY_H / step
    out = []
    chunk = 200  # years per chunk keeps memory small
    for y0 in range(0, years, chunk):
        ny = min(chunk, years - y0)
        k = np.arange(int(y0 * per_year), int((y0 + ny) * per_year))
        tide = tide_set[k % tide_set.size]
        total = tide + storm_surge(k * step, rng, tide_m=tide, **storm)
        year = np.floor(k / per_year).astype(np.int64) - y0
        annual = np.full(ny, -np.inf)
        np.maximum.at(annual, np.clip(year, 0, ny - 1), total)
        out.append(annual)
    return np.concatenate(out)
