"""Many records or model points: one study per station on dask.distributed.

:func:`run_batch` maps a per-station study over stations, one dask task per station file (or per block of
points of a gridded model output), on a :class:`distributed.LocalCluster` by default or on any running
dask.distributed scheduler. Each station's results go to ``out_dir/<station>/`` (written atomically by the
study), and one summary table of all stations to ``out_dir/summary.csv`` and ``out_dir/summary.nc``.

Robustness:

- A station whose study fails gets its error (one line) in the summary's ``status`` and NaN levels; the run
  goes on.
- A station folder that already holds a complete ``results.json`` is not studied again (unless
  ``overwrite=True``); its numbers are read back into the summary. A rerun therefore resumes an interrupted
  batch. The summaries themselves are rewritten on every run (they describe the whole folder).
- Each station's random seed is derived from the base seed and the station name
  (:func:`station_seed`: :class:`numpy.random.SeedSequence` of the base seed and the CRC-32 of the name),
  so the numbers do not depend on the order of the tasks, the number of workers or the machines.

Stations are described by :class:`Station` (a record file with its reader options, or an in-memory series)
and :class:`GriddedBlock` (a block of points of a NetCDF model output, read lazily inside the task). Build
them with :func:`stations_from_paths`, :func:`read_manifest` and :func:`gridded_blocks`.

The per-station callable (``study=``) takes ``(station, *, options, seed, out_dir, overwrite)``, writes
the station folder ending with a complete ``results.json`` and returns the ``results.json`` mapping
(keys ``recommended_method`` and ``return_levels`` of CONTRACT.md, and optionally ``record.datum``). The
default, :func:`study_station`, is the full study (:func:`extremes.study.run_study` and
:func:`extremes.results.write_study`).
"""
from __future__ import annotations

import contextlib
import dataclasses
import glob
import json
import logging
import os
import tempfile
import time
import warnings
import zlib
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Literal

import numpy as np
import pandas as pd

from extremes.constants import DEFAULT_SEED, UNIT_TO_METRES
from extremes.errors import DataError, ExtremesError, ExtremesWarning, OutputError
from extremes.outputs import write_bytes_atomic, write_text_atomic

logger = logging.getLogger(__name__)

#: base seed used when the options carry none (the command line's default ``--seed``)
#: columns of a manifest CSV (``path`` required, the others optional; see :func:`read_manifest`)
MANIFEST_COLUMNS = ("path", "station", "units", "datum", "missing", "utc_offset", "time_column",
                    "level_column", "time_format", "decimal", "variable", "lat", "lon")
#: the return period of the summary's headline columns (``level_100_m`` ...) [years]
HEADLINE_PERIOD_YEARS = 100.0
_COMPRESSION_SUFFIXES = (".gz", ".bz2", ".xz", ".zip")
_UNIT_SCALE_M = {**UNIT_TO_METRES, "metre": 1.0, "metres": 1.0, "meter": 1.0, "meters": 1.0,
                 "feet": UNIT_TO_METRES["ft"]}
_LEVEL_STANDARD_NAMES = ("sea_surface_height_above_geopotential_datum", "sea_surface_height",
                         "sea_surface_height_above_mean_sea_level", "sea_surface_height_above_reference_ellipsoid",
                         "water_surface_height_above_reference_datum", "sea_surface_elevation")


# -- stations ---------------------------------------------------------------------------------------
@dataclass(frozen=True, repr=False)
class Station:
    """One station of a batch: a record file with its reader options, or an in-memory series.

    Attributes
    ----------
    name : str
        Station name; also the name of its results folder (``out_dir/<name>/``).
    path : pathlib.Path or None
        Record file, read by :func:`extremes.records.read_record` with ``reader``.
    reader : dict
        Keyword arguments of :func:`extremes.records.read_record` for this station.
    level_m : pandas.Series or None
        In-memory water levels (tz-aware UTC index) instead of a file (gridded points). [m]
    datum : str
        Vertical datum of ``level_m`` (files carry theirs in ``reader["datum"]``).
    source : str
        Where the data came from, for the provenance of the results.
    lat, lon : float
        Position where known, else NaN. [degrees north, degrees east]
    """

    name: str
    path: Path | None = None
    reader: dict = field(default_factory=dict)
    level_m: pd.Series | None = None
    datum: str = "unspecified"
    source: str = ""
    lat: float = float("nan")
    lon: float = float("nan")

    def __repr__(self) -> str:
        where = str(self.path) if self.path is not None else f"series of {len(self.level_m)} values"
        return f"Station(name={self.name!r}, {where})"

    def to_dict(self) -> dict:
        """JSON-ready description (without the series values)."""
        return {"name": self.name, "path": None if self.path is None else str(self.path),
                "reader": dict(self.reader), "datum": self.datum, "source": self.source or str(self.path),
                "lat": _none_if_nan(self.lat), "lon": _none_if_nan(self.lon)}


