"""One study: a gauge record to design still-water levels, every stage in order.

The stages (each a library module that can be used on its own):

1. read the record (:mod:`extremes.records`) and quality-control it (:mod:`extremes.quality`);
2. mean sea level: annual means, linear trend, and the record adjusted to the chosen epoch
   (:mod:`extremes.surge`); the epoch defaults to the end of the record;
3. harmonic analysis of the epoch-adjusted record (:mod:`extremes.tide`), tidal datums, tide type; spikes
   are re-detected on the de-tided residual and masked;
4. non-tidal residual, skew surges and the tide-surge interaction tests (:mod:`extremes.surge`);
5. still-water return levels by every method (:mod:`extremes.joint`, :mod:`extremes.extremal`): skew-surge
   joint probability over the predicted high waters of a nodal cycle centred on the epoch, classic/revised
   joint probability, annual maxima (GEV), peaks over threshold (GPD), r-largest; one comparison table and
   a recommended method with its reason;
6. sea-level rise (:mod:`extremes.sealevel`): the recommended levels raised by each offset, the present
   return period of each raised level, exceedance amplification, encounter probabilities over the design
   life and the design level for the accepted risk, with scenario tables when given.

The result is a :class:`extremes.results.StudyResult`; :func:`extremes.results.write_study` writes it.

Levels are in metres above the record's datum at the mean-sea-level epoch. Still water only: wave set-up,
run-up and freeboard come on top; local codes and licensed professional practice govern.
"""
from __future__ import annotations

import hashlib
import logging
import time
import warnings
from dataclasses import dataclass
from pathlib import Path
from typing import Callable

import numpy as np
import pandas as pd

from extremes import __version__
from extremes.errors import DataError, ExtremesError, ExtremesWarning
from extremes.study_options import StudyOptions, load_study_file

logger = logging.getLogger(__name__)

__all__ = ["StudyOptions", "load_study_file", "run_study", "run_study_record", "run_study_series"]

#: length of the nodal cycle [years]
NODAL_CYCLE_YEARS = 18.61
#: days per year used to turn decimal years into times (mean Gregorian year)
_YEAR_DAYS = 365.2425
#: resamples of the intervals of the hourly joint-probability method, a comparison method [-]
CHECK_RESAMPLES = 200
_CHECK_PROFILE_PERIODS_YEARS = (1.001, 1.1, 2, 5, 10, 50, 100, 500, 1000, 10_000)
#: the fewest complete years for a GEV fit of annual maxima (or r-largest) [-]
MIN_ANNUAL_MAXIMA = 10
#: the least record a study accepts [years]
MIN_RECORD_YEARS = 1.0


def timestamp_of_decimal_year(year: float) -> pd.Timestamp:
    """UTC time of decimal year ``year`` (calendar year start plus the fraction of that year)."""
    whole = int(np.floor(year))
    start = pd.Timestamp(year=whole, month=1, day=1, tz="UTC")
    end = pd.Timestamp(year=whole + 1, month=1, day=1, tz="UTC")
    return start + (end - start) * (year - whole)


class _Stages:
    """Times each stage and reports progress."""

    def __init__(self, progress: Callable[[str], None] | None):
        self.progress = progress
        self.seconds: dict[str, float] = {}
        self._name: str | None = None
        self._t0 = 0.0

    def start(self, name: str) -> None:
        self.stop()
        self._name, self._t0 = name, time.perf_counter()
        logger.info("stage: %s", name)
        if self.progress is not None:
            self.progress(name)

    def stop(self) -> None:
        if self._name is not None:
            self.seconds[self._name] = self.seconds.get(self._name, 0.0) + time.perf_counter() - self._t0
            self._name = None


def run_study(record_path, *, reader: dict | None = None, options: StudyOptions | None = None,
              progress: Callable[[str], None] | None = None):
    """Run the whole study on the record in file ``record_path``.

    Parameters
    ----------
    record_path : path-like
        The gauge record (see :func:`extremes.records.read_record`).
    reader : dict, optional
        Keyword arguments of :func:`extremes.records.read_record` (units, missing codes, offset, datum...).
    options : StudyOptions, optional
        The study's choices; defaults as documented in :class:`StudyOptions`.
    progress : callable, optional
        Called with the name of each stage as it starts.

    Returns
    -------
    extremes.results.StudyResult

    Raises
    ------
    DataError
        If the record cannot be read or is too short for a study.
    FitError
        If a required fit fails.
    """
    from extremes import records

    stages = _Stages(progress)
    stages.start("read")
    reader = {k: v for k, v in (reader or {}).items() if v is not None}
    record = records.read_record(record_path, **reader)
    return run_study_record(record, options=options, progress=progress, reader=reader, _stages=stages)


