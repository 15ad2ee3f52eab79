"""Sampling eras: found from the stamps alone, with exact boundaries, irregular stretches and gaps."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from extremes.quality import completeness_by_year
from extremes.sampling import eras_to_list, represented_years, sample_intervals_ns, sampling_eras


def _stamps():
    hourly = pd.date_range("2001-01-01", "2002-12-31 23:00", freq="h", tz="UTC")
    quarter = pd.date_range("2003-01-01 00:45", "2003-12-31 23:45", freq="15min", tz="UTC")
    six = pd.date_range("2004-01-01", "2004-06-30 23:54", freq="6min", tz="UTC")
    return hourly, quarter, six


def test_three_eras_with_exact_boundaries_despite_gaps():
    hourly, quarter, six = _stamps()
    times = hourly.append(quarter).append(six)
    rng = np.random.default_rng(3)
    times = times[rng.random(times.size) > 0.2]  # a fifth of the readings missing at random
    eras = sampling_eras(times)
    assert eras["interval"].tolist() == [pd.Timedelta("1h"), pd.Timedelta("15min"), pd.Timedelta("6min")]
    assert eras["regular"].all()
    # a stamp at a change that fits both spacings (00:00 after 23:45) may go to either era: one interval
    for era, first in zip(eras.itertuples(), (hourly, quarter, six)):
        kept = times[(times >= first[0]) & (times <= first[-1])]
        assert abs(era.start - kept[0]) <= pd.Timedelta("1h") and abs(era.end - kept[-1]) <= pd.Timedelta("15min")
    assert eras["n_stamps"].sum() == times.size
    listed = eras_to_list(eras)
    assert [e["interval_minutes"] for e in listed] == [60.0, 15.0, 6.0]


def test_irregular_stretch_is_its_own_era():
    hourly, _, _ = _stamps()
    rng = np.random.default_rng(4)
    start = pd.Timestamp("2003-01-01", tz="UTC")
    jitter = start + pd.to_timedelta(np.sort(rng.integers(0, 60 * 86400, 3000)), unit="s")
    after = pd.date_range("2003-03-02", "2003-06-30", freq="h", tz="UTC")
    eras = sampling_eras(hourly.append(pd.DatetimeIndex(jitter)).append(after))
    assert eras["regular"].tolist() == [True, False, True]
    assert eras["interval"].iloc[1] < pd.Timedelta("1h")


def test_each_sample_represents_its_era_interval():
    hourly, quarter, six = _stamps()
    times = hourly.append(quarter).append(six)
    weights = sample_intervals_ns(times)
    assert set(np.unique(weights)) == {3_600_000_000_000, 900_000_000_000, 360_000_000_000}
    series = pd.Series(1.0, index=times)
    # two hourly years + one 15-minute year + half a 6-minute year (2004 is a leap year: 182 days)
    expected = (2 * 365 * 24 + (365 * 96 - 3) / 4 + 182 * 240 / 10) / (365.2425 * 24)
    assert represented_years(series) == pytest.approx(expected, rel=1e-9)


def test_completeness_measured_against_each_era_interval():
    # METHODS sec. 14 / CONTRACT: completeness of a year against the interval of its own era(s)
    hourly, quarter, six = _stamps()
    series = pd.Series(1.0, index=hourly.append(quarter).append(six))
    completeness = completeness_by_year(series)
    assert completeness[2001] == pytest.approx(1.0) and completeness[2002] == pytest.approx(1.0)
    assert completeness[2003] == pytest.approx(1.0 - 3 / (365 * 96), abs=1e-9)
    assert completeness[2004] == pytest.approx(182 / 366, abs=1e-9)


def test_naive_times_refused():
    with pytest.raises(ValueError, match="tz-aware"):
        sampling_eras(pd.date_range("2001-01-01", periods=10, freq="h"))


@pytest.mark.parametrize("freq, n", [("h", 20_000), ("6min", 3_000), ("D", 400), ("10min", 3)])
def test_one_regular_grid_gives_the_month_search_era(freq, n, monkeypatch):
    """The one-pass era of a constant spacing equals the month-by-month search's (the shortcut is exact)."""
    import extremes.sampling as sampling

    times = pd.date_range("1994-01-01 00:07", periods=n, freq=freq, tz="UTC")
    fast = sampling_eras(times)
    monkeypatch.setattr(sampling, "_one_regular_era", lambda t: None)
    pd.testing.assert_frame_equal(fast, sampling_eras(times))
    assert len(fast) == 1 and fast["n_stamps"].iloc[0] == n
