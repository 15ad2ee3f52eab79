r"""Tidal datums, high and low waters, form factor and tide type from a :class:`~extremes.tide.harmonic.TideModel`.

HAT and LAT are the highest and lowest predicted levels over a full nodal cycle (18.61 years) at 10-minute or
finer steps, each turning point refined by a parabola through the three samples around it [1]_. By default
the radiational constituents Sa, Ssa and S1 are left out of the prediction, because the gauge-derived
constants of these constituents are mostly weather-driven [2]_; ``include_radiational=True`` keeps them.
Levels are on the model's datum, with mean sea level at Z0 (the trend, if fitted, is not applied: datums
refer to MSL at the model's reference epoch).

References
----------
.. [1] D. T. Pugh, Tides, Surges and Mean Sea-Level. Chichester, U.K.: Wiley, 1987, ch. 4 and 10.
.. [2] J. Williams, M. Irazoqui Apecechea, A. Saulter and K. J. Horsburgh, "Radiational tides: their double-
       counting in storm surge forecasts and contribution to the Highest Astronomical Tide," Ocean Sci.,
       vol. 14, pp. 1057-1068, 2018, doi:10.5194/os-14-1057-2018.
.. [3] A. Courtier, "The classification of tides in four types," Int. Hydrogr. Rev., 1938; as given in [1].
"""
from __future__ import annotations

import logging
from dataclasses import dataclass

import numpy as np
import pandas as pd

from extremes.constants import DAYS_PER_YEAR, NODAL_CYCLE_YEARS
from extremes.errors import DataError
from extremes.tide.astronomy import to_utc_index
from extremes.tide.harmonic import CHUNK, TideModel

logger = logging.getLogger(__name__)

#: constituents left out of datum predictions unless asked for (weather-driven at most gauges)
RADIATIONAL = ("Sa", "Ssa", "S1")
#: mean lunar day [h] (360 / 14.4920521 deg/h)
LUNAR_DAY_HOURS = 360.0 / 14.49205211
#: form-factor class bounds (Courtier 1938, as given by Pugh 1987)
FORM_FACTOR_BOUNDS = (0.25, 1.5, 3.0)
TIDE_TYPES = ("semidiurnal", "mixed, mainly semidiurnal", "mixed, mainly diurnal", "diurnal")


def _grid(start, end, step_minutes: float) -> pd.DatetimeIndex:
    if not step_minutes > 0:
        raise DataError(f"step_minutes must be > 0; got {step_minutes}")
    start = to_utc_index([start], name="start")[0]
    end = to_utc_index([end], name="end")[0]
    if not end > start:
        raise DataError(f"end must be after start; got start={start}, end={end}")
    step = pd.Timedelta(minutes=step_minutes)
    n = int((end - start) / step) + 1
    return pd.date_range(start, periods=n, freq=step, unit="ns")


def _turning_points(values: np.ndarray):
    y0, y1, y2 = values[:-2], values[1:-1], values[2:]
    high = np.flatnonzero((y1 > y0) & (y1 >= y2)) + 1
    low = np.flatnonzero((y1 < y0) & (y1 <= y2)) + 1
    out = []
    for idx, kind in ((high, "high"), (low, "low")):
        a, b, c = values[idx - 1], values[idx], values[idx + 1]
        denom = a - 2 * b + c
        with np.errstate(divide="ignore", invalid="ignore"):
            delta = np.where(denom != 0, 0.5 * (a - c) / denom, 0.0)
        delta = np.clip(delta, -1.0, 1.0)
        level = b - 0.25 * (a - c) * delta
        out.append((idx, delta, level, kind))
    return out


