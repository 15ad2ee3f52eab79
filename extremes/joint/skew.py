r"""Skew-surge joint probability method (high waters of a nodal cycle x skew surge).

Per-tide exceedance :math:`Q(z) = \frac{1}{K}\sum_k P(S > z - X_k)` over the K predicted high waters of a
full 18.61-year nodal cycle at the mean-sea-level epoch; independent exceedance events per year
:math:`E(z) = \theta(z)\,N_t\,Q(z)` with :math:`N_t = K/\text{(years spanned by the set)}`; return period
:math:`T = 1/E` and AEP :math:`1 - e^{-E}` [1]_, [2]_. Skew surge: empirical body, GPD tail above a threshold
fitted by maximum likelihood to all exceedances (the marginal per-tide tail; clustering enters only through
:math:`\theta(z)`, see :mod:`extremes.joint.clustering`).

References
----------
.. [1] C. Batstone et al., "A UK best-practice approach for extreme sea-level analysis along complex
   topographic coastlines," Ocean Eng., vol. 71, pp. 28-39, 2013, doi:10.1016/j.oceaneng.2013.02.003.
.. [2] E. D'Arcy, J. A. Tawn and D. E. Sifnioti, "Accounting for climate change in extreme sea level
   estimation," Water, vol. 14, no. 19, p. 2956, 2022, doi:10.3390/w14192956.
.. [3] B. Efron and R. J. Tibshirani, *An Introduction to the Bootstrap*. New York, NY, USA: Chapman &
   Hall, 1993.
"""
from __future__ import annotations

import logging
import time
import warnings

import numpy as np
import pandas as pd

from extremes.constants import DAYS_PER_YEAR, NODAL_CYCLE_YEARS
from extremes.curves import DENSE_PERIODS_YEARS, ReturnLevelCurve
from extremes.errors import DataError, ExtremesWarning
from extremes.joint import year_bootstrap
from extremes.joint.clustering import (
    extremal_index_by_level,
    positions_from_spacing,
    spring_neap_block_length,
    theta_function,
)
from extremes.joint.convolution import levels_for_rates
from extremes.joint.result import CLUSTERING_TABLE_PERIODS_YEARS, JointProbabilityResult
from extremes.timebase import level_series

logger = logging.getLogger(__name__)

__all__ = ["skew_surge_joint_probability", "NODAL_CYCLE_YEARS", "DAYS_PER_YEAR", "DEFAULT_THRESHOLD_QUANTILE"]

#: quantile of skew surge used as the tail threshold by default: a fixed rule, so that the choice does not
#: depend on the tail estimates it precedes (a data-driven stability rule picks high thresholds exactly in the
#: samples whose high-threshold shape comes out low, which biased the intervals low; benchmarks/bench_coverage.py).
#: 0.99 rather than 0.985: with the shape prior its intervals were narrower at the same coverage, and where storms
#: hold their peak a lower threshold raises the 100-year bias (bench_tide_types.py, semidiurnal: plain maximum
#: likelihood 0.0 % at 0.99 and +2.6 % at 0.985, 60 records; with the prior +1.3 % at 0.99 and +3.7 % at 0.985, 200)
DEFAULT_THRESHOLD_QUANTILE = 0.99
#: fewest exceedances the quantile rule leaves (a short record gets a lower quantile)
MIN_TAIL_EXCEEDANCES = 50
#: thresholds (quantiles of skew surge) of the sensitivity table in ``diagnostics["threshold_sensitivity"]``
SENSITIVITY_QUANTILES = (0.95, 0.97, 0.98, 0.985, 0.99, 0.995)


#: words for each tail fit (``tail_method``) in the interval method of results.json and the report
TAIL_FIT_WORDS = {"gml": "GPD tail by generalized maximum likelihood, geophysical shape prior (Martins & "
                         "Stedinger 2001)",
                  "mle": "GPD tail by maximum likelihood", "lmoments": "GPD tail by L-moments"}


def _utc_series(values, name):
    return level_series(values, name=name)


def _interaction_dependent(interaction):
    if interaction is None:
        return None
    dep = bool(getattr(interaction, "level_dependent", False))
    verdict = str(getattr(interaction, "verdict", ""))
    return dep, verdict


