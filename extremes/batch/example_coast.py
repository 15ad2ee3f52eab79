"""An example coast for ``extremes batch``: five invented gauges and their manifest, written from the bundled
record of the invented harbour.

**Every place here is invented** (names, positions and datum; the positions lie in the open South Pacific, on
no real coast). Each gauge's record is the bundled Port Orrindale record (``harbour_hourly.csv.gz``, with its
faults) moved along an invented coast: the level about the record's mean scaled by a factor growing along the
coast (the tide and the surges amplify towards the head of a bay, a common pattern), a constant offset, and
seeded measurement noise. One gauge, ``Hallet_Cove``, is deliberately on its chart datum, about 1.9 m below
the coast datum its manifest names (near the lowest astronomical tide of this coast: a datum mistake of the
kind the batch's neighbour check is there to catch). The records are written in three layouts (metres with ``-99`` codes and UTC stamps,
centimetres with ``9999`` codes and local times at UTC+10, millimetres with empty cells) so that the manifest
shows its per-station reader columns.

:func:`write_example_coast` writes ``manifest.csv`` and ``records/`` into a folder; ``extremes demo --coast``
calls it, and ``extremes batch --manifest DIR/manifest.csv --out DIR/results`` studies the coast.
"""
from __future__ import annotations

import os
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from extremes.errors import DataError
from extremes.outputs import output_folder

__all__ = ["COAST", "ExampleGauge", "MANIFEST_NAME", "write_example_coast"]

#: file name of the example coast's manifest
MANIFEST_NAME = "manifest.csv"
#: the (invented) datum every gauge of the example coast claims
COAST_DATUM = "Orrindale Coast Datum (invented)"
#: seed of the measurement noise of the example gauges
COAST_SEED = 20261202
#: standard deviation of the added measurement noise [m]
NOISE_M = 0.004


@dataclass(frozen=True)
class ExampleGauge:
    """One invented gauge of the example coast.

    Attributes
    ----------
    station, file : str
        Station name and record file name (under ``records/``).
    lat, lon : float
        Invented position. [degrees north, degrees east]
    chainage_km : float
        Distance along the invented coast. [km]
    factor : float
        Scale of the level about the record's mean. [-]
    offset_m : float
        Constant added to the level. [m]
    layout : {"m", "cm", "mm"}
        How the record is written (units, missing-value code, time stamps).
    """

    station: str
    file: str
    lat: float
    lon: float
    chainage_km: float
    factor: float
    offset_m: float
    layout: str


#: the five gauges along the invented coast, in chainage order
COAST = (
    ExampleGauge("Port_Orrindale", "port_orrindale.csv.gz", -47.512, -128.431, 0.0, 1.00, 0.00, "m"),
    ExampleGauge("Veyra_Sound", "veyra_sound.csv.gz", -47.618, -128.207, 21.5, 1.04, 0.02, "cm"),
    ExampleGauge("Kestle_Point", "kestle_point.csv.gz", -47.733, -128.020, 44.0, 1.08, 0.03, "mm"),
    ExampleGauge("Hallet_Cove", "hallet_cove.csv.gz", -47.861, -127.884, 63.0, 1.11, 1.90, "m"),
    ExampleGauge("Sallow_Bay", "sallow_bay.csv.gz", -47.990, -127.703, 85.5, 1.14, 0.06, "m"),
)

#: the reader columns of the manifest for each layout: units, missing code, UTC offset of the stamps
_LAYOUTS = {"m": ("m", "-99", ""), "cm": ("cm", "9999", "+10:00"), "mm": ("mm", "", "")}


def _source_levels(years: float | None) -> pd.Series:
    """The bundled Port Orrindale record [m] on UTC times (the last ``years`` years when given)."""
    from extremes.examples import example_record_path
    from extremes.records import read_record

    record = read_record(example_record_path(), missing=[-99.0])
    level = record.water_level_m
    level = level[~level.index.duplicated(keep="first")].sort_index()
    if years is not None:
        if not years >= 1:
            raise DataError(f"years must be at least 1 (a study needs a year of record); got {years!r}")
        level = level[level.index > level.index[-1] - pd.Timedelta(days=365.2425 * float(years))]
    return level


def _write_record(path: Path, level_m: np.ndarray, times: pd.DatetimeIndex, layout: str) -> None:
    """One record in its layout (see the module notes); gzip-compressed CSV."""
    missing = np.isnan(level_m)
    if layout == "m":
        stamps = times.strftime("%Y-%m-%dT%H:%M:%SZ")
        values = np.where(missing, "-99", np.char.mod("%.3f", np.round(level_m, 3)))
        table = pd.DataFrame({"time": stamps, "level_m": values})
    elif layout == "cm":
        stamps = times.tz_convert("Etc/GMT-10").strftime("%Y-%m-%d %H:%M")  # UTC+10, written without offset
        values = np.where(missing, "9999", np.char.mod("%.1f", np.round(100 * level_m, 1)))
        table = pd.DataFrame({"local_time": stamps, "level_cm": values})
    else:
        stamps = times.strftime("%Y-%m-%dT%H:%MZ")
        values = np.where(missing, "", np.char.mod("%d", np.rint(1000 * np.nan_to_num(level_m)).astype(np.int64)))
        table = pd.DataFrame({"time": stamps, "level_mm": values})
    table.to_csv(path, index=False, compression={"method": "gzip", "mtime": 0})


def manifest_table() -> pd.DataFrame:
    """The example coast's manifest (paths relative to its folder)."""
    rows = []
    for gauge in COAST:
        units, missing, offset = _LAYOUTS[gauge.layout]
        rows.append({"path": f"records/{gauge.file}", "station": gauge.station, "units": units,
                     "missing": missing, "utc_offset": offset, "datum": COAST_DATUM, "lat": f"{gauge.lat:.3f}",
                     "lon": f"{gauge.lon:.3f}", "chainage": f"{gauge.chainage_km:g}"})
    return pd.DataFrame(rows)


def write_example_coast(folder: str | os.PathLike, *, years: float | None = None,
                        overwrite: bool = False) -> Path:
    """Write the example coast's records and manifest into ``folder``; the manifest's path.

    Parameters
    ----------
    folder : path-like
        Created (atomically, :func:`extremes.outputs.output_folder`); holds ``manifest.csv`` and ``records/``.
    years : float, optional
        Keep only the last ``years`` years of each record (default: all 30; fewer make a quicker look whose
        levels are not design levels).
    overwrite : bool, keyword-only
        Replace an existing ``folder``.

    Returns
    -------
    pathlib.Path
        ``folder/manifest.csv``.
    """
    level = _source_levels(years)
    values = level.to_numpy(dtype=float)
    mean = float(np.nanmean(values))
    rng = np.random.default_rng(COAST_SEED)
    with output_folder(folder, overwrite=overwrite) as work:
        (work / "records").mkdir()
        for gauge in COAST:
            noise = rng.normal(0.0, NOISE_M, values.size)
            moved = mean + gauge.factor * (values - mean) + gauge.offset_m + noise
            _write_record(work / "records" / gauge.file, moved, level.index, gauge.layout)
        manifest_table().to_csv(work / MANIFEST_NAME, index=False)
    return Path(folder) / MANIFEST_NAME
