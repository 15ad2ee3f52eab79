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
from extremes.joint import engine
from extremes.joint.clustering import (
    extremal_index_by_level,
    positions_from_spacing,
    spring_neap_block_length,
    theta_function,
)
from extremes.joint.core import levels_for_rates
from extremes.joint.result import CLUSTERING_TABLE_PERIODS_YEARS, JointProbabilityResult
from extremes.timebase import level_series

logger = logging.getLogger(__name__)

__all__ = ["skew_surge_joint_probability", "NODAL_CYCLE_YEARS", "DAYS_PER_YEAR"]


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
             interval_method, theta_beyond="hold"):
    """Curves (clustered and theta = 1), bootstrap intervals and the result object."""
    t0 = time.perf_counter()
    theta_of_z = theta_function(theta_table, beyond=theta_beyond)
    theta_min = float(np.min(theta_table["theta"])) if isinstance(theta_table, pd.DataFrame) else (
        1.0 if theta_table is None else float(theta_table))
    periods = np.asarray(periods_years, dtype=float)
    z_lo, z_hi, h = engine.grid_limits(components, events_per_year=events_per_year, theta_min=theta_min,
                                       min_rate=1.0 / periods.max(), h=grid_step_m)
    z0 = np.floor(z_lo / h) * h
    nz = int(np.ceil((z_hi - z0) / h)) + 1
    z = z0 + h * np.arange(nz)
    rate = sum(engine.component_rates(c, z0=z0, nz=nz, h=h, events_per_year=events_per_year)[0]
               for c in components)
    theta = theta_of_z(z)
    level_u = levels_for_rates(z, rate, 1.0 / periods)
    level_c = levels_for_rates(z, theta * rate, 1.0 / periods)
    diagnostics["grid_step_m"] = float(h)
    diagnostics["seconds_curve"] = time.perf_counter() - t0
    nan = np.full(periods.shape, np.nan)
    lo_c = hi_c = lo_u = hi_u = nan
    if n_bootstrap:
        t1 = time.perf_counter()
        boot_c, boot_u = engine.bootstrap_levels(components, year_ids=year_ids, z0=z0, nz=nz, h=h,
                                                 events_per_year=events_per_year, theta_of_z=theta_of_z,
                                                 periods_years=periods, n_bootstrap=n_bootstrap, seed=seed,
                                                 method=tail_method)
        lo_c, hi_c = engine.percentile_bounds(boot_c, confidence)
        lo_u, hi_u = engine.percentile_bounds(boot_u, confidence)
        n_ok = int(np.sum(np.all(np.isfinite(boot_u[:, :1]), axis=1)))
        diagnostics["bootstrap_resamples_used"] = n_ok
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
    tail = {c.label: c.surge.to_dict() for c in components}
    return JointProbabilityResult(method=method, curve=curve, curve_unclustered=curve_u,
                                  clustering_effect=effect,
                                  extremal_index=theta_table if isinstance(theta_table, pd.DataFrame) else None,
                                  threshold_m=float(threshold_m), tail=tail,
                                  events_per_year=float(events_per_year), notes=tuple(notes),
                                  diagnostics=diagnostics)


def choose_threshold(series, threshold_m, threshold_quantile, notes, diagnostics, what):
    """The tail threshold [m]: given, or from the extreme-value stage's automatic choice, or a quantile."""
    from extremes.errors import FitError
    from extremes.extremal import threshold as threshold_choice

    if threshold_m is not None:
        return float(threshold_m)
    if threshold_quantile is not None:
        value = float(np.quantile(series.to_numpy(), threshold_quantile))
        notes.append(f"{what} threshold {value:.3f} m = the {threshold_quantile:g} quantile")
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


def skew_surge_joint_probability(high_waters_m, skew_surge, *, threshold_m=None, threshold_quantile=None,
                                 tail_method="mle", clustering="level", extremal_index=None, n_offsets=32,
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
        Threshold of the GPD tail of skew surge [m]; by default the ``threshold_quantile`` quantile when
        that is given, else :func:`extremes.extremal.threshold.select_threshold` on the skew surges
        (storm peaks 72 h apart, stable shape); the tail is then fitted to all exceedances.
    threshold_quantile : float, optional
        Quantile of skew surge used as the threshold (instead of the automatic choice).
    tail_method : {"mle", "lmoments"}
        Fit of the GPD tail (all exceedances of the threshold).
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
        Resamples of whole years of skew surge for the intervals (0: no intervals).
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
    # -- tide set
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
    # -- skew surges
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
    # -- threshold and tail
    threshold_m = choose_threshold(series, threshold_m, threshold_quantile, notes, diagnostics, "skew-surge")
    year_ids, _ = engine.check_year_ids(series.index)
    components, band_thresholds = [], {}
    if stratify is None:
        components.append(engine.Component("all", high_waters, 1.0, surge, year_ids, weight=weights))
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
            components.append(engine.Component(f"band {b + 1}", high_waters[hw_band == b],
                                               float(np.mean(hw_band == b)), surge[sel], year_ids[sel],
                                               weight=None if weights is None else weights[sel]))
        notes.append(f"skew-surge distribution stratified by {n_bands} bands of predicted high water "
                     f"(edges {', '.join(f'{e:.2f}' for e in edges[1:-1])} m)")
    elif stratify == "month":
        if hw_times is None:
            raise DataError("stratify='month' needs high_waters_m as a Series indexed by UTC time")
        hw_month, s_month = np.asarray(hw_times.month), np.asarray(series.index.month)
        for m in range(1, 13):
            components.append(engine.Component(f"month {m}", high_waters[hw_month == m],
                                               float(np.mean(hw_month == m)), surge[s_month == m],
                                               year_ids[s_month == m]))
        notes.append("seasonal convolution: monthly high-water sets x monthly skew-surge distributions")
    else:
        raise DataError(f"stratify must be None, 'tide-band' or 'month'; got {stratify!r}")
    for c in components:
        c.surge = engine.fit_tail(c.surge_m, threshold_m=band_thresholds.get(c.label, threshold_m),
                                  years=record_years, method=tail_method,
                                  weights=c.weight)
    # -- clustering
    if clustering == "level":
        if positions is None:
            positions = positions_from_spacing(series.index)
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
    return assemble("skew-surge-joint-probability", components, events_per_year=events_per_year,
                    theta_table=theta_table, year_ids=year_ids, periods_years=periods_years,
                    n_bootstrap=n_bootstrap, confidence=confidence, seed=seed, grid_step_m=grid_step_m,
                    datum=datum, epoch_year=epoch_year, tail_method=tail_method, notes=notes,
                    diagnostics=diagnostics, threshold_m=threshold_m, theta_beyond=theta_beyond,
                    interval_method=f"percentile bootstrap of whole years of skew surge ({n_bootstrap} resamples;"
                                    " tail refitted, extremal index held)")