def assemble(method, components, *, events_per_year, theta_table, year_ids, periods_years, n_bootstrap,
             confidence, seed, grid_step_m, datum, epoch_year, tail_method, notes, diagnostics, threshold_m,
             interval_method, theta_beyond="hold", clustering_by_year=None, bias_correction=True,
             sensitivity_thresholds=(), interval="bootstrap"):
    """Curves (clustered and theta = 1), bootstrap intervals and the result object.

    ``sensitivity_thresholds`` (pairs of quantile and threshold [m]) are refitted without resampling and their
    10/100/1000-year levels reported in ``diagnostics["threshold_sensitivity"]`` (not used for the curve).
    """
    t0 = time.perf_counter()
    theta_of_z = theta_function(theta_table, beyond=theta_beyond)
    theta_min = float(np.min(theta_table["theta"])) if isinstance(theta_table, pd.DataFrame) else (
        1.0 if theta_table is None else float(theta_table))
    periods = np.asarray(periods_years, dtype=float)
    z_lo, z_hi, h = year_bootstrap.grid_limits(components, events_per_year=events_per_year, theta_min=theta_min,
                                       min_rate=1.0 / periods.max(), h=grid_step_m)
    z0 = np.floor(z_lo / h) * h
    nz = int(np.ceil((z_hi - z0) / h)) + 1
    z = z0 + h * np.arange(nz)
    rate = sum(year_bootstrap.component_rates(c, z0=z0, nz=nz, h=h, events_per_year=events_per_year)[0]
               for c in components)
    theta = theta_of_z(z)
    level_u = levels_for_rates(z, rate, 1.0 / periods)
    level_c = levels_for_rates(z, theta * rate, 1.0 / periods)
    diagnostics["grid_step_m"] = float(h)
    if len(sensitivity_thresholds):
        diagnostics["threshold_sensitivity"] = _threshold_sensitivity(
            components, sensitivity_thresholds, z=z, theta=theta, h=h, events_per_year=events_per_year,
            tail_method=tail_method)
    diagnostics["seconds_curve"] = time.perf_counter() - t0
    nan = np.full(periods.shape, np.nan)
    lo_c = hi_c = lo_u = hi_u = nan
    if n_bootstrap:
        t1 = time.perf_counter()
        boot_c, boot_u = year_bootstrap.bootstrap_levels(components, year_ids=year_ids, z0=z0, nz=nz, h=h,
                                                 events_per_year=events_per_year, theta_of_z=theta_of_z,
                                                 periods_years=periods, n_bootstrap=n_bootstrap, seed=seed,
                                                 method=tail_method, clustering=clustering_by_year)
        # bias-corrected percentiles: a resample distribution that sits below the estimate (the estimator
        # under-reads) moves both bounds up (Efron & Tibshirani 1993, sec. 14.3)
        lo_c, hi_c = year_bootstrap.percentile_bounds(boot_c, confidence,
                                                      estimate=level_c if bias_correction else None)
        lo_u, hi_u = year_bootstrap.percentile_bounds(boot_u, confidence,
                                                      estimate=level_u if bias_correction else None)
        if interval == "profile":
            lo_c, hi_c = _profile_interval(components, theta_of_z, events_per_year, periods, level_c, boot_c,
                                           confidence, diagnostics, lo_c, hi_c, tail_method=tail_method)
        failed = np.all(np.isnan(boot_c), axis=1)
        diagnostics["bootstrap_resamples_used"] = int(np.sum(~failed))
        diagnostics["bootstrap_resamples_failed"] = int(np.sum(failed))
        # resamples whose level lies above the top of the level grid: kept in the percentiles as +inf
        diagnostics["bootstrap_resamples_above_grid"] = {
            f"{t:g}": int(np.sum(np.isposinf(boot_c[:, j]))) for j, t in enumerate(periods)
            if t in CLUSTERING_TABLE_PERIODS_YEARS or j == periods.size - 1}
        diagnostics["bootstrap_unbounded_upper_periods"] = int(np.sum(np.isposinf(hi_c)))
        diagnostics["seconds_bootstrap"] = time.perf_counter() - t1
    common = dict(method=method, periods_years=periods, confidence=confidence, period_definition="1/rate",
                  datum=datum, epoch_year=epoch_year, interval_method=interval_method)
    curve = ReturnLevelCurve(level_m=level_c, lower_m=lo_c, upper_m=hi_c, notes=tuple(notes), **common)
    curve_u = ReturnLevelCurve(level_m=level_u, lower_m=lo_u, upper_m=hi_u,
                               notes=tuple(notes) + ("extremal index set to 1 (no storm clustering)",), **common)
    tp = np.array(CLUSTERING_TABLE_PERIODS_YEARS)
    tp = tp[(tp >= periods.min()) & (tp <= periods.max())]
    lu, lc = curve_u.level_at(tp), curve.level_at(tp)
    effect = pd.DataFrame({"return_period_years": tp, "level_unclustered_m": lu, "level_clustered_m": lc,
                           "difference_m": lc - lu})
    effect.attrs["units"] = "m"
    tail = {c.label: _tail_summary(c, tail_method) for c in components}
    return JointProbabilityResult(method=method, curve=curve, curve_unclustered=curve_u,
                                  clustering_effect=effect,
                                  extremal_index=theta_table if isinstance(theta_table, pd.DataFrame) else None,
                                  threshold_m=float(threshold_m), tail=tail,
                                  events_per_year=float(events_per_year), notes=tuple(notes),
                                  diagnostics=diagnostics)


