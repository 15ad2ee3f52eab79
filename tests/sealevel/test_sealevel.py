"""Sea-level rise: offsets, scenarios, amplification, allowance, encounter probability, design levels.

Check values carry their tag and source from /work/shared/METHODS.md section 11:
[C] computed from the formulas there, [CP] common practice, [M] from memory of the named paper.
Gumbel and GPD curves are built from scipy.stats quantiles (an outside reference implementation).
"""
from __future__ import annotations

import math
import warnings

import numpy as np
import pytest
from scipy import stats

from extremes import sealevel
from extremes.curves import DENSE_PERIODS_YEARS, ReturnLevelCurve
from extremes.errors import DataError, ExtremesWarning


def gumbel_curve(loc=2.0, scale=0.1, definition="1/AEP"):
    """Gumbel curve from scipy: 1/AEP -> annual maxima quantiles; 1/rate -> exponential tail of rate 1/T."""
    periods = DENSE_PERIODS_YEARS
    if definition == "1/AEP":
        level = stats.gumbel_r.isf(1.0 / periods, loc=loc, scale=scale)
    else:  # expected events per year exp(-(z - loc)/scale) = 1/T
        level = loc + stats.expon.isf(1.0 / periods, scale=scale)
    return ReturnLevelCurve(method="annual-maxima", periods_years=periods, level_m=level, lower_m=level - 0.1,
                            upper_m=level + 0.2, period_definition=definition, datum="test", epoch_year=2020.0)


def gpd_curve(threshold=1.5, scale=0.15, shape=0.0, rate=3.0):
    """POT curve: x_T = u + GPD quantile at exceedance probability 1/(rate T) (scipy genpareto, c = xi)."""
    periods = DENSE_PERIODS_YEARS
    level = threshold + stats.genpareto.isf(1.0 / (rate * periods), c=shape, scale=scale)
    return ReturnLevelCurve(method="peaks-over-threshold", periods_years=periods, level_m=level, lower_m=level,
                            upper_m=level, period_definition="1/rate", datum="test", epoch_year=2020.0)


# -- encounter probability -------------------------------------------------------------------------
def test_encounter_probability_common_practice_and_methods_table():
    # [CP] a 1% AEP level: about 26% chance in 30 years, about 63% in 100 years
    assert sealevel.encounter_probability(0.01, design_life_years=30) == pytest.approx(0.26, abs=0.005)
    assert sealevel.encounter_probability(0.01, design_life_years=100) == pytest.approx(0.63, abs=0.005)
    # METHODS sec. 11 [C] (Borgman 1963 [M]): p = 1%, L = 1, 10, 25, 30, 50, 100
    lives = [1, 10, 25, 30, 50, 100]
    expected = [0.0100, 0.0956, 0.2222, 0.2603, 0.3950, 0.6340]
    got = sealevel.encounter_probability(0.01, design_life_years=np.array(lives))
    np.testing.assert_allclose(got, expected, atol=5e-5)


def test_design_return_period_methods_checks():
    # METHODS sec. 11 [C]: R = 10%, L = 50 -> 475.06 yr; L = 100 -> 949.62 yr; R = 50%, L = 30 -> 43.78 yr
    assert sealevel.design_return_period(0.10, design_life_years=50) == pytest.approx(475.06, abs=0.005)
    assert sealevel.design_return_period(0.10, design_life_years=100) == pytest.approx(949.62, abs=0.005)
    assert sealevel.design_return_period(0.50, design_life_years=30) == pytest.approx(43.78, abs=0.005)
    with pytest.raises(DataError, match="accepted_probability"):
        sealevel.design_return_period(1.5, design_life_years=50)
    with pytest.raises(DataError, match="aep"):
        sealevel.encounter_probability(-0.1, design_life_years=5)


def test_encounter_with_rise_on_curve_without_rise_matches_table():
    # METHODS sec. 11 [C]: the 100-year (1% AEP) level over 30 years -> 0.2603, no rise
    curve = gumbel_curve()
    result = sealevel.encounter_probability_with_rise(curve, level_m=float(curve.level_at(100)),
                                                      design_life_years=30)
    assert result.probability == pytest.approx(0.2603, abs=5e-4)
    assert result.to_dict()["design_life_years"] == 30


