"""Known corrections: the file format of CONTRACT.md, one-line errors naming the line, application before QC,
and the draft written from what quality control detected."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from extremes.corrections import apply_corrections, draft_corrections, read_corrections
from extremes.errors import DataError
from extremes.records import read_record


def _write(tmp_path, text, name="fix.csv"):
    path = tmp_path / name
    path.write_text(text)
    return path


def test_read_with_comments_empty_end_and_offsets(tmp_path):
    path = _write(tmp_path, "# from the clock log\nstart,end,add_m,shift_minutes\n"
                            "2015-03-29T02:00Z,2015-10-25T02:00Z,0,-60\n\n# resurvey\n2019-06-01 00:00,,-0.12,\n")
    first, second = read_corrections(path)
    assert first.start == pd.Timestamp("2015-03-29T02:00Z") and first.shift_minutes == -60 and first.line == 3
    assert second.end is None and second.add_m == -0.12 and second.shift_minutes == 0.0 and second.line == 6
    assert second.start.tz is not None  # a time without offset is UTC


@pytest.mark.parametrize("text, line, words", [
    ("start,end,add\n", 1, "header"),
    ("start,end,add_m,shift_minutes\n2015-01-01,2014-01-01,0.1,0\n", 2, "not after start"),
    ("start,end,add_m,shift_minutes\nyesterday,,0.1,0\n", 2, "ISO 8601"),
    ("start,end,add_m,shift_minutes\n2015-01-01,,ten,0\n", 2, "not a number"),
    ("# note\nstart,end,add_m,shift_minutes\n2015-01-01,,0.1\n", 3, "expected 4 fields"),
    ("start,end,add_m,shift_minutes\n2015-01-01,,0,0\n", 2, "corrects nothing"),
])
def test_bad_lines_are_named(tmp_path, text, line, words):
    path = _write(tmp_path, text)
    with pytest.raises(DataError) as caught:
        read_corrections(path)
    message = str(caught.value)
    assert f"{path}, line {line}" in message and words in message and "\n" not in message


def test_empty_or_missing_file(tmp_path):
    with pytest.raises(DataError, match="empty"):
        read_corrections(_write(tmp_path, "# only a comment\n"))
    with pytest.raises(DataError, match="no such corrections file"):
        read_corrections(tmp_path / "absent.csv")


def test_apply_keeps_row_order_and_counts_rows():
    times = pd.date_range("2020-01-01", periods=10, freq="h", tz="UTC")
    series = pd.Series(np.arange(10.0), index=times)
    fixes = read_text_corrections("2020-01-01T03:00Z,2020-01-01T06:00Z,0.5,-60\n2020-01-01T05:00Z,,-1,0\n")
    out, applied = apply_corrections(series, fixes)
    # rows 3, 4, 5 moved back an hour and raised 0.5; rows 5.. lowered 1 (row 5 takes both)
    assert out.index[3] == times[2] and out.index[5] == times[4] and out.index[6] == times[6]
    assert out.to_numpy().tolist() == [0, 1, 2, 3.5, 4.5, 4.5, 5, 6, 7, 8]
    assert [a["rows"] for a in applied] == [3, 5]


def read_text_corrections(body):
    import tempfile
    from pathlib import Path

    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "c.csv"
        path.write_text("start,end,add_m,shift_minutes\n" + body)
        return read_corrections(path)


def test_reader_applies_corrections_before_qc_and_records_them(tmp_path):
    record = _write(tmp_path, "time,level\n2020-01-01T00:00Z,1.0\n2020-01-01T01:00Z,1.1\n2020-01-01T02:00Z,1.2\n",
                    "r.csv")
    fixes = _write(tmp_path, "start,end,add_m,shift_minutes\n2020-01-01T01:00Z,,0.25,0\n")
    gauge = read_record(record, corrections=fixes)
    assert gauge.water_level_m.round(6).tolist() == [1.0, 1.35, 1.45]
    assert gauge.meta["corrections"] == [{"start": "2020-01-01T01:00:00Z", "end": None, "add_m": 0.25,
                                          "shift_minutes": 0.0, "rows": 2}]
    assert gauge.meta["corrections_file"] == str(fixes)


def test_draft_is_a_valid_corrections_file(tmp_path):
    offsets = pd.DataFrame({"start": pd.to_datetime(["2015-03-29T02:00Z"]), "end": pd.to_datetime(["2015-10-25T04:00Z"]),
                            "offset_minutes": [59.7], "months": [6], "statistic": [250.0]})
    shifts = pd.DataFrame({"time": pd.to_datetime(["2019-06-01"], utc=True), "size_m": [0.11],
                           "statistic": [8.9], "critical": [5.1]})
    text = draft_corrections(offsets, shifts, source="r.csv", record_start=pd.Timestamp("2012-01-01", tz="UTC"),
                             record_end=pd.Timestamp("2023-12-31", tz="UTC"))
    assert "DETECTED, not known" in text
    clock, step = read_corrections(_write(tmp_path, text))
    assert clock.shift_minutes == -60 and clock.end == pd.Timestamp("2015-10-25T04:00Z")
    assert step.add_m == pytest.approx(-0.11) and step.end is None
    empty = draft_corrections(offsets.iloc[:0], shifts.iloc[:0], source="r.csv",
                              record_start=pd.Timestamp("2012-01-01", tz="UTC"),
                              record_end=pd.Timestamp("2023-12-31", tz="UTC"))
    assert "Nothing was detected" in empty
