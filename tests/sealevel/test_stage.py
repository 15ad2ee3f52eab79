"""The sea-level-rise stage: one function for the study and for rerun."""
import numpy as np
import pytest

from extremes.curves import DENSE_PERIODS_YEARS, ReturnLevelCurve
from extremes.errors import DataError
from extremes.sealevel.stage import assess_sea_level_rise


def _gumbel_curve(loc=2.0, scale=0.2):
    # a Gumbel annual-maximum curve: z_T = loc - scale ln(-ln(1 - 1/T)) (Coles 2001 eq. 3.10, xi = 0)
    level = loc - scale * np.log(-np.log1p(-1.0 / DENSE_PERIODS_YEARS))
    return ReturnLevelCurve(method="annual-maxima", periods_years=DENSE_PERIODS_YEARS, level_m=level,
                            lower_m=None, upper_m=None, period_definition="1/AEP", epoch_year=2020.0)


def test_scenarios_give_encounter_design_level_and_allowance(tmp_path):
    # low/central/high scenario table; the allowance must follow Hunter (2012), A = m + s^2/(2 lambda) (formula
    # from memory, METHODS.md sec. 11), with lambda the Gumbel scale 0.2 m
    table = tmp_path / "rise.csv"
    table.write_text("year,low,central,high\n2020,0,0,0\n2100,0.3,0.6,1.2\n")
    slr = assess_sea_level_rise(_gumbel_curve(), offsets_m=(0.0, 0.5), periods_years=(10, 100),
                                design_life_years=50, accepted_risk=0.1, scenarios=table)
    assert [s["scenario"] for s in slr.scenario_results] == ["low", "central", "high"]
    allowance = slr.allowance["allowance"]
    mean, sd = allowance.mean_rise_m, allowance.sd_rise_m
    assert mean == pytest.approx(0.6 * 49.5 / 80, abs=0.01)  # central rise by the mid-point of the last year
    assert allowance.scale_m == pytest.approx(0.2, rel=0.02)
    assert allowance.allowance_m == pytest.approx(mean + sd ** 2 / (2 * allowance.scale_m), rel=1e-6)
    # the allowance the study uses, solved on the curve, equals the closed form on a Gumbel curve
    assert slr.allowance["used"] == "on_curve"
    assert slr.allowance["on_curve"].allowance_m == pytest.approx(allowance.allowance_m, abs=2e-3)
    # encounter probability of the 100-year level over 50 years without rise: 1 - 0.99^50 = 0.395 (METHODS [C])
    assert slr.encounter[0].probability == pytest.approx(0.395, abs=0.003)


def test_one_row_per_offset_with_encounter_and_design_level():
    curve = _gumbel_curve()
    slr = assess_sea_level_rise(curve, offsets_m=(0.3, 0.0, 0.1), periods_years=(100,), design_life_years=50,
                                accepted_risk=0.1)
    assert [row["offset_m"] for row in slr.by_offset] == [0.0, 0.3, 0.1]
    z100 = float(curve.level_at([100.0])[0])
    for row, enc, design in zip(slr.by_offset, slr.encounter, slr.design_levels):
        assert row["level_100_m"] == pytest.approx(z100 + row["offset_m"])
        assert row["encounter_probability_of_present_100yr_level"] == enc.probability
        assert row["design_level_m"] == design.level_m
    # no rise: the design level for 10 % over 50 years is the level of T = 1/[1 - 0.9^(1/50)] = 475.06 years
    # (METHODS.md sec. 11 [C]); a raised sea makes today's 100-year level more likely to be met
    assert slr.by_offset[0]["design_level_m"] == pytest.approx(float(curve.level_at([475.06])[0]), abs=2e-3)
    probabilities = [row["encounter_probability_of_present_100yr_level"] for row in slr.by_offset]
    assert probabilities[0] < probabilities[2] < probabilities[1]
    # a constant rise dz on a Gumbel curve: the AEP of z100 - dz is the AEP at z100 times about exp(dz/scale)
    # (Hunter 2010; METHODS.md sec. 11: amplification exp(0.3/0.2) = 4.48)
    assert slr.amplification[0].factor == pytest.approx(np.exp(0.3 / 0.2), rel=0.03)
    # the contract rows: every offset at every period, level = present level + offset
    assert {(r["offset_m"], r["return_period_years"]) for r in slr.rows} == {(0.3, 100.0), (0.0, 100.0),
                                                                            (0.1, 100.0)}


def test_bad_risk_and_life_are_refused():
    with pytest.raises(DataError, match="accepted_risk"):
        assess_sea_level_rise(_gumbel_curve(), offsets_m=(0.5,), periods_years=(100,), accepted_risk=1.5)
    with pytest.raises(DataError, match="design_life_years"):
        assess_sea_level_rise(_gumbel_curve(), offsets_m=(0.5,), periods_years=(100,), design_life_years=0.2)