def test_encounter_with_year_varying_rise_matches_scipy_product():
    # P = 1 - prod_y (1 - p_y) with p_y = Gumbel survival of z - rise_y (scipy.stats.gumbel_r) [METHODS 11, C]
    curve = gumbel_curve(scale=0.12)
    rise = np.linspace(0.0, 0.45, 50)
    level = float(curve.level_at(100))
    result = sealevel.encounter_probability_with_rise(curve, level_m=level, design_life_years=50, rise_m=rise)
    reference = 1 - np.prod(1 - stats.gumbel_r.sf(level - rise, loc=2.0, scale=0.12))
    assert result.probability == pytest.approx(reference, rel=2e-3)
    assert result.probability > sealevel.encounter_probability(0.01, design_life_years=50)
    with pytest.raises(DataError, match="one per year"):
        sealevel.encounter_probability_with_rise(curve, level_m=level, design_life_years=50, rise_m=rise[:10])


def test_design_level_without_rise_is_the_design_return_period_level():
    # METHODS sec. 11 [C]: 10% over 50 years -> T = 475.06 yr; level from scipy.stats.gumbel_r
    curve = gumbel_curve()
    result = sealevel.design_level(curve, accepted_probability=0.10, design_life_years=50)
    assert result.design_return_period_years == pytest.approx(475.06, abs=0.005)
    assert result.level_m == pytest.approx(stats.gumbel_r.isf(1 / 475.06, loc=2.0, scale=0.1), abs=2e-3)
    assert result.present_return_period_years == pytest.approx(475.06, rel=0.02)
    # a constant rise raises the design level by the rise (offset rule, Hunter 2012 [V])
    raised = sealevel.design_level(curve, accepted_probability=0.10, design_life_years=50, rise_m=0.3)
    assert raised.level_m - result.level_m == pytest.approx(0.3, abs=1e-4)


def test_design_level_with_scenario_rise_has_the_accepted_risk():
    curve = gumbel_curve(scale=0.15)
    scenarios = sealevel.SeaLevelScenarios(years=[2000, 2100], rise_m={"central": [0.0, 0.8]})
    rise = sealevel.rise_by_year(scenarios, "central", start_year=2030, design_life_years=50,
                                 reference_year=curve.epoch_year)
    assert rise[0] == pytest.approx(0.008 * 10.5)  # 2030.5 - 2020 years at 8 mm/yr
    result = sealevel.design_level(curve, accepted_probability=0.05, design_life_years=50, rise_m=rise)
    # check against scipy directly: 1 - prod(1 - sf(z - rise_y)) = R
    risk = 1 - np.prod(1 - stats.gumbel_r.sf(result.level_m - rise, loc=2.0, scale=0.15))
    assert risk == pytest.approx(0.05, rel=5e-3)
    with pytest.raises(DataError, match="beyond"):
        sealevel.design_level(curve, accepted_probability=1e-7, design_life_years=2)


# -- allowance -------------------------------------------------------------------------------------
@pytest.mark.parametrize("mean, sd, scale, expected, tol", [
    (0.5, 0.15, 0.1, 0.6125, 5e-5),  # METHODS sec. 11 [C], Hunter 2012 formula [M]
    (0.5, 0.2, 0.1, 0.700, 5e-4),
    (0.8, 0.3, 0.15, 1.100, 5e-4),
])
def test_allowance_normal_methods_checks(mean, sd, scale, expected, tol):
    assert sealevel.allowance_normal(mean_m=mean, sd_m=sd, scale_m=scale).allowance_m == pytest.approx(
        expected, abs=tol)


def test_allowance_sample_form_matches_monte_carlo_of_normal_rise():
    # Hunter 2012 [M]: A = lambda ln E[exp(dz/lambda)]; METHODS [C]: (0.5, 0.2, 0.1) -> 0.700, MC 2e5 draws 0.6999
    rng = np.random.default_rng(20120101)
    draws = rng.normal(0.5, 0.2, 200_000)
    result = sealevel.allowance_from_samples(draws, scale_m=0.1)
    assert result.allowance_m == pytest.approx(0.700, abs=0.01)
    assert result.allowance_m == pytest.approx(
        sealevel.allowance_normal(mean_m=0.5, sd_m=0.2, scale_m=0.1).allowance_m, abs=0.01)
    assert result.n_samples == 200_000 and result.to_dict()["method"] == "samples"
    # a certain rise needs no extra allowance
    assert sealevel.allowance_from_samples([0.4, 0.4], scale_m=0.1).allowance_m == pytest.approx(0.4)
    with pytest.raises(DataError, match="finite"):
        sealevel.allowance_from_samples([0.1, np.nan], scale_m=0.1)


