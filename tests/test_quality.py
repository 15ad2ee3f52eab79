"""Quality control: each fault injected into a clean synthetic tide is found exactly where it was put.

The synthetic record is a sum of two tidal sinusoids (M2-like 12.42 h and S2-like 12.00 h periods) with
Gaussian noise from a seeded generator. The robust scale uses 1.4826 x MAD, the consistency constant of the
median absolute deviation for Gaussian data [CP; F. R. Hampel, J. Amer. Statist. Assoc. 69 (1974), from
memory].
"""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from extremes.errors import DataError, ExtremesWarning
from extremes.quality import FLAGS, QualityReport, check_record, completeness_by_year
from extremes.records import GaugeRecord, read_record

SIX_MIN = pd.Timedelta(minutes=6)


def tide(times, a1=1.0, a2=0.3):
    hours = (times - pd.Timestamp("2000-01-01", tz="UTC")) / pd.Timedelta(hours=1)
    hours = np.asarray(hours, dtype=float)
    return a1 * np.cos(2 * np.pi * hours / 12.42) + a2 * np.cos(2 * np.pi * hours / 12.0 + 1.0)


def clean(n=7200, step=SIX_MIN, noise=0.02, seed=1, start="2000-01-01", decimals=3, **amplitudes):
    times = pd.date_range(start, periods=n, freq=step, tz="UTC", name="time")
    rng = np.random.default_rng(seed)
    values = np.round(tide(times, **amplitudes) + noise * rng.standard_normal(n), decimals)
    return times, values


def record(times, values, missing_code=None, interval=SIX_MIN, datum="TEST"):
    series = pd.Series(np.asarray(values, dtype=float), index=pd.DatetimeIndex(times, name="time"))
    mask = np.zeros(len(series), dtype=bool) if missing_code is None else np.asarray(missing_code)
    return GaugeRecord(water_level_m=series, datum=datum, source="synthetic", sha256="", interval=interval,
                       is_missing_code=mask)


def positions(report, flag):
    return np.flatnonzero(report.flags.to_numpy() == flag).tolist()


def test_clean_series_has_no_flags():
    times, values = clean()
    report = check_record(record(times, values))
    assert report.counts["ok"] == len(values)
    assert report.regular and len(report.gaps) == 0 and len(report.out_of_order_rows) == 0
    assert report.level_m.index.equals(times)


@pytest.fixture(scope="module")
def faulty():
    times, values = clean()
    times, values = list(times), values.copy()
    values[100] += 1.0                       # spike
    values[2000:2015] = values[2000]         # flat line: 15 readings over 1.4 h
    code = np.zeros(len(values), dtype=bool)
    code[3000] = True                        # sentinel (declared missing code)
    values[3000] = np.nan
    values[3100] = np.nan                    # empty value
    values[4000] = 50.0                      # far outside the record's range
    frame = pd.DataFrame({"time": times, "value": values, "code": code})
    frame = frame.drop(index=range(6500, 6530))                    # a gap of 30 samples = 3.0 h
    frame.loc[6000], frame.loc[6001] = frame.loc[6001].copy(), frame.loc[6000].copy()  # out of order
    rows = [frame.loc[:5000], frame.loc[[5000]],                    # identical duplicate of row 5000
            frame.loc[5001:5100], frame.loc[[5100]].assign(value=frame.loc[5100, "value"] + 0.5),
            frame.loc[5101:]]
    frame = pd.concat(rows, ignore_index=True)
    rec = record(frame["time"], frame["value"], frame["code"].to_numpy())
    return frame, rec, check_record(rec)


def test_each_fault_found_at_its_row(faulty):
    frame, _, report = faulty
    assert positions(report, "spike") == [100]
    assert positions(report, "flatline") == list(range(2000, 2015))
    assert positions(report, "sentinel") == [3000]
    assert positions(report, "missing") == [3100]
    assert positions(report, "out_of_range") == [4000]
    assert positions(report, "duplicate") == [5001]
    assert positions(report, "conflicting_duplicate") == [5101, 5102]
    # rows 6000/6001 were swapped: the second is earlier than the first (positions shift by the 2 inserts)
    assert report.out_of_order_rows.tolist() == [6003]
    assert report.counts["ok"] == len(frame) - 1 - 15 - 1 - 1 - 1 - 1 - 2


