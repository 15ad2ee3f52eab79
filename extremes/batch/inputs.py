"""Stations of a batch and where they come from: record files, glob patterns and manifests.

:class:`Station` is one record file with its reader options (or an in-memory series);
:class:`GriddedBlock` is a block of points of a model output (made by
:func:`extremes.batch.gridded.gridded_blocks`). Build stations with :func:`stations_from_paths` or
:func:`read_manifest`.
"""
from __future__ import annotations

import glob
import os
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from extremes.errors import DataError

#: columns of a manifest CSV (``path`` required, the others optional; see :func:`read_manifest`)
MANIFEST_COLUMNS = ("path", "station", "units", "datum", "missing", "utc_offset", "time_column",
                    "level_column", "time_format", "decimal", "variable", "lat", "lon", "chainage")
_COMPRESSION_SUFFIXES = (".gz", ".bz2", ".xz", ".zip")


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
    chainage : float
        Distance along the coast where known (any unit, increasing along the coast), else NaN; orders the
        stations of the summary and their neighbours.
    """

    name: str
    path: Path | None = None
    reader: dict = field(default_factory=dict)
    level_m: pd.Series | None = None
    datum: str = "unspecified"
    source: str = ""
    lat: float = float("nan")
    lon: float = float("nan")
    chainage: float = float("nan")

    def __repr__(self) -> str:
        where = str(self.path) if self.path is not None else f"series of {len(self.level_m)} values"
        return f"Station(name={self.name!r}, {where})"

    def to_dict(self) -> dict:
        """JSON-ready description (without the series values)."""
        return {"name": self.name, "path": None if self.path is None else str(self.path),
                "reader": dict(self.reader), "datum": self.datum, "source": self.source or str(self.path),
                "lat": _none_if_nan(self.lat), "lon": _none_if_nan(self.lon),
                "chainage": _none_if_nan(self.chainage)}


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
    chainage : tuple of float
        Distance along the coast of each point (empty when the file has none).
    """

    path: Path
    variable: str
    point_dim: str
    indices: tuple[int, ...]
    names: tuple[str, ...]
    lat: tuple[float, ...]
    lon: tuple[float, ...]
    datum: str = "unspecified"
    chainage: tuple[float, ...] = ()

    def __repr__(self) -> str:
        return (f"GriddedBlock(path={str(self.path)!r}, variable={self.variable!r}, "
                f"points={self.indices[0]}..{self.indices[-1]} ({len(self.indices)}))")

    def to_dict(self) -> dict:
        """JSON-ready description."""
        return {"path": str(self.path), "variable": self.variable, "point_dim": self.point_dim,
                "indices": list(self.indices), "names": list(self.names), "datum": self.datum}


    def stations(self) -> list[Station]:
        """One :class:`Station` per point (without its series: the task reads the levels)."""
        chainage = self.chainage or (float("nan"),) * len(self.indices)
        return [Station(name=n, source=f"{self.path}#{self.point_dim}={i}", lat=la, lon=lo, datum=self.datum,
                        chainage=ch)
                for i, n, la, lo, ch in zip(self.indices, self.names, self.lat, self.lon, chainage)]


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
        ``decimal`` (``.`` or ``,``), ``variable`` (NetCDF), ``lat`` and ``lon`` [degrees], ``chainage``
        (distance along the coast, any unit: orders the stations in the summary).
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
            chainage=_number(row.get("chainage", ""), where=where, column="chainage"),
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


def check_unique_names(names: Sequence[str], *, where: str) -> None:
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




def _none_if_nan(value):
    try:
        return None if not np.isfinite(value) else value
    except TypeError:
        return value