#: shortest period [years] given a profile-likelihood interval: below it the level is set by the empirical
#: body of the surge distribution as much as by the GPD tail, which the profile does not describe (there the
#: bias-corrected bootstrap interval is kept)
PROFILE_MIN_PERIOD_YEARS = 2.0


def _profile_interval(components, theta_of_z, events_per_year, periods, level_c, boot_c, confidence,
                      diagnostics, lo_boot, hi_boot, *, tail_method="mle"):
    """Chandler-Bate adjusted profile-likelihood bounds at the coarse periods from PROFILE_MIN_PERIOD_YEARS,
    interpolated in log period; the bootstrap bounds below."""
    from extremes.extremal.direct import PROFILE_PERIODS_YEARS, interp_log_period
    from extremes.joint import tail_profile

    (c,) = components
    lo_c, hi_c = lo_boot.copy(), hi_boot.copy()
    wanted = [t for t in PROFILE_PERIODS_YEARS if PROFILE_MIN_PERIOD_YEARS <= t <= periods[-1]]
    idx = np.unique([int(np.argmin(np.abs(np.log(periods) - np.log(t)))) for t in wanted]
                    + ([periods.size - 1] if periods[-1] >= PROFILE_MIN_PERIOD_YEARS else []))
    if idx.size < 2:
        return lo_c, hi_c
    prior = year_bootstrap.SHAPE_PRIOR_OF[tail_method]
    loglik_hat = float(tail_profile._Problem(c, theta_of_z=theta_of_z, events_per_year=events_per_year,
                                             shape_prior=prior).loglik(
        np.array([[c.surge.scale_m]]), np.array([[c.surge.shape]]))[0, 0])
    lo, hi, adjustment = tail_profile.adjusted_profile_bounds(
        c, theta_of_z=theta_of_z, events_per_year=events_per_year, periods_years=periods[idx],
        level_m=level_c[idx], loglik_hat=loglik_hat, scale_hat=c.surge.scale_m, shape_hat=c.surge.shape,
        bootstrap_levels=boot_c[:, idx], confidence=confidence, shape_prior=prior)
    diagnostics["profile_deviance_adjustment"] = {f"{t:g}": (None if not np.isfinite(a) else float(a))
                                                  for t, a in zip(periods[idx], adjustment)}
    logp = np.log(periods)
    inside = periods >= periods[idx[0]]
    # a node without profile bounds (the tail carries little of the variance there, or no crossing was found)
    # takes the bootstrap bounds, so that its neighbourhood is not interpolated across it
    lo = np.where(np.isnan(lo), lo_boot[idx], lo)
    hi = np.where(np.isnan(hi), hi_boot[idx], hi)
    lo_p, hi_p = interp_log_period(logp[idx], lo, logp), interp_log_period(logp[idx], hi, logp)
    lo_c[inside] = np.where(np.isnan(lo_p[inside]), lo_c[inside], lo_p[inside])
    hi_c[inside] = np.where(np.isnan(hi_p[inside]), hi_c[inside], hi_p[inside])
    return lo_c, hi_c


def _tail_summary(component, tail_method) -> dict:
    """The fitted tail of one component for ``result.tail``: with the shape prior, also the shape the data give
    alone (plain maximum likelihood, ``shape_mle``), so that a reader (and the assessment) sees how far the
    prior drew it."""
    from extremes.errors import FitError

    out = {**component.surge.to_dict(), "fit": tail_method}
    if tail_method == "gml":
        try:
            plain = year_bootstrap.fit_tail(component.surge_m, threshold_m=component.surge.threshold_m, years=1.0,
                                            method="mle", weights=component.weight)
            out["shape_mle"] = float(plain.shape)
        except FitError:
            out["shape_mle"] = None
    return out


def _threshold_sensitivity(components, thresholds, *, z, theta, h, events_per_year, tail_method):
    """Rows (quantile, threshold, exceedances, tail shape, 10/100/1000-year levels) at other thresholds."""
    from dataclasses import replace

    from extremes.errors import FitError

    periods = np.array(CLUSTERING_TABLE_PERIODS_YEARS)
    rows = []
    for quantile, u in thresholds:
        try:
            refit = [replace(c, surge=year_bootstrap.fit_tail(c.surge_m, threshold_m=float(u), years=1.0,
                                                               method=tail_method)) for c in components]
        except FitError:
            continue
        rate = sum(year_bootstrap.component_rates(c, z0=z[0], nz=z.size, h=h, events_per_year=events_per_year)[0]
                   for c in refit)
        levels = levels_for_rates(z, theta * rate, 1.0 / periods)
        rows.append({"quantile": float(quantile), "threshold_m": float(u),
                     "n_exceedances": int(sum(np.sum(c.surge_m > u) for c in refit)),
                     "shape": float(refit[0].surge.shape),
                     **{f"level_{t:g}_m": float(v) for t, v in zip(periods, levels)}})
    return rows


