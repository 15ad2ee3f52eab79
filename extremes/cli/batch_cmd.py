"""``extremes batch``: one study per record (or per point of a gridded model output) on dask."""
from __future__ import annotations

import functools
import json
import sys
from pathlib import Path

import click

from extremes.cli import options


@click.command("batch", short_help="One study per record (or model point) on dask; a summary of all.")
@click.argument("records", nargs=-1, metavar="[RECORD]...")
@click.option("--out", "out_dir", required=True, type=click.Path(file_okay=False, path_type=Path), metavar="DIR",
              help="Results folder: DIR/<station>/ per station, DIR/summary.csv and DIR/summary.nc.")
@click.option("--manifest", type=click.Path(exists=True, dir_okay=False, path_type=Path), metavar="FILE",
              help="CSV listing the records (column path, optional per-station reader options).")
@click.option("--gridded", multiple=True, type=click.Path(exists=True, dir_okay=False, path_type=Path),
              metavar="FILE", help="NetCDF model output (time x points): every point is a station (repeatable).")
@click.option("--block-size", type=click.IntRange(min=1), default=64, show_default=True, metavar="N",
              help="Gridded input: points per dask task.")
@options.reader_options
@options.study_options
@click.option("--scheduler", metavar="ADDRESS",
              help="Address of a running dask scheduler (e.g. tcp://host:8786); default a local cluster.")
@click.option("--workers", type=click.IntRange(min=1), metavar="N",
              help="Worker processes of the local cluster (default: one per CPU).")
@click.option("--figures/--no-figures", default=True, show_default=True,
              help="Draw each station's figures and HTML report (--no-figures: numbers and tables only).")
@click.option("--model-points", "model_points", is_flag=True,
              help="Model-point mode: no hourly check method, no per-station figures or report; the same "
                   "recommended levels, several times faster (for gridded model output).")
@click.option("--reference", type=click.Path(path_type=Path), metavar="RECORD",
              help="One long gauge serving every station with a short record (read once, with the reader "
                   "options or those of the study file's [reference] table).")
@options.overwrite_option
@click.option("--progress/--no-progress", "show_progress", default=None,
              help="Show a progress bar on stderr (default: only on a terminal).")
@options.json_option
@click.pass_context
def command(ctx, records, out_dir, manifest, gridded, block_size, reader, config, study, scheduler, workers,
            figures, model_points, reference, overwrite, show_progress, as_json):
    """Run the whole study on every RECORD (files or glob patterns), on every record of a --manifest and on
    every point of --gridded model output, one dask task per record (per block of points), and write one
    folder per station under --out with a summary of all (summary.csv, summary.nc and the page
    summary.html with the view along the coast).

    A station whose folder already holds complete results is skipped unless --overwrite. A failing station
    gets its error in the summary and the others go on; the exit status is 1 when any station failed.

    Example:  extremes batch 'gauges/*.csv' --out results --units cm --missing -99 --workers 4
    """
    from extremes import batch

    if not (records or manifest or gridded):
        raise click.UsageError("give at least one RECORD, a --manifest or a --gridded file")
    if scheduler is not None and workers is not None:
        raise click.UsageError("--workers sizes the local cluster; it cannot be used with --scheduler")
    # flags win over the study file (--config), whose [record] table supplies reader defaults
    study_options, merged_reader = options.resolve_study_options(config, study, reader)
    from extremes.transfer.stage import load_reference, resolve_reference

    reference, reference_reader = resolve_reference(reference, config, merged_reader)
    if model_points and reference is not None:
        raise click.UsageError("a reference gauge serves gauges with short records; it cannot be used with "
                               "--model-points")
    # one long gauge, read and de-tided once, serves every station
    gauge = None if reference is None else load_reference(reference, reader=reference_reader)

    stations: list = []
    if records:
        stations += batch.stations_from_paths(batch.expand_records(records), reader=merged_reader)
    if manifest is not None:
        stations += batch.read_manifest(manifest, reader=merged_reader)
    for path in gridded:
        stations += batch.gridded_blocks(path, variable=merged_reader.get("variable"), block_size=block_size,
                                         datum=merged_reader.get("datum"))

    from tqdm import tqdm

    bar = tqdm(total=len(stations), unit="task", file=sys.stderr, leave=False,
               disable=not (sys.stderr.isatty() if show_progress is None else show_progress))

    def progress(done, total, name):
        bar.set_postfix_str(name[:30], refresh=False)
        bar.update(done - bar.n)

    settings = batch.BatchSettings(mode="points" if model_points else "full", figures=figures, scheduler=scheduler,
                                   workers=workers, overwrite=overwrite, errors="ignore")
    per_station = None if gauge is None else functools.partial(settings.default_study(), reference=gauge)
    try:
        summary = batch.run_batch(stations, out_dir=out_dir, options=study_options, settings=settings,
                                  progress=progress, study=per_station)
    finally:
        bar.close()

    if as_json:
        click.echo(json.dumps(summary.to_dict(), indent=2, allow_nan=False))
    else:
        frame = summary.to_frame()
        click.echo(f"{len(frame)} stations: {summary.n_ok} ok ({summary.n_skipped} from earlier runs), "
                   f"{summary.n_failed} failed; summary in {summary.out_dir / 'summary.csv'}, page "
                   f"{summary.out_dir / 'summary.html'}")
        width = max(7, *(len(s) for s in frame["station"]))
        click.echo(f"{'station':<{width}}  {'method':<28}  {'100-yr level [m]':>16}  {'verdict':<10}  "
                   f"{'neighbours':<12}  status")
        for row in frame.itertuples(index=False):
            level = "" if row.level_100_m != row.level_100_m else f"{row.level_100_m:.3f}"
            click.echo(f"{row.station:<{width}}  {row.recommended_method:<28}  {level:>16}  "
                       f"{row.assessment or '-':<10}  {row.consistency:<12}  {row.status}")
    if summary.n_failed:
        for outcome in summary.outcomes:
            if outcome["status"] != "ok":
                click.echo(f"station {outcome['station']} failed: {outcome['status']}", err=True)
        click.echo(f"{summary.n_failed} of {len(summary.outcomes)} stations failed; "
                   f"see {summary.out_dir / 'summary.csv'}", err=True)
        ctx.exit(1)
