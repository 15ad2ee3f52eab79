"""``extremes inspect RECORD``: read and quality-control a record; print a summary or the record JSON."""
from __future__ import annotations

import json

import click

from extremes.cli.options import json_option, reader_options, record_argument

_FLAG_TEXT = {
    "missing": "rows without a value",
    "sentinel": "rows holding a missing-value code",
    "duplicate": "identical duplicate rows (same stamp and value as an earlier row)",
    "conflicting_duplicate": "rows sharing a stamp with a different value",
    "out_of_range": "values outside the record's robust range",
    "flatline": "readings in flat lines (stuck gauge)",
    "spike": "spikes",
    "out_of_order": "rows out of time order (sorted into place)",
}


@click.command("inspect", short_help="Read and quality-control a record; summary or --json.")
@record_argument
@reader_options
@json_option
def command(record, reader, as_json):
    """Read RECORD, quality-control it and print what was found.

    With --json, prints the `record` object (span, interval, counts of flags, gaps, completeness per year,
    candidate datum shifts) as one JSON document on stdout.

    Example:  extremes inspect gauge.csv --units cm --missing -999 --utc-offset +10:00
    """
    from extremes import quality, records  # imported here so that --help starts fast

    gauge = records.read_record(record, **reader)
    report = quality.check_record(gauge)
    data = report.to_dict()
    if as_json:
        click.echo(json.dumps(data, allow_nan=False))
        return
    click.echo(_summary(gauge, data))


def _summary(gauge, data: dict) -> str:
    lines = [f"{gauge.source}  (sha256 {gauge.sha256[:12]}...)"]
    meta = gauge.meta
    columns = meta.get("variable") or (" + ".join(meta.get("time_columns", [])) + " / "
                                       + str(meta.get("level_column")))
    lines.append(f"  read      {meta.get('format')}; columns {columns}; units {meta.get('units_in_file')} -> m; "
                 f"UTC offset {meta.get('utc_offset_applied')}; datum {data['datum']}")
    interval = data["interval_minutes"]
    lines.append(f"  span      {data['start']} to {data['end']}")
    sampling = "regular" if data["regular"] else f"irregular ({100 * data['irregular_fraction']:.1f}% off grid)"
    lines.append(f"  interval  {interval:g} min, {sampling}" if interval is not None else "  interval  unknown")
    lines.append(f"  rows      {data['n_samples']} read: {data['n_ok']} ok, {data['n_missing']} missing, "
                 f"{data['n_flagged']} flagged")
    faults = data["faults"]
    if faults:
        lines.append("  faults")
        for name, fault in faults.items():
            where = ", ".join(f"row {r} ({t})" for r, t in zip(fault["rows"], fault["times"]))
            more = ", ..." if fault["count"] > len(fault["rows"]) else ""
            lines.append(f"    {name:<22} {fault['count']:>8}  {_FLAG_TEXT.get(name, '')}")
            lines.append(f"    {'':<22} {'':>8}  at {where}{more}")
    else:
        lines.append("  faults    none found")
    low, high = data["range_m"]
    if low is not None:
        lines.append(f"  range     values outside [{low:.3f}, {high:.3f}] m would be out of range")
    gaps = data["gaps"]
    lines.append(f"  gaps      {data['n_gaps']} gaps, {data['flags']['gap_hours']:.1f} h in all")
    for gap in sorted(gaps, key=lambda g: -g["hours"])[:5]:
        lines.append(f"            {gap['start']} to {gap['end']}  ({gap['hours']:.1f} h)")
    shifts = data["datum_shift_candidates"]
    if shifts:
        lines.append("  datum     candidate shifts in monthly means (check against a neighbouring gauge):")
        for shift in shifts:
            lines.append(f"            from {shift['time'][:7]}: {shift['size_m']:+.3f} m "
                         f"(statistic {shift['statistic']:.1f})")
    else:
        lines.append("  datum     no step found in monthly means")
    lines.append("  completeness by year (fraction of expected samples):")
    items = list(data["completeness_by_year"].items())
    for i in range(0, len(items), 6):
        lines.append("            " + "  ".join(f"{year} {value:5.1%}" for year, value in items[i:i + 6]))
    return "\n".join(lines)
