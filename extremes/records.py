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

import csv
import gzip
import hashlib
import io
import logging
import re
import zlib
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from extremes.constants import UNIT_TO_METRES
from extremes.errors import DataError

logger = logging.getLogger(__name__)

#: factor that turns a level in these units into metres (1 ft = 0.3048 m exactly, international foot)
#: divisors used for the metric units, so that 123 cm gives exactly the float 1.23
_UNIT_DIVISOR = {"m": 1.0, "cm": 100.0, "mm": 1000.0}
#: spellings of units attributes found in NetCDF files
_NETCDF_UNITS = {
    "m": "m", "meter": "m", "meters": "m", "metre": "m", "metres": "m",
    "cm": "cm", "centimeter": "cm", "centimeters": "cm", "centimetre": "cm", "centimetres": "cm",
    "mm": "mm", "millimeter": "mm", "millimeters": "mm", "millimetre": "mm", "millimetres": "mm",
    "ft": "ft", "foot": "ft", "feet": "ft", "international_foot": "ft",
}
_OFFSET_RE = re.compile(r"^([+-])(\d{2}):(\d{2})$")
_LEVEL_NAME_RE = re.compile(r"level|height|ssh|sea|elev|stage|^wl$|^h$|^z$|^value$|^obs", re.I)
_TIME_NAME_RE = re.compile(r"time|date|stamp|^t$", re.I)
_TIME_OF_DAY_RE = re.compile(r"^\s*\d{1,2}:\d{2}(:\d{2}(\.\d+)?)?\s*$")
_SNIFF_BYTES = 1 << 16
_NETCDF_MAGIC = (b"CDF\x01", b"CDF\x02", b"CDF\x05", b"\x89HDF\r\n\x1a\n")


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


# ----------------------------------------------------------------------------------------------------------
# helpers shared by both formats
# ----------------------------------------------------------------------------------------------------------
def _number_key(code: float) -> str:
    return str(int(code)) if float(code).is_integer() else repr(float(code))


def _parse_offset(text: str) -> pd.Timedelta:
    match = _OFFSET_RE.match(str(text).strip())
    if not match or int(match.group(2)) > 14 or int(match.group(3)) > 59:
        raise DataError(f"--utc-offset: expected +HH:MM or -HH:MM (e.g. +10:00), got {text!r}")
    sign = -1 if match.group(1) == "-" else 1
    return sign * pd.Timedelta(hours=int(match.group(2)), minutes=int(match.group(3)))


def _sha256(path: Path) -> str:
    digest = hashlib.sha256()
    with open(path, "rb") as handle:
        for chunk in iter(lambda: handle.read(1 << 22), b""):
            digest.update(chunk)
    return digest.hexdigest()


def _most_common_spacing(index: pd.DatetimeIndex) -> pd.Timedelta:
    stamps = index.asi8 if len(index) else np.array([], dtype=np.int64)
    if len(stamps) < 2:
        return pd.NaT
    spacing = np.diff(np.sort(stamps))
    spacing = spacing[spacing > 0]
    if not len(spacing):
        return pd.NaT
    spacing.sort()
    starts = np.flatnonzero(np.concatenate([[True], spacing[1:] != spacing[:-1]]))
    counts = np.diff(np.append(starts, len(spacing)))
    unit = np.datetime_data(index.dtype.base if hasattr(index.dtype, "base") else index.dtype)[0]
    return pd.Timedelta(int(spacing[starts[np.argmax(counts)]]), unit=unit)


def _to_utc_index(parsed: pd.Series | pd.DatetimeIndex, *, offset, utc_offset, source: str,
                  where: str) -> tuple[pd.DatetimeIndex, str]:
    """Turn parsed stamps into a UTC index; refuse naive stamps without an offset."""
    index = pd.DatetimeIndex(parsed)
    if index.tz is None:
        if offset is None:
            raise DataError(
                f"{source}: time stamps in {where} carry no UTC offset (e.g. {index[0]}); "
                f"give their offset with --utc-offset +HH:MM (utc_offset=...), e.g. --utc-offset +00:00 for UTC"
            )
        index = (index - offset).tz_localize("UTC")
        applied = utc_offset
    else:
        applied = "from stamps"
        if offset is not None:
            logger.info("%s: stamps carry their own offsets; --utc-offset %s not applied", source, utc_offset)
        index = index.tz_convert("UTC")
    return index.rename("time"), applied


