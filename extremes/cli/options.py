"""Options shared by several subcommands, so that one flag means one thing everywhere."""
from __future__ import annotations

import functools
import re
from pathlib import Path

import click

from extremes.constants import DEFAULT_PERIODS_YEARS, DEFAULT_SEED

UNITS = ("m", "cm", "mm", "ft")


def record_argument(func):
    """The RECORD argument: a path; a missing or unreadable file is an input error (exit 1, one line from
    the reader), not a usage error."""
    return click.argument("record", type=click.Path(path_type=Path), metavar="RECORD")(func)


def _check_offset(ctx, param, value):
    if value is None:
        return None
    if not re.fullmatch(r"[+-]\d{2}:\d{2}", value) or int(value[1:3]) > 14 or int(value[4:6]) > 59:
        raise click.BadParameter(f"expected +HH:MM or -HH:MM (e.g. +10:00), got {value!r}")
    return value


def reader_options(func):
    """Options that say how to read a record; collected into ``reader`` (a dict) for the command."""
    options = [
        click.option("--time-column", "time_columns", multiple=True, metavar="NAME",
                     help="Column of time stamps; give twice for a date column and a time-of-day column."),
        click.option("--level-column", metavar="NAME", help="Column of water levels."),
        click.option("--time-format", metavar="FORMAT",
                     help="strftime format of stamps that are not ISO 8601, e.g. '%d/%m/%Y %H:%M'."),
        click.option("--units", type=click.Choice(UNITS), default="m", show_default=True,
                     help="Units of the level column."),
        click.option("--missing", "missing", multiple=True, type=float, metavar="VALUE",
                     help="A code meaning 'no reading', in the file's units (repeatable)."),
        click.option("--utc-offset", callback=_check_offset, metavar="+HH:MM",
                     help="Offset of time stamps that carry none (naive stamps are refused without it)."),
        click.option("--datum", metavar="NAME", help="Name of the vertical datum of the levels."),
        click.option("--decimal-comma", is_flag=True, help="Numbers use a decimal comma (e.g. 1,23)."),
        click.option("--variable", metavar="NAME", help="NetCDF only: the water-level variable to read."),
        click.option("--corrections", type=click.Path(path_type=Path), metavar="FILE",
                     help="Known corrections (CSV start,end,add_m,shift_minutes), applied before quality control."),
    ]
    for option in reversed(options):
        func = option(func)

    @functools.wraps(func)
    def wrapper(*args, time_columns, level_column, time_format, units, missing, utc_offset, datum,
                decimal_comma, variable, corrections, **kwargs):
        _remember_given_reader_flags()
        kwargs["reader"] = {
            "time_columns": list(time_columns) or None,
            "level_column": level_column,
            "time_format": time_format,
            "units": units,
            "missing": list(missing),
            "utc_offset": utc_offset,
            "datum": datum,
            "decimal": "," if decimal_comma else ".",
            "variable": variable,
            "corrections": None if corrections is None else str(corrections),
        }
        return func(*args, **kwargs)

    return wrapper


#: reader keys and the parameters that set them
_READER_PARAMS = {"time_columns": "time_columns", "level_column": "level_column", "time_format": "time_format",
                  "units": "units", "missing": "missing", "utc_offset": "utc_offset", "datum": "datum",
                  "decimal": "decimal_comma", "variable": "variable"}
_GIVEN_KEY = "extremes.reader_flags_given"


def _remember_given_reader_flags() -> None:
    """Note in the click context which reader options were given on the command line (not defaulted), so
    that a given flag beats the study file even when it equals its default (``--units m`` over ``cm``)."""
    from click.core import ParameterSource

    ctx = click.get_current_context(silent=True)
    if ctx is None:
        return
    defaulted = {ParameterSource.DEFAULT, ParameterSource.DEFAULT_MAP, None}
    ctx.meta[_GIVEN_KEY] = {key for key, param in _READER_PARAMS.items()
                            if ctx.get_parameter_source(param) not in defaulted}


def parse_number_list(text: str, *, name: str) -> list[float]:
    """Parse a comma-separated list of numbers given to option ``name``; raise BadParameter otherwise."""
    items = [item.strip() for item in str(text).split(",") if item.strip()]
    if not items:
        raise click.BadParameter(f"expected comma-separated numbers, got {text!r}", param_hint=name)
    values = []
    for item in items:
        try:
            values.append(float(item))
        except ValueError:
            raise click.BadParameter(
                f"expected comma-separated numbers, got {item!r} in {text!r}", param_hint=name
            ) from None
    return values


def _periods_callback(ctx, param, value):
    if value is None:
        return list(DEFAULT_PERIODS_YEARS)
    periods = parse_number_list(value, name="--periods")
    bad = [p for p in periods if not p >= 1]
    if bad:
        raise click.BadParameter(f"return periods must all be >= 1 year; got {bad}", param_hint="--periods")
    return periods