def run_study_series(level_m: pd.Series, *, datum: str = "unspecified", source: str = "<series>",
                     options: StudyOptions | None = None, progress: Callable[[str], None] | None = None):
    """Run the whole study on an in-memory series (e.g. one point of a gridded model output).

    Parameters
    ----------
    level_m : pandas.Series
        Water levels [m] on a tz-aware UTC DatetimeIndex; NaN for missing values.
    datum : str
        Vertical datum of the levels.
    source : str
        A name for the series, recorded as its source.
    """
    from extremes.records import GaugeRecord

    if not isinstance(level_m, pd.Series) or not isinstance(level_m.index, pd.DatetimeIndex):
        raise DataError("level_m must be a pandas Series on a DatetimeIndex")
    if level_m.index.tz is None:
        raise DataError("level_m must have tz-aware UTC times; got naive times")
    series = level_m.astype(float).copy()
    series.index = series.index.tz_convert("UTC").rename("time")
    series.name = "water_level_m"
    series.attrs.update(units="m", datum=datum)
    diffs = series.index.to_series().diff().dropna()
    diffs = diffs[diffs > pd.Timedelta(0)]
    if diffs.empty:
        raise DataError(f"{source}: fewer than two distinct time stamps")
    digest = hashlib.sha256(np.ascontiguousarray(series.to_numpy()).tobytes()
                            + series.index.asi8.tobytes()).hexdigest()
    record = GaugeRecord(water_level_m=series, datum=datum, source=source, sha256=digest,
                         interval=diffs.mode().iloc[0], meta={"format": "in-memory series"})
    return run_study_record(record, options=options, progress=progress)


