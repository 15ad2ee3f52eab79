"""Clock faults: a span stamped ahead of (or behind) true time is found with its size and ends; a record
with a right clock gives none. The levels come from the invented example harbour's process."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from extremes.clock import timing_offsets
from extremes.example_records import make_examples


@pytest.fixture(scope="module")
def harbour():
    times = pd.date_range("2010-01-01", "2012-12-31 23:00", freq="h", tz="UTC")
    level, _ = make_examples.harbour_levels(times, np.random.default_rng(5))
    return times, np.round(level, 3)


def _with_clock(times, level, start, end, minutes):
    inside = (times >= start) & (times < end)
    stamps = times.where(~inside, times + pd.Timedelta(minutes=minutes))
    series = pd.Series(level, index=pd.DatetimeIndex(stamps))
    return series[~series.index.duplicated(keep=False)].sort_index()


def test_right_clock_gives_no_offset(harbour):
    times, level = harbour
    assert timing_offsets(pd.Series(level, index=times)).empty


@pytest.mark.parametrize("minutes", [60, -30])
def test_summer_time_span_found_with_size_and_ends(harbour, minutes):
    # stamps run `minutes` ahead of true time: every constituent's phase lag grows by speed x offset
    # (METHODS sec. 14); the offset is reported as stamps ahead of true time (CONTRACT.md)
    times, level = harbour
    start, end = pd.Timestamp("2011-03-27T01:00Z"), pd.Timestamp("2011-10-30T01:00Z")
    found = timing_offsets(_with_clock(times, level, start, end, minutes))
    assert len(found) == 1
    row = found.iloc[0]
    assert row["offset_minutes"] == pytest.approx(minutes, abs=3)
    # ends as read, to within a few hours (the best split of the two delays)
    assert abs(row["start"] - (start + pd.Timedelta(minutes=minutes))) <= pd.Timedelta(hours=3)
    assert abs(row["end"] - (end + pd.Timedelta(minutes=minutes))) <= pd.Timedelta(hours=3)
    assert row["months"] >= 6


def test_short_record_is_not_checked():
    times = pd.date_range("2010-01-01", periods=24 * 40, freq="h", tz="UTC")
    assert timing_offsets(pd.Series(np.cos(np.arange(times.size) / 2.0), index=times)).empty