@dataclass(frozen=True, repr=False)
class GriddedBlock:
    """A block of points of a gridded model output (NetCDF), studied point by point in one task.

    The values are not read when the block is made: the task opens the file lazily and extracts only
    its own points (so the file must be readable at ``path`` from every worker).

    Attributes
    ----------
    path : pathlib.Path
        NetCDF file (CF conventions: a time coordinate, a point/station dimension, a level variable).
    variable : str
        Water-level variable, dimensions (time, point) in either order.
    point_dim : str
        Name of the point/station dimension.
    indices : tuple of int
        Positions of this block's points along ``point_dim``.
    names : tuple of str
        Station name of each point (from a station coordinate, else ``point_<index>``).
    lat, lon : tuple of float
        Position of each point (NaN where unknown). [degrees north, degrees east]
    datum : str
        Vertical datum of the levels.
    """

    path: Path
    variable: str
    point_dim: str
    indices: tuple[int, ...]
    names: tuple[str, ...]
    lat: tuple[float, ...]
    lon: tuple[float, ...]
    datum: str = "unspecified"

    def __repr__(self) -> str:
        return (f"GriddedBlock(path={str(self.path)!r}, variable={self.variable!r}, "
                f"points={self.indices[0]}..{self.indices[-1]} ({len(self.indices)}))")

    def to_dict(self) -> dict:
        """JSON-ready description."""
        return {"path": str(self.path), "variable": self.variable, "point_dim": self.point_dim,
                "indices": list(self.indices), "names": list(self.names), "datum": self.datum}


def station_name(path: str | os.PathLike) -> str:
    """Station name of a record file: its stem, after dropping a compression suffix (``a.csv.gz`` -> ``a``)."""
    path = Path(path)
    name = path.name
    for suffix in _COMPRESSION_SUFFIXES:
        if name.lower().endswith(suffix):
            name = name[: -len(suffix)]
            break
    return Path(name).stem or name


def expand_records(patterns: Iterable[str | os.PathLike]) -> list[Path]:
    """Files named by ``patterns``: existing paths as given, others expanded as globs (sorted; ``**`` recurses).

    Raises
    ------
    DataError
        If a pattern names no existing file.
    """
    paths: list[Path] = []
    for pattern in patterns:
        text = os.fspath(pattern)
        if Path(text).is_file():
            paths.append(Path(text))
            continue
        matches = sorted(p for p in glob.glob(os.path.expanduser(text), recursive=True) if Path(p).is_file())
        if not matches:
            raise DataError(f"RECORD {text!r}: no such file, and no file matches it as a pattern")
        paths.extend(Path(p) for p in matches)
    return paths


def stations_from_paths(paths: Iterable[str | os.PathLike], *, reader: Mapping | None = None) -> list[Station]:
    """One :class:`Station` per record file, named by the file stem, all read with ``reader``."""
    reader = dict(reader or {})
    return [Station(name=station_name(p), path=Path(p), reader=reader, datum=reader.get("datum") or "unspecified",
                    source=str(p)) for p in paths]


def read_manifest(path: str | os.PathLike, *, reader: Mapping | None = None) -> list[Station]:
    """Stations listed in a manifest CSV, one row per station.

    Parameters
    ----------
    path : path-like
        Comma-separated file with a header row. Column ``path`` (required) is the record file, relative to
        the manifest's folder unless absolute. Optional columns, each overriding ``reader`` for its row
        when not empty: ``station`` (name; default the file stem), ``units`` (m, cm, mm, ft), ``datum``,
        ``missing`` (codes separated by ``;``, e.g. ``-99;9999``), ``utc_offset`` (``+HH:MM``),
        ``time_column`` (one name, or ``date;time`` for two columns), ``level_column``, ``time_format``,
        ``decimal`` (``.`` or ``,``), ``variable`` (NetCDF), ``lat`` and ``lon`` [degrees].
    reader : mapping, optional
        Reader options common to every row (the command line's reader options).

    Raises
    ------
    DataError
        On a missing ``path`` column, an unknown column, a missing record file or a bad number.
    """
    path = Path(path)
    try:
        table = pd.read_csv(path, dtype=str, keep_default_na=False, skipinitialspace=True)
    except (OSError, ValueError, pd.errors.ParserError) as err:
        raise DataError(f"manifest {path}: cannot be read as CSV ({' '.join(str(err).split())})") from err
    table.columns = [str(c).strip().lower() for c in table.columns]
    if "path" not in table.columns:
        raise DataError(f"manifest {path}: expected a 'path' column; got columns {list(table.columns)}")
    unknown = sorted(set(table.columns) - set(MANIFEST_COLUMNS))
    if unknown:
        raise DataError(f"manifest {path}: unknown columns {unknown}; expected some of {list(MANIFEST_COLUMNS)}")
    base = dict(reader or {})
    stations = []
    for line, row in zip(range(2, len(table) + 2), table.to_dict("records")):
        row = {k: str(v).strip() for k, v in row.items()}
        where = f"manifest {path}, line {line}"
        if not row["path"]:
            raise DataError(f"{where}: empty 'path'")
        record = Path(row["path"]).expanduser()
        if not record.is_absolute():
            record = path.parent / record
        if not record.is_file():
            raise DataError(f"{where}: record file {record} does not exist")
        opts = dict(base)
        if row.get("units"):
            if row["units"] not in ("m", "cm", "mm", "ft"):
                raise DataError(f"{where}: units must be one of m, cm, mm, ft; got {row['units']!r}")
            opts["units"] = row["units"]
        for column in ("datum", "utc_offset", "level_column", "time_format", "decimal", "variable"):
            if row.get(column):
                opts[column] = row[column]
        if row.get("time_column"):
            opts["time_columns"] = [c.strip() for c in row["time_column"].split(";") if c.strip()]
        if row.get("missing"):
            opts["missing"] = [_number(v, where=where, column="missing") for v in row["missing"].split(";")
                               if v.strip()]
        stations.append(Station(
            name=row.get("station") or station_name(record), path=record, reader=opts,
            datum=opts.get("datum") or "unspecified", source=str(record),
            lat=_number(row.get("lat", ""), where=where, column="lat"),
            lon=_number(row.get("lon", ""), where=where, column="lon"),
        ))
    if not stations:
        raise DataError(f"manifest {path}: lists no station")
    return stations