def high_low_waters(model: TideModel, start, end, *, step_minutes: float = 10.0, exclude=(),
                    include_mean: bool = True) -> pd.DataFrame:
    r"""Predicted high and low waters between two instants.

    Parameters
    ----------
    model : TideModel
        Harmonic constants.
    start, end : datetime-like, tz-aware
        Window (UTC).
    step_minutes : float, keyword-only
        Prediction step before refinement. [min]
    exclude : sequence of str, keyword-only
        Constituents left out of the prediction (e.g. :data:`RADIATIONAL`).
    include_mean : bool, keyword-only
        Add Z0 and the trend (as :meth:`TideModel.predict`).

    Returns
    -------
    pandas.DataFrame
        Columns ``time`` (UTC), ``level_m`` [m], ``kind`` (``"high"`` or ``"low"``), in time order. Each
        turning point of the sampled prediction is refined by the parabola through the three samples around
        it: offset :math:`\delta = \frac{(y_{-1} - y_{+1})}{2(y_{-1} - 2y_0 + y_{+1})}` steps, level
        :math:`y_0 - \frac14 (y_{-1} - y_{+1})\delta` [1]_.

    References
    ----------
    .. [1] D. T. Pugh, Tides, Surges and Mean Sea-Level. Wiley, 1987, ch. 4.
    """
    if not isinstance(model, TideModel):
        raise DataError(f"model: expected a TideModel, got {type(model).__name__}")
    grid = _grid(start, end, step_minutes)
    step_ns = int(pd.Timedelta(minutes=step_minutes).value)
    times_parts, levels_parts, kinds_parts = [], [], []
    # blocks overlap by two samples so that no turning point is lost at a block edge
    block = max(10 * CHUNK, 3)
    first = 0
    while first < grid.size - 2:
        last = min(first + block, grid.size)
        sub = grid[first:last]
        values = model.predict(sub, include_mean=include_mean, exclude=exclude).to_numpy()
        base_ns = sub.as_unit("ns").asi8
        for idx, delta, level, kind in _turning_points(values):
            times_parts.append(base_ns[idx] + np.rint(delta * step_ns).astype(np.int64))
            levels_parts.append(level)
            kinds_parts.append(np.full(idx.size, kind, dtype=object))
        if last == grid.size:
            break
        first = last - 2
    if times_parts:
        ns = np.concatenate(times_parts)
        levels = np.concatenate(levels_parts)
        kinds = np.concatenate(kinds_parts)
    else:
        ns, levels, kinds = np.array([], dtype=np.int64), np.array([]), np.array([], dtype=object)
    order = np.argsort(ns, kind="stable")
    frame = pd.DataFrame({
        "time": pd.DatetimeIndex(ns[order].astype("datetime64[ns]")).tz_localize("UTC"),
        "level_m": levels[order],
        "kind": pd.array(kinds[order].astype(str), dtype="string") if kinds.size else pd.array([], dtype="string"),
    })
    frame = frame.drop_duplicates(subset=["time", "kind"]).reset_index(drop=True)
    frame.attrs.update({"units": "m", "datum": model.datum, "step_minutes": float(step_minutes)})
    return frame


