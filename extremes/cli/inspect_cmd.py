"""``extremes inspect RECORD``: read and quality-control a record; print a summary or the record JSON."""
from __future__ import annotations

import json
from pathlib import Path

import click

from extremes.cli.options import json_option, overwrite_option, reader_options, record_argument

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
@click.option("--write-corrections", "corrections_out", type=click.Path(dir_okay=False, path_type=Path),
              metavar="FILE", help="Write the detected clock faults and datum steps as a draft corrections file "
                                   "(review it, then pass it back with --corrections).")
@overwrite_option
def command(record, reader, as_json, corrections_out, overwrite):
    """Read RECORD, quality-control it and print what was found.

    With --json, prints the `record` object (span, sampling eras, counts of flags, gaps, completeness per
    year, clock faults, candidate datum steps, corrections applied) as one JSON document on stdout.

    Example:  extremes inspect gauge.csv --units cm --missing -999 --utc-offset +10:00
    """
    from extremes import assessment, corrections, quality, records  # imported here so that --help starts fast

    if corrections_out is not None and corrections_out.exists() and not overwrite:
        raise click.ClickException(f"{corrections_out}: already exists; pass --overwrite to replace it")
    gauge = records.read_record(record, **reader)
    report = quality.check_record(gauge)
    data = report.to_dict(max_gaps=None)
    verdict = assessment.assess(quality=report)
    data["assessment"] = verdict.to_dict()
    if corrections_out is not None:
        from extremes.outputs import write_text_atomic

        index = report.flags.index
        text = corrections.draft_corrections(report.timing_offsets, report.datum_shifts, source=str(record),
                                             record_start=index.min(), record_end=index.max())
        write_text_atomic(corrections_out, text, overwrite=overwrite)
    if as_json:
        click.echo(json.dumps(data, allow_nan=False))
        return
    click.echo(_summary(gauge, data, verdict))
    if corrections_out is not None:
        click.echo(f"draft corrections written to {corrections_out} (review every line before using it)")


def _summary(gauge, data: dict, verdict) -> str:
    lines = verdict.summary_lines()
    lines.append(f"{gauge.source}  (sha256 {gauge.sha256[:12]}...)")
    meta = gauge.meta
    columns = meta.get("variable") or (" + ".join(meta.get("time_columns", [])) + " / "
                                       + str(meta.get("level_column")))
    lines.append(f"  read      {meta.get('format')}; columns {columns}; units {meta.get('units_in_file')} -> m; "
                 f"UTC offset {meta.get('utc_offset_applied')}; datum {data['datum']}")
    for item in data.get("corrections", []):
        lines.append(f"  corrected {item['start']} to {item['end'] or 'end'}: {item['add_m']:+g} m, "
                     f"{item['shift_minutes']:+g} min ({item['rows']} rows)")
    interval = data["interval_minutes"]
    lines.append(f"  span      {data['start']} to {data['end']}")
    eras = data.get("sampling", [])
    if len(eras) > 1:
        lines.append(f"  sampling  {len(eras)} eras (each quality-controlled at its own interval):")
        for era in eras:
            kind = "regular" if era["regular"] else "irregular stamps, median"
            lines.append(f"            {era['start']} to {era['end']}: {kind} {era['interval_minutes']:g} min "
                         f"({era['n_stamps']} stamps)")
    else:
        sampling = "regular" if data["regular"] else (f"irregular ({100 * data['irregular_fraction']:.1f}% "
                                                      f"off grid)")
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
    lines.append(f"  gaps      {data['n_gaps']} gaps, {data['flags']['gap_hours']:.1f} h in all; the longest:")
    for gap in sorted(gaps, key=lambda g: -g["hours"])[:5]:
        lines.append(f"            {gap['start']} to {gap['end']}  ({gap['hours']:.1f} h)")
    offsets = data.get("timing_offsets", [])
    if offsets:
        lines.append("  clock     spans whose tide runs early or late (check the gauge's clock log):")
        for item in offsets:
            lines.append(f"            {item['start']} to {item['end']}: stamps {item['offset_minutes']:+.1f} min "
                         f"ahead of true time")
    else:
        lines.append("  clock     no span with a timing offset")
    shifts = data["datum_shift_candidates"]
    if shifts:
        lines.append("  datum     candidate steps in monthly means, beyond the year-to-year change of mean sea level "
                     "(check the levelling records):")
        for shift in shifts:
            lines.append(f"            at {shift['time'][:10]}: {shift['size_m']:+.3f} m "
                         f"(statistic {shift['statistic']:.1f}, critical {shift['critical'] or float('nan'):.1f})")
    else:
        lines.append("  datum     no step found in monthly means")
    lines.append("  completeness by year (share of the year covered, each era at its own interval):")
    items = list(data["completeness_by_year"].items())
    for i in range(0, len(items), 6):
        lines.append("            " + "  ".join(f"{year} {value:5.1%}" for year, value in items[i:i + 6]))
    return "\n".join(lines)