def _number(text: str, *, where: str, column: str) -> float:
    text = text.strip()
    if not text:
        return float("nan")
    try:
        return float(text)
    except ValueError:
        raise DataError(f"{where}: column {column!r} expected a number, got {text!r}") from None


# -- gridded model output ------------------------------------------------------------------------------
def open_gridded(path: str | os.PathLike, *, variable: str | None = None, chunks: Any = None):
    """Open the water-level variable of a gridded model output lazily (dask-backed, nothing is read).

    Parameters
    ----------
    path : path-like
        NetCDF file following the CF conventions: a ``time`` coordinate (decoded as UTC, as CF times are),
        one point/station dimension and a water-level variable on (time, point).
    variable : str, optional
        Water-level variable; default the variable whose ``standard_name`` is a sea-surface height, else
        the only two-dimensional variable with a ``time`` dimension.
    chunks : optional
        Dask chunks (default: the whole time axis and 64 points per chunk).

    Returns
    -------
    xarray.DataArray
        Dimensions ``("time", point_dim)``, backed by a dask array; attribute ``units`` as in the file.

    Raises
    ------
    DataError
        If the file cannot be opened or has no suitable variable.
    """
    import xarray as xr

    path = Path(path)
    try:
        dataset = xr.open_dataset(path, engine="netcdf4", chunks={})
    except (OSError, ValueError) as err:
        raise DataError(f"gridded file {path}: cannot be opened as NetCDF ({' '.join(str(err).split())})") from err
    name, point_dim = _level_variable(dataset, variable=variable, path=path)
    array = dataset[name].transpose("time", point_dim)
    array = array.chunk(chunks if chunks is not None else {"time": -1, point_dim: 64})
    return array


def _level_variable(dataset, *, variable: str | None, path: Path) -> tuple[str, str]:
    if "time" not in dataset.dims:
        raise DataError(f"gridded file {path}: expected a 'time' dimension; got dimensions {list(dataset.dims)}")
    if variable is not None:
        if variable not in dataset.data_vars:
            raise DataError(f"gridded file {path}: no variable {variable!r}; it has {list(dataset.data_vars)}")
        candidates = [variable]
    else:
        two_d = [n for n, v in dataset.data_vars.items() if v.ndim == 2 and "time" in v.dims]
        named = [n for n in two_d if dataset[n].attrs.get("standard_name") in _LEVEL_STANDARD_NAMES]
        candidates = named or two_d
        if len(candidates) != 1:
            raise DataError(f"gridded file {path}: cannot tell the water-level variable among {candidates or list(dataset.data_vars)}; "
                            "name it with --variable")
    name = candidates[0]
    dims = dataset[name].dims
    if len(dims) != 2 or "time" not in dims:
        raise DataError(f"gridded file {path}: variable {name!r} has dimensions {dims}; expected (time, point)")
    return name, next(d for d in dims if d != "time")


def _point_coordinate(dataset, point_dim: str, names: Sequence[str], standard_name: str | None = None):
    for coord in dataset.coords.values():
        if coord.dims != (point_dim,):
            continue
        if standard_name is not None and coord.attrs.get("standard_name") == standard_name:
            return coord
    for candidate in names:
        if candidate in dataset.variables and dataset[candidate].dims == (point_dim,):
            return dataset[candidate]
    return None


def gridded_blocks(path: str | os.PathLike, *, variable: str | None = None, block_size: int = 64,
                   datum: str | None = None) -> list[GriddedBlock]:
    """Split the points of a gridded model output into blocks of ``block_size`` points (one task each).

    Only the small coordinate variables (names, latitude, longitude) are read here; the water levels are
    read inside the tasks. Each point is named from a station coordinate (``cf_role = timeseries_id``, or
    a coordinate called ``station``, ``station_name`` or ``name`` along the point dimension) or
    ``point_<index>``.

    Parameters
    ----------
    path : path-like
        NetCDF file; see :func:`open_gridded`.
    variable : str, optional
        Water-level variable (see :func:`open_gridded`).
    block_size : int
        Points per task (> 0).
    datum : str, optional
        Vertical datum of the levels; default the variable's ``datum`` or ``vertical_datum`` attribute,
        else ``"unspecified"``.
    """
    import xarray as xr

    if int(block_size) < 1:
        raise DataError(f"block_size must be >= 1; got {block_size}")
    path = Path(path)
    try:
        dataset = xr.open_dataset(path, engine="netcdf4")  # lazily indexed backend arrays: only what is asked for is read
    except (OSError, ValueError) as err:
        raise DataError(f"gridded file {path}: cannot be opened as NetCDF ({' '.join(str(err).split())})") from err
    with dataset:
        name, point_dim = _level_variable(dataset, variable=variable, path=path)
        n_points = dataset.sizes[point_dim]
        ids = None
        for coord in dataset.variables.values():
            if coord.dims == (point_dim,) and coord.attrs.get("cf_role") == "timeseries_id":
                ids = coord
                break
        if ids is None:
            ids = _point_coordinate(dataset, point_dim, ("station", "station_name", "station_id", "name"))
        if ids is not None and ids.dtype.kind in "OSU":
            names = [_text(v) or f"point_{i}" for i, v in enumerate(ids.values)]
        else:
            names = [f"point_{i}" for i in range(n_points)]
        lat = _point_coordinate(dataset, point_dim, ("lat", "latitude", "y"), "latitude")
        lon = _point_coordinate(dataset, point_dim, ("lon", "longitude", "x"), "longitude")
        lats = np.full(n_points, np.nan) if lat is None else np.asarray(lat.values, dtype=float)
        lons = np.full(n_points, np.nan) if lon is None else np.asarray(lon.values, dtype=float)
        attrs = dataset[name].attrs
        datum = datum or attrs.get("datum") or attrs.get("vertical_datum") or "unspecified"
    _check_unique(names, where=f"gridded file {path}")
    size = int(block_size)
    return [GriddedBlock(path=path, variable=name, point_dim=point_dim, indices=tuple(range(i, min(i + size, n_points))),
                         names=tuple(names[i:i + size]), lat=tuple(float(v) for v in lats[i:i + size]),
                         lon=tuple(float(v) for v in lons[i:i + size]), datum=str(datum))
            for i in range(0, n_points, size)]