# ----------------------------------------------------------------------------------------------------------
# delimited text
# ----------------------------------------------------------------------------------------------------------
def _open_text(path: Path):
    with open(path, "rb") as handle:
        magic = handle.read(2)
    if magic == b"\x1f\x8b":
        return gzip.open(path, "rb"), "gzip"
    return open(path, "rb"), None


def _sniff(path: Path) -> tuple[list[str], int, str | None]:
    """First lines of the file (decoded), and its compression."""
    handle, compression = _open_text(path)
    try:
        with handle:
            raw = handle.read(_SNIFF_BYTES)
    except (OSError, EOFError, gzip.BadGzipFile) as err:
        raise DataError(f"{path}: cannot be read as a gzip-compressed text file ({err})") from None
    if raw.startswith(b"\xef\xbb\xbf"):
        raw = raw[3:]  # UTF-8 byte-order mark (spreadsheet exports); pandas skips it too
    if b"\x00" in raw:
        raise DataError(f"{path}: looks binary (NUL bytes), expected a delimited text file or NetCDF")
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as err:
        if err.start < len(raw) - 4:  # not just a character cut at the end of the sample
            try:
                text = raw.decode("latin-1")
                if sum(ch < " " and ch not in "\r\n\t" for ch in text) > 0:
                    raise DataError(f"{path}: looks binary (control bytes), expected a delimited text file "
                                    f"or NetCDF")
            except UnicodeDecodeError:  # pragma: no cover - latin-1 decodes everything
                raise DataError(f"{path}: not text, expected a delimited text file or NetCDF") from None
        else:
            text = raw[: err.start].decode("utf-8")
    if any(ch < " " and ch not in "\r\n\t\f\v" for ch in text):
        raise DataError(f"{path}: looks binary (control bytes), expected a delimited text file or NetCDF")
    lines = text.splitlines()
    if len(raw) == _SNIFF_BYTES and lines:
        lines = lines[:-1]  # the last line of the sample may be cut
    return lines, compression


def _choose_separator(lines: list[str], decimal: str, source: str) -> str:
    candidates = ["\t", ";"] + ([","] if decimal == "." else [])
    sample = lines[:50]
    for sep in candidates:
        counts = {line.count(sep) for line in sample}
        if len(counts) == 1 and counts.pop() > 0:
            return sep
    for sep in candidates:
        counts = [line.count(sep) for line in sample]
        if min(counts) > 0:
            return sep  # ragged rows: read_csv will say where
    return r"\s+"


def _data_line_number(path: Path, row: int, first_data_line: int) -> int:
    """1-based line in the file of data row ``row`` (0-based), skipping blank and comment lines."""
    handle, _ = _open_text(path)
    seen = -1
    with io.TextIOWrapper(handle, encoding="utf-8", errors="replace") as lines:
        for number, raw in enumerate(lines, start=1):
            if number < first_data_line:
                continue
            stripped = raw.strip()
            if not stripped or stripped.startswith("#"):
                continue
            seen += 1
            if seen == row:
                return number
    return first_data_line + row


def _split(line: str, sep: str) -> list[str]:
    if sep == r"\s+":
        return line.split()
    return [item.strip().strip('"').strip("'") for item in next(csv.reader([line], delimiter=sep))]


def _looks_like_time(text: str, time_format: str | None) -> bool:
    text = str(text).strip()
    if not text or not any(ch.isdigit() for ch in text):
        return False
    try:
        if time_format:
            pd.to_datetime(pd.Series([text]), format=time_format, errors="raise")
        else:
            if not re.match(r"^\d{4}-\d{2}-\d{2}", text):
                return False
            pd.to_datetime(pd.Series([text]), format="ISO8601", errors="raise")
        return True
    except (ValueError, TypeError, OverflowError):
        return False


def _is_number(text: str, decimal: str) -> bool:
    text = str(text).strip()
    if decimal == ",":
        text = text.replace(",", ".")
    try:
        float(text)
        return True
    except ValueError:
        return False