def run_study_record(record, *, options: StudyOptions | None = None,
                     progress: Callable[[str], None] | None = None, reader: dict | None = None,
                     _stages: _Stages | None = None):
    """Run the study on a :class:`extremes.records.GaugeRecord` already read."""
    from extremes import joint, quality, sealevel, surge
    from extremes.report.cautions import standard_cautions
    from extremes.results import StudyResult
    from extremes.tide import datums as tide_datums
    from extremes.tide.harmonic import analyse_tide

    options = options or StudyOptions()
    if options.slr_scenarios:
        sealevel.read_scenarios(options.slr_scenarios)  # a bad scenario file fails now, not after the fits
    stages = _stages or _Stages(progress)
    notes: list[str] = []
    caught: list[str] = []

    with warnings.catch_warnings(record=True) as warned:
        warnings.simplefilter("always", ExtremesWarning)

        # 1. quality control ------------------------------------------------------------------------
        stages.start("quality control")
        qc = quality.check_record(record)
        level = qc.level_m
        n_out = int(qc.counts.get("out_of_range", 0))
        if n_out:
            where = qc.positions("out_of_range", 10)
            values = record.water_level_m.iloc[where["row"].to_numpy() - 1]  # rows are 1-based
            notes.append(
                f"{n_out} readings outside the record's robust range were excluded as faults; check that none is "
                f"a real extreme: " + ", ".join(f"{pd.Timestamp(t):%Y-%m-%d %H:%M} ({v:.3f} m)"
                                                for t, v in zip(where["time"], values.to_numpy()))
                + (" ..." if n_out > 10 else ""))
        valid = level.dropna()
        if valid.size < 2:
            raise DataError(f"{record.source}: no valid readings left after quality control")
        record_years = float(valid.size * qc.interval / pd.Timedelta(days=_YEAR_DAYS))
        if record_years < MIN_RECORD_YEARS:
            raise DataError(f"{record.source}: {record_years:.2f} years of valid data; a study needs at "
                            f"least {MIN_RECORD_YEARS:g} year (several decades for design levels)")

        # 2. mean sea level and epoch ---------------------------------------------------------------
        stages.start("mean sea level")
        end_year = float(surge.decimal_year(pd.DatetimeIndex([valid.index[-1]]))[0])
        epoch_year = float(options.epoch_year) if options.epoch_year is not None else round(end_year, 2)
        annual = surge.annual_mean_sea_level(level, min_completeness=0.75)
        trend = None
        if int(annual["mean_m"].notna().sum() if "mean_m" in annual else len(annual)) >= 3:
            try:
                trend = surge.msl_trend(annual)
            except ExtremesError as err:
                notes.append(f"mean-sea-level trend not fitted ({err}); levels are stated at the record's "
                             "mean sea level")
        else:
            notes.append("fewer than 3 complete years for annual mean sea level: no trend removed; levels "
                         "are stated at the record's mean sea level")
        level_epoch = surge.adjust_to_epoch(level, trend if trend is not None else 0.0, epoch_year)

        # 3. tide -------------------------------------------------------------------------------------
        stages.start("tide")
        model = analyse_tide(level_epoch)
        residual = surge.non_tidal_residual(level_epoch, model)
        qc = qc.with_residual_spikes(residual)
        keep = qc.level_m.reindex(level_epoch.index).notna()
        level_epoch = level_epoch.where(keep)
        residual = residual.where(keep)
        datums = tide_datums.tidal_datums(model)
        form = tide_datums.form_factor(model)
        kind = tide_datums.tide_type(form)

        # 4. surge ------------------------------------------------------------------------------------
        stages.start("surge")
        pad = pd.Timedelta(hours=30)  # predicted turning points located once, shared by both uses below
        turning_record = tide_datums.high_low_waters(model, level_epoch.index[0] - pad,
                                                     level_epoch.index[-1] + pad)
        skew = surge.skew_surges_from_turning_points(level_epoch, turning_record)
        interaction = surge.interaction_tests_from_series(
            residual, turning_record.loc[turning_record["kind"] == "high", "time"], skew)
        epoch_time = timestamp_of_decimal_year(epoch_year)
        half = pd.Timedelta(days=_YEAR_DAYS * NODAL_CYCLE_YEARS / 2)
        turning = tide_datums.high_low_waters(model, epoch_time - half, epoch_time + half)
        high_waters = turning.loc[turning["kind"] == "high"]
        skew_series = pd.Series(skew["skew_surge_m"].to_numpy(), index=pd.DatetimeIndex(skew["time"]),
                                name="skew_surge_m")

        # 5. return levels by every method ----------------------------------------------------------
        stages.start("extreme values")
        common = dict(datum=record.datum, epoch_year=epoch_year)
        curves, method_details = _direct_methods(joint, level_epoch, options, common, notes)
        stages.start("joint probability")
        ssjpm = joint.skew_surge_joint_probability(
            pd.Series(high_waters["level_m"].to_numpy(), index=pd.DatetimeIndex(high_waters["time"])),
            skew_series, interaction=interaction,
            n_bootstrap=options.resamples, confidence=options.confidence, seed=options.seed, **common,
        )
        curves["skew-surge-joint-probability"] = ssjpm.curve
        method_details["skew-surge-joint-probability"] = ssjpm
        _classic_method(joint, model, epoch_time, half, residual, level_epoch, options, common, curves,
                        method_details, notes)
        comparison = joint.compare_methods(curves, record_years=record_years, interaction=interaction,
                                           periods_years=options.periods_years)
        recommended = comparison.recommended_method

        # 6. sea-level rise ---------------------------------------------------------------------------
        stages.start("sea-level rise")
        slr = _sea_level_rise(sealevel, curves[recommended], options, epoch_year)

        cautions = standard_cautions(
            datum=record.datum, epoch_year=epoch_year, record_years=record_years,
            interval_minutes=qc.interval / pd.Timedelta(minutes=1), methods=tuple(curves),
            recommended_method=recommended, slr_offsets_m=options.slr_m,
        )
        stages.stop()
        caught = [str(w.message) for w in warned if issubclass(w.category, Warning)]

    options_record = {"study": options.to_dict(), "reader": dict(reader or {})}
    return StudyResult(
        software={"name": "extremes", "version": __version__},
        source=str(record.source), sha256=record.sha256, options=options_record,
        record=record, quality=qc, annual_msl=annual, msl_trend=trend, epoch_year=epoch_year,
        level_epoch_m=level_epoch, tide_model=model, datums=datums, form_factor=form, tide_type=kind,
        residual_m=residual, skew_surges=skew, high_waters=high_waters, interaction=interaction,
        curves=curves, method_details=method_details, comparison=comparison, sea_level_rise=slr,
        cautions=tuple(cautions), notes=tuple(notes), warnings=tuple(dict.fromkeys(caught)),
        timings_s=dict(stages.seconds), record_years=record_years,
    )


