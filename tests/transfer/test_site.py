"""The transfer end to end on simulated gauge pairs (outside reference: the simulated process itself).

A 30-year reference and a 2-year site whose surge is 0.8 x the reference's two hours earlier plus local
noise (mixed tide at the site, semidiurnal at the reference): the site's 100-year level must lie within
0.3 m of its truth (a Monte Carlo of 20,000 years of the same storms) with the truth inside the interval.
A site whose storms are unrelated to the reference's must be refused with the correlation as reason.
"""
from __future__ import annotations

import warnings

import numpy as np
import pandas as pd
import pytest

from extremes import surge
from extremes.errors import ExtremesWarning
from extremes.tide import datums as tide_datums
from extremes.tide.harmonic import analyse_tide
from extremes.transfer import METHOD, inference_from_reference, prepare_reference, reference_joint_probability
from extremes.transfer.simulate import simulate_gauge_pair, true_site_levels

HALF_NODAL = pd.Timedelta(days=365.2425 * 18.61 / 2)


def site_inputs(level, reference):
    """What a study gives the transfer: skew surges, nodal-cycle high waters, tide model, interaction."""
    model = analyse_tide(level, infer=inference_from_reference(reference.tide_model))
    pad = pd.Timedelta(hours=30)
    turning = tide_datums.high_low_waters(model, level.index[0] - pad, level.index[-1] + pad)
    skew = surge.skew_surges_from_turning_points(level, turning)
    interaction = surge.interaction_tests_from_series(surge.non_tidal_residual(level, model),
                                                      turning.loc[turning["kind"] == "high", "time"], skew)
    epoch = level.index[-1]
    nodal = tide_datums.high_low_waters(model, epoch - HALF_NODAL, epoch + HALF_NODAL)
    highs = nodal.loc[nodal["kind"] == "high"]
    high_waters = pd.Series(highs["level_m"].to_numpy(), index=pd.DatetimeIndex(highs["time"]))
    return dict(site_skew=skew, high_waters=high_waters, site_model=model, site_interaction=interaction)


pytestmark = pytest.mark.slow  # simulations of 12-30 years and whole studies


@pytest.fixture(scope="module")
def related():
    pair = simulate_gauge_pair(reference_years=30.0, site_years=2.0, seed=3)
    return pair, prepare_reference(pair.reference_m)


def test_two_year_site_beside_thirty_year_reference_gives_its_100_year_level(related):
    pair, reference = related
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ExtremesWarning)
        result = reference_joint_probability(reference=reference, n_bootstrap=200, seed=5,
                                             **site_inputs(pair.site_m, reference))
    assert result.supported and result.verdict == "ok"
    assert result.curve.method == METHOD
    assert result.relation.slope == pytest.approx(0.8, abs=0.1)
    assert abs(result.overlap.lag_hours - 2.0) <= 6.5  # within the matching window of the true lag
    truth = true_site_levels(pair, [10.0, 100.0], epoch=pair.site_m.index[-1], years=20_000)
    row = result.curve.table([10.0, 100.0])
    assert np.all(np.abs(row["level_m"] - truth) < 0.3)
    assert row["lower_m"].iloc[1] <= truth[1] <= row["upper_m"].iloc[1]
    assert result.diagnostics["bootstrap_resamples_used"] >= 190
    assert result.synthetic_years == pytest.approx(30.0, abs=1.0)
    doc = result.to_dict()
    assert doc["relation"]["transfer"].startswith("least-squares regression")
    assert {f["check"] for f in doc["findings"]} >= {"overlap length", "skew-surge correlation", "overlap storms",
                                                     "tide-surge interaction"}


def test_unrelated_site_is_refused_with_the_correlation_as_reason(related):
    pair, reference = related
    other = simulate_gauge_pair(reference_years=30.0, site_years=2.0, seed=3, related=False)
    assert other.reference_m.equals(pair.reference_m)  # the same reference, a site with storms of its own
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ExtremesWarning)
        result = reference_joint_probability(reference=reference, n_bootstrap=50, seed=5,
                                             **site_inputs(other.site_m, reference))
    assert not result.supported
    refused = [f for f in result.findings if f.severity == "unreliable"]
    assert [f.check for f in refused] == ["skew-surge correlation"]
    assert "transfer refused" in refused[0].reason
    assert np.all(np.isnan(result.curve.upper_m))  # no interval for a refused transfer


def test_overlap_figure_is_a_png(related):
    from extremes.transfer.figure import overlap_figure_png

    pair, reference = related
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ExtremesWarning)
        result = reference_joint_probability(reference=reference, n_bootstrap=0, seed=5,
                                             **site_inputs(pair.site_m, reference))
    png = overlap_figure_png(result, dpi=40)
    assert png[:8] == b"\x89PNG\r\n\x1a\n" and len(png) > 2000
