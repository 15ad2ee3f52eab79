"""Delimited-text records (comma, semicolon, tab or whitespace; optionally gzip): sniffing, column
choice, vectorised time parsing with :func:`pandas.read_csv`."""
from __future__ import annotations

import csv
import gzip
import io
import logging
import re
import zlib
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from extremes.errors import DataError
from extremes.readers.common import _to_utc_index
from extremes.readers.formats import _LEVEL_NAME_RE, _SNIFF_BYTES, _TIME_NAME_RE, _TIME_OF_DAY_RE

logger = logging.getLogger(__name__)


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


