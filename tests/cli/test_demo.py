"""`extremes demo`: the whole study on the bundled record, against the invented scenario's true levels.

The scenario is invented (example_records/README.md); its true still-water levels come from a 50,000-year
simulation of the same process by the generator (example_records/truth.json). Invented data, for the demo.
"""
from __future__ import annotations

import json

import pytest
from click.testing import CliRunner

from extremes.cli import cli
from extremes.curves import ReturnLevelCurve, period_from_aep
from extremes.examples import example_records_folder

pytestmark = pytest.mark.slow  # whole studies, batches or simulations


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    out = tmp_path_factory.mktemp("demo") / "extremes-demo"
    result = CliRunner().invoke(cli, ["demo", "--out", str(out)])
    assert result.exit_code == 0, result.output
    return out, result.output


def test_demo_prints_levels_and_report(demo):
    out, output = demo
    assert "report:" in output and str(out / "report.html") in output
    assert (out / "report.html").stat().st_size > 100_000
    assert "Still water only" in output


def test_demo_levels_bracket_the_scenario_truth(demo):
    out, _ = demo
    truth = json.loads((example_records_folder() / "truth.json").read_text())
    document = json.loads((out / "results.json").read_text())
    assert document["epoch_year"] == pytest.approx(truth["return_levels"]["epoch_year"], abs=0.05)
    recommended = document["recommended_method"]
    # the truth is a quantile of annual maxima (1/AEP); a 1/rate curve is read at the period of the same AEP
    # (a 2-year ARI is an AEP of 39 %, not 50 %)
    curve = ReturnLevelCurve.from_dict(document["curves"][recommended])
    for true in truth["return_levels"]["levels"]:
        period = true["return_period_years"]
        if period > 200:
            continue
        at = period_from_aep(true["aep"], definition=curve.period_definition)
        row = curve.table([at]).iloc[0]
        assert row["lower_m"] <= true["level_m"] <= row["upper_m"], (recommended, period, row, true["level_m"])
    # the fitted mean-sea-level trend is within two standard errors of the scenario's 3 mm/yr
    msl = document["mean_sea_level"]
    assert abs(msl["trend_m_per_year"] - truth["mean_sea_level"]["trend_m_per_year"]) < 2 * msl["trend_se_m_per_year"]


def test_demo_refuses_to_overwrite(demo):
    out, _ = demo
    again = CliRunner().invoke(cli, ["demo", "--out", str(out)])
    assert again.exit_code == 1 and "--overwrite" in again.output