def periods_option(func):
    """``--periods LIST``: return periods in years (default 1,2,5,10,20,50,100,200,500,1000)."""
    return click.option("--periods", callback=_periods_callback, metavar="LIST",
                        help="Comma-separated return periods [years]. "
                             "Default: 1,2,5,10,20,50,100,200,500,1000.")(func)


def json_option(func):
    """``--json``: print the machine-readable result on stdout instead of the terminal summary."""
    return click.option("--json", "as_json", is_flag=True, help="Print JSON on stdout.")(func)


def seed_option(func):
    """``--seed N``: seed of every random draw (the default is fixed and recorded)."""
    return click.option("--seed", type=click.IntRange(min=0), default=DEFAULT_SEED, show_default=True,
                        help="Seed for resampling; the same seed gives the same numbers.")(func)


def overwrite_option(func):
    """``--overwrite``: allow replacing existing results."""
    return click.option("--overwrite", is_flag=True, help="Replace existing results.")(func)


def _optional_periods_callback(ctx, param, value):
    return None if value is None else _periods_callback(ctx, param, value)


def _optional_numbers_callback(ctx, param, value):
    return None if value is None else tuple(parse_number_list(value, name=f"--{param.name.replace('_', '-')}"))


def study_options(func):
    """Options of a whole study (``run`` and ``batch``), collected into ``study`` (a dict) and ``config``.

    Unset flags are None so that a TOML study file given with ``--config`` supplies them; see
    :func:`resolve_study_options`.
    """
    options = [
        click.option("--config", type=click.Path(exists=True, dir_okay=False, path_type=Path),
                     metavar="STUDY.toml", help="TOML study file; flags given here override it."),
        click.option("--epoch", "epoch_year", type=click.FloatRange(1800, 2300), metavar="YEAR",
                     help="Mean-sea-level epoch of the levels [decimal year]. Default: end of record."),
        click.option("--periods", "periods_years", callback=_optional_periods_callback, metavar="LIST",
                     help="Comma-separated return periods [years]. Default: 1,2,5,10,20,50,100,200,500,1000."),
        click.option("--slr", "slr_m", callback=_optional_numbers_callback, metavar="LIST",
                     help="Comma-separated sea-level-rise offsets [m]. Default: 0,0.25,0.5,1."),
        click.option("--slr-scenarios", "slr_scenarios", type=click.Path(exists=True, dir_okay=False),
                     metavar="FILE", help="Sea-level-rise scenario table (CSV or TOML) of rise by year."),
        click.option("--design-life", "design_life_years", type=click.FloatRange(min=1), metavar="YEARS",
                     help="Design life for encounter probabilities [years]. Default: 50."),
        click.option("--accepted-risk", "accepted_risk", type=click.FloatRange(0, 1, min_open=True, max_open=True),
                     metavar="P", help="Accepted probability of exceedance over the design life. Default: 0.1."),
        click.option("--resamples", type=click.IntRange(min=0), metavar="N",
                     help="Resamples for joint-probability intervals. Default: 500."),
        click.option("--seed", type=click.IntRange(min=0), metavar="N",
                     help="Seed of every random draw (default fixed and recorded)."),
    ]
    for option in reversed(options):
        func = option(func)

    @functools.wraps(func)
    def wrapper(*args, config, epoch_year, periods_years, slr_m, slr_scenarios, design_life_years,
                accepted_risk, resamples, seed, **kwargs):
        kwargs["config"] = config
        kwargs["study"] = {
            "epoch_year": epoch_year, "periods_years": periods_years, "slr_m": slr_m,
            "slr_scenarios": None if slr_scenarios is None else str(Path(slr_scenarios).resolve()),
            "design_life_years": design_life_years, "accepted_risk": accepted_risk,
            "resamples": resamples, "seed": seed,
        }
        return func(*args, **kwargs)

    return wrapper


def resolve_study_options(config, study: dict, reader: dict):
    """Combine a study file (if any), study flags and reader flags; flags win over the file.

    Returns ``(StudyOptions, reader dict)``.
    """
    from extremes.study_options import StudyOptions, load_study_file

    file_options, file_reader = (StudyOptions(), {}) if config is None else load_study_file(config)
    options = file_options.replace(**study)
    ctx = click.get_current_context(silent=True)
    given = ctx.meta.get(_GIVEN_KEY, set()) if ctx is not None else set(reader)
    merged = dict(file_reader)
    for key, value in reader.items():
        if value is None or (key in file_reader and key not in given):
            continue  # unset, or a default that must not hide the file's value
        merged[key] = value
    return options, merged