def choose_threshold(series, threshold_m, threshold_quantile, notes, diagnostics, what):
    """The tail threshold [m]: given, or from the extreme-value stage's automatic choice, or a quantile."""
    from extremes.errors import FitError
    from extremes.extremal import threshold as threshold_choice

    if threshold_m is not None:
        return float(threshold_m)
    if threshold_quantile is not None:
        # a short record keeps at least MIN_TAIL_EXCEEDANCES exceedances (the rule still depends on the sample
        # size only, never on the tail estimates)
        x = series.to_numpy()
        q = min(float(threshold_quantile), max(0.5, 1.0 - MIN_TAIL_EXCEEDANCES / max(x.size, 1)))
        value = float(np.quantile(x, q))
        notes.append(f"{what} threshold {value:.3f} m = the {q:g} quantile")
        return value
    try:
        choice = threshold_choice.select_threshold(series, min_separation_hours=72.0)
    except FitError as err:
        value = float(np.quantile(series.to_numpy(), 0.98))
        notes.append(f"automatic threshold choice failed ({err}); {what} threshold {value:.3f} m = the 0.98 quantile")
        return value
    diagnostics["threshold_choice"] = choice.to_dict()
    notes.append(f"{what} threshold {choice.threshold_m:.3f} m (quantile {choice.quantile:.4g}) by the automatic "
                 f"rule of the extreme-value stage: {choice.rule}")
    return float(choice.threshold_m)


def _month_weights(times, events_per_year, month_weighting, stratify, notes, diagnostics):
    """Inverse-coverage weights of the skew surges by calendar month, or None (even coverage)."""
    from extremes import season

    if month_weighting not in ("auto", "none"):
        raise DataError(f"month_weighting must be 'auto' or 'none'; got {month_weighting!r}")
    coverage = season.monthly_coverage(times, tides_per_year=events_per_year)
    diagnostics["monthly_coverage"] = {int(m): (None if not np.isfinite(c) else float(c)) for m, c in coverage.items()}
    if month_weighting == "none" or stratify == "month":
        return None
    weights = season.month_weights(times, coverage)
    if weights is not None:
        low = coverage.dropna().idxmin()
        notes.append(f"months covered unevenly (month {low} {coverage[low]:.0%}, best {coverage.max():.0%}): each "
                     "skew surge weighted by the inverse of its month's coverage")
    return weights


def _band_thresholds(surge, band, n_bands, threshold_m, notes):
    """Tail threshold of each tide band: the band's quantile at the exceedance probability of the common one.

    Every band then holds its share of exceedances, and a band whose storms are damped (or amplified) keeps its
    threshold at the same probability level instead of one set by the other bands (this package's choice).
    """
    p = float(np.mean(surge > threshold_m))
    out = {}
    for b in range(n_bands):
        values = surge[band == b]
        out[f"band {b + 1}"] = float(np.quantile(values, 1.0 - p)) if values.size else float(threshold_m)
    notes.append(f"tail threshold of each tide band at its own {1 - p:.4g} quantile (the level of the common "
                 f"threshold {threshold_m:.3f} m): " + ", ".join(f"{k} {v:.3f} m" for k, v in out.items()))
    return out


def _band_labels(values, edges):
    return np.clip(np.searchsorted(edges, values, side="right") - 1, 0, len(edges) - 2)


def _tide_set(high_waters_m, high_water_years, notes):
    """Predicted high waters as an array, their times (when given), the years they span and tides per year."""
    hw_times = None
    if isinstance(high_waters_m, pd.Series):
        if isinstance(high_waters_m.index, pd.DatetimeIndex):
            hw = _utc_series(high_waters_m, "high_waters_m")
            hw_times = hw.index
            high_waters = hw.to_numpy()
        else:
            high_waters = high_waters_m.to_numpy(dtype=float)
    else:
        high_waters = np.asarray(high_waters_m, dtype=float).ravel()
    if high_waters.size < 100 or np.any(~np.isfinite(high_waters)):
        raise DataError(f"high_waters_m must hold >= 100 finite predicted high waters [m]; got {high_waters.size}"
                        f" values, {int(np.sum(~np.isfinite(high_waters)))} not finite")
    if high_water_years is None:
        if hw_times is not None:
            high_water_years = (hw_times[-1] - hw_times[0]) / pd.Timedelta(days=DAYS_PER_YEAR) * \
                high_waters.size / (high_waters.size - 1)
        else:
            high_water_years = NODAL_CYCLE_YEARS
    events_per_year = high_waters.size / float(high_water_years)
    if abs(high_water_years - NODAL_CYCLE_YEARS) > 0.5:
        warnings.warn(f"the high-water set spans {high_water_years:.2f} years, not a full nodal cycle "
                      f"({NODAL_CYCLE_YEARS} years)", ExtremesWarning, stacklevel=2)
        notes.append(f"the high-water set spans {high_water_years:.2f} years, not a full nodal cycle")
    return high_waters, hw_times, high_water_years, events_per_year


