"""``extremes rerun DIR --slr LIST``: new sea-level-rise offsets from a study's saved curves, no refitting."""
from __future__ import annotations

import json
from pathlib import Path

import click

from extremes.cli import options


def _slr_callback(ctx, param, value):
    return tuple(options.parse_number_list(value, name="--slr"))


@click.command("rerun", short_help="New sea-level-rise offsets from a study's saved fits (no refitting).")
@click.argument("results_dir", type=click.Path(exists=True, file_okay=False, path_type=Path), metavar="DIR")
@click.option("--slr", "slr_m", required=True, callback=_slr_callback, metavar="LIST",
              help="Comma-separated sea-level-rise offsets [m].")
@click.option("--periods", "periods_years", callback=options._optional_periods_callback, metavar="LIST",
              help="Comma-separated return periods [years]. Default: the study's.")
@click.option("--method", default=None, metavar="NAME",
              help="Method whose levels are raised. Default: the study's recommended method.")
@click.option("--out", "out_dir", type=click.Path(file_okay=False, path_type=Path), metavar="DIR2",
              help="Write a results folder with the new offsets (results.json and tables).")
@options.json_option
@options.overwrite_option
def command(results_dir, slr_m, periods_years, method, out_dir, as_json, overwrite):
    """Raise the saved return levels of the study in DIR by each offset in --slr and state how often
    today's climate would reach each raised level. Uses the saved curves only: no refitting.

    Example:  extremes rerun study --slr 0.3,0.5,1.0 --out study-slr
    """
    from extremes.rerun import rerun_sea_level_rise

    document = rerun_sea_level_rise(results_dir, slr_m=slr_m, periods_years=periods_years, method=method,
                                     out_dir=out_dir, overwrite=overwrite)
    if as_json:
        click.echo(json.dumps({"sea_level_rise": document["sea_level_rise"],
                               "method": document["sea_level_rise_details"]["method"],
                               "datum": document["datum"], "epoch_year": document["epoch_year"],
                               "cautions": document["cautions"]}, allow_nan=False))
        return
    details = document["sea_level_rise_details"]
    click.echo(f"Sea-level rise on the {details['method']} levels [m above {document['datum']}], "
               f"epoch {document['epoch_year']:.2f}")
    click.echo(f"  {'offset [m]':>10}  {'period [yr]':>11}  {'level [m]':>9}  {'present period [yr]':>19}")
    for row in document["sea_level_rise"]:
        present = row["present_return_period_years_of_level"]
        present_text = ">10000" if present is None else f"{present:.3g}"
        level = "n/a" if row["level_m"] is None else f"{row['level_m']:.3f}"
        click.echo(f"  {row['offset_m']:10g}  {row['return_period_years']:11g}  {level:>9}  {present_text:>19}")
    if out_dir is not None:
        click.echo(f"results: {Path(out_dir) / 'results.json'}")
    click.echo("Still water only: wave set-up, run-up and freeboard come on top; local codes and licensed "
               "professional practice govern.")