@dataclass(frozen=True, repr=False)
class DirectFit:
    """A direct method's sample and fit, kept for the diagnostics of the report.

    Attributes
    ----------
    method : str
    curve : ReturnLevelCurve
    sample : pandas.Series
        The values fitted (annual maxima or declustered peaks) [m], epoch-adjusted.
    fit : object
        The fitted distribution (GEVFit or GPDFit).
    notes : tuple of str
    """

    method: str
    curve: object
    sample: pd.Series
    fit: object
    notes: tuple = ()

    def __repr__(self) -> str:
        return f"DirectFit(method={self.method!r}, n={self.sample.size})"

    def cdf(self, x):
        """Distribution function of one sample value (GEV of annual maxima; GPD of peaks above threshold)."""
        from extremes.extremal import distributions

        f = self.fit
        if self.method == "annual-maxima":
            return distributions.gev_cdf(x, loc=f.loc, scale=f.scale, shape=f.shape)
        return 1.0 - distributions.gpd_exceedance_rate(x, threshold=f.threshold, scale=f.scale, shape=f.shape,
                                                       rate_per_year=1.0)

    def quantile(self, p):
        """Inverse of :meth:`cdf`."""
        from extremes.extremal import distributions

        f = self.fit
        p = np.asarray(p, dtype=float)
        if self.method == "annual-maxima":
            return distributions.gev_quantile(p, loc=f.loc, scale=f.scale, shape=f.shape)
        # GPD above the threshold: x = u + sigma/xi [(1 - p)^-xi - 1] (Coles 2001, ch. 4); xi -> 0: exponential
        if abs(f.shape) < 1e-9:
            return f.threshold - f.scale * np.log1p(-p)
        return f.threshold + f.scale / f.shape * ((1.0 - p) ** (-f.shape) - 1.0)

    def to_dict(self) -> dict:
        return {"method": self.method, "n": int(self.sample.size), "fit": self.fit, "notes": list(self.notes)}


class _Skip(Exception):
    """A method left out on purpose (its reason is already in the notes)."""


def _direct_methods(joint, level_epoch, options, common, notes):
    """Annual maxima (GEV), peaks over threshold (GPD) and r-largest of the epoch-adjusted total level."""
    from extremes.extremal import distributions, samples, threshold

    curves, details = {}, {}
    complete_years = int(samples.annual_maxima(level_epoch, min_coverage=options.min_year_coverage).maxima.size)
    if complete_years < MIN_ANNUAL_MAXIMA:
        notes.append(f"annual-maxima and r-largest not fitted: {complete_years} complete years; a GEV fit needs "
                     f"at least {MIN_ANNUAL_MAXIMA}")
    try:
        if complete_years < MIN_ANNUAL_MAXIMA:
            raise _Skip
        curve = joint.direct_annual_maxima(level_epoch, min_coverage=options.min_year_coverage,
                                           confidence=options.confidence, **common)
        am = samples.annual_maxima(level_epoch, min_coverage=options.min_year_coverage)
        fit = distributions.fit_gev(am.maxima.to_numpy())
        curves["annual-maxima"] = curve
        details["annual-maxima"] = DirectFit("annual-maxima", curve, am.maxima.rename("annual_max_m"), fit,
                                             tuple(curve.notes))
    except _Skip:
        pass
    except ExtremesError as err:
        notes.append(f"annual-maxima not available: {err}")
    try:
        choice = threshold.select_threshold(level_epoch, min_separation_hours=options.min_separation_hours)
        curve = joint.direct_peaks_over_threshold(level_epoch, threshold_m=choice.threshold_m,
                                                  min_separation_hours=options.min_separation_hours,
                                                  confidence=options.confidence, **common)
        peaks = samples.peaks_over_threshold(level_epoch, threshold=choice.threshold_m,
                                             min_separation_hours=options.min_separation_hours)
        fit = distributions.fit_gpd(peaks)
        curves["peaks-over-threshold"] = curve
        details["peaks-over-threshold"] = DirectFit(
            "peaks-over-threshold", curve, peaks.peaks.rename("peak_m"), fit,
            (f"threshold {choice.threshold_m:.3f} m by the automatic rule: {choice.rule}",) + tuple(curve.notes))
    except ExtremesError as err:
        notes.append(f"peaks-over-threshold not available: {err}")
    try:
        if complete_years < MIN_ANNUAL_MAXIMA:
            raise _Skip
        # a check method: delta-method intervals keep it quick (its profile likelihood has no closed-form
        # derivatives and costs seconds a period); the curve's interval_method says so
        curves["r-largest"] = joint.direct_r_largest(level_epoch, min_separation_hours=options.min_separation_hours,
                                                     min_coverage=options.min_year_coverage, ci="delta",
                                                     confidence=options.confidence,
                                                     profile_periods_years=_CHECK_PROFILE_PERIODS_YEARS, **common)
    except _Skip:
        pass
    except ExtremesError as err:
        notes.append(f"r-largest not available: {err}")
    return curves, details


