"""``extremes fit FILE``: fit an extreme-value model and print return levels with intervals."""
from __future__ import annotations

import json
import logging

import click

from extremes.cli.options import json_option, periods_option, reader_options, seed_option
from extremes.extremal import CI_METHODS, FIT_METHODS, MODELS, SAMPLE_METHODS  # the library's lists, once

logger = logging.getLogger(__name__)


@click.command("fit", short_help="Fit GEV/Gumbel (or GPD, r-largest) and print return levels.")
@click.argument("file", type=click.Path(), metavar="FILE")
@click.option("--model", type=click.Choice(sorted(MODELS)), default="gev", show_default=True,
              help="gev or gumbel (with peaks over threshold: GPD or exponential).")
@click.option("--method", type=click.Choice(sorted(FIT_METHODS)), default="mle", show_default=True,
              help="Maximum likelihood or L-moments.")
@click.option("--ci", type=click.Choice(sorted(CI_METHODS)), default=None,
              help="Interval method [default: profile for mle, bootstrap for lmoments].")
@click.option("--bootstrap", "n_bootstrap", type=click.IntRange(min=10), default=1000, show_default=True,
              help="Bootstrap samples (with --ci bootstrap).")
@click.option("--confidence", type=click.FloatRange(0, 1, min_open=True, max_open=True), default=0.95,
              show_default=True, help="Confidence level of the intervals.")
@click.option("--sample", type=click.Choice(SAMPLE_METHODS), default="annual-maxima", show_default=True,
              help="How extremes are drawn from FILE. annual-maxima reads a (year or time, value) table; "
                   "the others read a time series.")
@click.option("--threshold", type=float, default=None, metavar="LEVEL",
              help="Peaks over threshold: the threshold [m]; chosen automatically when omitted.")
@click.option("--min-separation-hours", type=click.FloatRange(min=0), default=72.0, show_default=True,
              help="Peaks over threshold / r-largest: minimum time between independent events [h].")
@click.option("--r", "r", type=click.IntRange(min=1, max=50), default=5, show_default=True,
              help="r-largest: events per year.")
@click.option("--min-coverage", type=click.FloatRange(0, 1), default=0.9, show_default=True,
              help="Time series: keep years with at least this fraction of valid samples.")
@click.option("--water-year-start", type=click.IntRange(1, 12), default=1, show_default=True,
              help="Time series: first month of the year used for annual maxima.")
@periods_option
@seed_option
@json_option
@reader_options
def command(file, model, method, ci, n_bootstrap, confidence, sample, threshold, min_separation_hours, r,
            min_coverage, water_year_start, periods, seed, as_json, reader):
    """Fit an extreme-value model to FILE and print return levels with confidence intervals.

    FILE is by default a two-column table of annual maxima (year or time, value; header optional; comma,
    semicolon, tab or whitespace separated). A table with several rows per year, or --sample
    peaks-over-threshold / r-largest, is read as a time series with the reader options.

    Example:  extremes fit annual_maxima.csv --ci profile --periods 10,100 --json
    """
    from extremes.extremal import sample_fit  # imported here so that --help starts fast

    ci = sample_fit.default_ci(method) if ci is None else ci
    problem = sample_fit.invalid_choice(sample=sample, model=model, method=method, ci=ci)
    if problem is not None:
        raise click.BadParameter(problem[1], param_hint=f"--{problem[0]}")
    data = sample_fit.read_fit_input(file, sample=sample, reader=reader)
    result = sample_fit.fit_sample(data, sample=sample, model=model, method=method, ci=ci, periods_years=periods,
                                   confidence=confidence, n_bootstrap=n_bootstrap, seed=seed, threshold_m=threshold,
                                   min_separation_hours=min_separation_hours, r=r, min_coverage=min_coverage,
                                   water_year_start_month=water_year_start)
    out = result.to_dict()
    if as_json:
        click.echo(json.dumps(out, allow_nan=False))
    else:
        click.echo(_summary(out))


def _fmt(v, spec=".4f"):
    return "-" if v is None else format(v, spec)


def _summary(out):
    p, se = out["parameters"], out["standard_errors"]
    lines = [f"{out['model']} fit ({out['method']}) of {out['n']} values ({out['sample']})"]
    if out["sample"] == "peaks-over-threshold":
        lines.append(f"  threshold {_fmt(p['location'])} m, {_fmt(out['rate_per_year'], '.3g')} events per "
                     "observed year")
    else:
        lines.append(f"  location  {_fmt(p['location'])} m  (se {_fmt(se['location'])})")
    lines.append(f"  scale     {_fmt(p['scale'])} m  (se {_fmt(se['scale'])})")
    lines.append(f"  shape     {_fmt(p['shape'])}    (se {_fmt(se['shape'])})  [> 0: heavy tail]")
    lines.append(f"  log-likelihood {_fmt(out['log_likelihood'])}")
    conf = out["return_levels"][0]["confidence"] if out["return_levels"] else 0.95
    kind = "ARI" if out.get("period_kind") == "ARI" else "1/AEP"
    lines.append(f"  return levels ({out['ci']} {conf:.0%} interval; period = {kind})")
    lines.append(f"  {'period [yr]':>12} {'level [m]':>10} {'lower [m]':>10} {'upper [m]':>10}")
    for row in out["return_levels"]:
        lines.append(f"  {row['return_period_years']:>12g} {_fmt(row['level_m']):>10} {_fmt(row['lower_m']):>10} "
                     f"{_fmt(row['upper_m']):>10}")
    return "\n".join(lines)
