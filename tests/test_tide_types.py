"""Storm clustering on every tide type and the tail-focused interaction test, against known truth.

Outside references: the simulated process of tests/tide_types_sim.py (truth from long simulation of the same
process), scipy.stats.genpareto (maximum-likelihood GPD fit), scipy.stats.chi2, and the METHODS sec. 6
periods (semidiurnal 12.4206 h, lunar day 24.8412 h).
"""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy import signal, stats

from extremes import surge
from extremes.errors import DataError
from extremes.joint.clustering import (
    cycle_positions,
    extremal_index_by_level,
    high_water_positions,
    positions_from_spacing,
    spring_neap_block_length,
)
from extremes.tail_dependence import _fit_gpd_bands, _storm_peaks, gpd_band_loglik, tail_dependence_test
from tests import tide_types_sim as sim

K1_DEG_PER_HOUR = 15.0410686  # METHODS sec. 2 [V: published speeds]
O1_DEG_PER_HOUR = 13.9430356
T0 = pd.Timestamp("2003-01-01", tz="UTC")


# ---------------------------------------------------------------------------------------------------------
# each skew surge indexed by its own high water
# ---------------------------------------------------------------------------------------------------------
@pytest.fixture(scope="module")
def diurnal_record():
    """60 days at 10 min of a diurnal tide (K1 0.5 m + O1 0.4 m) + 0.1 m, with a 3-day gap."""
    index = pd.date_range(T0, periods=60 * 144, freq="10min")
    hours = (index - T0) / pd.Timedelta(hours=1)

    def tide(h):
        return 0.5 * np.cos(np.radians(K1_DEG_PER_HOUR) * h) + 0.4 * np.cos(np.radians(O1_DEG_PER_HOUR) * h)

    fine_h = np.arange(-30.0, hours[-1] + 30.0, 2.0 / 60.0)
    fine = tide(fine_h)
    hi, lo = signal.find_peaks(fine)[0], signal.find_peaks(-fine)[0]
    pos = np.concatenate([hi, lo])
    tp = pd.DataFrame({"time": T0 + pd.to_timedelta(fine_h[pos], unit="h"), "level_m": fine[pos],
                       "kind": ["high"] * hi.size + ["low"] * lo.size}).sort_values("time")
    level = pd.Series(tide(np.asarray(hours)) + 0.1, index=index)
    level[(index >= T0 + pd.Timedelta(days=20)) & (index < T0 + pd.Timedelta(days=23))] = np.nan
    return level, tp


def test_high_water_index_counts_high_waters_of_a_diurnal_tide(diurnal_record):
    level, tp = diurnal_record
    skew = surge.skew_surges_from_turning_points(level, tp)
    steps = np.diff(skew["high_water_index"].to_numpy())
    # one high water a lunar day (24.84 h, METHODS sec. 6): consecutive cycles are one step apart
    spacing_h = np.diff(skew["time"].to_numpy()).astype("timedelta64[s]").astype(float) / 3600.0
    assert np.median(spacing_h) == pytest.approx(24.84, abs=1.0)
    assert np.all(steps[spacing_h < 30] == 1)
    # the 3-day gap leaves its missing high waters as missing positions
    gap = steps[spacing_h > 30]
    assert gap.size == 1 and gap[0] == round(spacing_h[spacing_h > 30][0] / 24.84)
    np.testing.assert_allclose(skew["skew_surge_m"], 0.1, atol=2e-3)
    # the spacing fallback and the lookup in the full high-water sequence agree with the column
    np.testing.assert_array_equal(positions_from_spacing(skew["time"]), skew["high_water_index"])
    all_hw = tp.loc[tp["kind"] == "high", "time"]
    np.testing.assert_array_equal(high_water_positions(skew["time"], all_hw), skew["high_water_index"])
    # a fixed 12.42-h step (the former rule) would put consecutive diurnal cycles two steps apart
    assert np.median(np.diff(cycle_positions(pd.DatetimeIndex(skew["time"]), step_hours=12.4206))) == 2


def test_high_water_positions_rejects_unmatched_times():
    hw = T0 + pd.to_timedelta(np.arange(10) * 24.84, unit="h")
    with pytest.raises(DataError, match="more than"):
        high_water_positions(pd.DatetimeIndex([T0 + pd.Timedelta(hours=12)]), hw)