@dataclass(frozen=True)
class TidalDatums:
    """Tidal datums on the model's vertical datum. All levels [m].

    Attributes
    ----------
    HAT, LAT : float
        Highest and lowest astronomical tide over the prediction window.
    MHWS, MLWS, MHWN, MLWN : float
        Mean high/low water springs/neaps, Z0 +- (H_M2 +- H_S2) (Pugh 1987).
    MHW, MLW : float
        Means of all predicted high/low waters.
    MHHW, MLLW : float
        Means of the higher high / lower low water of each lunar day (24.8412 h from the window start).
    MSL : float
        Mean sea level Z0 at the model's reference epoch.
    MTL : float
        Mean tide level (MHW + MLW)/2.
    start, end : pandas.Timestamp
        Prediction window (UTC).
    step_minutes : float
        Prediction step. [min]
    include_radiational : bool
        Whether Sa, Ssa, S1 were included.
    datum : str
        Vertical datum of the levels.
    constituents : tuple of str
        Constituents in the prediction behind HAT, LAT and the means of high and low waters.
    """

    HAT: float
    LAT: float
    MHWS: float
    MLWS: float
    MHWN: float
    MLWN: float
    MHW: float
    MLW: float
    MHHW: float
    MLLW: float
    MSL: float
    MTL: float
    start: pd.Timestamp
    end: pd.Timestamp
    step_minutes: float
    include_radiational: bool
    datum: str
    constituents: tuple = ()

    LEVELS = ("HAT", "LAT", "MHWS", "MLWS", "MHWN", "MLWN", "MHW", "MLW", "MHHW", "MLLW", "MSL", "MTL")

    @property
    def datums_m(self) -> dict[str, float]:
        """Level name -> level. [m]"""
        return {name: float(getattr(self, name)) for name in self.LEVELS}

    @property
    def labels(self) -> dict[str, str]:
        """Level name -> what the value includes (constituents, radiational terms, window), in words.

        Some official datums are computed with the full set of constituents, radiational ones included, and
        differ from these by centimetres or more (Williams et al. 2018, module references); every reported
        value therefore says what it holds.
        """
        radiational = ("radiational constituents Sa, Ssa, S1 included" if self.include_radiational else
                       "radiational constituents Sa, Ssa, S1 left out")
        window = (f"{self.start:%Y-%m-%d} to {self.end:%Y-%m-%d}, {self.step_minutes:g}-min prediction, "
                  f"{len(self.constituents)} constituents, {radiational}")
        spring = "Z0 +/- (H_M2 +/- H_S2) (Pugh 1987): M2 and S2 amplitudes only"
        return {
            "HAT": f"highest predicted level, {window}", "LAT": f"lowest predicted level, {window}",
            "MHWS": spring, "MLWS": spring, "MHWN": spring, "MLWN": spring,
            "MHW": f"mean of all predicted high waters, {window}", "MLW": f"mean of all predicted low waters, {window}",
            "MHHW": f"mean higher high water of each lunar day, {window}",
            "MLLW": f"mean lower low water of each lunar day, {window}",
            "MSL": "Z0 of the harmonic analysis (mean sea level of the analysed record)",
            "MTL": "(MHW + MLW) / 2",
        }

    def to_dict(self) -> dict:
        return {"datums_m": self.datums_m, "start": self.start.isoformat(), "end": self.end.isoformat(),
                "step_minutes": self.step_minutes, "include_radiational": self.include_radiational,
                "datum": self.datum, "constituents": list(self.constituents), "labels": self.labels}

    def __repr__(self) -> str:
        return f"TidalDatums(HAT={self.HAT:.3f} m, LAT={self.LAT:.3f} m, MSL={self.MSL:.3f} m, datum={self.datum!r})"


