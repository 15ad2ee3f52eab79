"""``extremes tide``: harmonic analysis of a record, tidal datums, tide type and mean-sea-level trend."""
from __future__ import annotations

import json
import logging
from pathlib import Path

import click

from extremes.cli import options

logger = logging.getLogger(__name__)


def _names_callback(ctx, param, value):
    if value is None:
        return "auto"
    names = [item.strip() for item in value.split(",") if item.strip()]
    if not names:
        raise click.BadParameter(f"expected comma-separated constituent names, got {value!r}")
    from extremes.errors import DataError
    from extremes.tide.constituents import get_constituent
    try:
        return [get_constituent(n).name for n in names]
    except DataError as err:
        raise click.BadParameter(str(err)) from None


def _summary(result) -> str:
    tide, msl = result["tide"], result["mean_sea_level"]
    lines = [f"Harmonic analysis: {tide['n_samples']} samples, {tide['start']} to {tide['end']} (UTC), "
             f"datum {tide['datum']}, levels at the mean-sea-level epoch {msl['epoch_year']:.2f}",
             f"Z0 {tide['z0_m']:.3f} m, residual std {tide['residual_std_m']:.3f} m, "
             f"condition number {tide['condition_number']:.2f}",
             "",
             f"{'name':<8}{'speed deg/h':>13}{'H m':>9}{'+-':>8}{'G deg':>9}{'+-':>8}  note"]
    for c in sorted(tide["constituents"], key=lambda c: -c["amplitude_m"]):
        note = "inferred" if c["inferred"] else ("weak: H < 2 s.e." if c["weak"] else "")
        lines.append(f"{c['name']:<8}{c['speed_deg_per_hour']:>13.7f}{c['amplitude_m']:>9.4f}"
                     f"{c['amplitude_se_m']:>8.4f}{c['phase_deg']:>9.2f}{c['phase_se_deg']:>8.2f}  {note}")
    lines += ["", "Tidal datums [m] (" + ("with" if tide["datums_window"]["include_radiational"] else "without")
              + " Sa, Ssa, S1):"]
    lines += [f"  {k:<5}{v:>9.3f}" for k, v in tide["datums_m"].items()]
    lines += ["", f"Form factor {tide['form_factor']:.3f}: {tide['tide_type']}"]
    if msl["trend_m_per_year"] is not None:
        lines.append(f"MSL trend {1000 * msl['trend_m_per_year']:.2f} +- {1000 * msl['trend_se_m_per_year']:.2f} "
                     f"mm/yr; MSL at {msl['epoch_year']:.2f}: {msl['msl_at_epoch_m']:.3f} m")
    else:
        lines.append(f"MSL trend: not available ({msl.get('note', '')})")
    return "\n".join(lines)


@click.command("tide", short_help="Harmonic analysis: constituents, tidal datums, tide type, MSL trend.")
@options.record_argument
@options.reader_options
@click.option("--constituents", callback=_names_callback, metavar="LIST",
              help="Comma-separated constituents to fit; default: automatic choice by record length (Rayleigh).")
@click.option("--rayleigh", type=click.FloatRange(min=0.0, min_open=True), default=1.0, show_default=True,
              help="Rayleigh factor of the automatic choice.")
@click.option("--no-infer", is_flag=True, help="Do not infer P1 and K2 when the record does not resolve them.")
@click.option("--include-radiational", is_flag=True, help="Keep Sa, Ssa and S1 in the HAT/LAT prediction.")
@click.option("--epoch", "epoch_year", type=float, metavar="YEAR",
              help="Mean-sea-level epoch of the levels [decimal year]; default the end of the record.")
@options.json_option
@click.option("--out", "out_dir", type=click.Path(file_okay=False, path_type=Path), metavar="DIR",
              help="Write residuals.csv, skew_surges.csv, tide_model.json and tide.json into DIR.")
@options.overwrite_option
def command(record, reader, constituents, rayleigh, no_infer, include_radiational, epoch_year, as_json, out_dir,
            overwrite):
    """Harmonic analysis of RECORD: constituents (Greenwich phase lags, UTC), tidal datums, tide type and
    mean-sea-level trend.

    Example:  extremes tide gauge.csv --utc-offset +10:00 --datum CD --json
    """
    from extremes import outputs, quality, records
    from extremes.jsonable import to_jsonable
    from extremes.tide.stage import analyse_record_tide

    if out_dir is not None:
        outputs.check_output_folder(out_dir, overwrite=overwrite)
    report = quality.check_record(records.read_record(record, **reader))
    stage = analyse_record_tide(report, epoch_year=epoch_year, constituents=constituents, rayleigh=rayleigh,
                                infer=not no_infer, include_radiational=include_radiational)
    payload = to_jsonable(stage.to_dict())
    if out_dir is not None:
        level_m, model = stage.level_epoch_m, stage.tide_model
        table = level_m.rename("level_m").to_frame()
        table["tide_m"] = model.predict(level_m.index).to_numpy()
        table["residual_m"] = stage.residual_m.reindex(level_m.index).to_numpy()
        with outputs.output_folder(out_dir, overwrite=overwrite) as work:
            table.to_csv(work / "residuals.csv", index_label="time", date_format="%Y-%m-%dT%H:%M:%SZ",
                         float_format="%.4f")
            stage.skew_surges.to_csv(work / "skew_surges.csv", index=False, date_format="%Y-%m-%dT%H:%M:%SZ",
                                     float_format="%.4f")
            model.save(work / "tide_model.json")
            (work / "tide.json").write_text(json.dumps(payload, indent=2, allow_nan=False) + "\n",
                                            encoding="utf-8")
    if as_json:
        click.echo(json.dumps(payload, indent=2, allow_nan=False))
    else:
        click.echo(_summary(payload))