def _skew_surge_inputs(skew_surge, skew_surge_tide_m, skew_surge_positions):
    """Finite skew surges on a UTC index, with the predicted high water and high-water index of each (or None)."""
    tide_of_surge, positions = None, skew_surge_positions
    if isinstance(skew_surge, pd.DataFrame):
        frame = skew_surge
        if "time" in frame.columns:
            frame = frame.set_index("time")
        if "skew_surge_m" not in frame.columns:
            raise DataError(f"skew_surge frame needs a 'skew_surge_m' column; got {list(frame.columns)}")
        series = _utc_series(frame["skew_surge_m"], "skew_surge")
        if "predicted_high_water_m" in frame.columns:
            tide_of_surge = frame["predicted_high_water_m"].astype(float).reindex(series.index).to_numpy()
        if positions is None and "high_water_index" in frame.columns:
            positions = frame["high_water_index"].reindex(series.index).to_numpy()
    else:
        series = _utc_series(skew_surge, "skew_surge")
        if skew_surge_tide_m is not None:
            tide_of_surge = np.asarray(skew_surge_tide_m, dtype=float).ravel()
            if tide_of_surge.size != len(skew_surge):
                raise DataError(f"skew_surge_tide_m has {tide_of_surge.size} values for {len(skew_surge)} "
                                "skew surges")
            tide_of_surge = pd.Series(tide_of_surge, index=skew_surge.index).sort_index().to_numpy()
    if positions is not None:
        positions = np.asarray(positions, dtype=np.int64).ravel()
        if positions.size != series.size:
            raise DataError(f"skew_surge_positions has {positions.size} values for {series.size} skew surges")
    keep = np.isfinite(series.to_numpy())
    series = series[keep]
    if tide_of_surge is not None:
        tide_of_surge = tide_of_surge[keep]
    if positions is not None:
        positions = positions[keep]
    return series, tide_of_surge, positions


def _components(stratify, high_waters, hw_times, series, surge, tide_of_surge, year_ids, weights, n_bands,
                threshold_m, notes):
    """The convolution's components: all tides at once, tide-level bands or months."""
    components, band_thresholds = [], {}
    if stratify is None:
        components.append(year_bootstrap.Component("all", high_waters, 1.0, surge, year_ids, weight=weights))
    elif stratify == "tide-band":
        if tide_of_surge is None or np.any(~np.isfinite(tide_of_surge)):
            raise DataError("stratify='tide-band' needs the predicted high water of each skew surge "
                            "(a skew_surges frame or skew_surge_tide_m)")
        edges = np.quantile(high_waters, np.linspace(0, 1, n_bands + 1))
        edges[0], edges[-1] = -np.inf, np.inf
        hw_band, s_band = _band_labels(high_waters, edges), _band_labels(tide_of_surge, edges)
        band_thresholds = _band_thresholds(surge, s_band, n_bands, threshold_m, notes)
        for b in range(n_bands):
            sel = s_band == b
            components.append(year_bootstrap.Component(f"band {b + 1}", high_waters[hw_band == b],
                                               float(np.mean(hw_band == b)), surge[sel], year_ids[sel],
                                               weight=None if weights is None else weights[sel]))
        notes.append(f"skew-surge distribution stratified by {n_bands} bands of predicted high water "
                     f"(edges {', '.join(f'{e:.2f}' for e in edges[1:-1])} m)")
    elif stratify == "month":
        if hw_times is None:
            raise DataError("stratify='month' needs high_waters_m as a Series indexed by UTC time")
        hw_month, s_month = np.asarray(hw_times.month), np.asarray(series.index.month)
        for m in range(1, 13):
            components.append(year_bootstrap.Component(f"month {m}", high_waters[hw_month == m],
                                               float(np.mean(hw_month == m)), surge[s_month == m],
                                               year_ids[s_month == m]))
        notes.append("seasonal convolution: monthly high-water sets x monthly skew-surge distributions")
    else:
        raise DataError(f"stratify must be None, 'tide-band' or 'month'; got {stratify!r}")
    return components, band_thresholds