def _text(value) -> str:
    if isinstance(value, bytes):
        value = value.decode("utf-8", "replace")
    return str(value).strip()


def _block_series(block: GriddedBlock, indices: Sequence[int]) -> list[pd.Series]:
    """Read the levels of ``indices`` (positions in the file) of ``block``; one UTC series [m] per point."""
    array = open_gridded(block.path, variable=block.variable)
    units = str(array.attrs.get("units", "m")).strip().lower()
    if units not in _UNIT_SCALE_M:
        raise DataError(f"gridded file {block.path}: variable {block.variable!r} has units {units!r}; "
                        f"expected one of {sorted(_UNIT_SCALE_M)}")
    subset = array.isel({block.point_dim: list(indices)})
    values = subset.compute(scheduler="synchronous")  # only this block's points are read
    times = pd.DatetimeIndex(values["time"].values)
    if times.tz is None:
        times = times.tz_localize("UTC")  # CF time coordinates are UTC unless stated
    else:
        times = times.tz_convert("UTC")
    times = times.rename("time")
    data = np.asarray(values.values, dtype=float) * _UNIT_SCALE_M[units]
    out = []
    for j in range(len(indices)):
        series = pd.Series(data[:, j], index=times, name="water_level_m")
        series.attrs.update(units="m", datum=block.datum)
        out.append(series)
    return out


# -- seeds, completeness, one station -----------------------------------------------------------------
def station_seed(base_seed: int, name: str) -> int:
    """Seed of station ``name`` in a batch with seed ``base_seed``.

    ``SeedSequence([base_seed, crc32(name)])`` (stable across processes and machines, unlike ``hash()``),
    reduced to one 32-bit integer so it can be given to ``extremes run --seed`` to reproduce the station.
    """
    key = zlib.crc32(str(name).encode("utf-8"))
    return int(np.random.SeedSequence([int(base_seed), key]).generate_state(1, dtype=np.uint32)[0])


def completed_results(station_dir: str | os.PathLike) -> dict | None:
    """The ``results.json`` of a finished station folder, or None if the folder holds no complete results."""
    path = Path(station_dir) / "results.json"
    try:
        results = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    if not isinstance(results, dict) or "recommended_method" not in results or not isinstance(
            results.get("return_levels"), list):
        return None
    return results


def study_station(station: Station, *, options, seed: int, out_dir: Path, overwrite: bool = False,
                  figures: bool = True) -> dict:
    """The full study of one station, written to ``out_dir``; returns its ``results.json`` mapping.

    Runs :func:`extremes.study.run_study` (a file) or :func:`extremes.study.run_study_series` (an
    in-memory series) with ``options`` whose seed is replaced by ``seed``, then
    :func:`extremes.results.write_study` (with the figures and HTML report unless ``figures=False``).
    The mapping returned is read back from the ``results.json`` written, so that a station studied now
    and one found done by a later run give the same numbers.
    """
    from extremes import results as results_module
    from extremes import study as study_module

    if options is None:
        options = study_module.StudyOptions()
    options = dataclasses.replace(options, seed=int(seed))
    if station.level_m is not None:
        result = study_module.run_study_series(station.level_m, datum=station.datum, source=station.source,
                                               options=options)
    else:
        result = study_module.run_study(station.path, reader=dict(station.reader), options=options)
    results_module.write_study(result, out_dir, overwrite=overwrite, figures=figures)
    document = completed_results(out_dir)
    if document is None:
        raise OutputError(f"{out_dir}: the study wrote no complete results.json")
    return document


def _one_line(err: BaseException) -> str:
    text = " ".join(str(err).split())
    if not isinstance(err, ExtremesError):
        text = f"{type(err).__name__}: {text}" if text else type(err).__name__
    return text or type(err).__name__


def _outcome(station: Station, *, status: str, seed: int, results: Mapping | None, skipped: bool,
             seconds: float, messages: Sequence[str] = ()) -> dict:
    levels = []
    recommended = None
    datum = station.datum
    if results is not None:
        recommended = results.get("recommended_method")
        datum = (results.get("record") or {}).get("datum", datum) if isinstance(results.get("record"), dict) else datum
        for row in results.get("return_levels", []):
            levels.append({k: row.get(k) for k in ("method", "return_period_years", "level_m", "lower_m",
                                                  "upper_m", "confidence")})
    return {"station": station.name, "status": status, "source": station.source or str(station.path),
            "lat": station.lat, "lon": station.lon, "seed": seed, "skipped": skipped, "seconds": seconds,
            "recommended_method": recommended, "datum": datum, "return_levels": levels,
            "warnings": list(messages)}


