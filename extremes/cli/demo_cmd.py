"""``extremes demo``: the whole study on the bundled example record of the invented harbour."""
from __future__ import annotations

import sys
from pathlib import Path

import click

from extremes.cli import options


@click.command("demo", short_help="Run the whole study on the bundled example record.")
@click.option("--out", "out_dir", default=Path("extremes-demo"), show_default=True,
              type=click.Path(file_okay=False, path_type=Path), metavar="DIR", help="Results folder to write.")
@click.option("--progress/--no-progress", "show_progress", default=None,
              help="Show each stage on stderr (default: only on a terminal).")
@click.option("--coast", is_flag=True,
              help="Write an example coast instead: five invented gauges and their manifest for extremes batch.")
@click.option("--years", type=click.FloatRange(min=1.0), metavar="N",
              help="With --coast: keep the last N years of each record (default all 30).")
@options.overwrite_option
def command(out_dir, show_progress, overwrite, coast, years):
    """Run the whole study on the example record of an invented harbour (30 years, hourly) and print
    where the report is. The harbour and its record are invented for demonstration: see
    example_records/README.md for the scenario and its true levels.

    With --coast, write DIR/manifest.csv and DIR/records/ (five invented gauges along an invented coast,
    made from the same record) and print the extremes batch command that studies them."""
    if coast:
        from extremes.batch.example_coast import write_example_coast

        manifest = write_example_coast(out_dir, years=years, overwrite=overwrite)
        click.echo(f"Wrote five invented gauges and their manifest {manifest} (not real places). Study them "
                   f"with:\n  extremes batch --manifest {manifest} --out {out_dir / 'results'}")
        return
    if years is not None:
        raise click.UsageError("--years goes with --coast")
    from extremes.cli.run_cmd import run_and_write, summary_text
    from extremes.examples import example_record_path
    from extremes.study_options import StudyOptions

    record = example_record_path()
    click.echo(f"Demo: studying {record.name}, the invented example harbour's record (not a real place).",
               err=True)
    # the example record's missing-value code and datum (example_records/README.md)
    result = run_and_write(record, reader={"datum": "Orrindale Gauge Zero (invented)", "missing": [-99.0]},
                           study_options=StudyOptions(), out_dir=out_dir, overwrite=overwrite,
                           show_progress=sys.stderr.isatty() if show_progress is None else show_progress)
    click.echo(summary_text(result, out_dir))
