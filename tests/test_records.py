"""Reading records: every layout, units, time zones, NetCDF, and the error cases."""
from __future__ import annotations

import gzip
import string

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from extremes.errors import DataError, ExtremesError
from extremes.records import GaugeRecord, read_record

UTC_TIMES = pd.DatetimeIndex(["2020-01-01T00:00Z", "2020-01-01T01:00Z", "2020-01-01T02:00Z"], name="time")
LEVELS = [1.23, -0.5, 2.0]


def write(path, text):
    path.write_text(text)
    return path


def assert_series(record, levels=LEVELS, times=UTC_TIMES):
    assert isinstance(record, GaugeRecord)
    assert record.water_level_m.index.equals(times)
    assert str(record.water_level_m.index.tz) == "UTC"
    np.testing.assert_array_equal(record.water_level_m.to_numpy(), levels)
    assert record.water_level_m.attrs["units"] == "m"


# ---------------------------------------------------------------------------------------------- layouts
@pytest.mark.parametrize("sep", [",", ";", "\t", " ", "   "])
def test_separators(tmp_path, sep):
    rows = [f"2020-01-01T0{i}:00Z{sep}{v}" for i, v in enumerate(LEVELS)]
    path = write(tmp_path / "r.txt", f"time{sep}level\n" + "\n".join(rows) + "\n")
    record = read_record(path)
    assert_series(record)
    assert record.interval == pd.Timedelta(hours=1)
    assert record.meta["time_columns"] == ["time"] and record.meta["level_column"] == "level"


def test_gzip_and_comment_lines(tmp_path):
    text = "# station: test\n# datum: chart datum\ntime,level\n" + "\n".join(
        f"2020-01-01T0{i}:00Z,{v}" for i, v in enumerate(LEVELS)) + "\n"
    path = tmp_path / "r.csv.gz"
    path.write_bytes(gzip.compress(text.encode()))
    record = read_record(path, datum="CD")
    assert_series(record)
    assert record.datum == "CD" and record.water_level_m.attrs["datum"] == "CD"
    assert len(record.sha256) == 64
    assert record.meta["first_data_line"] == 4


def test_sha256_is_of_the_file_bytes(tmp_path):
    import hashlib

    path = write(tmp_path / "r.csv", "time,level\n2020-01-01T00:00Z,1\n2020-01-01T01:00Z,2\n")
    assert read_record(path).sha256 == hashlib.sha256(path.read_bytes()).hexdigest()


def test_decimal_comma_semicolon(tmp_path):
    path = write(tmp_path / "r.csv", "time;level\n2020-01-01T00:00Z;1,23\n2020-01-01T01:00Z;-0,5\n"
                                      "2020-01-01T02:00Z;2,0\n")
    assert_series(read_record(path, decimal=","))


def test_date_and_time_columns_explicit_and_detected(tmp_path):
    path = write(tmp_path / "r.csv", "date,clock,level\n2020-01-01,00:00,1.23\n2020-01-01,01:00,-0.5\n"
                                      "2020-01-01,02:00,2.0\n")
    explicit = read_record(path, time_columns=["date", "clock"], utc_offset="+00:00")
    assert_series(explicit)
    detected = read_record(path, utc_offset="+00:00")
    assert detected.meta["time_columns"] == ["date", "clock"]
    assert_series(detected)


def test_time_format_and_whitespace_date_time(tmp_path):
    path = write(tmp_path / "r.txt", "date time level\n01/01/2020 00:00 1.23\n01/01/2020 01:00 -0.5\n"
                                      "01/01/2020 02:00 2.0\n")
    record = read_record(path, time_columns=["date", "time"], time_format="%d/%m/%Y %H:%M",
                         utc_offset="+00:00")
    assert_series(record)


def test_headerless_file(tmp_path):
    path = write(tmp_path / "r.csv", "".join(f"2020-01-01T0{i}:00Z,{v}\n" for i, v in enumerate(LEVELS)))
    record = read_record(path)
    assert_series(record)
    assert record.meta["header"] is False