def _run_station(station: Station, *, study, options, base_seed: int, out_dir: Path, overwrite: bool) -> dict:
    start = time.perf_counter()
    station_dir = Path(out_dir) / station.name
    seed = station_seed(base_seed, station.name)
    if not overwrite:
        done = completed_results(station_dir)
        if done is not None:
            return _outcome(station, status="ok", seed=seed, results=done, skipped=True,
                            seconds=time.perf_counter() - start)
    messages: list[str] = []
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            # an incomplete folder left by an interrupted run is ours to replace
            results = study(station, options=options, seed=seed, out_dir=station_dir,
                            overwrite=overwrite or station_dir.exists())
            status = "ok"
        except Exception as err:  # noqa: BLE001 - failure isolation: one station's error goes in its status
            logger.debug("station %s failed", station.name, exc_info=True)
            results, status = None, _one_line(err) or "failed"
        messages = [" ".join(str(w.message).split()) for w in caught]
    return _outcome(station, status=status, seed=seed, results=results, skipped=False,
                    seconds=time.perf_counter() - start, messages=messages)


def _run_item(item, *, study, options, base_seed: int, out_dir: Path, overwrite: bool) -> list[dict]:
    """The dask task: one station, or one block of gridded points; returns one outcome per station."""
    kwargs = dict(study=study, options=options, base_seed=base_seed, out_dir=out_dir, overwrite=overwrite)
    if isinstance(item, Station):
        return [_run_station(item, **kwargs)]
    points = [Station(name=n, datum=item.datum, source=f"{item.path}#{item.point_dim}={i}", lat=la, lon=lo,
                      level_m=pd.Series(dtype=float))
              for i, n, la, lo in zip(item.indices, item.names, item.lat, item.lon)]
    outcomes: dict[int, dict] = {}
    todo = []
    for k, point in enumerate(points):
        done = None if overwrite else completed_results(Path(out_dir) / point.name)
        if done is not None:
            outcomes[k] = _outcome(point, status="ok", seed=station_seed(base_seed, point.name), results=done,
                                   skipped=True, seconds=0.0)
        else:
            todo.append(k)
    if todo:
        try:
            series = _block_series(item, [item.indices[k] for k in todo])
        except Exception as err:  # noqa: BLE001 - the block's points fail together, the run goes on
            for k in todo:
                outcomes[k] = _outcome(points[k], status=_one_line(err), seed=station_seed(base_seed, points[k].name),
                                       results=None, skipped=False, seconds=0.0)
        else:
            for k, level in zip(todo, series):
                point = dataclasses.replace(points[k], level_m=level)
                outcomes[k] = _run_station(point, **kwargs)
    return [outcomes[k] for k in range(len(points))]


