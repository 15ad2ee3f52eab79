"""Reading a tide-gauge record into a :class:`GaugeRecord` (UTC times, levels in metres).

Two kinds of file are read:

* delimited text (comma, semicolon, tab or whitespace separated; optionally gzip-compressed), with an
  optional block of ``#`` comment lines at the top and a header row; read with :func:`pandas.read_csv`
  (C engine) and vectorised time parsing, so a 50-year 6-minute record (about 4.4 million rows) reads in a
  few seconds;
* NetCDF (CF conventions): a water-level variable on a time coordinate, chosen automatically when only one
  fits, or named with ``variable``.

The reader keeps every row as it is in the file (file order, duplicates and disorder kept); quality control
(:mod:`extremes.quality`) flags what is wrong, it never deletes. Stamps are taken as instantaneous readings
at the stated time. Stamps that carry an offset (``+10:00``) or ``Z`` are converted to UTC; stamps that carry
none are refused unless ``utc_offset`` says which offset they are in. NetCDF times follow CF: the
reference time in the ``units`` attribute is UTC unless it carries an offset, so ``utc_offset`` is only
applied to NetCDF times when given explicitly.
"""
from __future__ import annotations

import logging
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from extremes.constants import UNIT_TO_METRES
from extremes.errors import DataError
from extremes.readers.common import _most_common_spacing, _number_key, _parse_offset, _sha256
from extremes.readers.formats import _NETCDF_MAGIC, _UNIT_DIVISOR
from extremes.readers.netcdf import _read_netcdf
from extremes.readers.text import _read_text

logger = logging.getLogger(__name__)


@dataclass(frozen=True, eq=False, repr=False)
class GaugeRecord:
    """A tide-gauge record as read from a file.

    Attributes
    ----------
    water_level_m : pandas.Series
        The rows as read, in file order (duplicates and disorder kept), indexed by a tz-aware UTC
        ``DatetimeIndex`` named ``time``; float levels [m]; NaN where the file held a missing code or no
        value. ``attrs`` holds ``units`` (``"m"``) and ``datum``.
    datum : str
        Name of the vertical datum of the levels (``"unspecified"`` when not given).
    source : str
        Path of the file read.
    sha256 : str
        SHA-256 of the file's bytes (as stored, i.e. compressed for ``.gz``).
    interval : pandas.Timedelta
        The most common positive spacing of the sorted time stamps (the sampling interval).
    meta : dict
        What the reader did: ``format``, ``units_in_file``, ``utc_offset_applied``, ``time_columns``,
        ``level_column``, ``separator``, ``first_data_line``, ``n_missing_code`` (per code),
        ``n_empty``, ``n_rows``.
    is_missing_code : numpy.ndarray of bool
        Per row (file order): True where the file held one of the declared missing codes.
    """

    water_level_m: pd.Series
    datum: str
    source: str
    sha256: str
    interval: pd.Timedelta
    meta: dict = field(default_factory=dict)
    is_missing_code: np.ndarray | None = None

    def __post_init__(self):
        if self.is_missing_code is None:
            object.__setattr__(self, "is_missing_code", np.zeros(len(self.water_level_m), dtype=bool))

    @property
    def n_rows(self) -> int:
        """Number of rows read."""
        return len(self.water_level_m)

    def to_dict(self) -> dict:
        """JSON-ready summary (no data): source, sha256, datum, interval [minutes], rows, meta."""
        index = self.water_level_m.index
        return {
            "source": self.source,
            "sha256": self.sha256,
            "datum": self.datum,
            "units": "m",
            "interval_minutes": _minutes(self.interval),
            "n_rows": self.n_rows,
            "start": _iso(index.min()) if len(index) else None,
            "end": _iso(index.max()) if len(index) else None,
            "meta": {k: v for k, v in self.meta.items()},
        }

    def __repr__(self) -> str:
        return (f"GaugeRecord(source={Path(self.source).name!r}, rows={self.n_rows}, "
                f"interval={_minutes(self.interval)} min, datum={self.datum!r})")


def _minutes(interval: pd.Timedelta) -> float | None:
    if interval is None or pd.isna(interval):
        return None
    return interval / pd.Timedelta(minutes=1)


def _iso(stamp) -> str | None:
    if stamp is None or pd.isna(stamp):
        return None
    return pd.Timestamp(stamp).tz_convert("UTC").strftime("%Y-%m-%dT%H:%M:%SZ")