def test_level_column_chosen_by_name_among_numeric(tmp_path):
    path = write(tmp_path / "r.csv", "time,quality,water_level\n2020-01-01T00:00Z,1,1.23\n"
                                      "2020-01-01T01:00Z,1,-0.5\n2020-01-01T02:00Z,2,2.0\n")
    assert_series(read_record(path))
    assert_series(read_record(path, level_column="water_level"))


# ---------------------------------------------------------------------------------------------- units
@pytest.mark.parametrize("units,values,expected", [
    ("cm", ["123", "-50", "200"], [1.23, -0.5, 2.0]),
    ("mm", ["1230", "-500", "2000"], [1.23, -0.5, 2.0]),
    ("m", ["1.23", "-0.5", "2.0"], [1.23, -0.5, 2.0]),
])
def test_metric_units_exact(tmp_path, units, values, expected):
    path = write(tmp_path / "r.csv", "time,level\n" + "".join(
        f"2020-01-01T0{i}:00Z,{v}\n" for i, v in enumerate(values)))
    # exact: 123 cm is the float nearest to 1.23 m
    np.testing.assert_array_equal(read_record(path, units=units).water_level_m.to_numpy(), expected)


def test_feet_are_international_feet(tmp_path):
    # 1 ft = 0.3048 m exactly (international yard and pound agreement, 1959) [CP]
    path = write(tmp_path / "r.csv", "time,level\n2020-01-01T00:00Z,10\n2020-01-01T01:00Z,-3.5\n")
    level = read_record(path, units="ft").water_level_m.to_numpy()
    np.testing.assert_allclose(level, [3.048, -1.0668], rtol=0, atol=1e-15)


def test_missing_codes_match_numerically_in_file_units(tmp_path):
    path = write(tmp_path / "r.csv", "time,level\n2020-01-01T00:00Z,-99\n2020-01-01T01:00Z,-99.0\n"
                                      "2020-01-01T02:00Z,123\n2020-01-01T03:00Z,\n2020-01-01T04:00Z,9999\n")
    record = read_record(path, units="cm", missing=[-99.0, 9999])
    level = record.water_level_m.to_numpy()
    assert np.isnan(level[[0, 1, 3, 4]]).all() and level[2] == 1.23
    assert record.is_missing_code.tolist() == [True, True, False, False, True]
    assert record.meta["n_missing_code"] == {"-99": 2, "9999": 1}
    assert record.meta["n_empty"] == 1


def test_rows_kept_in_file_order_with_duplicates(tmp_path):
    path = write(tmp_path / "r.csv", "time,level\n2020-01-01T01:00Z,1\n2020-01-01T00:00Z,2\n"
                                      "2020-01-01T00:00Z,2\n")
    record = read_record(path)
    assert record.water_level_m.tolist() == [1.0, 2.0, 2.0]
    assert record.water_level_m.index[0] == pd.Timestamp("2020-01-01T01:00Z")


# ---------------------------------------------------------------------------------------------- time zones
def test_offset_stamps_are_converted_to_utc(tmp_path):
    path = write(tmp_path / "r.csv", "time,level\n2020-01-01T10:00+10:00,1\n2020-01-01T11:00+10:00,2\n")
    record = read_record(path)
    assert record.water_level_m.index[0] == pd.Timestamp("2020-01-01T00:00Z")


def test_mixed_offsets_all_aware(tmp_path):
    path = write(tmp_path / "r.csv", "time,level\n2020-01-01T10:00+10:00,1\n2020-01-01T01:00Z,2\n")
    index = read_record(path).water_level_m.index
    assert list(index) == [pd.Timestamp("2020-01-01T00:00Z"), pd.Timestamp("2020-01-01T01:00Z")]