# -- the batch ----------------------------------------------------------------------------------------------
@dataclass(frozen=True, repr=False)
class BatchSummary:
    """Outcome of a batch: one entry per station, in the order the stations were given.

    Attributes
    ----------
    out_dir : pathlib.Path
        Folder of the station folders and the summaries.
    outcomes : tuple of dict
        Per station: ``station``, ``status`` (``"ok"`` or the error message), ``source``, ``lat``, ``lon``,
        ``seed``, ``skipped`` (results found from an earlier run), ``seconds`` [s], ``recommended_method``,
        ``datum``, ``return_levels`` (rows ``method, return_period_years, level_m, lower_m, upper_m,
        confidence``), ``warnings``.
    periods_years : tuple of float
        Return periods of the summary columns. [years]
    seconds : float
        Wall-clock time of the run. [s]
    """

    out_dir: Path
    outcomes: tuple
    periods_years: tuple
    seconds: float = 0.0

    def __repr__(self) -> str:
        return (f"BatchSummary(out_dir={str(self.out_dir)!r}, n_stations={len(self.outcomes)}, "
                f"n_failed={self.n_failed}, n_skipped={self.n_skipped})")

    @property
    def n_ok(self) -> int:
        """Stations with results (new or from an earlier run)."""
        return sum(o["status"] == "ok" for o in self.outcomes)

    @property
    def n_failed(self) -> int:
        """Stations whose study failed."""
        return len(self.outcomes) - self.n_ok

    @property
    def n_skipped(self) -> int:
        """Stations skipped because their folder already held complete results."""
        return sum(bool(o["skipped"]) for o in self.outcomes)

    @property
    def ok(self) -> bool:
        """True when every station succeeded."""
        return self.n_failed == 0

    @property
    def methods(self) -> tuple[str, ...]:
        """Methods found in any station's results, in order of first appearance."""
        seen: dict[str, None] = {}
        for outcome in self.outcomes:
            for row in outcome["return_levels"]:
                seen.setdefault(str(row["method"]), None)
        return tuple(seen)

    def _levels(self):
        """Arrays (station, method, period) of level, lower, upper [m], and (station, period) recommended."""
        methods = self.methods
        periods = np.asarray(self.periods_years, dtype=float)
        shape = (len(self.outcomes), len(methods), len(periods))
        arrays = {k: np.full(shape, np.nan) for k in ("level_m", "lower_m", "upper_m")}
        confidence = np.full(len(self.outcomes), np.nan)
        for i, outcome in enumerate(self.outcomes):
            for row in outcome["return_levels"]:
                hit = np.flatnonzero(np.isclose(periods, float(row["return_period_years"]), rtol=1e-9))
                if hit.size == 0:
                    continue
                m = methods.index(str(row["method"]))
                for key in arrays:
                    value = row.get(key)
                    arrays[key][i, m, hit[0]] = np.nan if value is None else float(value)
                if row.get("confidence") is not None:
                    confidence[i] = float(row["confidence"])
        recommended = {k: np.full((len(self.outcomes), len(periods)), np.nan) for k in arrays}
        for i, outcome in enumerate(self.outcomes):
            if outcome["recommended_method"] in methods:
                m = methods.index(outcome["recommended_method"])
                for key in arrays:
                    recommended[key][i] = arrays[key][i, m]
        return arrays, recommended, confidence

    def to_frame(self) -> pd.DataFrame:
        """The ``summary.csv`` table: one row per station.

        Columns: ``station, status, recommended_method, level_100_m, lower_100_m, upper_100_m, lat, lon,
        datum, confidence, seed, skipped, seconds, source``, then for every return period T the
        recommended method's ``level_T_m, lower_T_m, upper_T_m`` and every method's
        ``<method>_level_T_m, <method>_lower_T_m, <method>_upper_T_m`` (T written as in ``%g``). [m]
        """
        arrays, recommended, confidence = self._levels()
        frame = pd.DataFrame({
            "station": [o["station"] for o in self.outcomes],
            "status": [o["status"] for o in self.outcomes],
            "recommended_method": [o["recommended_method"] or "" for o in self.outcomes],
        })
        periods = list(self.periods_years)
        head = next((j for j, p in enumerate(periods) if np.isclose(p, HEADLINE_PERIOD_YEARS)), None)
        for key in ("level", "lower", "upper"):
            frame[f"{key}_100_m"] = recommended[f"{key}_m"][:, head] if head is not None else np.nan
        frame["lat"] = [float(o["lat"]) for o in self.outcomes]
        frame["lon"] = [float(o["lon"]) for o in self.outcomes]
        frame["datum"] = [o["datum"] for o in self.outcomes]
        frame["confidence"] = confidence
        frame["seed"] = [o["seed"] for o in self.outcomes]
        frame["skipped"] = [bool(o["skipped"]) for o in self.outcomes]
        frame["seconds"] = [round(float(o["seconds"]), 3) for o in self.outcomes]
        frame["n_warnings"] = [len(o["warnings"]) for o in self.outcomes]
        frame["source"] = [o["source"] for o in self.outcomes]
        columns = {}
        for j, period in enumerate(periods):
            if j != head:
                for key in ("level", "lower", "upper"):
                    columns[f"{key}_{period:g}_m"] = recommended[f"{key}_m"][:, j]
        for m, method in enumerate(self.methods):
            for j, period in enumerate(periods):
                for key in ("level", "lower", "upper"):
                    columns[f"{method}_{key}_{period:g}_m"] = arrays[f"{key}_m"][:, m, j]
        return pd.concat([frame, pd.DataFrame(columns, index=frame.index)], axis=1)

    def to_dataset(self):
        """The ``summary.nc`` content: an :class:`xarray.Dataset` with a ``station`` dimension (CF-1.8)."""
        import xarray as xr

        from extremes import __version__

        arrays, recommended, confidence = self._levels()
        names = np.array([o["station"] for o in self.outcomes], dtype=object)
        periods = np.asarray(self.periods_years, dtype=float)
        methods = np.array(self.methods, dtype=object)
        dims3 = ("station", "method", "return_period")
        dims2 = ("station", "return_period")
        long = {"level_m": "still-water return level", "lower_m": "lower bound of the return-level interval",
                "upper_m": "upper bound of the return-level interval"}
        data = {}
        for key, text in long.items():
            data[key] = (dims3, arrays[key], {"units": "m", "long_name": f"{text} by method"})
            data[f"recommended_{key}"] = (dims2, recommended[key],
                                          {"units": "m", "long_name": f"{text} of the recommended method"})
        data["status"] = ("station", np.array([o["status"] for o in self.outcomes], dtype=object),
                          {"long_name": "outcome of the station's study: ok or the error message"})
        data["recommended_method"] = ("station", np.array([o["recommended_method"] or "" for o in self.outcomes],
                                                          dtype=object), {"long_name": "recommended method"})
        data["datum"] = ("station", np.array([str(o["datum"]) for o in self.outcomes], dtype=object),
                         {"long_name": "vertical datum of the levels"})
        data["confidence"] = ("station", confidence, {"units": "1", "long_name": "confidence level of the interval bounds"})
        data["seed"] = ("station", np.array([o["seed"] for o in self.outcomes], dtype=np.int64),
                        {"long_name": "random seed of the station's study"})
        coords = {
            "station": ("station", names, {"long_name": "station name", "cf_role": "timeseries_id"}),
            "method": ("method", methods, {"long_name": "return-level method"}),
            "return_period": ("return_period", periods, {"units": "year", "long_name": "return period"}),
            "lat": ("station", np.array([float(o["lat"]) for o in self.outcomes]),
                    {"units": "degrees_north", "standard_name": "latitude", "long_name": "latitude"}),
            "lon": ("station", np.array([float(o["lon"]) for o in self.outcomes]),
                    {"units": "degrees_east", "standard_name": "longitude", "long_name": "longitude"}),
        }
        return xr.Dataset(data, coords=coords, attrs={
            "Conventions": "CF-1.8", "title": "extremes batch summary: still-water return levels by station",
            "source": f"extremes {__version__}", "featureType": "timeSeries",
            "n_failed": self.n_failed, "n_skipped": self.n_skipped,
        })

    def to_dict(self) -> dict:
        """JSON-ready summary: counts, and per station the status and headline numbers."""
        frame = self.to_frame()
        stations = []
        for row in frame.to_dict("records"):
            stations.append({k: (_none_if_nan(v) if isinstance(v, float) else v) for k, v in row.items()
                             if k in ("station", "status", "recommended_method", "level_100_m", "lower_100_m",
                                      "upper_100_m", "lat", "lon", "seed", "skipped", "seconds")})
        return {"out_dir": str(self.out_dir), "n_stations": len(self.outcomes), "n_ok": self.n_ok,
                "n_failed": self.n_failed, "n_skipped": self.n_skipped, "seconds": self.seconds,
                "periods_years": list(self.periods_years), "stations": stations}


