r"""Fitted harmonic constants and the tide model that predicts from them, saved and loaded as JSON.

References
----------
.. [1] D. T. Pugh, Tides, Surges and Mean Sea-Level. Chichester, U.K.: Wiley, 1987, ch. 4.
"""
from __future__ import annotations

import json
import logging
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from extremes.constants import DAYS_PER_YEAR
from extremes.errors import DataError
from extremes.outputs import write_text_atomic
from extremes.tide.astronomy import days_since_epoch, to_utc_index
from extremes.tide.constituents import (
    get_constituent,
)
from extremes.tide.synthesis import predict_tide

logger = logging.getLogger(__name__)

_DAYS_PER_YEAR = DAYS_PER_YEAR
#: half-width of the frequency band around each species used for the residual spectrum [cycles/day]
BAND_HALF_WIDTH_CPD = 0.2
#: a constituent whose amplitude is less than this many standard errors is reported as weak (its
#: amplitude is not distinguishable from zero at about the 95 % level, normal approximation)
WEAK_AMPLITUDE_RATIO = 2.0
SCHEMA = "extremes.tide_model/1"


@dataclass(frozen=True)
class FittedConstituent:
    """Harmonic constants of one constituent.

    Attributes
    ----------
    name : str
    speed_deg_per_hour : float
        Angular speed. [deg/h]
    amplitude_m : float
        Amplitude H. [m]
    phase_deg : float
        Greenwich phase lag G (UTC, relative to the equilibrium argument), 0..360. [deg]
    amplitude_se_m, phase_se_deg : float
        Standard errors from the band-averaged residual spectrum. [m], [deg]
    amplitude_to_se : float
        Amplitude over its standard error, H / SE_H; below :data:`WEAK_AMPLITUDE_RATIO` the constituent is
        weak (its amplitude cannot be told from zero).
    inferred : bool
        True when inferred from a reference constituent rather than fitted.
    """

    name: str
    speed_deg_per_hour: float
    amplitude_m: float
    phase_deg: float
    amplitude_se_m: float
    phase_se_deg: float
    amplitude_to_se: float
    inferred: bool = False

    @property
    def significant(self) -> bool:
        """H / SE_H >= 2 (inferred constituents count as significant when their reference is)."""
        return bool(self.amplitude_to_se >= WEAK_AMPLITUDE_RATIO)

    def to_dict(self) -> dict:
        return {"name": self.name, "speed_deg_per_hour": self.speed_deg_per_hour,
                "amplitude_m": self.amplitude_m, "phase_deg": self.phase_deg,
                "amplitude_se_m": self.amplitude_se_m, "phase_se_deg": self.phase_se_deg,
                "amplitude_to_se": self.amplitude_to_se, "weak": not self.significant,
                "inferred": self.inferred}

    def __repr__(self) -> str:
        return f"FittedConstituent({self.name}, H={self.amplitude_m:.4f} m, G={self.phase_deg:.2f} deg)"


def _iso(stamp) -> str | None:
    return None if stamp is None else pd.Timestamp(stamp).tz_convert("UTC").isoformat()


def _stamp(text) -> pd.Timestamp | None:
    if text is None:
        return None
    stamp = pd.Timestamp(text)
    return stamp.tz_localize("UTC") if stamp.tzinfo is None else stamp.tz_convert("UTC")


def _float_or_none(value):
    return None if value is None else float(value)


def _float_or_nan(value):
    return float("nan") if value is None else float(value)