def test_naive_stamps_with_utc_offset_equal_aware(tmp_path):
    aware = write(tmp_path / "a.csv", "time,level\n2020-01-01T10:00+10:00,1\n2020-01-01T11:00+10:00,2\n")
    naive = write(tmp_path / "n.csv", "time,level\n2020-01-01T10:00,1\n2020-01-01T11:00,2\n")
    a = read_record(aware).water_level_m
    n = read_record(naive, utc_offset="+10:00").water_level_m
    pd.testing.assert_series_equal(a, n)
    west = read_record(naive, utc_offset="-03:30").water_level_m
    assert west.index[0] == pd.Timestamp("2020-01-01T13:30Z")


def test_naive_stamps_refused_naming_the_option(tmp_path):
    path = write(tmp_path / "n.csv", "time,level\n2020-01-01T10:00,1\n2020-01-01T11:00,2\n")
    with pytest.raises(DataError, match="--utc-offset"):
        read_record(path)


def test_naive_mixed_with_aware_refused(tmp_path):
    path = write(tmp_path / "n.csv", "time,level\n2020-01-01T10:00Z,1\n2020-01-01T11:00,2\n")
    with pytest.raises(DataError, match="line 3"):
        read_record(path)


# ---------------------------------------------------------------------------------------------- NetCDF
def _netcdf(path, *, units="m", extra=True, standard_name="sea_surface_height_above_reference_datum"):
    import xarray as xr

    times = pd.date_range("2020-01-01", periods=3, freq="h")
    data = {"zeta": ("time", np.array(LEVELS) * {"m": 1, "cm": 100, "mm": 1000}[units],
                     {"units": units, "standard_name": standard_name})}
    if extra:
        data["temperature"] = ("time", np.array([10.0, 11.0, 12.0]), {"units": "degC"})
    xr.Dataset(data, coords={"time": times}).to_netcdf(path)
    return path


def test_netcdf_chosen_by_standard_name_with_units_attribute(tmp_path):
    record = read_record(_netcdf(tmp_path / "r.nc", units="cm"))
    assert record.meta["variable"] == "zeta"
    np.testing.assert_array_equal(record.water_level_m.to_numpy(), LEVELS)
    assert record.water_level_m.index.equals(UTC_TIMES)


def test_netcdf_variable_option_and_errors(tmp_path):
    path = _netcdf(tmp_path / "r.nc", standard_name="unknown")
    with pytest.raises(DataError, match="--variable"):
        read_record(path)
    assert read_record(path, variable="zeta").meta["variable"] == "zeta"
    with pytest.raises(DataError, match="available variables: 'zeta', 'temperature'"):
        read_record(path, variable="nope")
    with pytest.raises(DataError, match="units 'degC'"):
        read_record(path, variable="temperature")


def test_netcdf_single_variable(tmp_path):
    record = read_record(_netcdf(tmp_path / "r.nc", extra=False, standard_name="x"))
    np.testing.assert_array_equal(record.water_level_m.to_numpy(), LEVELS)


# ---------------------------------------------------------------------------------------------- errors
@pytest.mark.parametrize("text,pattern", [
    ("", "empty file"),
    ("\n\n", "empty file"),
    ("time,level\n", "header only"),
    ("time,level\n2020-01-01T00:00Z,abc\n2020-01-01T01:00Z,def\n", "no numeric column"),
    ("time,level\n2020-01-01T00:00Z,1\n2020-01-01T01:00Z,2\nnot a time,3\n", "line 4"),
    ("# c\ntime,level\n2020-01-01T00:00Z,1\n\n2020-13-45T01:00Z,2\n", "line 5"),
    ("time,level\n2020-01-01T00:00Z,1\n2020-01-01T01:00Z,2,3,4\n", "ragged rows"),
    ("a,b,c\n2020-01-01T00:00Z,1,2\n", "several numeric columns .'b', 'c'.; choose the level column with "
                                         "--level-column"),
    ("t1,t2,level\n2020-01-01T00:00Z,2020-01-01T00:00Z,1\n", "several columns hold time stamps.*--time-column"),
    ("a,b\n1,2\n3,4\n", "no column of time stamps"),
    ("time,level\n2020-01-01T00:00Z,1\n2020-01-01T01:00Z,x\n", "line 3, column 'level': expected a number"),
])
def test_bad_text_files(tmp_path, text, pattern):
    path = write(tmp_path / "bad.csv", text)
    with pytest.raises(DataError, match=pattern) as info:
        read_record(path)
    assert "bad.csv" in str(info.value)