def _none_if_nan(value):
    try:
        return None if not np.isfinite(value) else value
    except TypeError:
        return value


def write_summaries(summary: BatchSummary, out_dir: str | os.PathLike | None = None) -> tuple[Path, Path]:
    """Write ``summary.csv`` and ``summary.nc`` to ``out_dir`` (default ``summary.out_dir``) atomically.

    The summaries describe the whole folder and are replaced on every run.
    """
    out_dir = Path(out_dir if out_dir is not None else summary.out_dir)
    csv_path = write_text_atomic(out_dir / "summary.csv", summary.to_frame().to_csv(index=False), overwrite=True)
    nc_path = out_dir / "summary.nc"
    fd, tmp = tempfile.mkstemp(prefix=".summary.", suffix=".nc.tmp", dir=out_dir)
    os.close(fd)
    try:
        summary.to_dataset().to_netcdf(tmp, engine="netcdf4")
        write_bytes_atomic(nc_path, Path(tmp).read_bytes(), overwrite=True)
    finally:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(tmp)
    logger.info("wrote %s and %s", csv_path, nc_path)
    return csv_path, nc_path


def _check_unique(names: Sequence[str], *, where: str) -> None:
    seen, dups = set(), []
    for name in names:
        if name in seen:
            dups.append(name)
        seen.add(name)
    if dups:
        raise DataError(f"{where}: station names must be unique (each names a results folder); "
                        f"repeated: {sorted(set(dups))}")
    bad = [n for n in names if not n or n in (".", "..") or "/" in n or "\\" in n]
    if bad:
        raise DataError(f"{where}: station names must be usable as folder names; got {bad}")


@contextlib.contextmanager
def dask_client(*, scheduler: str | None = None, workers: int | None = None):
    """A :class:`distributed.Client` on ``scheduler`` or on a new quiet :class:`LocalCluster`.

    The local cluster runs ``workers`` processes (default: the number of CPUs) with one thread each; its
    HTTP server (dashboard, health checks) listens on a free loopback port, so that runs side by side do
    not compete for port 8787.
    """
    from distributed import Client, LocalCluster

    if scheduler is not None:
        try:
            client = Client(scheduler, timeout="20s")
        except (OSError, TimeoutError) as err:
            raise DataError(f"--scheduler {scheduler}: cannot connect ({' '.join(str(err).split())}); "
                            "expected the address of a running dask scheduler, e.g. tcp://host:8786") from err
        with client:
            yield client
        return
    n_workers = int(workers or os.cpu_count() or 1)
    with LocalCluster(n_workers=n_workers, threads_per_worker=1, processes=True, dashboard_address="127.0.0.1:0",
                      silence_logs=logging.ERROR) as cluster, Client(cluster) as client:
        yield client


