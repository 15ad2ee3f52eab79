"""The reference gauge: its long record read, checked, de-tided and reduced to skew surges.

The reference goes through the same stages as a study's record (:func:`extremes.quality.check_record` and
:func:`extremes.tide.stage.analyse_record_tide`: mean-sea-level trend removed, harmonic analysis, residual
spikes masked, skew surges, interaction tests), and only what the transfer needs is kept: its skew surges,
tide model, trend and interaction tests.
"""
from __future__ import annotations

import dataclasses
import hashlib
import warnings
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from extremes.errors import DataError, ExtremesWarning

__all__ = ["ReferenceGauge", "prepare_reference", "record_from_series", "inference_from_reference",
           "INFERENCE_PAIRS"]

#: constituents a short record may not resolve, with the constituent each is inferred from (METHODS sec. 4)
INFERENCE_PAIRS = {"P1": "K1", "K2": "S2", "N2": "M2", "Q1": "O1"}
#: a reference shorter than this does not add a storm climate [years]
MIN_REFERENCE_YEARS = 10.0


@dataclass(frozen=True, repr=False)
class ReferenceGauge:
    """What the transfer uses of the reference gauge.

    Attributes
    ----------
    source, sha256, datum : str
        The record's file, its SHA-256 and vertical datum.
    record_years : float
        Valid data [years].
    skew_surges : pandas.DataFrame
        One row per complete tidal cycle (:func:`extremes.surge.skew_surges_from_turning_points`), de-trended.
    tide_model : extremes.tide.harmonic.TideModel
    msl_trend : extremes.surge.MSLTrend or None
    interaction : extremes.surge.InteractionTests or None
    notes : tuple of str
    """

    source: str
    sha256: str
    datum: str
    record_years: float
    skew_surges: pd.DataFrame
    tide_model: object
    msl_trend: object
    interaction: object
    start: pd.Timestamp
    end: pd.Timestamp
    n_flagged: int = 0
    notes: tuple = field(default_factory=tuple)

    def __repr__(self) -> str:
        return f"ReferenceGauge(source={self.source!r}, years={self.record_years:.1f}, tides={len(self.skew_surges)})"

    @property
    def skew_surge_series(self) -> pd.Series:
        """Skew surges on the UTC times of the predicted high waters [m]."""
        frame = self.skew_surges
        return pd.Series(frame["skew_surge_m"].to_numpy(), index=pd.DatetimeIndex(frame["time"]),
                         name="skew_surge_m")

    def to_dict(self) -> dict:
        trend = self.msl_trend
        return {"record": self.source, "sha256": self.sha256, "datum": self.datum,
                "record_years": float(self.record_years), "start": self.start.isoformat(),
                "end": self.end.isoformat(), "n_skew_surges": int(len(self.skew_surges)),
                "n_flagged": int(self.n_flagged),
                "msl_trend_m_per_year": None if trend is None else float(trend.trend_m_per_year),
                "tide_residual_std_m": float(self.tide_model.residual_std_m),
                "interaction": None if self.interaction is None else self.interaction.to_dict(),
                "notes": list(self.notes)}


def record_from_series(level_m: pd.Series, *, source: str = "<series>", datum: str = "unspecified"):
    """A :class:`extremes.records.GaugeRecord` of an in-memory level series on UTC times [m]."""
    from extremes.records import GaugeRecord

    if not isinstance(level_m, pd.Series) or not isinstance(level_m.index, pd.DatetimeIndex) \
            or level_m.index.tz is None:
        raise DataError(f"{source}: expected a level Series [m] on tz-aware UTC times")
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
    return GaugeRecord(water_level_m=series, datum=datum, source=source, sha256=digest,
                       interval=diffs.mode().iloc[0], meta={"format": "in-memory series"})


def prepare_reference(record, *, min_years: float = MIN_REFERENCE_YEARS) -> ReferenceGauge:
    """Quality control, trend, tide and skew surges of the reference record.

    Parameters
    ----------
    record : extremes.records.GaugeRecord or pandas.Series
        The reference's record (a Series of levels [m] on UTC times is wrapped).
    min_years : float
        Fewest years of valid data accepted [years].

    Returns
    -------
    ReferenceGauge

    Raises
    ------
    DataError
        If the reference is shorter than ``min_years`` or yields no skew surges.
    """
    if isinstance(record, pd.Series):
        record = record_from_series(record, source="<reference series>",
                                    datum=str(record.attrs.get("datum", "unspecified")))
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", ExtremesWarning)
        gauge = _prepare(record, min_years)
    said = [f"reference: {w.message}" for w in caught if issubclass(w.category, ExtremesWarning)]
    return dataclasses.replace(gauge, notes=gauge.notes + tuple(dict.fromkeys(said)))


def _prepare(record, min_years):
    """The study's own stages on the reference: quality control and the tide stage (which handles sampling eras,
    clock faults, the trend and residual spikes exactly as for the site)."""
    from extremes import quality, sampling
    from extremes.tide.stage import analyse_record_tide

    qc = quality.check_record(record)
    valid = qc.level_m.dropna()
    years = float(sampling.represented_years(valid, qc.eras if len(qc.eras) else None)) if valid.size > 1 else 0.0
    if years < min_years:
        raise DataError(f"{record.source}: the reference holds {years:.1f} years of valid data; a reference "
                        f"gauge needs at least {min_years:g} (decades preferred)")
    tide = analyse_record_tide(qc)
    skew = tide.skew_surges
    if len(skew) < 200:
        raise DataError(f"{record.source}: {len(skew)} complete tidal cycles in the reference; expected years")
    return ReferenceGauge(source=str(record.source), sha256=record.sha256, datum=record.datum,
                          record_years=years, skew_surges=skew, tide_model=tide.tide_model,
                          msl_trend=tide.msl_trend, interaction=tide.interaction, start=valid.index[0],
                          end=valid.index[-1], n_flagged=int(tide.quality.n_flagged),
                          notes=tuple(f"reference: {n}" for n in tide.notes))


def inference_from_reference(model) -> dict:
    """Inference ratios for a short site record from the reference's harmonic constants (METHODS sec. 4).

    For each pair of :data:`INFERENCE_PAIRS` that the reference resolved (both fitted, not inferred), the
    amplitude ratio :math:`\\rho = H_i/H_r` and phase difference :math:`\\delta = G_i - G_r` of the reference;
    the form taken by the ``infer`` option of :func:`extremes.tide.harmonic.analyse_tide`, which uses them
    only for constituents the site record does not resolve. Pairs the reference lacks keep the equilibrium
    ratios of :data:`extremes.tide.constituents.EQUILIBRIUM_INFERENCE`.
    """
    from extremes.tide.constituents import EQUILIBRIUM_INFERENCE

    out = {}
    for name, ref in INFERENCE_PAIRS.items():
        ci, cr = model.get(name), model.get(ref)
        if ci is not None and cr is not None and not ci.inferred and not cr.inferred and cr.amplitude_m > 0:
            out[name] = (ref, ci.amplitude_m / cr.amplitude_m, (ci.phase_deg - cr.phase_deg) % 360.0)
        elif name in EQUILIBRIUM_INFERENCE:
            out[name] = (EQUILIBRIUM_INFERENCE[name][0], EQUILIBRIUM_INFERENCE[name][1], 0.0)
    return out