def _true_theta(kind, levels, *, years=300, seed=5, run_hours=96.0):
    """Extremal index of the simulated total level at each level: clusters per exceedance (runs
    declustering with a gap longer than any storm), from a long simulation of the same process."""
    rng = np.random.default_rng(seed)
    hw = sim.nodal_set(kind).to_numpy()
    step = sim.SPACING_HOURS[kind]
    k = np.arange(int(years * sim.YEAR_DAYS * 24 / step))
    total = hw[k % hw.size] + sim.storm_surge(k * step, rng)
    run = int(np.ceil(run_hours / step))
    out = []
    for z in levels:
        idx = np.flatnonzero(total > z)
        out.append(np.count_nonzero(np.concatenate([[True], np.diff(idx) > run])) / idx.size)
    return np.array(out)


@pytest.mark.parametrize("kind", ["mixed", "diurnal"])
def test_extremal_index_by_level_follows_truth_on_mixed_and_diurnal_tides(kind):
    # [C] truth: clusters per exceedance of a 300-year simulation of the process; estimate: 20 years of it,
    # each skew surge laid on the tide sequence by its own high-water index
    hw = sim.nodal_set(kind)
    rec = sim.record(kind, 20, seed=1)
    block = spring_neap_block_length(hw.size / sim.NODAL_YEARS)
    assert block == (57 if kind == "mixed" else 29)
    table = extremal_index_by_level(hw.to_numpy(), rec["skew_surge_m"].to_numpy(), rec["high_water_index"].to_numpy(),
                                    n_offsets=16, block_length=block)
    levels = table["level_m"].to_numpy()[::4]
    truth = _true_theta(kind, levels)
    np.testing.assert_allclose(table["theta"].to_numpy()[::4], truth, atol=0.1)
    assert truth.min() < 0.85  # storms do cluster at these levels


# ---------------------------------------------------------------------------------------------------------
# tail-focused interaction test
# ---------------------------------------------------------------------------------------------------------
def test_common_gpd_fit_matches_scipy():
    # reference: scipy.stats.genpareto.fit with the location fixed at 0 (maximum likelihood)
    y = stats.genpareto.rvs(0.1, scale=0.2, size=400, random_state=np.random.default_rng(3))
    params, loglik = _fit_gpd_bands(y, np.zeros(y.size, dtype=int), 1)
    c, _, scale = stats.genpareto.fit(y, floc=0.0)
    ref = float(np.sum(stats.genpareto.logpdf(y, c, scale=scale)))
    assert loglik == pytest.approx(ref, abs=1e-4)
    assert np.exp(params[0]) == pytest.approx(scale, rel=1e-3) and params[1] == pytest.approx(c, abs=2e-3)
    assert gpd_band_loglik(y, np.zeros(y.size, dtype=int), params, 1) == pytest.approx(loglik)


def test_tail_test_rarely_flags_independent_surge():
    # [C] surge independent of the tide: the test may reject on about alpha of the seeds, and a material
    # effect must also be present to call it dependent
    flagged = sum(tail_dependence_test(sim.record("semidiurnal", 15, seed)).dependent for seed in range(6))
    assert flagged <= 1


def test_tail_only_dependence_is_detected_and_its_size_matches_truth():
    # [C] storm peaks damped at high tide (factor 1 - 1.5 (tide - mean)); the background surge, the bulk of the
    # distribution, is independent of the tide, so the whole-distribution rank correlation is weak
    damping = 1.5
    results = [tail_dependence_test(sim.record("semidiurnal", 30, seed, damping_per_m=damping)) for seed in range(3)]
    assert all(r.dependent and r.significant and r.material for r in results)
    assert all(r.degrees_of_freedom == 4 and r.p_value == pytest.approx(stats.chi2.sf(r.lr_statistic, 4))
               for r in results)
    # truth of the effect: empirical 1-year storm-peak skew surge per band from 400 simulated years, the level
    # that storm peaks at the band's tides exceed once a year if every tide were in the band
    long = sim.record("semidiurnal", 250, 77, damping_per_m=damping, start_years=0.0)
    t_ns = pd.DatetimeIndex(long["time"]).asi8
    s, x = long["skew_surge_m"].to_numpy(), long["predicted_high_water_m"].to_numpy()
    edges = np.quantile(x, [0, 1 / 3, 2 / 3, 1])
    band = np.clip(np.searchsorted(edges[1:-1], x, side="right"), 0, 2)
    peaks = _storm_peaks(s, t_ns, np.quantile(s, 0.97), int(48 * 3.6e12))
    tides_per_year = s.size / 250.0
    true_1yr = []
    for b in (0, 2):
        n_b = np.count_nonzero(band == b)
        p = np.sort(s[peaks][band[peaks] == b])[::-1]
        true_1yr.append(p[int(round(n_b / tides_per_year)) - 1])
    true_effect = true_1yr[1] - true_1yr[0]
    assert true_effect < -0.15
    assert np.mean([r.effect_m for r in results]) == pytest.approx(true_effect, abs=0.08)
    whole = stats.kendalltau(long["skew_surge_m"].iloc[::4], long["predicted_high_water_m"].iloc[::4])
    assert abs(whole.statistic) < 0.05