def _read_text(path: Path, *, time_columns, level_column, time_format, offset, utc_offset, decimal, units):
    source = str(path)
    lines, compression = _sniff(path)
    n_lead = 0
    for line in lines:
        if line.strip() and not line.lstrip().startswith("#"):
            break
        n_lead += 1
    body = [line for line in lines[n_lead:] if line.strip() and not line.lstrip().startswith("#")]
    if not body:
        raise DataError(f"{source}: empty file (no header or data rows), expected a header row and rows of "
                        f"time stamps and levels")
    sep = _choose_separator(body, decimal, source)
    first = _split(body[0], sep)
    # a header row names the columns; a file without one starts with a time stamp and numbers
    has_header = not (any(_looks_like_time(item, time_format) for item in first)
                      and any(_is_number(item, decimal) for item in first))
    if not has_header and time_columns is None and level_column is None:
        logger.info("%s: no header row; columns are named col1, col2, ...", source)
    names = None if has_header else [f"col{i + 1}" for i in range(len(first))]
    if has_header:
        header = [name.strip() or f"column{i + 1}" for i, name in enumerate(first)]
        if len(set(header)) != len(header):
            raise DataError(f"{source}: line {n_lead + 1}: repeated column names in the header {header}")
        if len(body) < 2:
            raise DataError(f"{source}: header only, no data rows (header: {', '.join(header)})")
    else:
        header = names
    sample_rows = [_split(line, sep) for line in body[1 if has_header else 0: 21 if has_header else 20]]
    if sep == r"\s+" and has_header and sample_rows and all(len(r) == len(header) + 1 for r in sample_rows):
        # whitespace-separated stamps "YYYY-MM-DD HH:MM" under a single time header: name the two parts
        raise DataError(
            f"{source}: line {n_lead + 2}: {len(header) + 1} whitespace-separated fields under "
            f"{len(header)} header names; if date and time of day are separate fields, name them in the "
            f"header and give --time-column twice (date column, then time-of-day column)")

    time_cols, level_col = _choose_columns(source, header, sample_rows, time_columns=time_columns,
                                           level_column=level_column, time_format=time_format,
                                           decimal=decimal)
    first_data_line = n_lead + (2 if has_header else 1)
    kwargs: dict[str, Any] = dict(
        sep=sep if sep != r"\s+" else None, delim_whitespace=False, skiprows=n_lead, comment="#",
        header=0 if has_header else None, names=names, index_col=False,
        dtype={col: "str" for col in time_cols}, decimal=decimal, compression=compression,
        skip_blank_lines=True, engine="c", skipinitialspace=True, na_values=["", "NA", "NaN", "nan", "NULL", "null", "-"],
        keep_default_na=False,
    )
    if sep == r"\s+":
        kwargs["sep"] = r"\s+"
    del kwargs["delim_whitespace"]
    try:
        frame = _read_csv_checked(path, kwargs, ncols=len(header))
    except pd.errors.EmptyDataError:
        raise DataError(f"{source}: empty file, expected a header row and rows of times and levels") from None
    except pd.errors.ParserError as err:
        message = _short(err).replace("Error tokenizing data. C error: ", "")
        raise DataError(f"{source}: ragged rows: {message}; expected {len(header)} fields per row "
                        f"separated by {_sep_name(sep)}") from None
    except (UnicodeDecodeError, ValueError, OSError, EOFError, zlib.error) as err:
        raise DataError(f"{source}: cannot be read as delimited text ({_short(err)})") from None
    if len(frame.columns) == len(header):
        frame.columns = header  # by position: blank or repeated-looking names as the reader named them
    if frame.empty:
        raise DataError(f"{source}: header only, no data rows (header: {', '.join(header)})")

    # time stamps
    if len(time_cols) == 2:
        text = frame[time_cols[0]].str.strip() + " " + frame[time_cols[1]].str.strip()
    else:
        text = frame[time_cols[0]]
    where = "column " + " + ".join(repr(c) for c in time_cols)
    parsed = _parse_times(text, time_format=time_format, path=path, where=where,
                          first_data_line=first_data_line)
    index, applied = _to_utc_index(parsed, offset=offset, utc_offset=utc_offset, source=source, where=where)

    # levels
    level = frame[level_col]
    if not pd.api.types.is_numeric_dtype(level.dtype):
        as_text = level.astype("str").str.strip()
        if decimal == ",":
            as_text = as_text.str.replace(",", ".", regex=False)
        number = pd.to_numeric(as_text, errors="coerce")
        bad = np.flatnonzero(number.isna().to_numpy() & level.notna().to_numpy())
        if len(bad):
            row = int(bad[0])
            line = _data_line_number(path, row, first_data_line)
            raise DataError(f"{source}: line {line}, column {level_col!r}: expected a number, got "
                            f"{level.iloc[row]!r}")
        level = number
    values = level.to_numpy(dtype=float)
    series = pd.Series(values, index=index)
    meta = {"format": "text" + (" (gzip)" if compression else ""), "separator": _sep_name(sep),
            "time_columns": time_cols, "level_column": level_col, "utc_offset_applied": applied,
            "time_format": time_format or "ISO 8601", "first_data_line": first_data_line,
            "header": has_header}
    return series, units, meta


