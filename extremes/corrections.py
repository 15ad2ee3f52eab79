"""Known corrections of a record: level offsets and clock shifts over time spans, from the gauge's logs.

The file is a CSV with the header ``start,end,add_m,shift_minutes`` (``#`` comment lines and blank lines
allowed anywhere). For readings whose stamp, as read and in UTC, is in ``[start, end)``, ``add_m`` metres are
added to the level and ``shift_minutes`` minutes to the stamp (a clock kept one hour ahead is corrected with
``-60``). An empty ``end`` runs to the end of the record; an empty ``add_m`` or ``shift_minutes`` is 0. Times
are ISO 8601; a time without an offset is taken as UTC. Spans may overlap: each reading takes every
correction whose span holds its stamp as read.

:func:`read_corrections` parses a file (one-line errors naming the file and line); :func:`apply_corrections`
applies them to the rows read, before quality control; :func:`draft_corrections` writes the timing offsets
and datum-step candidates found by quality control as a draft file, with comments, for the user to review.
"""
from __future__ import annotations

import csv
import io
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from extremes.errors import DataError

__all__ = ["Correction", "read_corrections", "apply_corrections", "draft_corrections", "HEADER"]

HEADER = ("start", "end", "add_m", "shift_minutes")


@dataclass(frozen=True)
class Correction:
    """One known correction.

    Attributes
    ----------
    start : pandas.Timestamp
        First stamp (as read, UTC) the correction applies to.
    end : pandas.Timestamp or None
        First stamp it no longer applies to (None: to the end of the record).
    add_m : float
        Added to the level [m].
    shift_minutes : float
        Added to the stamp [minutes].
    line : int
        Line of the corrections file (0 when made in code).
    """

    start: pd.Timestamp
    end: pd.Timestamp | None
    add_m: float = 0.0
    shift_minutes: float = 0.0
    line: int = 0

    def to_dict(self, rows: int | None = None) -> dict:
        out = {"start": _iso(self.start), "end": _iso(self.end) if self.end is not None else None,
               "add_m": float(self.add_m), "shift_minutes": float(self.shift_minutes)}
        if rows is not None:
            out["rows"] = int(rows)
        return out


def _iso(stamp) -> str:
    return pd.Timestamp(stamp).tz_convert("UTC").strftime("%Y-%m-%dT%H:%M:%SZ")


def _time(text: str, *, where: str, name: str) -> pd.Timestamp:
    try:
        stamp = pd.Timestamp(text.strip())
    except (ValueError, TypeError):
        raise DataError(f"{where}: {name} {text.strip()!r} is not an ISO 8601 time "
                        f"(e.g. 2011-03-27T01:00Z)") from None
    if pd.isna(stamp):
        raise DataError(f"{where}: {name} is empty; expected an ISO 8601 time")
    return stamp.tz_localize("UTC") if stamp.tzinfo is None else stamp.tz_convert("UTC")


def _number(text: str, *, where: str, name: str) -> float:
    text = text.strip()
    if not text:
        return 0.0
    try:
        value = float(text)
    except ValueError:
        raise DataError(f"{where}: {name} {text!r} is not a number") from None
    if not math.isfinite(value):
        raise DataError(f"{where}: {name} must be a finite number; got {text!r}")
    return value


def read_corrections(path) -> tuple[Correction, ...]:
    """Read a corrections file (module docstring for the format).

    Raises
    ------
    DataError
        A missing or unreadable file, a wrong header, or a bad line; the message names the file and line.
    """
    path = Path(path)
    if not path.is_file():
        raise DataError(f"{path}: no such corrections file")
    try:
        text = path.read_text(encoding="utf-8-sig")
    except (OSError, UnicodeDecodeError) as err:
        raise DataError(f"{path}: not readable as text ({err})") from None
    header_seen = False
    out = []
    for number, line in enumerate(text.splitlines(), start=1):
        stripped = line.strip()
        if not stripped or stripped.startswith("#"):
            continue
        where = f"{path}, line {number}"
        fields = next(csv.reader(io.StringIO(stripped)))
        if not header_seen:
            if tuple(f.strip().lower() for f in fields) != HEADER:
                raise DataError(f"{where}: expected the header {','.join(HEADER)}; got {stripped!r}")
            header_seen = True
            continue
        if len(fields) != len(HEADER):
            raise DataError(f"{where}: expected {len(HEADER)} fields ({','.join(HEADER)}); got {len(fields)}")
        start = _time(fields[0], where=where, name="start")
        end = _time(fields[1], where=where, name="end") if fields[1].strip() else None
        if end is not None and end <= start:
            raise DataError(f"{where}: end {fields[1].strip()} is not after start {fields[0].strip()}")
        add_m = _number(fields[2], where=where, name="add_m")
        shift = _number(fields[3], where=where, name="shift_minutes")
        if add_m == 0.0 and shift == 0.0:
            raise DataError(f"{where}: add_m and shift_minutes are both 0; the line corrects nothing")
        out.append(Correction(start, end, add_m, shift, number))
    if not header_seen:
        raise DataError(f"{path}: empty; expected the header {','.join(HEADER)} and one line per correction")
    return tuple(out)


