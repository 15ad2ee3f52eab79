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
from collections.abc import Callable
from pathlib import Path

import numpy as np
import pandas as pd

from extremes import __version__
from extremes.constants import DAYS_PER_YEAR, NODAL_CYCLE_YEARS
from extremes.errors import DataError, ExtremesError, ExtremesWarning
from extremes.study_options import StudyOptions, load_study_file
from extremes.timebase import sampling_interval

logger = logging.getLogger(__name__)

__all__ = ["StudyOptions", "load_study_file", "run_study", "run_study_record", "run_study_series"]

#: resamples of the intervals of the hourly joint-probability method, a comparison method [-]
CHECK_RESAMPLES = 200
_CHECK_PROFILE_PERIODS_YEARS = (1.001, 1.1, 2, 5, 10, 50, 100, 500, 1000, 10_000)
#: the fewest complete years for a GEV fit of annual maxima (or r-largest) [-]
MIN_ANNUAL_MAXIMA = 10
#: the least record a study accepts [years]
MIN_RECORD_YEARS = 1.0


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
              progress: Callable[[str], None] | None = None, hourly_check: bool = True, reference=None,
              reference_reader: dict | None = None, gauge_checks: bool = True):
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
    hourly_check : bool, keyword-only
        Run the hourly joint-probability comparison method (False: left out, as for model points).
    reference : path-like, pandas.Series or ReferenceGauge, optional
        A long gauge sharing the site's storm climate (:mod:`extremes.transfer`), read with
        ``reference_reader`` (default: ``reader``).
    reference_reader : dict, optional
        Reader options of the reference file.
    gauge_checks : bool, keyword-only
        Look for clock faults and datum steps (False for model output: one clock and one datum).

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
    if reference is not None:
        from extremes.transfer.stage import load_reference

        stages.start("reference gauge")
        reference = load_reference(reference, reader=reader if reference_reader is None else reference_reader)
    return run_study_record(record, options=options, progress=progress, reader=reader, _stages=stages,
                            hourly_check=hourly_check, reference=reference, gauge_checks=gauge_checks)