def run_batch(stations: Sequence[Station | GriddedBlock], *, out_dir: str | os.PathLike, options=None,
              scheduler: str | None = None, workers: int | None = None, overwrite: bool = False,
              progress: Callable[[int, int, str], None] | None = None,
              study: Callable[..., Mapping] | None = None, client=None,
              errors: Literal["raise", "warn", "ignore"] = "warn") -> BatchSummary:
    """Study every station on dask.distributed and write the summaries.

    Parameters
    ----------
    stations : sequence of Station or GriddedBlock
        The stations (one task each) and blocks of gridded points (one task per block).
    out_dir : path-like
        Results folder: created if missing; each station's results go to ``out_dir/<station>/``.
    options : StudyOptions, optional
        Study options common to every station; each station's seed is :func:`station_seed` of
        ``options.seed`` (default :data:`DEFAULT_SEED`) and its name.
    scheduler : str, optional
        Address of a running dask scheduler (e.g. ``tcp://host:8786``); default a new :class:`LocalCluster`.
        Workers must have this package installed and see the record files at the same paths.
    workers : int, optional
        Worker processes of the local cluster (default: the number of CPUs, at most one per task).
    overwrite : bool
        Study every station again, replacing existing station folders. Without it a station folder with a
        complete ``results.json`` is kept and its numbers are read into the summary.
    progress : callable, optional
        Called as ``progress(done, total, station)`` after each task.
    study : callable, optional
        The per-station study (module docstring); default :func:`study_station`.
    client : distributed.Client, optional
        An existing client to use instead of ``scheduler``/``workers``.
    errors : {"warn", "ignore", "raise"}
        What to do about a failed station besides putting its message in the summary: log and warn
        (:class:`ExtremesWarning`), nothing, or raise :class:`DataError` once the summaries are written.

    Returns
    -------
    BatchSummary
        The outcome of every station, in the order given.

    Raises
    ------
    DataError
        On repeated station names, an unreachable scheduler, or (with ``errors="raise"``) a failed station.
    OutputError
        If ``out_dir`` exists and is not a folder.
    """
    if errors not in ("raise", "warn", "ignore"):
        raise ValueError(f"errors must be 'raise', 'warn' or 'ignore'; got {errors!r}")
    items = list(stations)
    if not items:
        raise DataError("run_batch: no stations given")
    names = [n for item in items for n in ((item.name,) if isinstance(item, Station) else item.names)]
    _check_unique(names, where="batch")
    out_dir = Path(out_dir)
    if out_dir.exists() and not out_dir.is_dir():
        raise OutputError(f"{out_dir}: exists and is not a folder")
    out_dir = out_dir.resolve()
    study = study if study is not None else study_station
    base_seed = getattr(options, "seed", None)
    base_seed = DEFAULT_SEED if base_seed is None else int(base_seed)
    periods = getattr(options, "periods_years", None)
    started = time.perf_counter()

    kwargs = dict(study=study, options=options, base_seed=base_seed, out_dir=out_dir, overwrite=overwrite)
    results: list[list[dict] | None] = [None] * len(items)
    if not overwrite:  # stations done by an earlier run need no task (nor a cluster, when all are done)
        for i, item in enumerate(items):
            found = [completed_results(out_dir / s.name) for s in _stations_of(item)]
            if all(d is not None for d in found):
                results[i] = [_outcome(s, status="ok", seed=station_seed(base_seed, s.name), results=d, skipped=True,
                                       seconds=0.0) for s, d in zip(_stations_of(item), found)]
    pending = [i for i, r in enumerate(results) if r is None]
    n_workers = workers if workers is not None else min(os.cpu_count() or 1, max(len(pending), 1))
    context = contextlib.nullcontext(client) if client is not None or not pending else dask_client(
        scheduler=scheduler, workers=n_workers)
    done = len(items) - len(pending)
    if progress is not None and done:
        progress(done, len(items), f"{done} done before")
    with context as active:
        from distributed import as_completed

        try:
            out_dir.mkdir(parents=True, exist_ok=True)
        except OSError as err:
            raise OutputError(f"{out_dir}: cannot create the results folder ({err.strerror})") from err
        futures = {}
        for i in pending:
            item = items[i]
            future = active.submit(_run_item, item, pure=False, key=f"extremes-batch-{i}-{os.urandom(4).hex()}",
                                   **kwargs)
            futures[future] = i
        for future in (as_completed(futures) if futures else ()):
            i = futures[future]
            try:
                results[i] = future.result()
            except Exception as err:  # noqa: BLE001 - a lost worker or an unpicklable result fails its task only
                results[i] = [_outcome(s, status=_one_line(err), seed=station_seed(base_seed, s.name), results=None,
                                       skipped=False, seconds=0.0) for s in _stations_of(items[i])]
            finally:
                future.release()
            done += 1
            if progress is not None:
                progress(done, len(items), ", ".join(o["station"] for o in results[i]))
    outcomes = tuple(o for chunk in results for o in chunk)
    if periods is None:
        periods = sorted({float(r["return_period_years"]) for o in outcomes for r in o["return_levels"]})
    summary = BatchSummary(out_dir=out_dir, outcomes=outcomes, periods_years=tuple(float(p) for p in periods),
                           seconds=time.perf_counter() - started)
    write_summaries(summary)
    failed = [o for o in outcomes if o["status"] != "ok"]
    for outcome in outcomes:
        for message in outcome["warnings"]:
            logger.debug("station %s: %s", outcome["station"], message)
    if failed and errors == "warn":
        for outcome in failed:
            logger.warning("station %s failed: %s", outcome["station"], outcome["status"])
        warnings.warn(f"{len(failed)} of {len(outcomes)} stations failed; see {out_dir / 'summary.csv'}",
                      ExtremesWarning, stacklevel=2)
    if failed and errors == "raise":
        raise DataError(f"station {failed[0]['station']}: {failed[0]['status']} "
                        f"({len(failed)} of {len(outcomes)} stations failed; see {out_dir / 'summary.csv'})")
    logger.info("batch: %d stations, %d ok (%d from earlier runs), %d failed in %.1f s", len(outcomes),
                summary.n_ok, summary.n_skipped, summary.n_failed, summary.seconds)
    return summary


def _stations_of(item) -> list[Station]:
    if isinstance(item, Station):
        return [item]
    return [Station(name=n, source=f"{item.path}#{item.point_dim}={i}", lat=la, lon=lo, datum=item.datum)
            for i, n, la, lo in zip(item.indices, item.names, item.lat, item.lon)]


__all__ = ["Station", "GriddedBlock", "BatchSummary", "run_batch", "study_station", "station_seed",
           "station_name", "expand_records", "stations_from_paths", "read_manifest", "open_gridded",
           "gridded_blocks", "completed_results", "write_summaries", "dask_client", "DEFAULT_SEED",
           "MANIFEST_COLUMNS"]