def test_interaction_tests_decide_by_the_tail():
    rec = sim.record("semidiurnal", 30, 4, damping_per_m=1.5)
    hours = pd.date_range(rec["time"].iloc[0], rec["time"].iloc[-1], freq="1h")
    residual = pd.Series(np.random.default_rng(0).normal(0.0, 0.1, hours.size), index=hours)
    res = surge.interaction_tests_from_series(residual, rec["time"], rec)
    assert res.tail is not None and res.level_dependent == res.tail.dependent
    d = res.to_dict()
    assert d["level"]["decided_by"] == "tail" and d["tail"]["degrees_of_freedom"] == 4
    assert "tide band" in res.verdict


def test_tail_test_rejects_bad_input():
    with pytest.raises(DataError, match="columns"):
        tail_dependence_test(pd.DataFrame({"x": [1.0]}))
    rec = sim.record("diurnal", 0.1, 0)
    with pytest.raises(DataError, match="at least 100"):
        tail_dependence_test(rec)
    with pytest.raises(ValueError, match="threshold_quantile"):
        tail_dependence_test(sim.record("diurnal", 2, 0), threshold_quantile=0.3)


def test_stratified_method_sets_each_band_threshold_at_the_same_probability():
    # storm peaks damped at high tide leave the top band few exceedances of a high common threshold: each band's
    # threshold is its own quantile at the common threshold's exceedance probability, so every band holds its
    # share of exceedances (the level of each threshold checked against numpy.quantile)
    import warnings

    from extremes.errors import ExtremesWarning
    from extremes.joint import skew_surge_joint_probability

    rec = sim.record("semidiurnal", 15, 2, damping_per_m=1.5)
    hw_set = sim.nodal_set("semidiurnal").to_numpy()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ExtremesWarning)
        res = skew_surge_joint_probability(hw_set, rec, stratify="tide-band", threshold_quantile=0.98,
                                           n_bootstrap=0)
    x, hw = rec["skew_surge_m"].to_numpy(), rec["predicted_high_water_m"].to_numpy()
    edges = np.quantile(hw_set, [1 / 3, 2 / 3])
    band = np.searchsorted(edges, hw, side="right")
    u = np.quantile(x, 0.98)
    p = np.mean(x > u)
    for b in range(3):
        tail = res.tail[f"band {b + 1}"]
        assert tail["threshold_m"] == pytest.approx(np.quantile(x[band == b], 1 - p), abs=1e-12)
    assert res.tail["band 3"]["threshold_m"] < u < res.tail["band 1"]["threshold_m"]  # damped at high tide
    assert any("own" in note for note in res.notes)


def test_skew_surge_method_follows_the_interaction_test():
    import warnings

    from extremes.errors import ExtremesWarning
    from extremes.joint import skew_surge_method_for

    class Dependent:  # stands for InteractionTests with a material tail dependence
        level_dependent = True
        verdict = "tail depends on tide"

    rec = sim.record("semidiurnal", 12, 3)
    hw = sim.nodal_set("semidiurnal")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ExtremesWarning)
        res, stratified = skew_surge_method_for(hw, rec, interaction=Dependent(), n_bootstrap=0)
        assert stratified and set(res.tail) == {"band 1", "band 2", "band 3"}
        res, stratified = skew_surge_method_for(hw, rec, interaction=None, n_bootstrap=0)
        assert not stratified and set(res.tail) == {"all"}
        # per-band fits that cannot be made (200 bands of about 40 tides): the unstratified method, said so
        notes = []
        res, stratified = skew_surge_method_for(hw, rec, interaction=Dependent(), notes=notes, n_bands=200,
                                                n_bootstrap=0)
    assert not stratified and set(res.tail) == {"all"} and "failed" in notes[0]
