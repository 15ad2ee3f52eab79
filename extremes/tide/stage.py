r"""The tide stage of a study: mean sea level and epoch, harmonic analysis, datums, residual and skew surges.

One function, :func:`analyse_record_tide`, serves the ``tide`` command, the study and every method built
on them, so that a record gives the same harmonic constants whichever command reads it. In order:

1. annual mean sea level and its linear trend (:func:`extremes.surge.msl_trend`); the record is moved
   along the trend to the mean-sea-level epoch (default: the end of the record);
2. least-squares harmonic analysis with nodal corrections of the epoch-adjusted record
   (:func:`extremes.tide.harmonic.analyse_tide`), tidal datums, form factor and tide type;
3. non-tidal residual; spikes are re-detected on it (quality control on the residual, IOC Manual 14) and
   masked in the level and the residual (the harmonic constants are kept: a few masked samples do not move
   a least-squares fit over thousands of tidal cycles);
4. skew surges (one per predicted high water) and the tide-surge interaction tests;
5. the predicted high waters of a full nodal cycle centred on the epoch, for the joint methods.

References
----------
.. [1] D. T. Pugh, *Tides, Surges and Mean Sea-Level*. Chichester, U.K.: Wiley, 1987.
.. [2] IOC, *Manual on Sea Level Measurement and Interpretation*, IOC Manuals and Guides 14. Paris: UNESCO.
"""
from __future__ import annotations

import logging
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from extremes.constants import DAYS_PER_YEAR, NODAL_CYCLE_YEARS
from extremes.errors import ExtremesError
from extremes.timebase import decimal_year, timestamp_of_decimal_year

logger = logging.getLogger(__name__)

__all__ = ["TideStage", "analyse_record_tide"]

#: time either side of the record over which predicted turning points are located (a cycle and more) [h]
_TURNING_PAD_HOURS = 30.0


@dataclass(frozen=True, eq=False, repr=False)
class TideStage:
    """What the tide stage found. Levels in metres above the record's datum, at ``epoch_year``.

    Attributes
    ----------
    quality : QualityReport
        The record's quality report, with spikes re-detected on the residual.
    annual_msl : pandas.DataFrame
        Annual mean sea level (years complete enough). [m]
    msl_trend : MSLTrend or None
        Linear trend of annual means; None when fewer than 3 complete years or the fit failed.
    epoch_year : float
        Mean-sea-level epoch of every level [decimal year].
    level_epoch_m : pandas.Series
        Observed level moved to the epoch, flagged samples NaN. [m]
    tide_model : TideModel
    datums : TidalDatums
    form_factor : float
    tide_type : str
    residual_m : pandas.Series
        Non-tidal residual (observed minus predicted) at the epoch. [m]
    skew_surges : pandas.DataFrame
        One row per predicted high water of the record.
    interaction : InteractionTests
    high_waters : pandas.DataFrame
        Predicted high waters of a nodal cycle centred on the epoch (``time``, ``level_m``).
    notes : tuple of str
    """

    quality: object
    annual_msl: pd.DataFrame
    msl_trend: object
    epoch_year: float
    level_epoch_m: pd.Series
    tide_model: object
    datums: object
    form_factor: float
    tide_type: str
    residual_m: pd.Series
    skew_surges: pd.DataFrame
    interaction: object
    high_waters: pd.DataFrame
    notes: tuple = field(default_factory=tuple)

    def __repr__(self) -> str:
        return (f"TideStage(epoch={self.epoch_year:.2f}, constituents={len(self.tide_model.constituents)}, "
                f"type={self.tide_type!r})")

    @property
    def msl_at_epoch_m(self) -> float:
        """Mean sea level at the epoch on the fitted trend (the record mean when no trend). [m]"""
        if self.msl_trend is not None:
            return float(self.msl_trend.msl_at(self.epoch_year))
        return float(np.nanmean(self.level_epoch_m.to_numpy()))

    @property
    def epoch_time(self) -> pd.Timestamp:
        """UTC time of the epoch."""
        return timestamp_of_decimal_year(self.epoch_year)

    @property
    def skew_surge_series(self) -> pd.Series:
        """Skew surges indexed by the time of their predicted high water. [m]"""
        return pd.Series(self.skew_surges["skew_surge_m"].to_numpy(),
                         index=pd.DatetimeIndex(self.skew_surges["time"]), name="skew_surge_m")

    @property
    def high_water_series(self) -> pd.Series:
        """Predicted high waters of the nodal cycle at the epoch, by time. [m]"""
        return pd.Series(self.high_waters["level_m"].to_numpy(), index=pd.DatetimeIndex(self.high_waters["time"]),
                         name="high_water_m")

    def tide_dict(self) -> dict:
        """The ``tide`` object of results.json (CONTRACT.md) and of ``extremes tide --json``."""
        model, datums = self.tide_model, self.datums
        return {
            "constituents": [c.to_dict() for c in model.constituents],
            "datums_m": datums.datums_m,
            "datums_basis": datums.labels,  # what each datum includes (constituents, radiational terms, window)
            "form_factor": self.form_factor,
            "tide_type": self.tide_type,
            "z0_m": model.z0_m,
            "residual_std_m": model.residual_std_m,
            "n_constituents": len(model.constituents),
            "phase_convention": "Greenwich phase lag relative to the equilibrium argument, times in UTC",
            "datum": model.datum, "start": model.start, "end": model.end, "n_samples": model.n_samples,
            "condition_number": model.condition_number, "rayleigh": model.rayleigh,
            "inferred": {k: {"reference": v[0], "amplitude_ratio": v[1], "phase_difference_deg": v[2]}
                         for k, v in model.inference.items()},
            "datums_window": {"start": datums.start, "end": datums.end, "step_minutes": datums.step_minutes,
                              "include_radiational": datums.include_radiational},
            "spikes_on_residual": int(self.quality.counts.get("spike", 0)),
        }

    def mean_sea_level_dict(self) -> dict:
        """The ``mean_sea_level`` object of results.json (CONTRACT.md)."""
        trend = self.msl_trend
        return {
            "trend_m_per_year": None if trend is None else trend.trend_m_per_year,
            "trend_se_m_per_year": None if trend is None else trend.trend_se_m_per_year,
            "epoch_year": self.epoch_year,
            "msl_at_epoch_m": self.msl_at_epoch_m,
            "msl_at_epoch_se_m": None if trend is None else trend.msl_at_se(self.epoch_year),
            "trend": None if trend is None else trend.to_dict(),
            "annual_means": self.annual_msl,
            "notes": list(self.notes),
        }

    def to_dict(self) -> dict:
        """``{"tide": ..., "mean_sea_level": ...}`` as in results.json."""
        return {"tide": self.tide_dict(), "mean_sea_level": self.mean_sea_level_dict()}