def apply_corrections(level_m: pd.Series, corrections) -> tuple[pd.Series, list[dict]]:
    """Apply corrections to the rows read (file order kept).

    Parameters
    ----------
    level_m : pandas.Series
        The rows as read: levels [m] on a tz-aware UTC index.
    corrections : sequence of Correction

    Returns
    -------
    series : pandas.Series
        Corrected levels on corrected stamps, in the same row order.
    applied : list of dict
        Each correction (``start``, ``end``, ``add_m``, ``shift_minutes``) with ``rows``, the rows it changed.
    """
    stamps = level_m.index.as_unit("ns").asi8
    values = level_m.to_numpy(dtype=float, copy=True)
    shift = np.zeros(stamps.size, dtype=np.int64)
    applied = []
    for item in corrections:
        inside = stamps >= pd.Timestamp(item.start).value
        if item.end is not None:
            inside &= stamps < pd.Timestamp(item.end).value
        values[inside] += item.add_m
        shift[inside] += int(round(item.shift_minutes * 60e9))
        applied.append(item.to_dict(rows=int(inside.sum())))
    index = pd.DatetimeIndex(pd.to_datetime(stamps + shift, unit="ns", utc=True), name=level_m.index.name)
    out = pd.Series(values, index=index, name=level_m.name)
    out.attrs.update(level_m.attrs)
    return out, applied


def draft_corrections(timing_offsets: pd.DataFrame, datum_shifts: pd.DataFrame, *, source: str,
                      record_start, record_end) -> str:
    """A draft corrections file of what quality control detected, with comments, for the user to review.

    A timing offset of ``+60`` minutes over ``[start, end)`` is drafted as ``shift_minutes = -60`` over the
    same span. A datum step of ``size_m`` at ``time`` is drafted as ``add_m = -size_m`` from ``time`` to the
    end of the record, which puts the later readings on the earlier datum; if the later datum is the right
    one, use ``add_m = +size_m`` from the start of the record to ``time`` instead.
    """
    lines = [
        f"# Draft corrections for {source}, written by 'extremes inspect --write-corrections'.",
        f"# The record runs from {_iso(record_start)} to {_iso(record_end)} (stamps as read, UTC).",
        "# Every line below was DETECTED, not known: check each against the gauge's clock and levelling",
        "# records, edit or delete it, then pass the file back with --corrections FILE.",
        "# Format: for readings whose stamp (as read, UTC) is in [start, end), add add_m metres to the level",
        "# and shift_minutes minutes to the stamp; an empty end runs to the end of the record.",
        ",".join(HEADER),
    ]
    if len(timing_offsets) == 0 and len(datum_shifts) == 0:
        lines.insert(-1, "# Nothing was detected: no clock fault and no datum step.")
    for row in timing_offsets.itertuples():
        lines.append(f"# clock fault: stamps run {row.offset_minutes:+.1f} min ahead of true time over "
                     f"{row.months} month(s) (statistic {row.statistic:.0f}); check the span's ends to the reading")
        lines.append(f"{_iso(row.start)},{_iso(row.end)},0,{-round(float(row.offset_minutes)):g}")
    for row in datum_shifts.itertuples():
        lines.append(f"# datum step: {row.size_m:+.3f} m at {_iso(row.time)} (statistic {row.statistic:.1f}, "
                     f"critical {getattr(row, 'critical', float('nan')):.1f}); this puts the later readings on "
                     f"the earlier datum. If the later datum is the right one, use instead:")
        lines.append(f"#   {_iso(record_start)},{_iso(row.time)},{float(row.size_m):+.3f},0")
        lines.append(f"{_iso(row.time)},,{-float(row.size_m):+.3f},0")
    return "\n".join(lines) + "\n"