def _classic_method(joint, model, epoch_time, half, residual, level_epoch, options, common, curves,
                    details, notes):
    """Classic/revised joint probability: hourly tide over a nodal cycle x hourly residual."""
    hours = pd.date_range(epoch_time - half, epoch_time + half, freq="1h")
    hourly_tide = model.predict(hours).to_numpy()
    hourly_residual = residual.resample("1h").mean() if residual.index.freq != pd.Timedelta("1h") else residual
    try:
        # a comparison method: at most CHECK_RESAMPLES resamples (stated in its interval method)
        result = joint.classic_joint_probability(
            hourly_tide, hourly_residual, n_bootstrap=min(options.resamples, CHECK_RESAMPLES),
            confidence=options.confidence, seed=options.seed, **common,
        )
    except ExtremesError as err:
        notes.append(f"joint-probability (hourly) not available: {err}")
        return
    curves["joint-probability"] = result.curve
    details["joint-probability"] = result


def _sea_level_rise(sealevel, curve, options, epoch_year):
    """Sea-level-rise rows of the contract plus amplification, encounter and design levels."""
    rows = sealevel.sea_level_rise_rows(curve, offsets_m=options.slr_m, periods_years=options.periods_years)
    life = int(round(options.design_life_years))
    level_100 = float(curve.level_at([100.0])[0])
    amplification = []
    for offset in options.slr_m:
        if offset > 0:
            amplification.append(sealevel.amplification_from_curve(curve, rise_m=offset, period_years=100.0))
    encounter = [sealevel.encounter_probability_with_rise(curve, level_m=level_100, design_life_years=life,
                                                          rise_m=offset) for offset in (0.0,) + tuple(
        o for o in options.slr_m if o != 0.0)]
    design = [sealevel.design_level(curve, accepted_probability=options.accepted_risk, design_life_years=life,
                                    rise_m=offset) for offset in (0.0,) + tuple(o for o in options.slr_m if o != 0.0)]
    scenarios = None
    scenario_results = []
    if options.slr_scenarios:
        scenarios = sealevel.read_scenarios(options.slr_scenarios)
        for name in scenarios.names:
            rise = sealevel.rise_by_year(scenarios, name, start_year=epoch_year, design_life_years=life,
                                         reference_year=epoch_year)
            scenario_results.append({
                "scenario": name,
                "encounter_100yr_level": sealevel.encounter_probability_with_rise(
                    curve, level_m=level_100, design_life_years=life, rise_m=rise),
                "design_level": sealevel.design_level(
                    curve, accepted_probability=options.accepted_risk, design_life_years=life, rise_m=rise),
                "rise_end_of_life_m": float(rise[-1]),
            })
    allowance = None
    names = {name.lower(): name for name in (scenarios.names if scenarios is not None else ())}
    if {"low", "central", "high"} <= set(names):
        # Hunter (2012) allowance with the rise at the end of the design life taken as normal: mean = the
        # central scenario, 5-95 % range = low..high (an assumption, stated in the results)
        ends = {key: float(sealevel.rise_by_year(scenarios, names[key], start_year=epoch_year,
                                                 design_life_years=life, reference_year=epoch_year)[-1])
                for key in ("low", "central", "high")}
        scale = sealevel.gumbel_scale_of_curve(curve, period_years=100.0)
        allowance = {
            "allowance": sealevel.allowance_normal(mean_m=ends["central"],
                                                   sd_m=(ends["high"] - ends["low"]) / (2 * 1.6448536),
                                                   scale_m=scale),
            "assumption": "rise at the end of the design life normal, mean = central scenario, "
                          "5-95 % range = low to high scenario; Gumbel scale from the 100-year slope of the curve",
        }
    return {
        "rows": rows,
        "allowance": allowance,
        "method": curve.method,
        "level_100_m": level_100,
        "amplification": amplification,
        "encounter": encounter,
        "design_levels": design,
        "scenarios": scenarios,
        "scenario_results": scenario_results,
        "design_life_years": life,
        "accepted_risk": options.accepted_risk,
    }


def default_output_name(record_path) -> str:
    """Folder name for a study of ``record_path`` (its stem without compression suffixes)."""
    name = Path(record_path).name
    for suffix in (".gz", ".csv", ".txt", ".nc", ".dat", ".tsv"):
        if name.lower().endswith(suffix):
            name = name[: -len(suffix)]
    return name or "study"