def tidal_datums(model: TideModel, *, start=None, years: float = NODAL_CYCLE_YEARS, step_minutes: float = 10.0,
                 include_radiational: bool = False) -> TidalDatums:
    """Tidal datums from a prediction over a nodal cycle.

    Parameters
    ----------
    model : TideModel
        Harmonic constants.
    start : datetime-like or None, keyword-only
        Start of the prediction window (UTC); default: the window centred on the model's reference time.
    years : float, keyword-only
        Length of the window (default 18.61, a full nodal cycle). [years]
    step_minutes : float, keyword-only
        Prediction step; turning points are refined by a parabola. [min]
    include_radiational : bool, keyword-only
        Keep Sa, Ssa and S1 in the prediction (default: leave them out, see module notes).

    Returns
    -------
    TidalDatums

    References
    ----------
    .. [1] D. T. Pugh, Tides, Surges and Mean Sea-Level. Wiley, 1987, ch. 4, 10.
    """
    if not isinstance(model, TideModel):
        raise DataError(f"model: expected a TideModel, got {type(model).__name__}")
    if not years > 0:
        raise DataError(f"years must be > 0; got {years}")
    span = pd.Timedelta(days=years * DAYS_PER_YEAR)
    if start is None:
        centre = model.reference_time if model.reference_time is not None else pd.Timestamp("2000-01-01", tz="UTC")
        start = pd.Timestamp(centre).tz_convert("UTC") - span / 2
    start = to_utc_index([start], name="start")[0]
    end = start + span
    exclude = () if include_radiational else RADIATIONAL
    hw_lw = high_low_waters(model, start, end, step_minutes=step_minutes, exclude=exclude, include_mean=False)
    z0 = float(model.z0_m)
    levels = hw_lw["level_m"].to_numpy() + z0
    is_high = (hw_lw["kind"] == "high").to_numpy()
    if is_high.sum() == 0 or (~is_high).sum() == 0:
        raise DataError("model: the prediction has no high or low waters (no tidal constituents?)")
    highs, lows = levels[is_high], levels[~is_high]
    hours = (hw_lw["time"] - start).dt.total_seconds().to_numpy() / 3600.0
    day = np.floor(hours / LUNAR_DAY_HOURS).astype(np.int64)
    mhhw = pd.Series(highs).groupby(day[is_high]).max().mean()
    mllw = pd.Series(lows).groupby(day[~is_high]).min().mean()
    m2, s2 = model.amplitude("M2"), model.amplitude("S2")
    mhw, mlw = float(highs.mean()), float(lows.mean())
    logger.info("tidal datums from %d high and %d low waters, %s to %s", highs.size, lows.size, start, end)
    return TidalDatums(
        HAT=float(highs.max()), LAT=float(lows.min()), MHWS=z0 + m2 + s2, MLWS=z0 - m2 - s2,
        MHWN=z0 + m2 - s2, MLWN=z0 - m2 + s2, MHW=mhw, MLW=mlw, MHHW=float(mhhw), MLLW=float(mllw), MSL=z0,
        MTL=0.5 * (mhw + mlw), start=start, end=end, step_minutes=float(step_minutes),
        include_radiational=bool(include_radiational), datum=model.datum,
        constituents=tuple(c.name for c in model.constituents if c.name not in exclude),
    )


def form_factor(model) -> float:
    r"""Form factor :math:`F = (H_{K1} + H_{O1}) / (H_{M2} + H_{S2})`.

    Parameters
    ----------
    model : TideModel or mapping of str to float
        Harmonic constants, or amplitudes by name. [m]

    Returns
    -------
    float
        F (inf when M2 and S2 are both absent).

    References
    ----------
    .. [1] D. T. Pugh, Tides, Surges and Mean Sea-Level. Wiley, 1987, sec. 4.2.
    """
    if isinstance(model, TideModel):
        amp = model.amplitude
    elif isinstance(model, dict):
        def amp(name):
            return float(model.get(name, 0.0))
    else:
        raise DataError(f"model: expected a TideModel or a mapping name -> amplitude, got {type(model).__name__}")
    num = amp("K1") + amp("O1")
    den = amp("M2") + amp("S2")
    if den == 0:
        return float("inf") if num > 0 else float("nan")
    return float(num / den)


def tide_type(form_factor: float) -> str:
    """Tide type from the form factor (Courtier 1938 classes, as given by Pugh 1987).

    F < 0.25 semidiurnal; 0.25 <= F <= 1.5 mixed, mainly semidiurnal; 1.5 < F <= 3.0 mixed, mainly diurnal;
    F > 3.0 diurnal.

    Raises
    ------
    DataError
        If F is negative or NaN.
    """
    value = float(form_factor)
    if not value >= 0:
        raise DataError(f"form_factor must be a number >= 0; got {form_factor}")
    low, mid, high = FORM_FACTOR_BOUNDS
    if value < low:
        return TIDE_TYPES[0]
    if value <= mid:
        return TIDE_TYPES[1]
    if value <= high:
        return TIDE_TYPES[2]
    return TIDE_TYPES[3]


__all__ = ["RADIATIONAL", "TidalDatums", "high_low_waters", "tidal_datums", "form_factor", "tide_type"]
