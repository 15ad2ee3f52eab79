"""Strict JSON conversion: RFC 8259 has no NaN, so NaN must become null."""
from __future__ import annotations

import json

import numpy as np
import pandas as pd

from extremes.jsonable import dumps, to_jsonable


def test_nan_and_numpy_and_times():
    value = {"a": np.float64("nan"), "b": np.int64(3), "c": np.array([1.5, np.inf]),
             "t": pd.Timestamp("2020-01-01 10:00", tz="Etc/GMT-10")}
    out = json.loads(dumps(value))
    assert out == {"a": None, "b": 3, "c": [1.5, None], "t": "2020-01-01T00:00:00Z"}


def test_frame_to_records():
    frame = pd.DataFrame({"x": [1.0, np.nan]})
    assert to_jsonable(frame) == [{"x": 1.0}, {"x": None}]
