"""Shared options: a flag given on the command line always beats the study file."""
from __future__ import annotations

import json

import click
from click.testing import CliRunner

from extremes.cli import options


@click.command()
@options.reader_options
@options.study_options
def _probe(reader, config, study):
    study_options, merged = options.resolve_study_options(config, study, reader)
    click.echo(json.dumps({"reader": merged, "seed": study_options.seed,
                           "periods": list(study_options.periods_years)}))


def _run(tmp_path, *args):
    study = tmp_path / "study.toml"
    study.write_text('[record]\nunits = "cm"\ndecimal = ","\n[study]\nseed = 3\nperiods_years = [10, 100]\n')
    result = CliRunner().invoke(_probe, ["--config", str(study), *args])
    assert result.exit_code == 0, result.output
    return json.loads(result.output)


def test_flag_equal_to_its_default_beats_the_file(tmp_path):
    out = _run(tmp_path, "--units", "m", "--seed", "5")
    assert out["reader"]["units"] == "m" and out["seed"] == 5
    assert out["reader"]["decimal"] == ","  # not given: the file's value stands
    assert out["periods"] == [10.0, 100.0]


def test_unset_flags_keep_the_file(tmp_path):
    out = _run(tmp_path)
    assert out["reader"]["units"] == "cm" and out["seed"] == 3