def _mean_sea_level(level_m: pd.Series, epoch_year, notes: list[str]):
    """Annual means, trend, epoch and the record moved to the epoch."""
    from extremes import surge

    valid = level_m.dropna()
    end_year = float(decimal_year(pd.DatetimeIndex([valid.index[-1]]))[0])
    epoch = float(epoch_year) if epoch_year is not None else round(end_year, 2)
    annual = surge.annual_mean_sea_level(level_m, min_completeness=0.75)
    trend = None
    if int(annual["mean_m"].notna().sum() if "mean_m" in annual else len(annual)) >= 3:
        try:
            trend = surge.msl_trend(annual)
        except ExtremesError as err:
            notes.append(f"mean-sea-level trend not fitted ({err}); levels are stated at the record's mean sea level")
    else:
        notes.append("fewer than 3 complete years for annual mean sea level: no trend removed; levels are stated "
                     "at the record's mean sea level")
    level_epoch = surge.adjust_to_epoch(level_m, trend if trend is not None else 0.0, epoch)
    return annual, trend, epoch, level_epoch


def analyse_record_tide(quality_report, *, epoch_year: float | None = None, constituents="auto",
                        rayleigh: float = 1.0, infer=True, include_radiational: bool = False,
                        on_stage: Callable[[str], None] | None = None) -> TideStage:
    """Run the tide stage on a quality-controlled record.

    Parameters
    ----------
    quality_report : QualityReport
        From :func:`extremes.quality.check_record`; its clean series is analysed.
    epoch_year : float, optional
        Mean-sea-level epoch [decimal year]; default the end of the record (rounded to 0.01 year).
    constituents, rayleigh, infer
        Constituent choice of :func:`extremes.tide.harmonic.analyse_tide` (default: automatic by record
        length with the Rayleigh criterion, inference of P1 and K2 when unresolved).
    include_radiational : bool, keyword-only
        Keep Sa, Ssa and S1 in the prediction behind HAT and LAT (default: left out, as stated with every
        datum).
    on_stage : callable, optional
        Called with ``"mean sea level"``, ``"tide"`` and ``"surge"`` as each part starts (for timing).

    Returns
    -------
    TideStage

    Raises
    ------
    DataError
        If the record is too short or too gappy for the analysis.
    """
    from extremes import surge
    from extremes.tide import datums as tide_datums
    from extremes.tide.harmonic import analyse_tide

    def stage(name):
        if on_stage is not None:
            on_stage(name)

    notes: list[str] = []
    stage("mean sea level")
    annual, trend, epoch, level_epoch = _mean_sea_level(quality_report.level_m, epoch_year, notes)

    stage("tide")
    # spans with a detected, uncorrected clock fault stay out of the tide and surge statistics (named in a
    # warning); their levels stay in the level series
    clock_fault = quality_report.clock_fault_mask(level_epoch.index)
    quality_report.warn_clock_faults()
    model = analyse_tide(level_epoch.where(~clock_fault), constituents=constituents, rayleigh=rayleigh, infer=infer)
    residual = surge.non_tidal_residual(level_epoch, model)
    checked = quality_report.with_residual_spikes(residual)
    keep = checked.level_m.reindex(level_epoch.index).notna()
    level_epoch = level_epoch.where(keep)
    residual = residual.where(keep & ~clock_fault)
    datums = tide_datums.tidal_datums(model, include_radiational=include_radiational)
    form = tide_datums.form_factor(model)

    stage("surge")
    pad = pd.Timedelta(hours=_TURNING_PAD_HOURS)
    turning_record = tide_datums.high_low_waters(model, level_epoch.index[0] - pad, level_epoch.index[-1] + pad)
    skew = surge.skew_surges_from_turning_points(level_epoch.where(~clock_fault), turning_record)
    interaction = surge.interaction_tests_from_series(
        residual, turning_record.loc[turning_record["kind"] == "high", "time"], skew)
    epoch_time = timestamp_of_decimal_year(epoch)
    half = pd.Timedelta(days=DAYS_PER_YEAR * NODAL_CYCLE_YEARS / 2)
    turning = tide_datums.high_low_waters(model, epoch_time - half, epoch_time + half)
    high_waters = turning.loc[turning["kind"] == "high"]
    return TideStage(quality=checked, annual_msl=annual, msl_trend=trend, epoch_year=epoch,
                     level_epoch_m=level_epoch, tide_model=model, datums=datums, form_factor=form,
                     tide_type=tide_datums.tide_type(form), residual_m=residual, skew_surges=skew,
                     interaction=interaction, high_waters=high_waters, notes=tuple(notes))