def _read_csv_checked(path: Path, kwargs: dict, *, ncols: int) -> pd.DataFrame:
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("error", pd.errors.ParserWarning)
        try:
            frame = pd.read_csv(path, **kwargs)
        except pd.errors.ParserWarning:
            raise pd.errors.ParserError(f"rows hold more fields than the header's {ncols}") from None
    return frame


def _sep_name(sep: str) -> str:
    return {",": "commas", ";": "semicolons", "\t": "tabs", r"\s+": "whitespace"}.get(sep, repr(sep))


def _short(err: BaseException) -> str:
    return " ".join(str(err).split())[:300]


def _choose_columns(source, header, rows, *, time_columns, level_column, time_format, decimal):
    available = ", ".join(repr(h) for h in header)
    for name in (time_columns or []) + ([level_column] if level_column else []):
        if name not in header:
            raise DataError(f"{source}: no column named {name!r}; available columns: {available}")

    def column_values(name):
        position = header.index(name)
        return [row[position] for row in rows if position < len(row) and row[position].strip()]

    if time_columns is None:
        time_like = [h for h in header if (vals := column_values(h)[:10])
                     and sum(_looks_like_time(v, time_format) for v in vals) >= len(vals) / 2]
        clocks = [h for h in header if (vals := column_values(h)[:10])
                  and sum(bool(_TIME_OF_DAY_RE.match(v)) for v in vals) > len(vals) / 2]
        pairs = []
        for clock in clocks:
            position = header.index(clock)
            for date in header:
                if date in clocks:
                    continue
                other = header.index(date)
                joined = [row[other].strip() + " " + row[position].strip() for row in rows[:10]
                          if max(other, position) < len(row)]
                if joined and sum(_looks_like_time(v, time_format) for v in joined) > len(joined) / 2:
                    pairs.append([date, clock])
        if len(pairs) == 1 and (not time_like or time_like == pairs[0][:1]):
            time_columns = pairs[0]  # a date column and a time-of-day column
        elif len(time_like) == 1:
            time_columns = time_like
        elif len(time_like) > 1:
            raise DataError(f"{source}: several columns hold time stamps ({', '.join(map(repr, time_like))}); "
                            f"choose one with --time-column NAME")
        elif len(pairs) == 0 and len(named := [h for h in header if _TIME_NAME_RE.search(h)]) == 1:
            time_columns = named  # named like a time column; parsing will say which line is wrong
        elif len(pairs) > 1:
            raise DataError(f"{source}: several date and time-of-day columns ({pairs}); choose them with "
                            f"--time-column DATE --time-column TIME")
        else:
            hint = ("; if stamps are not ISO 8601 give --time-format FORMAT" if not time_format else "")
            raise DataError(f"{source}: found no column of time stamps among {available}; "
                            f"expected ISO 8601 times (e.g. 2020-01-01T00:00Z) in one column, or name it "
                            f"with --time-column NAME{hint}")
    if level_column is None:
        rest = [h for h in header if h not in time_columns]
        numeric = [h for h in rest if (vals := column_values(h))
                   and sum(_is_number(v, decimal) for v in vals) >= max(1, 0.5 * len(vals))]
        if not numeric:
            raise DataError(f"{source}: no numeric column of levels among {available}; expected one column "
                            f"of numbers (or name it with --level-column NAME)")
        if len(numeric) > 1:
            named = [h for h in numeric if _LEVEL_NAME_RE.search(h)]
            if len(named) == 1:
                numeric = named
            else:
                raise DataError(f"{source}: several numeric columns ({', '.join(map(repr, numeric))}); "
                                f"choose the level column with --level-column NAME")
        level_column = numeric[0]
    return list(time_columns), level_column


