"""``extremes run RECORD --out DIR``: the whole study, written as a results folder."""
from __future__ import annotations

import sys
import time
from pathlib import Path

import click

from extremes.cli import options


def progress_printer(enabled: bool):
    """A progress callback printing each stage on stderr, or None when progress is off."""
    if not enabled:
        return None
    start = time.perf_counter()

    def show(stage: str) -> None:
        click.echo(f"[{time.perf_counter() - start:6.1f} s] {stage}", err=True)

    return show


def run_and_write(record: Path, *, reader: dict, study_options, out_dir: Path, overwrite: bool,
                  show_progress: bool, figures: bool = True, reference=None, reference_reader=None):
    """Run the study on ``record`` and write it to ``out_dir``; return the StudyResult."""
    from extremes.outputs import check_output_folder
    from extremes.results import write_study
    from extremes.study import run_study

    check_output_folder(out_dir, overwrite=overwrite)  # refuse at once, before any long computation
    progress = progress_printer(show_progress)
    result = run_study(record, reader=reader, options=study_options, progress=progress, reference=reference,
                       reference_reader=reference_reader)
    write_study(result, out_dir, overwrite=overwrite, figures=figures, progress=progress)
    return result


def summary_text(result, out_dir: Path) -> str:
    """A short terminal summary: recommended levels with intervals, datum, epoch, where the report is."""
    curve = result.curves[result.recommended_method]
    periods = result.options["study"]["periods_years"]
    table = curve.table(periods)
    lines = result.assessment.summary_lines() + [
        f"Still-water return levels [m above {result.datum}] at the mean-sea-level epoch {result.epoch_year:.2f}",
        f"recommended method: {result.recommended_method}",
        f"  {'period [yr]':>11}  {'level [m]':>9}  {100 * curve.confidence:.0f}% interval [m]",
    ]
    for row in table.itertuples():
        level = "      n/a" if row.level_m != row.level_m else f"{row.level_m:9.3f}"
        interval = "" if row.lower_m != row.lower_m else f"{row.lower_m:.3f} - {row.upper_m:.3f}"
        lines.append(f"  {row.return_period_years:11g}  {level}  {interval}")
    lines.append(f"reason: {result.comparison.reason}")
    lines.append("Still water only: wave set-up, run-up and freeboard come on top; local codes and licensed "
                 "professional practice govern.")
    report = out_dir / "report.html"
    lines.append(f"results: {out_dir / 'results.json'}")
    if report.exists():
        lines.append(f"report:  {report} (and {report.with_suffix('.pdf').name} for printing)")
    return "\n".join(lines)


@click.command("run", short_help="The whole study of a record: levels, report and results folder.")
@options.record_argument
@options.reader_options
@click.option("--out", "out_dir", required=True, type=click.Path(file_okay=False, path_type=Path),
              metavar="DIR", help="Results folder to write (refused if it holds results, unless --overwrite).")
@options.study_options
@click.option("--figures/--no-figures", default=True, show_default=True,
              help="Draw the figures and the HTML and PDF report (--no-figures: numbers and tables only).")
@click.option("--progress/--no-progress", "show_progress", default=None,
              help="Show each stage on stderr (default: only on a terminal).")
@click.option("--reference", type=click.Path(path_type=Path), metavar="RECORD",
              help="A long gauge nearby sharing the site's storms, for a site with a short record; read with the "
                   "same reader options, or those of the study file's [reference] table.")
@options.overwrite_option
def command(record, reader, out_dir, config, study, figures, show_progress, reference, overwrite):
    """Run the whole study on RECORD and write DIR/results.json, tables, models, figures and report.html.

    Example:  extremes run gauge.csv --units cm --missing -99 --datum "chart datum" --out study --slr 0.5,1
    """
    study_options, merged_reader = options.resolve_study_options(config, study, reader)
    from extremes.transfer.stage import resolve_reference

    reference, reference_reader = resolve_reference(reference, config, merged_reader)
    if show_progress is None:
        show_progress = sys.stderr.isatty()
    result = run_and_write(record, reader=merged_reader, study_options=study_options, out_dir=out_dir,
                           overwrite=overwrite, show_progress=show_progress, figures=figures, reference=reference,
                           reference_reader=reference_reader)
    click.echo(summary_text(result, out_dir))
