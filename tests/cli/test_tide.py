"""CLI tests of ``extremes tide`` (CliRunner on the group; JSON parsed; exit codes 0/1/2)."""
import json

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner
from scipy.signal import lfilter

from extremes.cli import cli
from extremes.tide.harmonic import predict_tide

# known constants of the synthetic record (the test's outside reference is the generator itself)
TRUTH = {"M2": (1.1, 95.0), "S2": (0.38, 135.0), "N2": (0.22, 75.0), "K1": (0.12, 205.0), "O1": (0.09, 190.0)}


@pytest.fixture(scope="module")
def record(tmp_path_factory):
    t = pd.date_range("2010-01-01", "2013-01-01", freq="h", tz="UTC", inclusive="left")
    names = list(TRUTH)
    rng = np.random.default_rng(11)
    y = predict_tide(t, names, [TRUTH[n][0] for n in names], [TRUTH[n][1] for n in names], z0_m=2.5)
    y = y + lfilter([1.0], [1.0, -0.9], rng.normal(0, 0.01, t.size))
    y[5000:5100] = np.nan
    path = tmp_path_factory.mktemp("tide") / "gauge.csv"
    # local clock +10:00 without offsets in the stamps: the reader needs --utc-offset
    local = (t + pd.Timedelta(hours=10)).strftime("%Y-%m-%d %H:%M")
    pd.DataFrame({"time": local, "level_m": np.round(y, 4)}).to_csv(path, index=False)
    return path


def test_tide_json(record):
    result = CliRunner().invoke(cli, ["tide", str(record), "--utc-offset", "+10:00", "--datum", "CD", "--json"])
    assert result.exit_code == 0, result.output
    out = json.loads(result.stdout)
    assert set(out) == {"tide", "mean_sea_level"}
    tide = out["tide"]
    by_name = {c["name"]: c for c in tide["constituents"]}
    for name, (h, g) in TRUTH.items():
        c = by_name[name]
        assert set(c) >= {"name", "speed_deg_per_hour", "amplitude_m", "phase_deg", "amplitude_se_m", "phase_se_deg"}
        assert c["amplitude_m"] == pytest.approx(h, abs=2e-3)
        assert abs((c["phase_deg"] - g + 180) % 360 - 180) < 1.0  # the UTC offset was applied
    assert by_name["M2"]["speed_deg_per_hour"] == 28.9841042
    assert set(tide["datums_m"]) >= {"HAT", "LAT", "MHWS", "MLWS", "MSL"}
    assert tide["datums_m"]["MSL"] == pytest.approx(2.5, abs=0.01)
    # M2 + S2 + N2 + K1 + O1 = 1.91 m is an upper bound of HAT - MSL
    assert 1.5 < tide["datums_m"]["HAT"] - 2.5 < 1.92
    assert tide["tide_type"] == "semidiurnal" and tide["form_factor"] == pytest.approx(0.21 / 1.48, abs=0.01)
    msl = out["mean_sea_level"]
    assert set(msl) >= {"trend_m_per_year", "trend_se_m_per_year", "epoch_year", "msl_at_epoch_m"}
    assert abs(msl["trend_m_per_year"]) < 0.02


def test_tide_terminal_summary_and_out(record, tmp_path):
    out_dir = tmp_path / "tide_results"
    args = ["tide", str(record), "--utc-offset", "+10:00", "--out", str(out_dir), "--constituents",
            "M2,S2,N2,K1,O1,M4"]
    result = CliRunner().invoke(cli, args)
    assert result.exit_code == 0, result.output
    assert "M2" in result.stdout and "HAT" in result.stdout and "semidiurnal" in result.stdout
    assert {p.name for p in out_dir.iterdir()} == {"residuals.csv", "skew_surges.csv", "tide_model.json",
                                                   "tide.json"}
    residuals = pd.read_csv(out_dir / "residuals.csv")
    assert list(residuals.columns) == ["time", "level_m", "tide_m", "residual_m"]
    assert residuals["residual_m"].std() < 0.05
    skew = pd.read_csv(out_dir / "skew_surges.csv")
    assert len(skew) > 1500 and abs(skew["skew_surge_m"].mean()) < 0.05
    from extremes.tide.harmonic import TideModel
    model = TideModel.load(out_dir / "tide_model.json")
    assert sorted(model.names) == sorted(["M2", "S2", "N2", "K1", "O1", "M4"])
    again = CliRunner().invoke(cli, args)
    assert again.exit_code == 1 and "overwrite" in again.output


def test_tide_errors(record):
    runner = CliRunner()
    naive = runner.invoke(cli, ["tide", str(record), "--json"])
    assert naive.exit_code == 1 and "utc" in naive.output.lower()
    bad = runner.invoke(cli, ["tide", str(record), "--utc-offset", "+10:00", "--constituents", "M2,ZZ7"])
    assert bad.exit_code == 2 and "ZZ7" in bad.output
    unresolved = runner.invoke(cli, ["tide", str(record), "--utc-offset", "+10:00", "--constituents", "S2,K2",
                                     "--json"])
    assert unresolved.exit_code == 0  # 3 years resolve S2 and K2
    assert runner.invoke(cli, ["tide", str(record), "--rayleigh", "0"]).exit_code == 2
