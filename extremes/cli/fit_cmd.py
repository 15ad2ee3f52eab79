"""``extremes fit FILE``: fit an extreme-value model and print return levels with intervals."""
from __future__ import annotations

import json
import logging
import math
import warnings

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
    from extremes import extremal  # imported here so that --help starts fast

    if ci is None:
        ci = "profile" if method == "mle" else "bootstrap"
    if ci == "profile" and method != "mle":
        raise click.BadParameter("profile intervals need --method mle; use --ci bootstrap or delta",
                                 param_hint="--ci")
    if sample == "r-largest" and model == "gumbel":
        raise click.BadParameter("r-largest fits the GEV only; use --model gev", param_hint="--model")
    if sample == "r-largest" and method != "mle":
        raise click.BadParameter("r-largest fits use maximum likelihood only; use --method mle",
                                 param_hint="--method")
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        if sample == "annual-maxima":
            data = extremal.read_annual_maxima(file, units=reader["units"], several_per_year="none")
            if data is None:  # several rows per year: a time series
                data = extremal.annual_maxima(_series(file, reader), min_coverage=min_coverage,
                                              water_year_start_month=water_year_start)
                info = {"years_dropped": [{"year": int(r.year), "reason": r.reason}
                                          for r in data.dropped.itertuples()]}
            else:
                info = {}
            fit = (extremal.fit_gev if model == "gev" else extremal.fit_gumbel)(data, method=method)
        elif sample == "r-largest":
            series = _series(file, reader)
            data = extremal.r_largest(series, r=r, min_separation_hours=min_separation_hours,
                                      min_coverage=min_coverage, water_year_start_month=water_year_start)
            info = {"years": len(data.values), "r": r, "min_separation_hours": min_separation_hours}
            fit = extremal.fit_gev_rlargest(data)
        else:
            series = _series(file, reader)
            info = {"min_separation_hours": min_separation_hours}
            if threshold is None:
                choice = extremal.select_threshold(series, min_separation_hours=min_separation_hours)
                threshold = choice.threshold_m
                info["threshold_rule"] = choice.rule
            peaks = extremal.peaks_over_threshold(series, threshold=threshold,
                                                  min_separation_hours=min_separation_hours)
            fitter = extremal.fit_gpd if model == "gev" else extremal.fit_exponential
            fit = fitter(peaks, method=method)
            info.update({"threshold_m": fit.threshold, "rate_per_year": fit.rate_per_year,
                         "observed_years": fit.years})
        table = extremal.return_levels(fit, periods, ci=ci, confidence=confidence, n_bootstrap=n_bootstrap,
                                       seed=seed)
    for w in caught:
        logger.warning("%s", w.message)
    out = _result(fit, table, sample=sample, ci=ci, seed=seed, info=info)
    if as_json:
        click.echo(json.dumps(out, allow_nan=False))
    else:
        click.echo(_summary(out))


def _series(file, reader):
    """Read FILE as a gauge record and quality-control it: the clean level series [m]."""
    from extremes import quality, records

    return quality.check_record(records.read_record(file, **reader)).level_m


def _num(v):
    if v is None:
        return None
    v = float(v)
    return v if math.isfinite(v) else None


def _result(fit, table, *, sample, ci, seed, info):
    d = fit.to_dict()
    if sample == "peaks-over-threshold":
        se = d["standard_errors"]
        out = {"model": d["model"], "method": d["method"], "n": d["n"],
               "parameters": {"location": _num(fit.threshold), "scale": _num(fit.scale), "shape": _num(fit.shape)},
               "standard_errors": {"location": None, "scale": se["scale"], "shape": se["shape"]},
               "log_likelihood": _num(fit.log_likelihood), "rate_per_year": _num(fit.rate_per_year),
               "rate_per_year_se": se["rate_per_year"]}
    else:
        out = {k: d[k] for k in ("model", "method", "n", "parameters", "standard_errors", "log_likelihood")}
    out["sample"] = sample
    out["ci"] = ci
    out["period_kind"] = table.attrs.get("period_kind")
    if ci == "bootstrap":
        out["seed"] = seed
    out["details"] = {k: (_num(v) if isinstance(v, float) else v) for k, v in info.items()}
    out["return_levels"] = [
        {"return_period_years": _num(row.return_period_years), "level_m": _num(row.level_m),
         "lower_m": _num(row.lower_m), "upper_m": _num(row.upper_m), "confidence": _num(row.confidence)}
        for row in table.itertuples()]
    return out


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