# ----------------------------------------------------------------------------------------------------------
# public entry point
# ----------------------------------------------------------------------------------------------------------
def read_record(path, *, time_columns: Sequence[str] | str | None = None, level_column: str | None = None,
                time_format: str | None = None, units: str = "m", missing: Sequence[float] = (),
                utc_offset: str | None = None, datum: str | None = None, decimal: str = ".",
                variable: str | None = None, corrections=None) -> GaugeRecord:
    """Read a tide-gauge record (delimited text, optionally ``.gz``, or NetCDF).

    Parameters
    ----------
    path : path-like
        The file.
    time_columns : str or list of str, optional
        Column of time stamps, or ``[date_column, time_of_day_column]`` joined with a space in that order.
        Default: detected (the one column whose values parse as times; or a date column plus a time-of-day
        column).
    level_column : str, optional
        Column of water levels. Default: the one numeric column (or the one numeric column whose name says
        level/height when there are several).
    time_format : str, optional
        strftime format of stamps that are not ISO 8601 (e.g. ``"%d/%m/%Y %H:%M"``).
    units : {"m", "cm", "mm", "ft"}
        Units of the level column (NetCDF: used only when the variable has no ``units`` attribute).
    missing : sequence of float
        Codes meaning "no reading", in the file's units; compared numerically (``-99`` matches ``-99.0``).
    utc_offset : str, optional
        ``"+HH:MM"`` offset of stamps that carry none. Without it such stamps are refused.
    datum : str, optional
        Name of the vertical datum of the levels. Default ``"unspecified"``.
    decimal : {".", ","}
        Decimal mark of numbers in a text file.
    variable : str, optional
        NetCDF only: name of the water-level variable.
    corrections : path-like or sequence of Correction, optional
        Known level offsets and clock shifts (:mod:`extremes.corrections`), applied to the rows read before
        anything else; the record then holds the corrected rows and ``meta["corrections"]`` lists each
        correction with the rows it changed.

    Returns
    -------
    GaugeRecord
        Levels [m] on UTC times, rows as in the file.

    Raises
    ------
    DataError
        The file is missing, a folder, empty, binary, ragged, has no time or numeric column, ambiguous
        columns, unknown column names, unparseable or naive stamps, or an unknown option value. The message
        names the file (and line or column where known) and what was expected.
    """
    path = Path(path)
    if units not in UNIT_TO_METRES:
        raise DataError(f"units must be one of {sorted(UNIT_TO_METRES)}; got {units!r}")
    if decimal not in (".", ","):
        raise DataError(f"decimal must be '.' or ','; got {decimal!r}")
    offset = _parse_offset(utc_offset) if utc_offset is not None else None
    if isinstance(time_columns, str):
        time_columns = [time_columns]
    time_columns = list(time_columns) if time_columns else None
    if time_columns is not None and not 1 <= len(time_columns) <= 2:
        raise DataError(f"time_columns takes one column or two (date, time of day); got {time_columns}")
    missing_codes = [float(code) for code in (missing or ())]
    if not path.exists():
        raise DataError(f"{path}: no such file")
    if path.is_dir():
        raise DataError(f"{path}: is a folder, expected a record file")

    sha256 = _sha256(path)
    with open(path, "rb") as handle:
        head = handle.read(8)
    if head.startswith(_NETCDF_MAGIC) or (not head and path.suffix.lower() in (".nc", ".nc4")):
        level, file_units, meta = _read_netcdf(path, variable=variable, units=units, offset=offset,
                                               utc_offset=utc_offset)
    else:
        if variable is not None:
            logger.info("%s: --variable is for NetCDF files; ignored for a text file", path)
        level, file_units, meta = _read_text(path, time_columns=time_columns, level_column=level_column,
                                             time_format=time_format, offset=offset, utc_offset=utc_offset,
                                             decimal=decimal, units=units)
    values = level.to_numpy(dtype=float, copy=True)
    n_empty = int(np.isnan(values).sum())
    is_code = np.zeros(values.shape, dtype=bool)
    counts = {}
    for code in missing_codes:
        hit = np.abs(values - code) <= 1e-9 * max(1.0, abs(code))
        counts[_number_key(code)] = int(hit.sum())
        is_code |= hit
    values[is_code] = np.nan
    if file_units in _UNIT_DIVISOR:
        if file_units != "m":
            values /= _UNIT_DIVISOR[file_units]
    else:
        values *= UNIT_TO_METRES[file_units]
    index = level.index
    series = pd.Series(values, index=index, name="water_level_m")
    series.attrs.update({"units": "m", "datum": datum or "unspecified"})
    if corrections is not None:
        from extremes import corrections as known

        items = (known.read_corrections(corrections) if isinstance(corrections, (str, Path))
                 else tuple(corrections))
        series, applied = known.apply_corrections(series, items)
        meta["corrections"] = applied
        if isinstance(corrections, (str, Path)):
            meta["corrections_file"] = str(corrections)
            meta["corrections_sha256"] = _sha256(Path(corrections))
        index = series.index
    interval = _most_common_spacing(index)
    meta.update({"units_in_file": file_units, "n_missing_code": counts, "n_empty": n_empty,
                 "n_rows": int(len(values))})
    record = GaugeRecord(water_level_m=series, datum=datum or "unspecified", source=str(path), sha256=sha256,
                         interval=interval, meta=meta, is_missing_code=is_code)
    logger.info("read %r", record)
    return record


__all__ = ["GaugeRecord", "read_record", "UNIT_TO_METRES"]
