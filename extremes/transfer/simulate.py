r"""A simulated pair of tide gauges on one coast, for checking the reference-gauge transfer.

The reference gauge records tide plus a non-tidal residual made of storms and a slow background; the site
records its own (different) tide plus a scaled, lagged copy of the reference's residual and a local noise of
its own. Everything is known, so the site's true still-water return levels follow from a long Monte Carlo
of storms (:func:`true_site_levels`), against which a transfer from a short site record can be judged.
With ``related=False`` the site's storms are drawn independently of the reference's: a transfer must then
be refused.

Storm model (this package's, for testing only): storms arrive as a Poisson process (``storms_per_year``);
each adds to the residual a Gaussian pulse in time, :math:`A\exp(-\tfrac12((t - t_0)/w)^2)`, with peak
:math:`A = a_0 + \text{Exp}(\text{peak\_scale\_m})` and width :math:`w` uniform in 6-14 h; the background is an
hourly AR(1) series. Storm peaks fall at random times of the tide, so skew surge is independent of the tide.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd
import scipy.signal

from extremes.constants import DAYS_PER_YEAR, HOURS_PER_YEAR, NODAL_CYCLE_YEARS
from extremes.errors import DataError
from extremes.tide.harmonic import predict_tide

__all__ = ["GaugePair", "simulate_gauge_pair", "true_site_levels", "REFERENCE_TIDE", "MIXED_SITE_TIDE",
           "SEMIDIURNAL_SITE_TIDE"]

#: the reference gauge's tide (semidiurnal): name -> (amplitude [m], Greenwich phase lag [deg])
REFERENCE_TIDE = {"M2": (1.10, 80.0), "S2": (0.38, 120.0), "N2": (0.22, 60.0), "K2": (0.10, 118.0),
                  "K1": (0.12, 200.0), "O1": (0.09, 180.0), "P1": (0.04, 198.0), "M4": (0.03, 10.0)}
#: a mixed, mainly semidiurnal tide (form factor about 1.0) for the site
MIXED_SITE_TIDE = {"M2": (0.55, 150.0), "S2": (0.20, 185.0), "N2": (0.11, 130.0), "K2": (0.055, 183.0),
                   "K1": (0.45, 250.0), "O1": (0.32, 230.0), "P1": (0.15, 248.0), "Q1": (0.06, 220.0)}
#: a semidiurnal site tide of larger range
SEMIDIURNAL_SITE_TIDE = {"M2": (1.45, 110.0), "S2": (0.50, 150.0), "N2": (0.28, 90.0), "K2": (0.13, 148.0),
                         "K1": (0.10, 230.0), "O1": (0.08, 210.0), "P1": (0.03, 228.0)}


@dataclass(frozen=True)
class GaugePair:
    """Two simulated records and the parameters that made them.

    Attributes
    ----------
    reference_m, site_m : pandas.Series
        Hourly levels [m] on UTC times (the site's covers only its short record).
    site_tide : dict
        The site's tide, name -> (amplitude [m], phase [deg]).
    parameters : dict
        Storm climate, slope, lag [h], noise [m], relatedness, seed.
    """

    reference_m: pd.Series
    site_m: pd.Series
    site_tide: dict
    parameters: dict = field(default_factory=dict)


def _ar1(n, *, sd, phi, rng):
    e = rng.normal(0.0, sd * np.sqrt(1.0 - phi * phi), n)
    return scipy.signal.lfilter([1.0], [1.0, -phi], e)


def _storm_train(n_hours, *, storms_per_year, peak_min_m, peak_scale_m, rng):
    """Sum of storm pulses on an hourly grid; returns the series and the storms (centre, peak, width)."""
    years = n_hours / HOURS_PER_YEAR
    n_storms = rng.poisson(storms_per_year * years)
    centre = rng.uniform(0, n_hours, n_storms)
    peak = peak_min_m + rng.exponential(peak_scale_m, n_storms)
    width = rng.uniform(6.0, 14.0, n_storms)
    out = np.zeros(n_hours)
    span = np.arange(-48, 49)
    for c, a, w in zip(centre, peak, width):
        idx = np.floor(c).astype(int) + span
        ok = (idx >= 0) & (idx < n_hours)
        out[idx[ok]] += a * np.exp(-0.5 * ((idx[ok] - c) / w) ** 2)
    return out


def _tide(times, tide, z0_m):
    names = list(tide)
    return predict_tide(times, names, [tide[n][0] for n in names], [tide[n][1] for n in names], z0_m=z0_m)


def simulate_gauge_pair(*, reference_years=30.0, site_years=2.0, site_tide=None, slope=0.8, lag_hours=2,
                        site_noise_m=0.05, related=True, storms_per_year=8.0, peak_min_m=0.15,
                        peak_scale_m=0.18, background_m=0.07, start="1994-01-01", site_z0_m=3.0,
                        reference_z0_m=2.5, seed=0) -> GaugePair:
    """Simulate a long reference record and a short site record that share (or not) a storm climate.

    Parameters
    ----------
    reference_years : float
        Length of the hourly reference record [years].
    site_years : float
        Length of the site record, the last ``site_years`` of the reference's span [years].
    site_tide : dict, optional
        The site's tide, name -> (amplitude [m], phase [deg]); default :data:`MIXED_SITE_TIDE`.
    slope : float
        Site residual = ``slope`` x reference residual ``lag_hours`` earlier + local noise.
    lag_hours : int
        Hours by which the site's storms follow the reference's.
    site_noise_m : float
        Standard deviation of the site's local noise (hourly AR(1), lag-one correlation 0.9) [m].
    related : bool
        False: the site's storms and background are drawn independently of the reference's.
    storms_per_year, peak_min_m, peak_scale_m, background_m
        Storm climate (module docstring) [1/year, m, m, m].
    start : str
        First time of the reference record (UTC).
    site_z0_m, reference_z0_m : float
        Mean levels above each gauge's datum [m].
    seed : int
        Seed of every draw.

    Returns
    -------
    GaugePair
    """
    if not 0 < site_years <= reference_years:
        raise DataError(f"site_years must be in (0, reference_years]; got {site_years}")
    rng = np.random.default_rng(seed)
    site_tide = dict(MIXED_SITE_TIDE if site_tide is None else site_tide)
    n = int(round(reference_years * HOURS_PER_YEAR))
    times = pd.date_range(pd.Timestamp(start, tz="UTC"), periods=n, freq="1h", name="time")
    climate = dict(storms_per_year=storms_per_year, peak_min_m=peak_min_m, peak_scale_m=peak_scale_m)
    lag = int(lag_hours)
    pad = abs(lag) + 1
    storms = _storm_train(n + pad, rng=rng, **climate)
    background = _ar1(n + pad, sd=background_m, phi=0.97, rng=rng)
    residual = storms + background
    reference = _tide(times, REFERENCE_TIDE, reference_z0_m) + residual[pad:]
    n_site = int(round(site_years * HOURS_PER_YEAR))
    first = n - n_site
    if related:
        shared = residual[pad - lag:pad - lag + n]  # reference residual lag hours earlier
    else:
        own = np.random.default_rng(seed + 7919)
        shared = (_storm_train(n, rng=own, **climate) + _ar1(n, sd=background_m, phi=0.97, rng=own))
    local = _ar1(n_site, sd=site_noise_m, phi=0.9, rng=rng)
    site_times = times[first:]
    site = _tide(site_times, site_tide, site_z0_m) + slope * shared[first:] + local
    parameters = dict(slope=slope, lag_hours=lag, site_noise_m=site_noise_m, related=related,
                      background_m=background_m, site_z0_m=site_z0_m, seed=seed, **climate)
    ref = pd.Series(reference, index=times, name="water_level_m")
    sit = pd.Series(site, index=site_times, name="water_level_m")
    for s in (ref, sit):
        s.attrs.update(units="m", datum="simulated datum")
    return GaugePair(reference_m=ref, site_m=sit, site_tide=site_tide, parameters=parameters)


def true_site_levels(pair: GaugePair, periods_years, *, epoch, years=5000, seed=1) -> np.ndarray:
    r"""The site's true still-water return levels [m] (period = 1/rate of exceedance events).

    Monte Carlo over storms: ``years`` x ``storms_per_year`` storms, each placed at a uniformly random time
    of an 18.61-year nodal cycle of the site's tide centred on ``epoch``; the storm's highest level is the
    maximum over its +/-48 h of tide + slope x (pulse + background) + local noise. The rate of storms whose
    highest level exceeds z is the exceedance rate of z (storms overlapping each other, and exceedances
    outside storms, are neglected: they are far below the levels of interest).

    Parameters
    ----------
    pair : GaugePair
        The simulated pair (its parameters and site tide).
    periods_years : array-like
        Return periods [years].
    epoch : str or Timestamp
        Centre of the nodal cycle (the study's mean-sea-level epoch).
    years : int
        Simulated years of storms.
    seed : int
        Seed of the Monte Carlo.
    """
    p = pair.parameters
    rng = np.random.default_rng(seed)
    centre = pd.Timestamp(epoch)
    centre = centre.tz_localize("UTC") if centre.tz is None else centre.tz_convert("UTC")
    half = pd.Timedelta(days=DAYS_PER_YEAR * NODAL_CYCLE_YEARS / 2)
    hours = pd.date_range(centre - half, centre + half, freq="1h")
    tide = _tide(hours, pair.site_tide, p["site_z0_m"])
    n_storms = int(round(years * p["storms_per_year"]))
    span = np.arange(-48, 49)
    tmax = np.empty(n_storms)
    chunk = 20_000
    for s in range(0, n_storms, chunk):
        m = min(chunk, n_storms - s)
        start = rng.integers(48, tide.size - 49, m)
        peak = p["peak_min_m"] + rng.exponential(p["peak_scale_m"], m)
        width = rng.uniform(6.0, 14.0, m)
        offset = rng.uniform(0.0, 1.0, m)
        pulse = peak[:, None] * np.exp(-0.5 * ((span[None, :] - offset[:, None]) / width[:, None]) ** 2)
        background = _ar1_rows(m, span.size, sd=p["background_m"], phi=0.97, rng=rng)
        local = _ar1_rows(m, span.size, sd=p["site_noise_m"], phi=0.9, rng=rng)
        level = tide[start[:, None] + span[None, :]] + p["slope"] * (pulse + background) + local
        tmax[s:s + m] = level.max(axis=1)
    tmax.sort()
    rate = p["storms_per_year"] * (1.0 - np.arange(1, n_storms + 1) / (n_storms + 1))
    target = 1.0 / np.asarray(periods_years, dtype=float)
    # level whose exceedance rate is the target: interpolate on the sorted storm maxima (rate decreasing)
    return np.interp(-target, -rate, tmax)


def _ar1_rows(rows, cols, *, sd, phi, rng):
    """Rows of a stationary AR(1) series (the first value drawn from the marginal distribution)."""
    e = rng.normal(0.0, sd * np.sqrt(1.0 - phi * phi), (rows, cols))
    e[:, 0] = rng.normal(0.0, sd, rows)
    out = np.empty_like(e)
    out[:, 0] = e[:, 0]
    for j in range(1, cols):
        out[:, j] = phi * out[:, j - 1] + e[:, j]
    return out