@dataclass(frozen=True)
class TideModel:
    """Result of a harmonic analysis: harmonic constants and what is needed to predict.

    Attributes
    ----------
    z0_m : float
        Mean level over the analysed record (at ``reference_time`` when a trend is fitted). [m]
    constituents : tuple of FittedConstituent
        Fitted and inferred constituents.
    trend_m_per_year : float or None
        Linear trend when fitted. [m/year]
    reference_time : pandas.Timestamp
        Mid-time of the analysed samples; origin of the trend. (UTC)
    start, end : pandas.Timestamp
        First and last valid sample analysed. (UTC)
    n_samples : int
        Valid samples used.
    datum : str
        Vertical datum of the levels.
    residual_std_m : float
        Standard deviation of the fit residual. [m]
    condition_number : float or None
        Condition number of the column-scaled design matrix.
    rayleigh : float or None
        Rayleigh factor used for the choice of constituents.
    trend_se_m_per_year : float or None
        Standard error of the trend. [m/year]
    inference : dict
        Inferred name -> [reference, amplitude ratio, phase difference deg].
    """

    z0_m: float
    constituents: tuple = ()
    trend_m_per_year: float | None = None
    reference_time: pd.Timestamp | None = None
    start: pd.Timestamp | None = None
    end: pd.Timestamp | None = None
    n_samples: int = 0
    datum: str = "unspecified"
    residual_std_m: float = float("nan")
    condition_number: float | None = None
    rayleigh: float | None = None
    trend_se_m_per_year: float | None = None
    inference: dict = field(default_factory=dict)

    def __repr__(self) -> str:
        return (f"TideModel({len(self.constituents)} constituents, z0={self.z0_m:.3f} m, "
                f"n={self.n_samples}, datum={self.datum!r})")

    @property
    def names(self) -> list[str]:
        """Constituent names, in model order."""
        return [c.name for c in self.constituents]

    def get(self, name: str) -> FittedConstituent | None:
        """The constituent called ``name`` (any accepted spelling), or None when the model lacks it."""
        key = get_constituent(name).name
        for c in self.constituents:
            if c.name == key:
                return c
        return None

    def amplitude(self, name: str) -> float:
        """Amplitude of ``name``, 0 when the model lacks it. [m]"""
        c = self.get(name)
        return 0.0 if c is None else c.amplitude_m

    def predict(self, times, *, include_mean: bool = True, exclude=()) -> pd.Series:
        """Predicted tide at the given times.

        Parameters
        ----------
        times : array-like of tz-aware datetimes, or a Series with a DatetimeIndex
            Prediction instants (UTC).
        include_mean : bool, keyword-only
            Add Z0 and the fitted trend (else the tide about zero mean).
        exclude : sequence of str, keyword-only
            Constituents left out (e.g. the radiational Sa, Ssa, S1).

        Returns
        -------
        pandas.Series
            Predicted level, indexed by the UTC times, named ``tide``; ``attrs`` units and datum. [m]
        """
        index = to_utc_index(times)
        dropped = {get_constituent(n).name for n in exclude}
        kept = [c for c in self.constituents if c.name not in dropped]
        values = predict_tide(index, [c.name for c in kept], [c.amplitude_m for c in kept],
                              [c.phase_deg for c in kept])
        if include_mean:
            values = values + self.z0_m
            if self.trend_m_per_year is not None:
                values = values + self.trend_m_per_year * _years_since(index, self.reference_time)
        out = pd.Series(values, index=index.rename("time"), name="tide")
        out.attrs.update({"units": "m", "datum": self.datum})
        return out

    def to_dict(self) -> dict:
        return {
            "schema": SCHEMA, "z0_m": self.z0_m, "datum": self.datum,
            "constituents": [c.to_dict() for c in self.constituents],
            "trend_m_per_year": self.trend_m_per_year, "trend_se_m_per_year": self.trend_se_m_per_year,
            "reference_time": _iso(self.reference_time), "start": _iso(self.start), "end": _iso(self.end),
            "n_samples": self.n_samples, "residual_std_m": self.residual_std_m,
            "condition_number": self.condition_number, "rayleigh": self.rayleigh,
            "inference": {k: list(v) for k, v in self.inference.items()},
            "conventions": {"time": "UTC", "phase": "Greenwich phase lag relative to the equilibrium argument",
                            "astronomy": "Explanatory Supplement 1961 polynomials",
                            "nodal": "exact Schureman formulas evaluated at each time"},
        }

    @classmethod
    def from_dict(cls, data: dict) -> TideModel:
        """Rebuild a model from :meth:`to_dict` output.

        Raises
        ------
        DataError
            If the dictionary is not a tide model of this schema.
        """
        if not isinstance(data, dict) or data.get("schema") != SCHEMA:
            got = data.get("schema") if isinstance(data, dict) else type(data).__name__
            raise DataError(f"tide model: expected schema {SCHEMA!r}, got {got!r}")
        try:
            constituents = tuple(
                FittedConstituent(name=get_constituent(c["name"]).name,
                                  speed_deg_per_hour=float(c["speed_deg_per_hour"]),
                                  amplitude_m=float(c["amplitude_m"]), phase_deg=float(c["phase_deg"]),
                                  amplitude_se_m=_float_or_nan(c.get("amplitude_se_m")),
                                  phase_se_deg=_float_or_nan(c.get("phase_se_deg")),
                                  amplitude_to_se=_float_or_nan(c.get("amplitude_to_se")), inferred=bool(c.get("inferred", False)))
                for c in data["constituents"])
            return cls(
                z0_m=float(data["z0_m"]), constituents=constituents,
                trend_m_per_year=_float_or_none(data.get("trend_m_per_year")),
                reference_time=_stamp(data.get("reference_time")), start=_stamp(data.get("start")),
                end=_stamp(data.get("end")), n_samples=int(data.get("n_samples", 0)),
                datum=str(data.get("datum", "unspecified")),
                residual_std_m=_float_or_nan(data.get("residual_std_m")),
                condition_number=_float_or_none(data.get("condition_number")),
                rayleigh=_float_or_none(data.get("rayleigh")),
                trend_se_m_per_year=_float_or_none(data.get("trend_se_m_per_year")),
                inference={k: tuple(v) for k, v in (data.get("inference") or {}).items()},
            )
        except (KeyError, TypeError, ValueError) as err:
            raise DataError(f"tide model: malformed entry ({err})") from None

    def save(self, path, *, overwrite: bool = False) -> Path:
        """Write the model as JSON (atomic; refuses to replace a file unless ``overwrite``)."""
        from extremes.jsonable import to_jsonable  # noqa: PLC0415 - shared strict JSON conversion
        text = json.dumps(to_jsonable(self.to_dict()), indent=2, allow_nan=False)
        return write_text_atomic(path, text + "\n", overwrite=overwrite)

    @classmethod
    def load(cls, path) -> TideModel:
        """Read a model written by :meth:`save`.

        Raises
        ------
        DataError
            If the file is not readable JSON of this schema.
        """
        try:
            data = json.loads(Path(path).read_text(encoding="utf-8"))
        except (OSError, ValueError) as err:
            raise DataError(f"{path}: cannot read a tide model ({err})") from None
        return cls.from_dict(data)


def _years_since(index: pd.DatetimeIndex, reference) -> np.ndarray:
    ref = pd.Timestamp(reference).tz_convert("UTC")
    return (days_since_epoch(index) - days_since_epoch([ref])[0]) / _DAYS_PER_YEAR