def test_counts_add_up_and_record_object(faulty):
    frame, _, report = faulty
    assert sum(report.counts.values()) == len(frame) == report.n_samples
    out = report.to_dict()
    assert out["n_samples"] == len(frame)
    assert out["n_missing"] == 2 and out["n_flagged"] == 1 + 15 + 1 + 1 + 2
    assert out["n_missing"] + out["n_flagged"] + out["n_ok"] == out["n_samples"]
    for name in ("duplicate", "sentinel", "spike", "flatline", "gap_hours"):
        assert name in out["flags"]
    # gaps are spans without a reading: the 30 deleted rows, and the sentinel and empty rows (0.1 h each)
    assert out["flags"]["gap_hours"] == pytest.approx(3.0 + 0.1 + 0.1)
    assert out["n_gaps"] == 3
    assert {"start": "2000-01-28T02:00:00Z", "end": "2000-01-28T04:54:00Z", "hours": 3.0} in out["gaps"]
    assert out["interval_minutes"] == 6.0 and out["units"] == "m" and out["datum"] == "TEST"
    assert out["faults"]["spike"]["rows"] == [101]  # 1-based
    assert out["faults"]["spike"]["times"] == ["2000-01-01T10:00:00Z"]


def test_json_is_nan_free(faulty):
    import json

    json.dumps(faulty[2].to_dict(), allow_nan=False)


def test_clean_series_sorted_regular_with_flagged_nan(faulty):
    frame, rec, report = faulty
    level = report.level_m
    assert level.index.is_monotonic_increasing and level.index.is_unique
    assert (np.diff(level.index.asi8) == np.diff(level.index.asi8)[0]).all()
    assert len(level) == 7200  # the full grid, gap rows included
    assert level.attrs == {"units": "m", "datum": "TEST"}
    times = frame["time"]
    for row in [100, 2000, 2014, 3000, 3100, 4000, 5101]:
        assert np.isnan(level[times.iloc[row]]), row
    assert level[times.iloc[5000]] == frame["value"].iloc[5000]  # the first copy of a duplicate stays
    gap = pd.date_range("2000-01-28T02:00Z", "2000-01-28T04:54Z", freq="6min")
    assert level[gap].isna().all()
    assert np.isfinite(level).sum() == report.counts["ok"]


def test_flag_precedence_sentinel_over_duplicate():
    times, values = clean(n=200)
    t = list(times) + [times[50]]
    v = list(values) + [-99.0]
    code = np.zeros(201, dtype=bool)
    code[200] = True
    v[200] = np.nan
    report = check_record(record(t, v, code))
    assert positions(report, "sentinel") == [200] and report.counts["duplicate"] == 0


def test_flatline_rule_hourly_four_readings_but_not_three():
    times, values = clean(n=24 * 30, step=pd.Timedelta(hours=1))
    four, three = values.copy(), values.copy()
    four[200:204] = four[200]
    three[200:203] = three[200]
    hourly = pd.Timedelta(hours=1)
    assert positions(check_record(record(times, four, interval=hourly)), "flatline") == [200, 201, 202, 203]
    assert check_record(record(times, three, interval=hourly)).counts["flatline"] == 0


def test_slack_water_at_cm_resolution_not_flat():
    # 6-minute readings to the cm repeat 3-5 times at high and low water; a flat line must last >= 1 h
    times, values = clean(n=24 * 10 * 30, noise=0.0, decimals=2)
    values_run = np.diff(np.flatnonzero(np.diff(values) != 0)).max()
    assert values_run >= 4  # the test series does hold runs of >= 4 equal readings
    assert check_record(record(times, values)).counts["flatline"] == 0


def test_range_limits_scale_with_the_record():
    times, values = clean()
    small = check_record(record(times, values))
    large = check_record(record(times, values * 10))
    np.testing.assert_allclose(np.array(large.range_m), 10 * np.array(small.range_m), rtol=1e-12)
    assert large.counts["out_of_range"] == 0  # a macro-tidal record (range ~26 m) is not flagged
    assert large.counts["ok"] == small.counts["ok"]