def test_gumbel_scale_of_curve_recovers_the_gumbel_scale():
    # For a Gumbel curve the slope against the reduced variate is the scale exactly (Hunter 2012 uses it)
    for definition in ("1/AEP", "1/rate"):
        curve = gumbel_curve(scale=0.13, definition=definition)
        assert sealevel.gumbel_scale_of_curve(curve, period_years=100) == pytest.approx(0.13, rel=2e-3)


# -- amplification ---------------------------------------------------------------------------------
@pytest.mark.parametrize("scale, rise, expected, period", [
    (0.1, 0.1, 2.718, 100), (0.1, 0.3, 20.09, 1000), (0.1, 0.5, 148.4, 10000), (0.2, 0.5, 12.18, 100),
])
def test_gumbel_amplification_closed_form_and_from_curve(scale, rise, expected, period):
    # METHODS sec. 11 checks [C]; N = exp(dz/lambda) [Hunter 2010, M]
    assert sealevel.amplification_gumbel(rise, scale_m=scale) == pytest.approx(expected, rel=5e-4)
    for definition in ("1/AEP", "1/rate"):
        curve = gumbel_curve(scale=scale, definition=definition)
        result = sealevel.amplification_from_curve(curve, rise_m=rise, period_years=period)
        assert result.factor == pytest.approx(expected, rel=5e-3), definition
        assert result.future_aep > result.present_aep


@pytest.mark.parametrize("shape, expected", [(-0.1, 35.40), (0.0, 7.389), (0.1, 4.046)])
def test_gpd_amplification_closed_form_and_from_curve(shape, expected):
    # METHODS sec. 11 [C]: u = 1.5, sigma = 0.15, z = 2.3, dz = 0.3 (bounded tails amplify most)
    closed = sealevel.amplification_gpd(0.3, level_m=2.3, threshold_m=1.5, scale_m=0.15, shape=shape)
    assert closed == pytest.approx(expected, rel=5e-4)
    curve = gpd_curve(shape=shape)
    result = sealevel.amplification_from_curve(curve, rise_m=0.3, level_m=2.3)
    assert result.factor == pytest.approx(expected, rel=1e-2)


def test_amplification_below_curve_range_warns_and_is_nan():
    curve = gumbel_curve()
    with pytest.warns(ExtremesWarning, match="below"):
        result = sealevel.amplification_from_curve(curve, rise_m=2.0, period_years=10)
    assert math.isnan(result.factor) and result.to_dict()["factor"] is None
    with pytest.raises(DataError, match="threshold"):
        sealevel.amplification_gpd(1.0, level_m=2.0, threshold_m=1.5, scale_m=0.15, shape=0.0)


# -- offsets and future levels ---------------------------------------------------------------------
def test_parse_offsets():
    assert sealevel.parse_offsets("0, 0.3,0.5,0.3") == (0.0, 0.3, 0.5)
    assert sealevel.parse_offsets([0.25]) == (0.25,)
    with pytest.raises(DataError, match="'x'"):
        sealevel.parse_offsets("0.1,x")
    with pytest.raises(DataError, match="at least one"):
        sealevel.parse_offsets("")


def test_sea_level_rise_rows_present_period_follows_hunter():
    # exponential tail (1/rate Gumbel): present period of z_T + dz is T exp(dz/lambda) [Hunter 2010, M]
    curve = gumbel_curve(scale=0.1, definition="1/rate")
    rows = sealevel.sea_level_rise_rows(curve, offsets_m=[0.0, 0.1, 0.5], periods_years=[10, 100])
    assert [(r["offset_m"], r["return_period_years"]) for r in rows] == [
        (0.0, 10.0), (0.0, 100.0), (0.1, 10.0), (0.1, 100.0), (0.5, 10.0), (0.5, 100.0)]
    assert set(rows[0]) == {"offset_m", "return_period_years", "level_m", "present_return_period_years_of_level"}
    assert rows[0]["present_return_period_years_of_level"] == pytest.approx(10.0, rel=1e-6)
    assert rows[2]["level_m"] - rows[0]["level_m"] == pytest.approx(0.1)
    assert rows[2]["present_return_period_years_of_level"] == pytest.approx(10 * math.e, rel=1e-3)
    assert rows[3]["present_return_period_years_of_level"] == pytest.approx(100 * math.e, rel=1e-3)
    assert rows[5]["present_return_period_years_of_level"] is None  # 100 e^5 years: beyond the curve
    np.testing.assert_allclose(sealevel.present_return_period(curve, [rows[1]["level_m"], 99.0]), [100.0, np.nan],
                               rtol=1e-6)
    frame = sealevel.future_return_levels(curve, offsets_m="0,0.1", periods_years=[100])
    assert list(frame["upper_m"] - frame["level_m"]) == pytest.approx([0.2, 0.2])
    assert frame.attrs["datum"] == "test"


