"""Options shared by several subcommands, so that one flag means one thing everywhere."""
from __future__ import annotations

import functools
import re
from pathlib import Path

import click

UNITS = ("m", "cm", "mm", "ft")
DEFAULT_PERIODS_YEARS = (1, 2, 5, 10, 20, 50, 100, 200, 500, 1000)


def record_argument(func):
    """The RECORD argument: an existing file (not a folder)."""
    return click.argument(
        "record", type=click.Path(exists=True, dir_okay=False, path_type=Path), metavar="RECORD"
    )(func)


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
    ]
    for option in reversed(options):
        func = option(func)

    @functools.wraps(func)
    def wrapper(*args, time_columns, level_column, time_format, units, missing, utc_offset, datum,
                decimal_comma, variable, **kwargs):
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
        }
        return func(*args, **kwargs)

    return wrapper


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
    return click.option("--seed", type=click.IntRange(min=0), default=20261202, show_default=True,
                        help="Seed for resampling; the same seed gives the same numbers.")(func)


def overwrite_option(func):
    """``--overwrite``: allow replacing existing results."""
    return click.option("--overwrite", is_flag=True, help="Replace existing results.")(func)