def test_unknown_column_lists_available(tmp_path):
    path = write(tmp_path / "r.csv", "time,level\n2020-01-01T00:00Z,1\n")
    with pytest.raises(DataError, match="no column named 'height'; available columns: 'time', 'level'"):
        read_record(path, level_column="height")
    with pytest.raises(DataError, match="no column named 'when'"):
        read_record(path, time_columns=["when"])


def test_binary_folder_and_missing_file(tmp_path):
    junk = tmp_path / "junk.bin"
    junk.write_bytes(bytes(range(256)) * 4)
    with pytest.raises(DataError, match="binary"):
        read_record(junk)
    with pytest.raises(DataError, match="folder"):
        read_record(tmp_path)
    with pytest.raises(DataError, match="no such file"):
        read_record(tmp_path / "absent.csv")


def test_bad_option_values(tmp_path):
    path = write(tmp_path / "r.csv", "time,level\n2020-01-01T00:00Z,1\n")
    with pytest.raises(DataError, match="units"):
        read_record(path, units="furlong")
    with pytest.raises(DataError, match="--utc-offset"):
        read_record(path, utc_offset="10")


# ---------------------------------------------------------------------------------------------- fuzzing
@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(data=st.binary(max_size=400))
def test_random_bytes_give_only_extremes_errors(tmp_path, data):
    path = tmp_path / "fuzz.bin"
    path.write_bytes(data)
    try:
        read_record(path)
    except ExtremesError:
        pass


_CELL = st.one_of(
    st.sampled_from(["2020-01-01T00:00Z", "2020-01-01T01:00+10:00", "2020-01-01 02:00", "1.5", "-99", "",
                     "nan", "abc", "time", "level", "1,5", "2020-02-30T00:00Z"]),
    st.text(alphabet=string.printable, max_size=8),
)


@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(rows=st.lists(st.lists(_CELL, min_size=1, max_size=4), max_size=8),
       sep=st.sampled_from([",", ";", "\t", " "]), utc=st.booleans())
def test_random_csv_like_text_gives_only_extremes_errors(tmp_path, rows, sep, utc):
    path = tmp_path / "fuzz.csv"
    path.write_text("\n".join(sep.join(row) for row in rows))
    try:
        record = read_record(path, utc_offset="+00:00" if utc else None)
    except ExtremesError:
        return
    assert str(record.water_level_m.index.tz) == "UTC"


def test_byte_order_mark_and_windows_line_ends(tmp_path):
    path = tmp_path / "r.csv"
    path.write_bytes(b"\xef\xbb\xbftime,level\r\n" + b"".join(
        f"2020-01-01T0{i}:00Z,{v}\r\n".encode() for i, v in enumerate(LEVELS)))
    assert_series(read_record(path))


def test_truncated_gzip(tmp_path):
    path = tmp_path / "r.csv.gz"
    path.write_bytes(gzip.compress(b"time,level\n" + b"2020-01-01T00:00Z,1\n" * 50)[:40])
    with pytest.raises(DataError, match="r.csv.gz"):
        read_record(path)


def test_blank_header_name(tmp_path):
    # found by the fuzz test: a first row with a stamp and an empty field is a header with a blank name
    path = write(tmp_path / "r.csv", "time,\n2020-01-01T00:00Z,1.5\n2020-01-01T01:00Z,2\n")
    record = read_record(path)
    assert record.meta["level_column"] == "column2"
    assert record.water_level_m.tolist() == [1.5, 2.0]