def run_study_series(level_m: pd.Series, *, datum: str = "unspecified", source: str = "<series>",
                     options: StudyOptions | None = None, progress: Callable[[str], None] | None = None,
                     hourly_check: bool = True, reference=None, gauge_checks: bool = True):
    """Run the whole study on an in-memory series (e.g. one point of a gridded model output).

    Parameters
    ----------
    level_m : pandas.Series
        Water levels [m] on a tz-aware UTC DatetimeIndex; NaN for missing values.
    datum : str
        Vertical datum of the levels.
    source : str
        A name for the series, recorded as its source.
    reference : ReferenceGauge, optional
        A prepared long gauge for a short site (:func:`extremes.transfer.stage.load_reference`).
    gauge_checks : bool, keyword-only
        Look for clock faults and datum steps (False for model output: one clock and one datum).
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
    try:
        interval = sampling_interval(series.index)
    except DataError:
        raise DataError(f"{source}: fewer than two distinct time stamps") from None
    digest = hashlib.sha256(np.ascontiguousarray(series.to_numpy()).tobytes()
                            + series.index.asi8.tobytes()).hexdigest()
    record = GaugeRecord(water_level_m=series, datum=datum, source=source, sha256=digest,
                         interval=interval, meta={"format": "in-memory series"})
    return run_study_record(record, options=options, progress=progress, hourly_check=hourly_check,
                            reference=reference, gauge_checks=gauge_checks)


def _excluded_readings_note(record, qc) -> str | None:
    """Name the readings excluded as out of range, so that a real extreme is not lost unseen."""
    n_out = int(qc.counts.get("out_of_range", 0))
    if not n_out:
        return None
    where = qc.positions("out_of_range", 10)
    values = record.water_level_m.iloc[where["row"].to_numpy() - 1]  # rows are 1-based
    return (f"{n_out} readings outside the record's robust range were excluded as faults; check that none is a "
            f"real extreme: " + ", ".join(f"{pd.Timestamp(t):%Y-%m-%d %H:%M} ({v:.3f} m)"
                                          for t, v in zip(where["time"], values.to_numpy()))
            + (" ..." if n_out > 10 else ""))


def _valid_record_years(record, qc) -> float:
    """Years of valid data after quality control; DataError when below :data:`MIN_RECORD_YEARS`."""
    valid = qc.level_m.dropna()
    if valid.size < 2:
        raise DataError(f"{record.source}: no valid readings left after quality control")
    from extremes import sampling

    record_years = sampling.represented_years(valid, qc.eras if len(qc.eras) else None)
    if record_years < MIN_RECORD_YEARS:
        raise DataError(f"{record.source}: {record_years:.2f} years of valid data; a study needs at "
                        f"least {MIN_RECORD_YEARS:g} year (several decades for design levels)")
    return record_years


def run_study_record(record, *, options: StudyOptions | None = None,
                     progress: Callable[[str], None] | None = None, reader: dict | None = None,
                     _stages: _Stages | None = None, hourly_check: bool = True, reference=None,
                     gauge_checks: bool = True):
    """Run the study on a :class:`extremes.records.GaugeRecord` already read (``hourly_check``: see
    :func:`run_study`; ``gauge_checks``: see :func:`run_study_series`).

    The stages, each one library call: :func:`extremes.quality.check_record`,
    :func:`extremes.tide.stage.analyse_record_tide`, the direct methods
    (:mod:`extremes.extremal.direct` over :func:`extremes.extremal.sample_fit.fit_sample`), the joint methods
    (:mod:`extremes.joint`), :func:`extremes.joint.compare_methods` and
    :func:`extremes.sealevel.stage.assess_sea_level_rise`. With a prepared ``reference`` gauge
    (:func:`extremes.transfer.stage.load_reference`), the reference-gauge transfer too
    (:mod:`extremes.transfer.stage`).
    """
    from extremes import joint, quality, sealevel
    from extremes import season as season_rules
    from extremes.report.cautions import standard_cautions
    from extremes.results import StudyResult
    from extremes.sealevel import assess_sea_level_rise
    from extremes.tide.stage import analyse_record_tide
    from extremes.transfer import stage as transfer_stage

    options = options or StudyOptions()
    # a bad scenario file fails now, not after the fits
    scenarios = sealevel.read_scenarios(options.slr_scenarios) if options.slr_scenarios else None
    stages = _stages or _Stages(progress)
    notes: list[str] = []

    with warnings.catch_warnings(record=True) as warned:
        warnings.simplefilter("always", ExtremesWarning)
        stages.start("quality control")
        qc = quality.check_record(record, detect_clock_faults=gauge_checks, detect_datum_steps=gauge_checks)
        if not gauge_checks:
            notes.append("clock-fault and datum-step checks left out: a model point is on one clock and one datum")
        excluded = _excluded_readings_note(record, qc)
        notes += [excluded] if excluded else []
        record_years = _valid_record_years(record, qc)

        tide = analyse_record_tide(qc, epoch_year=options.epoch_year, on_stage=stages.start,
                                   infer=transfer_stage.tide_inference(reference))
        notes += list(tide.notes)
        common = dict(datum=record.datum, epoch_year=tide.epoch_year)

        stages.start("extreme values")
        season = season_rules.storm_season_or_none(tide.skew_surges, notes)
        curves, method_details = _direct_methods(joint, tide.level_epoch_m, options, common, notes,
                                                 season_months=season.months if season else None)
        stages.start("joint probability")
        ssjpm, stratified = joint.skew_surge_method_for(  # tide-band stratified when the tail test finds dependence
            tide.high_water_series, tide.skew_surges, interaction=tide.interaction, notes=notes,
            n_bootstrap=options.resamples, confidence=options.confidence, seed=options.seed, **common,
        )
        curves["skew-surge-joint-probability"] = ssjpm.curve
        method_details["skew-surge-joint-probability"] = ssjpm
        if hourly_check:
            _classic_method(joint, tide, options, common, curves, method_details, notes)
        else:
            notes.append("joint-probability (hourly) left out: a comparison method, skipped for model points")
        if reference is not None:
            stages.start("reference transfer")
            transferred = transfer_stage.transfer_stage(tide, reference, options=options, datum=record.datum)
            curves[transferred.method], method_details[transferred.method] = transferred.curve, transferred
        comparison = joint.compare_methods(curves, record_years=record_years, interaction=tide.interaction,
                                           stratified=stratified, periods_years=options.periods_years)
        if reference is not None:
            comparison = transfer_stage.recommend_with_transfer(comparison, transferred, record_years=record_years)

        stages.start("sea-level rise")
        slr = assess_sea_level_rise(curves[comparison.recommended_method], offsets_m=options.slr_m,
                                    periods_years=options.periods_years,
                                    design_life_years=options.design_life_years,
                                    accepted_risk=options.accepted_risk, scenarios=scenarios,
                                    epoch_year=tide.epoch_year)
        cautions = standard_cautions(
            datum=record.datum, epoch_year=tide.epoch_year, record_years=record_years,
            interval_minutes=qc.interval / pd.Timedelta(minutes=1), methods=tuple(curves),
            recommended_method=comparison.recommended_method, slr_offsets_m=options.slr_m,
        )
        stages.stop()
        caught = [str(w.message) for w in warned if issubclass(w.category, Warning)]

    options_record = {"study": options.to_dict(), "reader": dict(reader or {})}
    return StudyResult(
        software={"name": "extremes", "version": __version__},
        source=str(record.source), sha256=record.sha256, options=options_record, record=record, tide=tide,
        curves=curves, method_details=method_details, comparison=comparison, sea_level_rise=slr,
        cautions=tuple(cautions), notes=tuple(notes), warnings=tuple(dict.fromkeys(caught)),
        timings_s=dict(stages.seconds), record_years=record_years, reference=reference,
    )


def _direct_methods(joint, level_epoch, options, common, notes, season_months=None):
    """Annual maxima (GEV), peaks over threshold (GPD) and r-largest of the epoch-adjusted total level."""
    from extremes.extremal import direct as direct_methods
    from extremes.extremal import samples

    curves, details = {}, {}
    years = dict(min_coverage=options.min_year_coverage, season_months=season_months)  # storm-season rule too
    try:
        complete_years = int(samples.annual_maxima(level_epoch, **years).maxima.size)
    except DataError:  # no calendar year complete enough (a year's record across two calendar years)
        complete_years = 0
    enough_years = complete_years >= MIN_ANNUAL_MAXIMA
    if not enough_years:
        notes.append(f"annual-maxima and r-largest not fitted: {complete_years} complete years; a GEV fit needs "
                     f"at least {MIN_ANNUAL_MAXIMA}")
    runs = [
        ("annual-maxima", enough_years, lambda: direct_methods.direct_annual_maxima(
            level_epoch, **years, confidence=options.confidence, **common)),
        ("peaks-over-threshold", True, lambda: direct_methods.direct_peaks_over_threshold(
            level_epoch, min_separation_hours=options.min_separation_hours, confidence=options.confidence,
            **common)),
        # a check method: delta-method intervals keep it quick (its profile likelihood has no closed-form
        # derivatives and costs seconds a period); the curve's interval_method says so
        ("r-largest", enough_years, lambda: direct_methods.direct_r_largest(
            level_epoch, min_separation_hours=options.min_separation_hours, **years,
            ci="delta", confidence=options.confidence, profile_periods_years=_CHECK_PROFILE_PERIODS_YEARS,
            **common)),
    ]
    for method, wanted, run in runs:
        if not wanted:
            continue
        try:
            direct = run()
        except ExtremesError as err:
            notes.append(f"{method} not available: {err}")
            continue
        curves[method] = direct.curve
        details[method] = direct
    return curves, details


def _classic_method(joint, tide, options, common, curves, details, notes):
    """Classic/revised joint probability: hourly tide over a nodal cycle x hourly residual."""
    half = pd.Timedelta(days=DAYS_PER_YEAR * NODAL_CYCLE_YEARS / 2)
    hours = pd.date_range(tide.epoch_time - half, tide.epoch_time + half, freq="1h")
    hourly_tide = tide.tide_model.predict(hours).to_numpy()
    residual = tide.residual_m
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


def default_output_name(record_path) -> str:
    """Folder name for a study of ``record_path`` (its stem without compression suffixes)."""
    name = Path(record_path).name
    for suffix in (".gz", ".csv", ".txt", ".nc", ".dat", ".tsv"):
        if name.lower().endswith(suffix):
            name = name[: -len(suffix)]
    return name or "study"