def _clustering(clustering, high_waters, surge, times, positions, year_ids, events_per_year, notes, *, n_offsets,
                min_exceedances, estimator, seed, theta_beyond, extremal_index, resample):
    """The extremal-index function (or constant) and, when resampled, its per-year re-estimation."""
    clustering_by_year = None
    if clustering == "level":
        if positions is None:
            positions = positions_from_spacing(times)
            notes.append("skew surges laid on the high-water sequence by their spacing (no high-water index given)")
        theta_table = extremal_index_by_level(high_waters, surge, positions, n_offsets=n_offsets,
                                              min_exceedances=min_exceedances, estimator=estimator,
                                              block_length=spring_neap_block_length(events_per_year), seed=seed)
        notes.append(
            f"storm clustering: extremal index estimated as a function of total level ({estimator} estimator, "
            f"observed skew-surge sequences on {n_offsets} shifts of the predicted tide), from "
            f"{theta_table['theta'].iloc[0]:.2f} at {theta_table['level_m'].iloc[0]:.2f} m to "
            f"{theta_table['theta'].iloc[-1]:.2f} at {theta_table['level_m'].iloc[-1]:.2f} m; above: "
            + ("held" if theta_beyond == "hold" else "extended along its rising trend, capped at 1"))
        if resample:
            clustering_by_year = year_bootstrap.ClusteringByYear(
                high_waters, surge, positions, year_ids, theta_table["level_m"].to_numpy(), n_offsets=n_offsets,
                block_length=spring_neap_block_length(events_per_year), seed=seed,
                min_exceedances=min_exceedances, beyond=theta_beyond)
    elif clustering == "constant":
        if extremal_index is None or not 0 < float(extremal_index) <= 1:
            raise DataError(f"clustering='constant' needs 0 < extremal_index <= 1; got {extremal_index!r}")
        theta_table = float(extremal_index)
        notes.append(f"storm clustering: constant extremal index {theta_table:g}")
    elif clustering == "none":
        theta_table = None
        notes.append("no storm clustering (extremal index 1; conservative)")
    else:
        raise DataError(f"clustering must be 'level', 'constant' or 'none'; got {clustering!r}")
    return theta_table, clustering_by_year


