"""The reference-gauge transfer as a stage of a study: the few calls the study, the commands and batch make.

- :func:`load_reference`: a reference given as a file (read with reader options), a level Series, or
  already prepared -> :class:`~extremes.transfer.reference.ReferenceGauge`;
- :func:`tide_inference`: the ``infer`` option of the site's harmonic analysis;
- :func:`transfer_stage`: the transferred levels from the site's tide stage;
- :func:`recommend_with_transfer`: the comparison with the transfer recommended when supported, the site's
  own methods kept beside it and flagged as short;
- :func:`reference_table`: the ``[reference]`` table of a study file (record and reader options);
- :func:`study_findings`: the short-record verdict and the transfer's findings for the assessment.
"""
from __future__ import annotations

import dataclasses
import tomllib
from pathlib import Path

import pandas as pd

from extremes.constants import DEFAULT_PERIODS_YEARS
from extremes.errors import DataError
from extremes.transfer.checks import short_record_findings
from extremes.transfer.reference import ReferenceGauge, inference_from_reference, prepare_reference
from extremes.transfer.site import METHOD, reference_joint_probability

__all__ = ["load_reference", "tide_inference", "transfer_stage", "recommend_with_transfer", "reference_table",
           "study_findings", "METHOD"]

#: most resamples of the transfer's intervals (each refits the surge tail of a new synthetic record) [-]
MAX_TRANSFER_RESAMPLES = 250

_READER_KEYS = {"time_columns", "time_column", "level_column", "time_format", "units", "missing", "utc_offset",
                "datum", "decimal", "variable"}


def load_reference(reference, *, reader: dict | None = None) -> ReferenceGauge:
    """The prepared reference gauge from a file path (read with ``reader``), a level Series or itself."""
    if isinstance(reference, ReferenceGauge):
        return reference
    if isinstance(reference, pd.Series):
        return prepare_reference(reference)
    from extremes import records

    reader = {k: v for k, v in (reader or {}).items() if v is not None}
    record = records.read_record(reference, **reader)
    return prepare_reference(record)


def tide_inference(reference: ReferenceGauge | None):
    """``infer`` for the site's harmonic analysis: the reference's ratios, or True (equilibrium ratios)."""
    return True if reference is None else inference_from_reference(reference.tide_model)


def transfer_stage(tide, reference: ReferenceGauge, *, options, datum: str):
    """The transferred levels at the site from its tide stage (:class:`extremes.tide.stage.TideStage`), with
    at most :data:`MAX_TRANSFER_RESAMPLES` resamples (the interval method states the number used)."""
    try:
        return reference_joint_probability(
            tide.skew_surges, tide.high_water_series, reference, site_model=tide.tide_model,
            site_interaction=tide.interaction, n_bootstrap=min(options.resamples, MAX_TRANSFER_RESAMPLES),
            confidence=options.confidence, seed=options.seed, datum=datum, epoch_year=tide.epoch_year)
    except DataError as err:  # say which reference
        raise DataError(f"reference {reference.source}: {err}") from None


def recommend_with_transfer(comparison, transferred, *, record_years: float):
    """The comparison with the reference transfer recommended when it is supported.

    The site's own methods stay in the comparison table; the reason says that they rest on a short record.
    When the transfer is not supported, the comparison's own choice stands and the reason says why the
    transfer was not used.
    """
    own = comparison.recommended_method
    short = (f"the site's own methods rest on {record_years:.1f} years and are kept for comparison only, "
             "flagged as short") if record_years < 10 else "the site's own methods are kept for comparison"
    if transferred.supported:
        reason = (f"{METHOD}: the site's tide from its own record and the storm climate of the reference gauge "
                  f"({transferred.reference['record_years']:.1f} years) carried to the site through "
                  f"{transferred.overlap.n_pairs} paired tides (correlation {transferred.overlap.correlation:.2f})"
                  f"; {short}; without the reference the rule would pick {own}: {comparison.reason}")
        return dataclasses.replace(comparison, recommended_method=METHOD, reason=reason)
    refused = "; ".join(f.reason for f in transferred.findings if f.severity == "unreliable")
    return dataclasses.replace(comparison, reason=f"{comparison.reason} The reference-gauge transfer was not "
                                                  f"used: {refused}.")


def reference_table(study_file) -> tuple[str | None, dict | None]:
    """The ``[reference]`` table of a TOML study file: (record path or None, reader options or None).

    The table holds ``record`` (a path, relative to the study file unless absolute) and any reader option of
    the ``[record]`` table; with reader options the reference is read with those alone, without them with the
    site's. No table: ``(None, None)``.
    """
    if study_file is None:
        return None, None
    path = Path(study_file)
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError) as err:
        raise DataError(f"{path}: cannot read study file ({err})") from None
    table = data.get("reference")
    if table is None:
        return None, None
    if not isinstance(table, dict):
        raise DataError(f"{path}: [reference] must be a table with 'record' and reader options")
    table = dict(table)
    unknown = set(table) - _READER_KEYS - {"record"}
    if unknown:
        raise DataError(f"{path}: unknown key(s) {sorted(unknown)} in [reference]; expected 'record' and some of "
                        f"{sorted(_READER_KEYS - {'time_column'})}")
    record = table.pop("record", None)
    if record is not None:
        record = Path(str(record))
        record = str(record if record.is_absolute() else (path.parent / record).resolve())
    if "time_column" in table:
        value = table.pop("time_column")
        table["time_columns"] = [value] if isinstance(value, str) else list(value)
    return record, (table or None)


def study_findings(study) -> list[tuple[str, str, str]]:
    """``(check, severity, text)`` of a study for its assessment: the transfer's findings that need a look and
    the verdict on a short record's long-period levels (:func:`extremes.transfer.checks.short_record_findings`).
    """
    out = []
    transferred = study.method_details.get(METHOD)
    if transferred is not None:
        for f in transferred.findings:
            if f.severity != "ok":
                prefix = "reference transfer refused: " if f.severity == "unreliable" else "reference transfer: "
                out.append((f"reference-{f.check.replace(' ', '-')}", f.severity, prefix + f.reason))
    supported = transferred is not None and transferred.supported
    options = getattr(study, "options", None) or {}
    periods = options.get("study", {}).get("periods_years", DEFAULT_PERIODS_YEARS)
    for f in short_record_findings(study.record_years, periods, method=study.recommended_method,
                                   transfer_supported=supported):
        if f.severity != "ok":
            out.append(("short-record", f.severity, f.reason))
    return out


def study_tables(study) -> dict:
    """Tables of the transfer for the results folder: ``reference_overlap`` (the paired skew surges)."""
    transferred = study.method_details.get(METHOD)
    if transferred is None:
        return {}
    return {"reference_overlap": transferred.overlap.pairs}


def study_figures(study) -> dict:
    """Figures of the transfer for the results folder: ``reference_overlap`` (PNG bytes)."""
    from extremes.transfer.figure import overlap_figure_png

    transferred = study.method_details.get(METHOD)
    return {} if transferred is None else {"reference_overlap": overlap_figure_png(transferred)}


def resolve_reference(flag, study_file, site_reader: dict) -> tuple[str | None, dict]:
    """The reference record and its reader options: ``--reference`` wins over the study file's ``[reference]``
    table; its reader options are the table's when it gives any, else the site's."""
    table_record, table_reader = reference_table(study_file)
    record = str(flag) if flag is not None else table_record
    return record, dict(table_reader) if table_reader else dict(site_reader)