def _parse_times(text: pd.Series, *, time_format, path: Path, where: str, first_data_line: int) -> pd.Series:
    source = str(path)
    fmt = time_format or "ISO8601"
    try:
        parsed = pd.to_datetime(text, format=fmt, errors="coerce")
    except ValueError as err:
        if "mixed" not in str(err).lower():
            raise DataError(f"{source}: {where}: cannot parse the time stamps ({_short(err)})") from None
        # mixed offsets: fine if every stamp carries one; naive stamps mixed with aware ones are refused
        aware = text.str.contains(r"(?:Z|[+-]\d{2}:?\d{2})$", regex=True, na=False)
        naive = np.flatnonzero(~aware.to_numpy() & text.notna().to_numpy())
        if len(naive):
            row = int(naive[0])
            line = _data_line_number(path, row, first_data_line)
            raise DataError(f"{source}: line {line}, {where}: stamp {text.iloc[row]!r} carries no UTC offset "
                            f"while others do; expected every stamp with an offset or none") from None
        parsed = pd.to_datetime(text, format=fmt, errors="coerce", utc=True)
    bad = np.flatnonzero(parsed.isna().to_numpy())
    if len(bad):
        row = int(bad[0])
        line = _data_line_number(path, row, first_data_line)
        got = text.iloc[row]
        expected = f"format {time_format!r}" if time_format else "ISO 8601 (e.g. 2020-01-01T00:00Z)"
        what = "no time stamp" if got is None or pd.isna(got) or not str(got).strip() else repr(got)
        raise DataError(f"{source}: line {line}, {where}: cannot read time stamp {what}; expected {expected}"
                        + ("" if time_format else " or give --time-format FORMAT"))
    return parsed


# ----------------------------------------------------------------------------------------------------------
# NetCDF
# ----------------------------------------------------------------------------------------------------------
def _read_netcdf(path: Path, *, variable, units, offset, utc_offset):
    import xarray as xr

    source = str(path)
    try:
        dataset = xr.open_dataset(path, engine="netcdf4")
    except Exception as err:  # noqa: BLE001 - any backend failure is a bad file to the user
        raise DataError(f"{source}: cannot be read as NetCDF ({_short(err)})") from None
    with dataset:
        def on_time(name):
            var = dataset[name]
            return (var.ndim == 1 and np.issubdtype(dataset[var.dims[0]].dtype, np.datetime64)
                    and np.issubdtype(var.dtype, np.number))

        names = [str(n) for n in dataset.data_vars]
        if variable is not None:
            if variable not in dataset.variables:
                raise DataError(f"{source}: no variable named {variable!r}; available variables: "
                                f"{', '.join(map(repr, names))}")
            if not on_time(variable):
                raise DataError(f"{source}: variable {variable!r} is not a 1-D numeric variable on a time "
                                f"coordinate (dims {dataset[variable].dims})")
            chosen = variable
        else:
            candidates = [n for n in names if on_time(n)]
            if not candidates:
                raise DataError(f"{source}: no 1-D numeric variable on a time coordinate among "
                                f"{', '.join(map(repr, names)) or 'no variables'}")
            if len(candidates) > 1:
                def levelish(n):
                    std = str(dataset[n].attrs.get("standard_name", ""))
                    return (std.startswith(("sea_surface_height", "water_surface_height", "sea_level"))
                            or bool(re.search(r"water_level|sea_level|waterlevel|ssh", n + " " + std, re.I)))
                named = [n for n in candidates if levelish(n)]
                if len(named) != 1:
                    raise DataError(f"{source}: several variables on time ({', '.join(map(repr, candidates))}); "
                                    f"choose one with --variable NAME")
                candidates = named
            chosen = candidates[0]
        var = dataset[chosen]
        attr_units = var.attrs.get("units")
        if attr_units is not None:
            key = str(attr_units).strip().lower()
            if key not in _NETCDF_UNITS:
                raise DataError(f"{source}: variable {chosen!r} has units {attr_units!r}; expected one of m, "
                                f"cm, mm, ft (or their spelled-out names)")
            file_units = _NETCDF_UNITS[key]
            if units != "m" and units != file_units:
                raise DataError(f"{source}: --units {units} contradicts the units attribute {attr_units!r} of "
                                f"variable {chosen!r}")
        else:
            file_units = units
        times = pd.DatetimeIndex(var[var.dims[0]].values)
        values = np.asarray(var.values, dtype=float)
    if times.isna().any():
        raise DataError(f"{source}: variable {chosen!r}: the time coordinate holds missing values")
    if times.tz is None:
        if offset is not None:
            index = (times - offset).tz_localize("UTC")
            applied = utc_offset
        else:
            index = times.tz_localize("UTC")
            applied = "+00:00 (CF time units)"
    else:
        index = times.tz_convert("UTC")
        applied = "from stamps"
    index = index.rename("time")
    if len(index) == 0:
        raise DataError(f"{source}: variable {chosen!r} holds no values")
    meta = {"format": "netcdf", "variable": chosen, "units_attribute": attr_units,
            "utc_offset_applied": applied}
    return pd.Series(values, index=index), file_units, meta


__all__ = ["GaugeRecord", "read_record", "UNIT_TO_METRES"]