def skew_surge_joint_probability(high_waters_m, skew_surge, *, threshold_m=None,
                                 threshold_quantile=DEFAULT_THRESHOLD_QUANTILE, resample_clustering=True,
                                 bias_correction=True, interval="profile",
                                 tail_method="gml", clustering="level", extremal_index=None, n_offsets=32,
                                 min_exceedances=10, estimator="blocks", theta_beyond="trend", stratify=None, n_bands=3,
                                 skew_surge_tide_m=None, skew_surge_positions=None, interaction=None,
                                 month_weighting="auto", n_bootstrap=1000, confidence=0.95,
                                 periods_years=DENSE_PERIODS_YEARS, high_water_years=None, grid_step_m=0.005,
                                 datum="unspecified", epoch_year=None, seed=0) -> JointProbabilityResult:
    r"""Still-water return levels by the skew-surge joint probability method.

    Parameters
    ----------
    high_waters_m : array-like or pandas.Series
        Predicted high waters over a full nodal cycle at the MSL epoch, in time order; a Series with a UTC
        DatetimeIndex also gives the span of the set and allows ``stratify="month"``. [m]
    skew_surge : pandas.Series or pandas.DataFrame
        Skew surges indexed by UTC time of each tidal cycle, de-trended to the epoch [m]; or the frame of
        :func:`extremes.surge.skew_surges` (``skew_surge_m``, ``predicted_high_water_m``, UTC ``time``).
    threshold_m : float, optional
        Threshold of the GPD tail of skew surge [m]; by default the ``threshold_quantile`` quantile; the tail
        is fitted to all exceedances.
    threshold_quantile : float or None
        Quantile of skew surge used as the threshold (default :data:`DEFAULT_THRESHOLD_QUANTILE`, a fixed
        rule). ``None`` uses :func:`extremes.extremal.threshold.select_threshold` on the skew surges (storm
        peaks 72 h apart, stable shape), the previous default: the choice then conditions the fit and its
        intervals are too narrow (benchmarks/bench_coverage.py). Either way the 100-year level at other
        thresholds is reported in ``diagnostics["threshold_sensitivity"]``.
    resample_clustering : bool
        Re-estimate the extremal-index function in each bootstrap resample (default; blocks estimator) so
        that its uncertainty is in the interval; ``False`` holds the estimate (the previous behaviour).
    interval : {"profile", "bootstrap"}
        ``profile`` (default): profile likelihood of the return level with the deviance adjusted for storm
        clustering (Chandler & Bate 2007) to the whole-year bootstrap's variance, which carries the
        uncertainty of the exceedance probability and the extremal index (:mod:`extremes.joint.tail_profile`;
        one tail fitted by maximum likelihood only, otherwise the bootstrap is used); ``bootstrap``: the
        (bias-corrected) percentile interval of the whole-year bootstrap.
    bias_correction : bool
        Bootstrap intervals only: bias-corrected percentile interval (default) [3]_ sec. 14.3, or the plain
        percentile interval (the previous behaviour).
    tail_method : {"gml", "mle", "lmoments"}
        Fit of the GPD tail (all exceedances of the threshold): ``gml`` (default) generalized maximum likelihood
        with the geophysical shape prior of Martins & Stedinger (2001) (Beta(6, 9) on ξ in (-0.5, 0.5):
        :func:`extremes.extremal.gpd_mle.shape_log_prior`), which keeps a heavy or bounded shape estimate of
        one record from running away (benchmarks/bench_coverage.py); ``mle`` plain maximum likelihood;
        ``lmoments`` L-moments (bootstrap interval only).
    clustering : {"level", "constant", "none"}
        ``level``: extremal index as a function of level (:mod:`extremes.joint.clustering`);
        ``constant``: the given ``extremal_index`` at every level; ``none``: :math:`\theta = 1`.
    extremal_index : float, optional
        The constant extremal index for ``clustering="constant"``.
    n_offsets, min_exceedances, estimator
        Options of :func:`extremes.joint.clustering.extremal_index_by_level`.
    theta_beyond : {"trend", "hold"}
        Extremal index above the highest level it can be estimated at: extended along its rising trend up
        to 1 (default; clustering weakens with level, and the error leans to the conservative side), or held
        at the last estimate (:func:`extremes.joint.clustering.theta_function`).
    stratify : {None, "tide-band", "month"}
        Convolve per tide band (tide-dependent skew surge; needs the predicted high water of each skew
        surge) or per calendar month (seasonality; needs high-water times) and sum the rates.
    n_bands : int
        Number of tide bands (quantile bands of the predicted high waters).
    skew_surge_tide_m : array-like, optional
        Predicted high water of each skew surge [m] when ``skew_surge`` is a Series.
    skew_surge_positions : array-like of int, optional
        Position of each skew surge's predicted high water in the full high-water sequence of the record
        (:func:`extremes.joint.clustering.high_water_positions`); by default the ``high_water_index`` column of
        a skew-surge frame, else inferred from the spacing of the skew surges
        (:func:`extremes.joint.clustering.positions_from_spacing`). Storm clustering lays the skew surges on the
        tide sequence by these positions, right for semidiurnal, mixed and diurnal tides.
    month_weighting : {"auto", "none"}
        ``auto``: when the record covers the calendar months unevenly (winter outages), weight each skew surge
        by the inverse of its month's coverage (:func:`extremes.season.month_weights`), so that each month
        enters the surge distribution by its share of the year's tides; ``none``: equal weights. Not used with
        ``stratify="month"``, where each month has its own distribution.
    interaction : extremes.surge.InteractionTests, optional
        Result of the interaction tests; a level dependence gives an :class:`ExtremesWarning` and a note.
    n_bootstrap : int
        Resamples of whole years of skew surge for the intervals (0: no intervals). Each resample refits
        the tail and its exceedance probability and re-estimates the extremal index; a level above the
        level grid counts as above every bound (an upper bound among them is +inf: unbounded), a failed
        refit is counted in ``diagnostics``.
    confidence : float
        Level of the intervals.
    periods_years : array-like of float
        Return periods of the curve [years], default the dense grid.
    high_water_years : float, optional
        Years spanned by the high-water set [years]; default from its times, else 18.61.
    grid_step_m : float
        Step of the binned convolution grid [m].
    datum : str
        Vertical datum of the levels.
    epoch_year : float, optional
        MSL epoch of the levels [decimal year].
    seed : int
        Seed of the offsets and the bootstrap.

    Returns
    -------
    JointProbabilityResult
    """
    notes = [
        "skew-surge joint probability: predicted high waters of the nodal cycle convolved with the skew-surge "
        "distribution (empirical body, GPD tail), assumed independent of the tide",
        "return period = 1/(expected independent exceedance events per year); AEP = 1 - exp(-1/T)",
    ]
    diagnostics = {}
    high_waters, hw_times, high_water_years, events_per_year = _tide_set(high_waters_m, high_water_years,
                                                                          notes)
    series, tide_of_surge, positions = _skew_surge_inputs(skew_surge, skew_surge_tide_m, skew_surge_positions)
    if series.size < 200:
        raise DataError(f"skew_surge has {series.size} finite values; need >= 200 (a few months) and "
                        "preferably >= 10 years")
    surge = series.to_numpy()
    record_years = series.size / events_per_year
    diagnostics.update({"n_high_waters": int(high_waters.size), "high_water_years": float(high_water_years),
                        "n_skew_surges": int(series.size), "record_years": float(record_years)})
    if record_years < 10:
        warnings.warn(f"skew-surge record covers about {record_years:.1f} years of tides; the tail fit and the "
                      "extremal index are uncertain below ~10 years", ExtremesWarning, stacklevel=2)
        notes.append(f"short record ({record_years:.1f} years of skew surges)")
    # -- interaction
    dep = _interaction_dependent(interaction)
    if dep is not None:
        diagnostics["interaction_level_dependent"] = dep[0]
        diagnostics["interaction_verdict"] = dep[1]
        if dep[0] and stratify != "tide-band":
            msg = ("skew surge depends on the predicted high-water level (interaction test); the independence "
                   "assumption of the convolution is doubtful: use stratify='tide-band'")
            warnings.warn(msg, ExtremesWarning, stacklevel=2)
            notes.append(msg)
    # -- seasonal coverage
    weights = _month_weights(series.index, events_per_year, month_weighting, stratify, notes, diagnostics)
    if tail_method not in TAIL_FIT_WORDS:
        raise DataError(f"tail_method must be one of {sorted(TAIL_FIT_WORDS)}; got {tail_method!r}")
    # -- threshold and tail
    threshold_m = choose_threshold(series, threshold_m, threshold_quantile, notes, diagnostics, "skew-surge")
    year_ids, _ = year_bootstrap.check_year_ids(series.index)
    components, band_thresholds = _components(stratify, high_waters, hw_times, series, surge, tide_of_surge,
                                              year_ids, weights, n_bands, threshold_m, notes)
    for c in components:
        c.surge = year_bootstrap.fit_tail(c.surge_m, threshold_m=band_thresholds.get(c.label, threshold_m),
                                  years=record_years, method=tail_method,
                                  weights=c.weight)
    # -- clustering
    theta_table, clustering_by_year = _clustering(
        clustering, high_waters, surge, series.index, positions, year_ids, events_per_year, notes,
        n_offsets=n_offsets, min_exceedances=min_exceedances, estimator=estimator, seed=seed,
        theta_beyond=theta_beyond, extremal_index=extremal_index,
        resample=resample_clustering and estimator == "blocks" and bool(n_bootstrap))
    held = "re-estimated" if clustering_by_year is not None else "held"
    fixed_rule = threshold_quantile is not None or threshold_m is not None
    if interval not in ("profile", "bootstrap"):
        raise DataError(f"interval must be 'profile' or 'bootstrap'; got {interval!r}")
    use_profile = (interval == "profile" and len(components) == 1 and tail_method in year_bootstrap.SHAPE_PRIOR_OF
                   and components[0].weight is None)
    threshold_words = "by a fixed rule" if fixed_rule else "by the stability rule, held"
    if use_profile:
        interval_method = (f"profile likelihood of the return level ({TAIL_FIT_WORDS[tail_method]}), deviance "
                           f"adjusted for storm clustering (Chandler & Bate 2007) to the larger of the sandwich "
                           f"variance with years as clusters and the variance of a bootstrap of whole years "
                           f"({n_bootstrap} resamples; tail, exceedance probability and extremal index "
                           f"re-estimated in each; below {PROFILE_MIN_PERIOD_YEARS:g} years, and where the tail "
                           f"carries under a tenth of the variance, its bias-corrected percentile interval); "
                           f"threshold {threshold_words}")
    else:
        interval_method = (("bias-corrected " if bias_correction else "")
                           + f"percentile bootstrap of whole years of skew surge ({n_bootstrap} resamples; tail "
                           f"({TAIL_FIT_WORDS[tail_method]}) and exceedance probability refitted and extremal "
                           f"index {held} in each; threshold {threshold_words})")
    return assemble("skew-surge-joint-probability", components, events_per_year=events_per_year,
                    theta_table=theta_table, year_ids=year_ids, periods_years=periods_years,
                    n_bootstrap=n_bootstrap, confidence=confidence, seed=seed, grid_step_m=grid_step_m,
                    datum=datum, epoch_year=epoch_year, tail_method=tail_method, notes=notes,
                    diagnostics=diagnostics, threshold_m=threshold_m, theta_beyond=theta_beyond,
                    clustering_by_year=clustering_by_year, bias_correction=bias_correction,
                    interval_method=interval_method, interval="profile" if use_profile else "bootstrap",
                    sensitivity_thresholds=[(q, float(np.quantile(surge, q))) for q in SENSITIVITY_QUANTILES])
