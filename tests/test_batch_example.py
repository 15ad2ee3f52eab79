"""The README's batch example runs as written: its manifest is the one `extremes demo --coast` writes, it
parses, and its two commands produce the summary page (here on two years of each record, for time)."""
from __future__ import annotations

import io
import shlex
from pathlib import Path

import pandas as pd
import pytest
from click.testing import CliRunner

from extremes import batch
from extremes.batch.example_coast import COAST, MANIFEST_NAME, manifest_table, write_example_coast
from extremes.cli import cli
from extremes.errors import OutputError
from extremes.records import read_record

ROOT = Path(__file__).resolve().parents[1]


def _readme_blocks() -> list[list[str]]:
    """The indented code blocks of the README's manifest bullet (each a list of stripped lines)."""
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    section = text.split("## Many records: `extremes batch`", 1)[1].split("\n## ", 1)[0]
    bullet = section.split("- `--manifest FILE`", 1)[1].split("\n- `", 1)[0]
    blocks, current = [], []
    for line in bullet.splitlines():
        if line.startswith("      ") and line.strip():
            current.append(line.strip())
        elif current:
            blocks.append(current)
            current = []
    return blocks + ([current] if current else [])


def test_readme_manifest_is_the_one_the_demo_writes():
    commands, manifest = _readme_blocks()[:2]
    assert commands[0] == "extremes demo --coast --out coast"
    assert commands[1] == f"extremes batch --manifest coast/{MANIFEST_NAME} --out coast/results"
    written = manifest_table().to_csv(index=False).strip().splitlines()
    assert manifest == written
    table = pd.read_csv(io.StringIO("\n".join(manifest)), dtype=str, keep_default_na=False)
    assert table["station"].tolist() == [g.station for g in COAST]


def test_example_coast_parses_and_reads_back_the_scaled_record(tmp_path):
    manifest = write_example_coast(tmp_path / "coast", years=1.5)
    stations = batch.read_manifest(manifest)
    assert [s.name for s in stations] == [g.station for g in COAST]
    assert [s.chainage for s in stations] == [g.chainage_km for g in COAST]
    levels = {s.name: read_record(s.path, **s.reader).water_level_m for s in stations}
    first = levels["Port_Orrindale"]
    for gauge in COAST:
        level = levels[gauge.station]
        # every layout (metres, centimetres at UTC+10 with 9999 codes, millimetres with empty cells) reads
        # back to the same UTC times and the same missing readings
        assert level.index.equals(first.index)
        assert level.isna().sum() == first.isna().sum()
        # the level about its mean is the record's scaled by the gauge's factor, up to the added noise and
        # the rounding of each layout
        a, b = first - first.mean(), level - level.mean()
        slope = float((a * b).sum() / (a * a).sum())
        assert slope == pytest.approx(gauge.factor, abs=0.005), gauge.station
        assert float(level.mean() - first.mean()) == pytest.approx(gauge.offset_m, abs=0.01)
    with pytest.raises(OutputError, match="overwrite"):  # never over an existing folder unasked
        write_example_coast(tmp_path / "coast", years=1.5)


@pytest.mark.slow  # five studies on a local dask cluster
def test_readme_batch_commands_run_and_write_the_summary_page(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    commands = _readme_blocks()[0]
    demo = shlex.split(commands[0])[1:] + ["--years", "2"]  # two years of each record, for time
    result = CliRunner().invoke(cli, demo)
    assert result.exit_code == 0, result.output
    assert commands[1] in result.output  # the demo names the command the README gives
    run = shlex.split(commands[1])[1:] + ["--no-figures"]
    result = CliRunner().invoke(cli, run)
    assert result.exit_code == 0, result.output
    summary = pd.read_csv(tmp_path / "coast" / "results" / "summary.csv")
    assert summary["station"].tolist() == [g.station for g in COAST]
    assert (summary["status"] == "ok").all()
    assert summary["coast_order"].tolist() == list(range(len(COAST)))
    page = (tmp_path / "coast" / "results" / "summary.html").read_text(encoding="utf-8")
    assert all(g.station in page for g in COAST)
