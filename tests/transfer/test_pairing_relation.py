"""Pairing of skew surges tide by tide, the regression transfer and the reference's inference ratios."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from extremes.errors import DataError
from extremes.tide.harmonic import analyse_tide
from extremes.transfer import fit_relation, inference_from_reference, match_skew_surges, pair_overlap
from extremes.transfer.relation import block_ids, resample_relations
from extremes.transfer.simulate import MIXED_SITE_TIDE, REFERENCE_TIDE, _tide

M2_HOURS = 12.4206


def _storm_surges(n, rng, *, step_hours=M2_HOURS, start="2010-01-01"):
    """Smooth storm-like skew surges (AR(1) over tides) on a regular sequence of high-water times."""
    e = rng.normal(0.0, 0.1, n)
    x = np.empty(n)
    x[0] = e[0]
    for i in range(1, n):
        x[i] = 0.6 * x[i - 1] + e[i]
    times = pd.Timestamp(start, tz="UTC") + pd.to_timedelta(np.arange(n) * step_hours, unit="h")
    return pd.Series(x, index=times)


def test_pairing_finds_the_lag_of_the_shared_storms():
    # the site's tides fall 3.1 h after the reference's and its skew surge is that of the reference tide
    # two tides earlier (storms reach the site 24.8 h later): the lag scan must pick +24.8 h +/- one step
    rng = np.random.default_rng(4)
    ref = _storm_surges(1500, rng)
    site_values = 0.8 * np.roll(ref.to_numpy(), 2) + rng.normal(0, 0.02, ref.size)
    site = pd.Series(site_values[2:], index=ref.index[2:] + pd.Timedelta(hours=3.1))
    pairs = pair_overlap(site, ref, max_lag_hours=40.0, step_hours=1.0)
    # every lag within half a tidal cycle of 27.9 h pairs the same tides: the middle of that run is taken
    assert abs(pairs.lag_hours - (2 * M2_HOURS + 3.1)) <= 1.0
    assert pairs.correlation > 0.95
    assert pairs.n_pairs == site.size
    assert set(pairs.lag_scan.columns) == {"lag_hours", "n_pairs", "correlation"}


def test_matching_respects_the_window_and_reports_nothing_outside_the_overlap():
    rng = np.random.default_rng(1)
    ref = _storm_surges(200, rng)
    later = pd.Series(np.zeros(100), index=ref.index[-1] + pd.to_timedelta(np.arange(1, 101) * M2_HOURS, unit="h"))
    assert match_skew_surges(later, ref).empty
    with pytest.raises(DataError, match="overlap"):
        pair_overlap(later, ref)
    # inside the overlap with a window of 1 h, tides 3 h apart are not paired
    shifted = pd.Series(ref.to_numpy(), index=ref.index + pd.Timedelta(hours=3))
    assert match_skew_surges(shifted, ref, window_hours=1.0).empty
    assert len(match_skew_surges(shifted, ref, lag_hours=3.0, window_hours=1.0)) == ref.size


def test_regression_recovers_the_line_and_keeps_the_spread():
    # y = 0.05 + 0.8 x + e, e ~ N(0, 0.05): least squares (scipy.stats.linregress) recovers a, b; the synthetic
    # values a + b x + drawn residual have the observed spread of y
    rng = np.random.default_rng(7)
    x = rng.gamma(2.0, 0.1, 4000)
    y = 0.05 + 0.8 * x + rng.normal(0, 0.05, x.size)
    rel = fit_relation(y, x)
    assert rel.slope == pytest.approx(0.8, abs=0.02)
    assert rel.intercept_m == pytest.approx(0.05, abs=0.01)
    assert rel.residual_sd_m == pytest.approx(0.05, rel=0.05)
    draws = rel.draw(x, np.random.default_rng(1))
    assert np.std(draws) == pytest.approx(np.std(y), rel=0.03)
    assert rel.upper_spread_ratio == pytest.approx(1.0, abs=0.15)


def test_residuals_are_drawn_by_band_so_a_growing_spread_is_kept():
    rng = np.random.default_rng(3)
    x = rng.uniform(0, 1, 5000)
    y = x + rng.normal(0, 1, x.size) * (0.01 + 0.2 * x)  # spread grows with x
    rel = fit_relation(y, x)
    assert rel.upper_spread_ratio > 1.3
    top = np.full(2000, 0.95)
    low = np.full(2000, 0.05)
    draw_rng = np.random.default_rng(0)
    assert np.std(rel.draw(top, draw_rng)) > 3 * np.std(rel.draw(low, draw_rng))


def test_block_resamples_scatter_the_slope_about_the_fit():
    rng = np.random.default_rng(11)
    ref = _storm_surges(1400, rng)
    y = 0.7 * ref.to_numpy() + rng.normal(0, 0.05, ref.size)
    blocks = block_ids(ref.index.asi8, block_days=10.0)
    assert blocks.max() + 1 == pytest.approx(1400 * M2_HOURS / 240, abs=1.5)
    rels = resample_relations(y, ref.to_numpy(), blocks, n_resamples=200, rng=np.random.default_rng(0))
    slopes = np.array([r.slope for r in rels])
    assert len(rels) == 200
    assert np.mean(slopes) == pytest.approx(0.7, abs=0.03)
    assert 0.005 < np.std(slopes) < 0.08


def test_too_few_pairs_refused():
    with pytest.raises(DataError, match="pairs"):
        fit_relation(np.arange(10.0), np.arange(10.0))


def test_short_site_record_infers_p1_and_k2_with_the_reference_ratios():
    # METHODS sec. 4: P1 (next to K1) and K2 (next to S2) need 183 days; in 90 days they are inferred with the
    # ratio and phase difference of a long reference. The simulated gauges share P1/K1 = 1/3 and
    # K2/S2 = 0.263-0.275 with phase differences of -2 deg, so the site's inferred P1 and K2 land near truth.
    times = pd.date_range("2020-01-01", periods=24 * 400, freq="1h", tz="UTC")
    ref = pd.Series(_tide(times, REFERENCE_TIDE, 0.0), index=times)
    ref_model = analyse_tide(ref)
    infer = inference_from_reference(ref_model)
    assert infer["P1"][0] == "K1" and infer["P1"][1] == pytest.approx(0.04 / 0.12, rel=0.02)
    assert infer["P1"][2] == pytest.approx(358.0, abs=1.0)
    short = times[: 24 * 90]
    site = pd.Series(_tide(short, MIXED_SITE_TIDE, 0.0), index=short)
    model = analyse_tide(site, infer=infer)
    p1, k2 = model.get("P1"), model.get("K2")
    assert p1.inferred and k2.inferred
    assert p1.amplitude_m == pytest.approx(MIXED_SITE_TIDE["P1"][0], abs=0.01)
    assert k2.amplitude_m == pytest.approx(MIXED_SITE_TIDE["K2"][0], abs=0.01)
    assert model.get("K1").amplitude_m == pytest.approx(MIXED_SITE_TIDE["K1"][0], abs=0.01)
