"""Figures: each function on small synthetic data; checks against scipy where a number is drawn."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy import stats
from scipy.stats import mstats

from extremes.curves import DENSE_PERIODS_YEARS, ReturnLevelCurve
from extremes.errors import DataError
from extremes.report import figures

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"


def gumbel_curve(loc=3.0, scale=0.2, method="annual-maxima", definition="1/AEP"):
    level = stats.gumbel_r.isf(1.0 / DENSE_PERIODS_YEARS, loc=loc, scale=scale)
    return ReturnLevelCurve(method=method, periods_years=DENSE_PERIODS_YEARS, level_m=level,
                            lower_m=level - 0.1, upper_m=level + 0.2, period_definition=definition,
                            datum="TEST", epoch_year=2020.0)


@pytest.fixture(scope="module")
def hourly():
    """Sixty days of hourly M2 + K1 tide (speeds 28.984 and 15.041 deg/h) plus a smooth surge."""
    times = pd.date_range("2020-01-01", periods=24 * 60, freq="h", tz="UTC")
    hours = np.arange(times.size)
    tide = 1.0 * np.cos(np.deg2rad(28.9841042) * hours) + 0.3 * np.cos(np.deg2rad(15.0410686) * hours)
    surge = 0.2 * np.sin(2 * np.pi * hours / (24 * 9.0))
    return pd.Series(tide + surge, index=times), pd.Series(tide, index=times)


def test_plotting_positions_gringorten_match_scipy():
    # Gringorten (1963): alpha = beta = 0.44 in scipy.stats.mstats.plotting_positions
    data = np.arange(1.0, 26.0)
    np.testing.assert_allclose(figures.plotting_positions_gringorten(25),
                               mstats.plotting_positions(data, alpha=0.44, beta=0.44), rtol=1e-12)
    levels, periods = figures.return_periods_gringorten([3.0, 1.0, 2.0])
    np.testing.assert_allclose(levels, [1.0, 2.0, 3.0])
    np.testing.assert_allclose(periods, 1 / (1 - figures.plotting_positions_gringorten(3)))
    # peaks: largest of 30 peaks in 10 years -> (10 + 0.12)/(1 - 0.44)
    _, periods = figures.return_periods_gringorten(np.arange(30.0), record_years=10)
    assert periods[-1] == pytest.approx(10.12 / 0.56)
    with pytest.raises(DataError):
        figures.plotting_positions_gringorten(0)


def test_decimate_keeps_extremes_and_breaks_at_gaps():
    times = pd.date_range("2000-01-01", periods=100_000, freq="min", tz="UTC")
    values = np.sin(np.arange(times.size) / 50.0)
    values[12345] = 5.0
    series = pd.Series(values, index=times).drop(times[40_000:60_000])
    t, v = figures.decimate_min_max(series, max_bins=500)
    assert t.size == v.size == 1000
    assert np.nanmax(v) == 5.0 and np.nanmin(v) == pytest.approx(values.min())
    assert np.isnan(v).sum() > 100  # the dropped fifth of the record leaves empty bins
    short = pd.Series([1.0, 2.0], index=times[:2])
    assert figures.decimate_min_max(short, max_bins=10)[1].tolist() == [1.0, 2.0]
    with pytest.raises(DataError, match="timezone-aware"):
        figures.decimate_min_max(pd.Series([1.0], index=pd.DatetimeIndex(["2000-01-01"])))


def test_record_figure_marks_flags_and_gaps(hourly):
    observed, _ = hourly
    level = observed.copy()
    flags = np.full(level.size, "ok", dtype=object)
    flags[100:103] = "spike"
    flags[200:220] = "missing"
    level.iloc[200:220] = np.nan
    gaps = pd.DataFrame({"start": [level.index[500]], "end": [level.index[560]], "hours": [61.0]})
    fig = figures.record_figure(level, flags=flags, gaps=gaps, datum="TEST")
    assert len(fig.axes) == 1
    ax = fig.axes[0]
    assert len(ax.lines) == 1
    assert len(ax.collections) == 2  # one marker set per flag
    labels = [t.get_text() for t in fig.legends[0].get_texts()]
    assert "spike (3)" in labels and "missing (20, no value)" in labels and "gap (1)" in labels
    assert figures.to_png(fig).startswith(PNG_SIGNATURE)
    with pytest.raises(DataError, match="one per row"):
        figures.record_figure(level, flags=flags[:-1])


def test_tide_fit_figure_spectrum_peaks_in_semidiurnal_band(hourly):
    observed, predicted = hourly
    fig = figures.tide_fit_figure(observed, predicted, datum="TEST", segment_days=16)
    ax_time, ax_freq = fig.axes
    assert [len(ax.lines) for ax in fig.axes] == [3, 2]
    freq, power = ax_freq.lines[0].get_data()
    # M2 is 28.984 deg/h = 1.932 cycles per day (METHODS sec. 2)
    assert freq[np.argmax(power)] == pytest.approx(28.9841042 * 24 / 360, abs=0.07)
    # the residual has no tidal peak: its power at M2 is far below the observed level's
    freq_r, power_r = ax_freq.lines[1].get_data()
    at_m2 = np.argmin(abs(freq_r - 1.932))
    assert power_r[at_m2] < 1e-3 * power.max()
    assert figures.to_png(fig).startswith(PNG_SIGNATURE)


def test_residual_figure(hourly):
    observed, predicted = hourly
    skew = pd.Series(np.linspace(-0.1, 0.4, 100),
                     index=pd.date_range("2020-01-01", periods=100, freq="745min", tz="UTC"))
    fig = figures.residual_figure(observed - predicted, skew_surge_m=skew)
    assert len(fig.axes) == 2
    assert len(fig.axes[0].lines) == 2 and len(fig.axes[1].patches) == 2
    fig = figures.residual_figure(observed - predicted)
    assert len(fig.axes[0].lines) == 1 and len(fig.axes[1].patches) == 1


def test_fit_diagnostics_figure_uses_the_curve_distribution():
    curve = gumbel_curve()
    sample = stats.gumbel_r.ppf(np.linspace(0.05, 0.95, 30), loc=3.0, scale=0.2)
    fig = figures.fit_diagnostics_figure(sample, curve)
    ax_pp, ax_qq, ax_rl = fig.axes
    assert [len(ax.lines) for ax in fig.axes] == [2, 2, 2]
    # PP: model probabilities are the Gumbel CDF of the sorted sample (scipy.stats.gumbel_r)
    np.testing.assert_allclose(ax_pp.lines[0].get_ydata(), stats.gumbel_r.cdf(sample, loc=3.0, scale=0.2),
                               atol=2e-3)
    # QQ: model quantiles at Gringorten positions (from p = 0.09, T = 1.1 years: below, the curve's
    # log-period interpolation between its grid points 1.001, 1.01 and 1.1 years is coarse)
    positions = figures.plotting_positions_gringorten(30)
    upper = positions > 0.09
    np.testing.assert_allclose(ax_qq.lines[0].get_xdata()[upper],
                               stats.gumbel_r.ppf(positions[upper], loc=3.0, scale=0.2), atol=2e-3)
    assert len(ax_rl.collections) == 1  # interval band
    # rate-based curve without a distribution: panels say so
    fig = figures.fit_diagnostics_figure(sample, gumbel_curve(definition="1/rate"), record_years=30)
    assert len(fig.axes[0].lines) == 0 and "not supplied" in fig.axes[0].texts[0].get_text()
    # explicit distribution
    dist = stats.gumbel_r(loc=3.0, scale=0.2)
    fig = figures.fit_diagnostics_figure(sample, gumbel_curve(definition="1/rate"), cdf=dist.cdf,
                                         quantile=dist.ppf, record_years=30)
    assert len(fig.axes[0].lines) == 2


def test_methods_comparison_figure():
    curves = {"annual-maxima": gumbel_curve(), "peaks-over-threshold": gumbel_curve(loc=3.05, definition="1/rate")}
    fig = figures.methods_comparison_figure(curves, recommended="annual-maxima", observed_m=[3.0, 3.1, 3.3])
    ax = fig.axes[0]
    assert len(fig.axes) == 1 and len(ax.lines) == 3 and len(ax.collections) == 2
    assert ax.get_xscale() == "log"
    assert any("recommended" in t.get_text() for t in fig.legends[0].get_texts())
    fig = figures.methods_comparison_figure([gumbel_curve()])
    assert len(fig.axes[0].lines) == 1
    with pytest.raises(DataError):
        figures.methods_comparison_figure({})


def test_sea_level_rise_figure_encounter_matches_closed_form():
    curve = gumbel_curve()
    years = np.array([2020.0, 2060.0, 2100.0])
    fig = figures.sea_level_rise_figure(curve, years=years, periods_years=[10, 100],
                                        rise_m={"low": [0, 0.1, 0.3], "high": [0, 0.4, 1.0]})
    ax_level, ax_prob = fig.axes
    assert len(ax_level.lines) == 4 and len(ax_prob.lines) == 3
    # no-rise line: 1 - (1 - 0.01)^n for the 100-year level (METHODS sec. 11 [C]: n = 30 -> 0.2603)
    x, y = ax_prob.lines[-1].get_data()
    assert y[29] == pytest.approx(0.2603, abs=1e-3)
    # rise only raises the chance
    assert np.all(ax_prob.lines[1].get_ydata() >= ax_prob.lines[0].get_ydata() - 1e-12)
    assert ax_level.lines[1].get_ydata()[-1] == pytest.approx(float(curve.level_at(100)) + 0.3)
    with pytest.raises(DataError, match="expected 3"):
        figures.sea_level_rise_figure(curve, years=years, rise_m={"low": [0, 0.1]})


def test_to_png_is_small_valid_png():
    fig = figures.methods_comparison_figure([gumbel_curve()])
    data = figures.to_png(fig)
    assert data.startswith(PNG_SIGNATURE) and 5_000 < len(data) < 300_000
    width, height = int.from_bytes(data[16:20], "big"), int.from_bytes(data[20:24], "big")
    assert (width, height) == (840, 552)  # 7 x 4.6 inches at plotstyle.DPI = 120


def test_offsets_figure_encounter_matches_closed_form():
    curve = gumbel_curve()
    fig = figures.offsets_figure(curve, offsets_m=[0.0, 0.5], design_life_years=50, accepted_risk=0.1)
    ax_curve, ax_prob = fig.axes
    # raised curves: every level plus the offset (offset rule, Hunter 2012)
    np.testing.assert_allclose(ax_curve.lines[1].get_ydata() - ax_curve.lines[0].get_ydata(), 0.5)
    # no rise: 1 - (1 - 0.01)^50 = 0.395 for the 100-year level (METHODS sec. 11 [C], 1 - 0.99^50)
    assert ax_prob.lines[0].get_ydata()[-1] == pytest.approx(1 - 0.99**50, abs=1e-3)
    assert ax_prob.lines[1].get_ydata()[-1] > ax_prob.lines[0].get_ydata()[-1]
    with pytest.raises(DataError, match="offset"):
        figures.offsets_figure(curve, offsets_m=[], design_life_years=50, accepted_risk=0.1)


def _every_figure(hourly):
    observed, predicted = hourly
    curve = gumbel_curve()
    flags = np.full(observed.size, "ok", dtype=object)
    flags[100:103] = "spike"
    skew = pd.Series(np.linspace(-0.1, 0.4, 100),
                     index=pd.date_range("2020-01-01", periods=100, freq="745min", tz="UTC"))
    curves = {name: gumbel_curve(loc=3.0 + 0.02 * i, method=name) for i, name in enumerate(
        ["annual-maxima", "peaks-over-threshold", "r-largest", "joint-probability", "skew-surge-joint-probability"])}
    long_datum = "Orrindale Gauge Zero (invented)"
    return {
        "record": figures.record_figure(observed, flags=flags, datum=long_datum),
        "tide": figures.tide_fit_figure(observed, predicted, datum=long_datum, segment_days=16),
        "residual": figures.residual_figure(observed - predicted, skew_surge_m=skew),
        "diagnostics": figures.fit_diagnostics_figure(stats.gumbel_r.rvs(3, 0.2, size=30, random_state=1), curve),
        "methods": figures.methods_comparison_figure(curves, recommended="skew-surge-joint-probability",
                                                     observed_m=[3.0, 3.1, 3.3]),
        "scenarios": figures.sea_level_rise_figure(curve, years=[2020, 2060, 2100],
                                                   rise_m={"low": [0, 0.1, 0.3], "central": [0, 0.2, 0.6],
                                                           "high": [0, 0.4, 1.0]}),
        "offsets": figures.offsets_figure(curve, offsets_m=[0.0, 0.25, 0.5, 1.0], design_life_years=50,
                                          accepted_risk=0.1),
    }


def test_every_figure_keeps_its_text_inside_and_legends_off_the_data(hourly):
    # matplotlib's own renderer extents (Agg): titles, axis labels, tick labels and legends lie inside the
    # figure, and no legend overlaps an axes' plotting area
    from extremes.report.plotstyle import PALETTE, layout_problems

    for name, fig in _every_figure(hourly).items():
        assert layout_problems(fig) == [], name
        for ax in fig.axes:
            assert ax.get_ylabel() or ax.get_xlabel(), name
    # the check does find a title that runs off and a legend over the data
    from extremes.report.plotstyle import new_figure
    fig = new_figure(3, 2)
    ax = fig.add_subplot()
    ax.plot([0, 1], [0, 1], label="a line")
    ax.set_title("a title far too long for a figure three inches wide, running off both of its edges")
    ax.legend(loc="center")
    problems = layout_problems(fig)
    assert any("title" in p for p in problems) and any("covers" in p for p in problems)
    assert len(set(PALETTE)) == len(PALETTE) and "#F0E442" not in PALETTE  # Okabe-Ito without yellow


def test_level_axes_name_their_datum(hourly):
    figs = _every_figure(hourly)
    assert "Orrindale Gauge Zero (invented)" in figs["record"].axes[0].get_ylabel().replace("\n", " ")
    for name in ("diagnostics", "methods", "offsets"):
        assert any("[m above TEST]" in ax.get_ylabel() for ax in figs[name].axes), name


def test_series_differ_by_more_than_colour(hourly):
    # readable in greyscale print: within each axes, no two labelled lines share dash pattern, marker and width
    figs = _every_figure(hourly)
    for name in ("methods", "offsets", "tide", "diagnostics"):
        for ax in figs[name].axes:
            looks = [(str(line._dash_pattern), line.get_marker(), line.get_linewidth())  # noqa: SLF001 - as drawn
                     for line in ax.get_lines() if not line.get_label().startswith("_")]
            assert len(set(looks)) == len(looks), (name, looks)