def test_irregular_sampling_reported():
    times, values = clean(n=500)
    shifted = times.to_series().copy()
    shifted.iloc[100] += pd.Timedelta(minutes=2)
    with pytest.warns(ExtremesWarning, match="irregular sampling"):
        report = check_record(record(pd.DatetimeIndex(shifted), values))
    assert not report.regular
    assert report.irregular_fraction == pytest.approx(1 / 500)
    assert report.level_m.index.is_monotonic_increasing and len(report.level_m) == 500


def test_completeness_by_year_exact():
    times, values = clean(n=24 * (365 + 366), step=pd.Timedelta(hours=1), start="2019-01-01")
    keep = ~((times >= "2020-01-01") & (times < "2020-02-01"))
    report = check_record(record(times[keep], values[keep], interval=pd.Timedelta(hours=1)))
    assert report.completeness_by_year.to_dict() == {2019: 1.0, 2020: (8784 - 744) / 8784}
    assert report.complete_years(0.9) == [2019, 2020]
    assert report.complete_years(0.95) == [2019]
    water = completeness_by_year(report.level_m, water_year_start_month=7)
    assert water.index.tolist() == [2018, 2019, 2020]
    assert water[2019] == pytest.approx((8784 - 744) / 8784)  # Jul 2019 - Jun 2020 has 366 days


def test_datum_shift_found_with_date_and_size():
    hourly = pd.Timedelta(hours=1)
    times, values = clean(n=24 * 365 * 8, step=hourly, start="2010-01-01", noise=0.05, seed=3)
    years = np.asarray((times - times[0]) / pd.Timedelta(days=365.25), dtype=float)
    rng = np.random.default_rng(4)
    # trend 3 mm/yr, a seasonal cycle, and month-to-month weather noise
    month = np.asarray(times.year * 12 + times.month)
    weather = rng.normal(0, 0.03, month.max() - month.min() + 1)[month - month.min()]
    base = values + 0.003 * years + 0.08 * np.cos(2 * np.pi * years) + weather
    stepped = base + np.where(times >= "2014-07-01", 0.15, 0.0)
    report = check_record(record(times, stepped, interval=hourly))
    shifts = report.datum_shifts
    assert len(shifts) == 1
    assert abs(shifts["time"].iloc[0] - pd.Timestamp("2014-07-01", tz="UTC")) <= pd.Timedelta(days=31)
    assert shifts["size_m"].iloc[0] == pytest.approx(0.15, abs=0.03)
    assert len(check_record(record(times, base, interval=hourly)).datum_shifts) == 0


def test_with_residual_spikes_hourly():
    hourly = pd.Timedelta(hours=1)
    times, values = clean(n=24 * 60, step=hourly, noise=0.01)
    values[500] += 0.4  # too small for the raw test at hourly sampling, clear in the residual
    rec = record(times, values, interval=hourly)
    raw = check_record(rec)
    assert raw.counts["spike"] == 0
    residual = raw.level_m - tide(raw.level_m.index)
    refined = raw.with_residual_spikes(residual)
    assert positions(refined, "spike") == [500]
    assert np.isnan(refined.level_m.iloc[500]) and np.isfinite(raw.level_m.iloc[500])
    assert sum(refined.counts.values()) == len(values)
    assert isinstance(refined, QualityReport)
    with pytest.raises(DataError, match="naive"):
        raw.with_residual_spikes(residual.tz_localize(None))


def test_read_and_check_a_file(tmp_path):
    path = tmp_path / "r.csv"
    path.write_text("time,level\n2020-01-01T00:00Z,1.0\n2020-01-01T01:00Z,-999\n2020-01-01T02:00Z,1.2\n"
                    "2020-01-01T02:00Z,1.2\n2020-01-01T05:00Z,0.9\n")
    report = check_record(read_record(path, missing=[-999]))
    assert report.counts["sentinel"] == 1 and report.counts["duplicate"] == 1
    assert report.gap_hours == pytest.approx(1.0 + 2.0)  # 01:00 (sentinel) and 03:00-04:00
    assert set(FLAGS) <= set(report.counts)


def test_bad_inputs():
    with pytest.raises(DataError, match="GaugeRecord"):
        check_record(pd.Series([1.0]))
    times, values = clean(n=10)
    with pytest.raises(DataError, match="all missing"):
        check_record(record(times, np.full(10, np.nan)))
    with pytest.raises(DataError, match="spike_k"):
        check_record(record(times, values), spike_k=-1)
