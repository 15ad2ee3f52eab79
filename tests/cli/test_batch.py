"""``extremes batch`` through the click group: usage errors, sources, exit codes, summaries, resume."""
from __future__ import annotations

import json

import pandas as pd
import pytest
from click.testing import CliRunner

from extremes.cli import cli

pytestmark = pytest.mark.slow  # whole studies, batches or simulations


def invoke(*args):
    return CliRunner().invoke(cli, ["batch", *map(str, args)])


@pytest.mark.parametrize("args, message", [
    (["--out", "x"], "give at least one RECORD"),
    (["a.csv", "--out", "x", "--workers", "2", "--scheduler", "tcp://127.0.0.1:1"], "cannot be used with"),
    (["a.csv", "--out", "x", "--periods", "0.5,10"], "return periods must all be >= 1"),
    (["a.csv", "--out", "x", "--slr", "0.5,abc"], "expected comma-separated numbers"),
    (["a.csv", "--out", "x", "--workers", "0"], "--workers"),
    (["a.csv", "--out", "x", "--epoch", "3000"], "--epoch"),
])
def test_usage_errors_exit_2(tmp_path, monkeypatch, args, message):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "a.csv").write_text("time,level\n")
    result = invoke(*args)
    assert result.exit_code == 2, result.output
    assert message in result.output
    assert not (tmp_path / "x").exists()


def test_unmatched_pattern_and_bad_manifest_exit_1_one_line(tmp_path):
    result = invoke(tmp_path / "*.csv", "--out", tmp_path / "out")
    assert result.exit_code == 1
    assert "no file matches" in result.output and "Traceback" not in result.output
    (tmp_path / "m.csv").write_text("file\nx.csv\n")
    result = invoke("--manifest", tmp_path / "m.csv", "--out", tmp_path / "out")
    assert result.exit_code == 1
    assert "expected a 'path' column" in result.output
    assert not (tmp_path / "out").exists()


def test_batch_command_end_to_end_failure_resume_and_manifest(tmp_path):
    pytest.importorskip("extremes.study", reason="the study module has not landed yet")
    from tests.test_batch import write_tidal_record

    write_tidal_record(tmp_path / "harbour.csv", seed=3)
    (tmp_path / "broken.csv").write_text("time,level\n2020-01-01T00:00Z,abc\n")
    out = tmp_path / "out"
    common = ["--out", out, "--datum", "CD", "--periods", "10,100", "--resamples", "20", "--no-figures", "--json"]
    first = invoke(tmp_path / "*.csv", *common, "--workers", "1")
    assert first.exit_code == 1, first.output
    report = json.loads(first.stdout)
    assert (report["n_stations"], report["n_ok"], report["n_failed"], report["n_skipped"]) == (2, 1, 1, 0)
    stations = {s["station"]: s for s in report["stations"]}
    assert stations["harbour"]["status"] == "ok" and stations["broken"]["status"] != "ok"
    assert "station broken failed" in first.stderr
    summary = pd.read_csv(out / "summary.csv").set_index("station")
    results = json.loads((out / "harbour" / "results.json").read_text())
    best = next(r for r in results["return_levels"]
                if r["method"] == results["recommended_method"] and r["return_period_years"] == 100)
    assert summary.loc["harbour", "level_100_m"] == best["level_m"] == stations["harbour"]["level_100_m"]
    assert summary.loc["harbour", "recommended_method"] == results["recommended_method"]
    assert (out / "summary.nc").is_file()

    # a manifest naming the same station: found done, skipped, counted
    (tmp_path / "list.csv").write_text("path,station,units,lat,lon\nharbour.csv,harbour,m,-35.5,138.25\n")
    second = invoke("--manifest", tmp_path / "list.csv", *common, "--workers", "1")
    assert second.exit_code == 0, second.output
    report = json.loads(second.stdout)
    assert (report["n_stations"], report["n_skipped"]) == (1, 1)
    assert report["stations"][0]["lat"] == -35.5
    assert report["stations"][0]["level_100_m"] == best["level_m"]


def test_model_points_mode_and_the_summary_page(tmp_path):
    from tests.test_batch import write_tidal_record

    write_tidal_record(tmp_path / "point_a.csv", seed=5)
    out = tmp_path / "out"
    result = invoke(tmp_path / "point_a.csv", "--out", out, "--periods", "10,100", "--resamples", "20",
                    "--model-points", "--workers", "1")
    assert result.exit_code == 0, result.output
    assert "summary.html" in result.stdout and "neighbours" in result.stdout
    assert (out / "point_a" / "results.json").is_file() and not (out / "point_a" / "report.html").exists()
    page = (out / "summary.html").read_text(encoding="utf-8")
    assert "model-point mode" in page and 'href="point_a/results.json"' in page
    assert (out / "summary_figures" / "levels_along_coast.png").is_file()
    results = json.loads((out / "point_a" / "results.json").read_text())
    assert "joint-probability" not in {r["method"] for r in results["return_levels"]}
    # the station's verdict from its results.json, in the summary and on the page
    summary = pd.read_csv(out / "summary.csv", keep_default_na=False).set_index("station")
    assert summary.loc["point_a", "assessment"] == results["assessment"]["status"]
    assert summary.loc["point_a", "assessment"] in ("ok", "check", "unreliable")
    assert summary.loc["point_a", "assessment_reasons"] == "; ".join(results["assessment"]["reasons"])