# -- scenario tables -------------------------------------------------------------------------------
def test_read_scenarios_csv_and_toml_agree(tmp_path):
    csv_path = tmp_path / "slr.csv"
    csv_path.write_text("# rise relative to 2020 [m]\nyear,low,central,high\n2020,0,0,0\n2050,0.1,0.15,0.25\n"
                        "2100,0.3,0.55,1.0\n", encoding="utf-8")
    toml_path = tmp_path / "slr.toml"
    toml_path.write_text('[scenarios]\nreference = "rise relative to 2020"\nyears = [2020, 2050, 2100]\n'
                         "low = [0, 0.1, 0.3]\ncentral = [0, 0.15, 0.55]\nhigh = [0, 0.25, 1.0]\n",
                         encoding="utf-8")
    for path in (csv_path, toml_path):
        table = sealevel.read_scenarios(path)
        assert table.names == ("low", "central", "high")
        assert "2020" in table.reference
        assert table.rise_at("central", 2075) == pytest.approx(0.35)  # linear between 2050 and 2100
        assert table.rise_since("high", [2100], reference_year=2050)[0] == pytest.approx(0.75)
        assert table.to_dict()["rise_m"]["low"] == [0.0, 0.1, 0.3]
        with pytest.raises(DataError, match="not extrapolated"):
            table.rise_at("low", 2101)
        with pytest.raises(DataError, match="unknown scenario 'mid'"):
            table.rise_at("mid", 2050)


@pytest.mark.parametrize("text, message", [
    ("when,low\n2020,0\n2030,1\n", r"line 1: the first column must be 'year'"),
    ("year,low,high\n2020,0,0\n2030,0.1,abc\n", r"line 3, column 'high': expected a number; got 'abc'"),
    ("year,low\n2020,0\n2020,0.1\n", r"line 3, column 'year': years must increase strictly"),
    ("year,low\n2020,0\n2030\n", r"line 3: expected 2 columns"),
    ("year,low\n2020,0\n", r"at least two rows"),
])
def test_read_scenarios_csv_errors_name_line_and_column(tmp_path, text, message):
    path = tmp_path / "bad.csv"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(DataError, match=message):
        sealevel.read_scenarios(path)


@pytest.mark.parametrize("text, message", [
    ("years = [1, 2]\n", r"\[scenarios\] table"),
    ("[scenarios]\nyears = [2020, 2050]\nlow = [0.0]\n", r"low has 1 values; expected 2"),
    ("[scenarios]\nyears = [2020, 2050]\nlow = [0.0, 'a']\n", r"low\[1\]: expected a finite number"),
    ("[scenarios]\nyears = [2020, 2050]\nunits = 'cm'\nlow = [0, 1]\n", r"units must be"),
    ("[scenarios\n", r"not valid TOML"),
])
def test_read_scenarios_toml_errors(tmp_path, text, message):
    path = tmp_path / "bad.toml"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(DataError, match=message):
        sealevel.read_scenarios(path)
    with pytest.raises(DataError, match="not found"):
        sealevel.read_scenarios(tmp_path / "missing.csv")


def test_reprs_are_one_line():
    curve = gumbel_curve()
    objects = [sealevel.allowance_normal(mean_m=0.5, sd_m=0.1, scale_m=0.1),
               sealevel.amplification_from_curve(curve, rise_m=0.1),
               sealevel.design_level(curve, accepted_probability=0.1, design_life_years=50),
               sealevel.encounter_probability_with_rise(curve, level_m=2.5, design_life_years=5),
               sealevel.SeaLevelScenarios(years=[2000, 2100], rise_m={"a": [0, 1]})]
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        for obj in objects:
            assert "\n" not in repr(obj)


def test_design_level_with_steep_rise_warns_where_early_years_leave_the_curve():
    curve = gumbel_curve()  # loc 2.0, scale 0.1: the 10,000-year level is 2.92 m
    rise = np.linspace(0.0, 2.0, 50)
    with pytest.warns(ExtremesWarning, match="longest period"):
        result = sealevel.design_level(curve, accepted_probability=0.10, design_life_years=50, rise_m=rise)
    # the early years (each below 1e-4 chance) are counted as zero: scipy's full product agrees closely
    risk = 1 - np.prod(1 - stats.gumbel_r.sf(result.level_m - rise, loc=2.0, scale=0.1))
    assert risk == pytest.approx(0.10, abs=2e-3)
