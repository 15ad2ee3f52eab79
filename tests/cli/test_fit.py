"""Tests of ``extremes fit``: JSON contract (CONTRACT.md), exit codes, evd reference values."""
from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner
from scipy.signal import lfilter

from extremes.cli import cli

DATA = Path(__file__).resolve().parents[1] / "data"
KEYS = {"model", "method", "n", "parameters", "standard_errors", "log_likelihood", "return_levels"}


def run(*args):
    return CliRunner().invoke(cli, ["fit", *map(str, args)])


@pytest.fixture(scope="module")
def ref():
    return json.loads((DATA / "evd_reference_values.json").read_text())


def test_choices_come_from_the_library():
    from extremes import extremal
    from extremes.cli import fit_cmd

    params = {p.name: p for p in fit_cmd.command.params}
    assert list(params["model"].type.choices) == sorted(extremal.MODELS)
    assert list(params["method"].type.choices) == sorted(extremal.FIT_METHODS)
    assert list(params["ci"].type.choices) == sorted(extremal.CI_METHODS)
    assert list(params["sample"].type.choices) == list(extremal.SAMPLE_METHODS)
    assert fit_cmd.command.name == "fit"


def test_json_port_pirie_matches_evd(ref):
    # evd 2.3-6.1 reference fit of Port Pirie (tests/data/README.md); profile 95 % intervals
    res = run(DATA / "portpirie.csv", "--json", "--periods", "10,100,1000")
    assert res.exit_code == 0, res.output
    out = json.loads(res.stdout)
    assert KEYS <= set(out)
    r = ref["portpirie_gev"]
    assert out["model"] == "gev" and out["method"] == "mle" and out["n"] == 65
    for ours, theirs in (("location", "loc"), ("scale", "scale"), ("shape", "shape")):
        assert out["parameters"][ours] == pytest.approx(r["mle"][theirs], rel=1e-3)
        assert out["standard_errors"][ours] == pytest.approx(r["std_err"][theirs], rel=1e-3)
    assert out["log_likelihood"] == pytest.approx(r["loglik"], abs=1e-6)
    rows = out["return_levels"]
    assert all(set(row) >= {"return_period_years", "level_m", "lower_m", "upper_m", "confidence"}
               for row in rows) and len(rows) == 3
    assert {row["period_definition"] for row in rows} == {"1/AEP"}
    for row in rows:
        k = f"{row['return_period_years']:g}"
        assert row["level_m"] == pytest.approx(r["return_levels"][k]["estimate"], rel=1e-5)
        assert [row["lower_m"], row["upper_m"]] == pytest.approx(r["return_levels"][k]["profile_95"], rel=1e-4)
        assert row["confidence"] == 0.95


def test_gumbel_json_shape_zero_and_null_se(ref):
    out = json.loads(run(DATA / "portpirie.csv", "--model", "gumbel", "--ci", "delta", "--json").stdout)
    assert out["parameters"]["shape"] == 0 and out["standard_errors"]["shape"] is None
    assert out["parameters"]["location"] == pytest.approx(ref["portpirie_gev"]["gumbel"]["estimate"]["loc"], rel=1e-4)
    assert [r["return_period_years"] for r in out["return_levels"]] == [1, 2, 5, 10, 20, 50, 100, 200, 500, 1000]
    assert out["return_levels"][0]["level_m"] is None  # T = 1: AEP 1 has no finite annual-maximum level


def test_bootstrap_seeded_and_lmoments(tmp_path):
    a = run(DATA / "portpirie.csv", "--ci", "bootstrap", "--bootstrap", "200", "--seed", "3", "--json")
    b = run(DATA / "portpirie.csv", "--ci", "bootstrap", "--bootstrap", "200", "--seed", "3", "--json")
    assert a.exit_code == 0 and a.stdout == b.stdout
    lm = json.loads(run(DATA / "portpirie.csv", "--method", "lmoments", "--periods", "100", "--json").stdout)
    assert lm["method"] == "lmoments"
    row = lm["return_levels"][0]
    assert row["lower_m"] < row["level_m"] < row["upper_m"]


def test_venice_units_and_terminal_table():
    f = DATA / "venice.csv"
    # venice.csv has eleven columns: not an annual-maxima table -> exit 1 with a one-line message naming it
    res = run(f)
    assert res.exit_code == 1 and "venice.csv" in res.output and "Traceback" not in res.output
    res = run(DATA / "portpirie.csv", "--periods", "10,100")
    assert res.exit_code == 0
    assert "return levels" in res.stdout and "4.2962" in res.stdout and "4.6884" in res.stdout


def test_bad_file_and_bad_options(tmp_path):
    bad = tmp_path / "bad.csv"
    bad.write_text("year,value\n1990,1.5\n1991,oops\n")
    res = run(bad)
    assert res.exit_code == 1 and "line 3" in res.output and len(res.output.strip().splitlines()) == 1
    assert run(DATA / "portpirie.csv", "--model", "weibull").exit_code == 2
    assert run(DATA / "portpirie.csv", "--ci", "wald").exit_code == 2
    assert run(DATA / "portpirie.csv", "--periods", "ten").exit_code == 2
    assert run(DATA / "portpirie.csv", "--method", "lmoments", "--ci", "profile").exit_code == 2
    assert run(tmp_path / "missing.csv").exit_code == 1  # bad input, not a usage error (CONTRACT.md)


@pytest.fixture(scope="module")
def series_file(tmp_path_factory):
    rng = np.random.default_rng(5)
    idx = pd.date_range("2000-01-01", periods=24 * 365 * 12, freq="h", tz="UTC")
    x = lfilter([1], [1, -0.9], rng.standard_normal(idx.size) * 0.05)
    path = tmp_path_factory.mktemp("fit") / "series.csv"
    pd.DataFrame({"time": idx.strftime("%Y-%m-%dT%H:%MZ"), "level": np.round(x, 5)}).to_csv(path, index=False)
    return path, pd.Series(np.round(x, 5), index=idx)


def test_time_series_samples(series_file):
    from extremes import extremal

    path, s = series_file
    u = float(s.quantile(0.995))
    out = json.loads(run(path, "--sample", "peaks-over-threshold", "--threshold", u, "--periods", "10,100",
                         "--json").stdout)
    peaks = extremal.peaks_over_threshold(s, threshold=u)
    assert out["model"] == "gpd" and out["n"] == len(peaks)
    # the command quality-controls the record first (a few samples may be flagged): rate to 1e-3
    assert out["rate_per_year"] == pytest.approx(peaks.rate_per_year, rel=1e-3)
    assert out["period_kind"] == "ARI"
    rl = json.loads(run(path, "--sample", "r-largest", "--r", "2", "--periods", "100", "--json").stdout)
    assert rl["model"] == "gev-r-largest" and rl["n"] == 12
    am = json.loads(run(path, "--periods", "100", "--ci", "delta", "--json").stdout)
    assert am["n"] == 12  # hourly table: read as a record, one maximum per year
    assert am["parameters"]["location"] == pytest.approx(
        extremal.fit_gev(s.groupby(s.index.year).max().to_numpy()).loc, rel=1e-6)
    assert run(path, "--sample", "r-largest", "--model", "gumbel").exit_code == 2
