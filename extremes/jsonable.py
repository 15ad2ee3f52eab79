"""Conversion of result objects to strict JSON (no NaN, ISO 8601 UTC times)."""
from __future__ import annotations

import dataclasses
import datetime as _dt
import json
import math
from pathlib import Path

import numpy as np
import pandas as pd


def to_jsonable(value):
    """Recursively convert ``value`` to plain JSON types.

    NaN and infinities become ``None``; numpy scalars and arrays become numbers and lists; pandas and
    datetime times become ISO 8601 strings in UTC; objects with ``to_dict()`` are converted through it;
    DataFrames become lists of records.
    """
    if value is None or isinstance(value, (bool, str)):
        return value
    if isinstance(value, (int, np.integer)) and not isinstance(value, bool):
        return int(value)
    if isinstance(value, (float, np.floating)):
        return float(value) if math.isfinite(value) else None
    if isinstance(value, np.bool_):
        return bool(value)
    if isinstance(value, (pd.Timestamp, _dt.datetime)):
        ts = pd.Timestamp(value)
        if ts is pd.NaT:
            return None
        ts = ts.tz_localize("UTC") if ts.tzinfo is None else ts.tz_convert("UTC")
        return ts.isoformat().replace("+00:00", "Z")
    if isinstance(value, (pd.Timedelta, _dt.timedelta)):
        return pd.Timedelta(value).isoformat()
    if isinstance(value, Path):
        return str(value)
    if isinstance(value, pd.DataFrame):
        return [to_jsonable(row) for row in value.to_dict(orient="records")]
    if isinstance(value, pd.Series):
        return {str(to_jsonable(k)): to_jsonable(v) for k, v in value.items()}
    if isinstance(value, np.ndarray):
        return [to_jsonable(v) for v in value.tolist()]
    if isinstance(value, dict):
        return {str(k): to_jsonable(v) for k, v in value.items()}
    if isinstance(value, (list, tuple, set)):
        return [to_jsonable(v) for v in value]
    if hasattr(value, "to_dict"):
        return to_jsonable(value.to_dict())
    if dataclasses.is_dataclass(value):
        return to_jsonable(dataclasses.asdict(value))
    if value is pd.NaT:
        return None
    return str(value)


def dumps(value, *, indent: int | None = 2) -> str:
    """Strict JSON text of ``value`` (see :func:`to_jsonable`)."""
    return json.dumps(to_jsonable(value), indent=indent, allow_nan=False)
