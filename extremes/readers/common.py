"""Helpers shared by the text and NetCDF record readers: offsets, digests, UTC conversion."""
from __future__ import annotations

import hashlib
import logging
from pathlib import Path

import numpy as np
import pandas as pd

from extremes.errors import DataError
from extremes.readers.formats import _OFFSET_RE

logger = logging.getLogger(__name__)


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


