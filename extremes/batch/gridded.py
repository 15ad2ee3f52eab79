"""Gridded model output (NetCDF, time x points) read lazily and split into blocks of points.

:func:`gridded_blocks` reads only the small coordinate variables and splits the points into
:class:`~extremes.batch.inputs.GriddedBlock` s (one dask task each); :func:`block_series` reads the levels
of a block's points inside its task.
"""
from __future__ import annotations

import os
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from extremes.batch.inputs import GriddedBlock, check_unique_names
from extremes.constants import UNIT_TO_METRES
from extremes.errors import DataError

_UNIT_SCALE_M = {**UNIT_TO_METRES, "metre": 1.0, "metres": 1.0, "meter": 1.0, "meters": 1.0,
                 "feet": UNIT_TO_METRES["ft"]}
_LEVEL_STANDARD_NAMES = ("sea_surface_height_above_geopotential_datum", "sea_surface_height",
                         "sea_surface_height_above_mean_sea_level", "sea_surface_height_above_reference_ellipsoid",
                         "water_surface_height_above_reference_datum", "sea_surface_elevation")


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
    ``point_<index>``; a ``chainage`` variable along the point dimension orders the points along the coast.

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
        along = _point_coordinate(dataset, point_dim, ("chainage",))
        chainage = None if along is None else np.asarray(along.values, dtype=float)
        attrs = dataset[name].attrs
        datum = datum or attrs.get("datum") or attrs.get("vertical_datum") or "unspecified"
    check_unique_names(names, where=f"gridded file {path}")
    size = int(block_size)
    return [GriddedBlock(path=path, variable=name, point_dim=point_dim, indices=tuple(range(i, min(i + size, n_points))),
                         names=tuple(names[i:i + size]), lat=tuple(float(v) for v in lats[i:i + size]),
                         lon=tuple(float(v) for v in lons[i:i + size]), datum=str(datum),
                         chainage=() if chainage is None else tuple(float(v) for v in chainage[i:i + size]))
            for i in range(0, n_points, size)]


def _text(value) -> str:
    if isinstance(value, bytes):
        value = value.decode("utf-8", "replace")
    return str(value).strip()


def block_series(block: GriddedBlock, indices: Sequence[int]) -> list[pd.Series]:
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
