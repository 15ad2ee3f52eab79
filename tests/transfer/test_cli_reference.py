"""``extremes run SITE --reference RECORD`` and ``batch --reference``: files, study-file table, results keys."""
from __future__ import annotations

import hashlib
import json

import pytest
from click.testing import CliRunner

from extremes.cli import cli
from extremes.transfer.simulate import simulate_gauge_pair

pytestmark = pytest.mark.slow  # simulations of 12-30 years and whole studies


@pytest.fixture(scope="module")
def gauges(tmp_path_factory):
    """A 12-year reference (in cm) and a 2-year site (in m) that share their storms, as CSV files."""
    folder = tmp_path_factory.mktemp("gauges")
    pair = simulate_gauge_pair(reference_years=12.0, site_years=2.0, seed=21)
    ref_cm = (pair.reference_m * 100).round(1).rename("level")
    ref_cm.rename_axis("time").reset_index().assign(
        time=lambda f: f["time"].dt.strftime("%Y-%m-%dT%H:%MZ")).to_csv(folder / "long_gauge.csv", index=False)
    site = pair.site_m.round(4).rename("level").rename_axis("time").reset_index()
    site["time"] = site["time"].dt.strftime("%Y-%m-%dT%H:%MZ")
    site.to_csv(folder / "site.csv", index=False)
    site.iloc[len(site) // 4: 3 * len(site) // 4].to_csv(folder / "site_b.csv", index=False)  # one year
    return folder


def _run(*args):
    return CliRunner().invoke(cli, ["run", *map(str, args)])


def test_run_with_reference_in_the_study_file(gauges, tmp_path):
    # the reference is in cm: its reader options come from the [reference] table, the site's from the flags
    study = tmp_path / "study.toml"
    study.write_text(f'[reference]\nrecord = "{gauges / "long_gauge.csv"}"\nunits = "cm"\n')
    out = tmp_path / "out"
    result = _run(gauges / "site.csv", "--config", study, "--out", out, "--no-figures", "--resamples", "40",
                  "--periods", "10,100")
    assert result.exit_code == 0, result.output
    doc = json.loads((out / "results.json").read_text())
    ref = doc["inputs"]["reference"]
    assert ref["record"].endswith("long_gauge.csv")
    assert ref["sha256"] == hashlib.sha256((gauges / "long_gauge.csv").read_bytes()).hexdigest()
    methods = {row["method"] for row in doc["return_levels"]}
    assert "reference-skew-surge-joint-probability" in methods and "peaks-over-threshold" in methods
    assert doc["recommended_method"] == "reference-skew-surge-joint-probability"
    detail = doc["methods"]["reference-skew-surge-joint-probability"]
    assert detail["supported"] is True and detail["relation"]["slope"] == pytest.approx(0.8, abs=0.15)
    assert "flagged as short" in doc["recommendation"]["reason"]
    # a supported transfer is judged on the reference's years: no short-record or record-length verdict
    assert not {f["check"] for f in doc["assessment"]["findings"]} & {"short-record", "record-length"}
    assert (out / "tables" / "reference_overlap.csv").is_file()
    assert "reference-skew-surge-joint-probability" in result.output


def test_reference_read_with_the_site_options_when_no_table_gives_any(gauges, tmp_path):
    # no [reference] table: the reference is read with the site's options (metres here), so its levels in cm
    # are taken as metres and the fitted slope is 0.8 / 100
    out = tmp_path / "out"
    result = _run(gauges / "site.csv", "--reference", gauges / "long_gauge.csv", "--out", out, "--no-figures",
                  "--resamples", "0", "--periods", "10,100")
    assert result.exit_code == 0, result.output
    doc = json.loads((out / "results.json").read_text())
    detail = doc["methods"]["reference-skew-surge-joint-probability"]
    assert detail["relation"]["slope"] == pytest.approx(0.008, abs=0.0015)


def test_bad_reference_is_one_line_exit_1(gauges, tmp_path):
    result = _run(gauges / "site.csv", "--reference", tmp_path / "none.csv", "--out", tmp_path / "o", "--no-figures")
    assert result.exit_code == 1
    assert "none.csv" in result.output and "Traceback" not in result.output
    study = tmp_path / "s.toml"
    study.write_text('[reference]\nrecord = "x.csv"\nunit = "cm"\n')
    result = _run(gauges / "site.csv", "--config", study, "--out", tmp_path / "o", "--no-figures")
    assert result.exit_code == 1 and "unknown key(s) ['unit'] in [reference]" in result.output


def test_batch_one_reference_serves_many_sites(gauges, tmp_path):
    study = tmp_path / "study.toml"
    study.write_text(f'[reference]\nrecord = "{gauges / "long_gauge.csv"}"\nunits = "cm"\n')
    out = tmp_path / "batch"
    result = CliRunner().invoke(cli, ["batch", str(gauges / "site.csv"), str(gauges / "site_b.csv"), "--config",
                                      str(study), "--out", str(out), "--no-figures", "--resamples", "0",
                                      "--periods", "10,100", "--workers", "1", "--json"])
    assert result.exit_code == 0, result.output
    report = json.loads(result.stdout)
    assert [s["recommended_method"] for s in report["stations"]] == ["reference-skew-surge-joint-probability"] * 2
    digests = {json.loads((out / name / "results.json").read_text())["inputs"]["reference"]["sha256"]
               for name in ("site", "site_b")}
    assert digests == {hashlib.sha256((gauges / "long_gauge.csv").read_bytes()).hexdigest()}


def test_short_record_without_reference_is_unreliable_beyond_a_few_years(gauges, tmp_path):
    out = tmp_path / "alone"
    result = _run(gauges / "site.csv", "--out", out, "--no-figures", "--resamples", "0", "--periods", "2,5,100")
    assert result.exit_code == 0, result.output
    doc = json.loads((out / "results.json").read_text())
    assert doc["assessment"]["status"] == "unreliable"
    short = [f for f in doc["assessment"]["findings"] if f["check"] == "short-record"]
    assert [f["severity"] for f in short] == ["unreliable", "check"]
    assert "cannot support the 100-year levels" in short[0]["text"] and "the 5-year levels" in short[1]["text"]
    assert "UNRELIABLE" in result.output


def test_reference_that_does_not_overlap_the_site_is_one_line_exit_1(gauges, tmp_path):
    # the site's readings moved 20 years later: the reference ends long before they begin
    import pandas as pd

    site = pd.read_csv(gauges / "site.csv")
    site["time"] = (pd.to_datetime(site["time"]) + pd.DateOffset(years=20)).dt.strftime("%Y-%m-%dT%H:%MZ")
    site.to_csv(tmp_path / "later.csv", index=False)
    study = tmp_path / "study.toml"
    study.write_text(f'[reference]\nrecord = "{gauges / "long_gauge.csv"}"\nunits = "cm"\n')
    result = _run(tmp_path / "later.csv", "--config", study, "--out", tmp_path / "o", "--no-figures",
                  "--resamples", "0")
    assert result.exit_code == 1
    assert "long_gauge.csv" in result.output and "overlap" in result.output and "Traceback" not in result.output
    assert not (tmp_path / "o").exists()
