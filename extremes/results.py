"""The result of a study and its files.

:class:`StudyResult` holds everything a study found; :meth:`StudyResult.to_dict` is ``results.json``
(schema ``extremes.results/1``, keys as in the project's contract); :func:`write_study` writes the results
folder atomically:

    results.json                  every number, the inputs, options, version, datum, epoch and cautions
    tables/return_levels.csv      all methods at the study's return periods, with intervals
    tables/constituents.csv       harmonic constants
    tables/datums.csv             tidal datums
    tables/annual_mean_sea_level.csv
    tables/annual_maxima.csv      the annual maxima used (epoch-adjusted), when available
    tables/peaks.csv              the declustered peaks used, when available
    tables/skew_surges.csv        one skew surge per tidal cycle
    tables/sea_level_rise.csv     recommended levels raised by each offset
    tables/sea_level_rise_by_offset.csv  per offset: raised 100-year level, its present return period,
                                  encounter probability over the design life, design level
    tables/quality_flags.csv      counts of each flag
    tables/reference_overlap.csv  with a reference gauge: site and reference skew surges paired tide by tide
    models/tide_model.json        the saved tide model (predicts at any time)
    models/curves.json            every method's return-level curve (what ``extremes rerun`` reuses)
    figures/*.png                 the report's figures (with a reference gauge: reference_overlap.png)
    report.html                   one self-contained report
    report.pdf                    the same report for printing and filing (A4)
"""
from __future__ import annotations

import functools
import io
import json
import logging
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from extremes.curves import ReturnLevelCurve
from extremes.errors import DataError
from extremes.jsonable import dumps, to_jsonable
from extremes.outputs import output_folder

logger = logging.getLogger(__name__)

SCHEMA = "extremes.results/1"

__all__ = ["SCHEMA", "StudyResult", "write_study", "load_results", "curves_from_results"]


def _from_tide(name: str, doc: str):
    """A read-only attribute of the study's tide stage, under the study's own name."""
    return property(lambda self: getattr(self.tide, name), doc=doc)


@dataclass(frozen=True, eq=False, repr=False)
class StudyResult:
    """Everything one study found. Levels in metres above ``record.datum`` at ``epoch_year``.

    Attributes
    ----------
    software, source, sha256, options
        Provenance: the software and its version, the record's path and SHA-256, every option.
    record : GaugeRecord
        The record as read.
    tide : TideStage
        The tide stage (:func:`extremes.tide.stage.analyse_record_tide`): quality report after residual
        spikes, mean sea level and epoch, harmonic model, datums, residual, skew surges, interaction tests.
    curves : dict of ReturnLevelCurve
        Every method's return-level curve. [m]
    method_details : dict
        Every method's fit (DirectFit, JointProbabilityResult).
    comparison : MethodComparison
        The comparison of methods and the recommendation.
    sea_level_rise : SeaLevelRiseAssessment
        The sea-level-rise stage on the recommended curve.
    cautions, notes, warnings : tuple of str
    timings_s : dict
        Seconds spent in each stage. [s]
    record_years : float
        Valid data after quality control. [years]
    reference : ReferenceGauge or None
        The long gauge whose storm climate was carried to the site (:mod:`extremes.transfer`).
    """

    software: dict
    source: str
    sha256: str
    options: dict
    record: object
    tide: object
    curves: dict
    method_details: dict
    comparison: object
    sea_level_rise: object
    cautions: tuple
    notes: tuple = ()
    warnings: tuple = ()
    timings_s: dict = field(default_factory=dict)
    record_years: float = float("nan")
    reference: object = None

    quality = _from_tide("quality", "Quality report of the record (spikes re-detected on the residual).")
    annual_msl = _from_tide("annual_msl", "Annual mean sea level. [m]")
    msl_trend = _from_tide("msl_trend", "Linear trend of annual mean sea level, or None.")
    epoch_year = _from_tide("epoch_year", "Mean-sea-level epoch of every level. [decimal year]")
    level_epoch_m = _from_tide("level_epoch_m", "Observed level moved to the epoch. [m]")
    tide_model = _from_tide("tide_model", "The harmonic tide model.")
    datums = _from_tide("datums", "Tidal datums.")
    form_factor = _from_tide("form_factor", "Form factor (K1 + O1) / (M2 + S2).")
    tide_type = _from_tide("tide_type", "Tide type from the form factor.")
    residual_m = _from_tide("residual_m", "Non-tidal residual at the epoch. [m]")
    skew_surges = _from_tide("skew_surges", "Skew surges of the record.")
    high_waters = _from_tide("high_waters", "Predicted high waters of a nodal cycle at the epoch.")
    interaction = _from_tide("interaction", "Tide-surge interaction tests.")
    msl_at_epoch_m = _from_tide("msl_at_epoch_m", "Mean sea level at the epoch. [m]")

    def __repr__(self) -> str:
        return (f"StudyResult(source={Path(self.source).name!r}, epoch={self.epoch_year:.2f}, "
                f"methods={len(self.curves)}, recommended={self.recommended_method!r})")

    @functools.cached_property
    def assessment(self):
        """The plausibility verdict on the levels (:func:`extremes.assessment.assess`)."""
        from extremes.assessment import assess

        return assess(quality=self.quality, study=self)

    @property
    def datum(self) -> str:
        """Vertical datum of every level."""
        return self.record.datum

    @property
    def recommended_method(self) -> str:
        """The method whose levels are recommended."""
        return self.comparison.recommended_method

    def return_level_table(self, periods_years=None) -> pd.DataFrame:
        """All methods at ``periods_years`` (default: the study's), one row per method and period."""
        periods = self.options["study"]["periods_years"] if periods_years is None else periods_years
        return pd.concat([curve.rows(periods) for curve in self.curves.values()], ignore_index=True)

    def to_dict(self) -> dict:
        """The ``results.json`` document (strict JSON types)."""
        document = {
            "schema": SCHEMA,
            "software": self.software,
            "inputs": {"record": self.source, "sha256": self.sha256, "options": self.options,
                       **({} if self.reference is None else
                          {"reference": {"record": self.reference.source, "sha256": self.reference.sha256}})},
            "record": self.quality.to_dict(),
            "tide": self.tide.tide_dict(),
            "mean_sea_level": self.tide.mean_sea_level_dict(),
            "return_levels": self.return_level_table(),
            "recommended_method": self.recommended_method,
            "recommendation": {"method": self.recommended_method, "reason": self.comparison.reason},
            **self.sea_level_rise.to_dict(),
            "interaction": self.interaction,
            "methods": {name: _detail_dict(detail) for name, detail in self.method_details.items()},
            "curves": {name: curve.to_dict() for name, curve in self.curves.items()},
            "datum": self.datum,
            "epoch_year": self.epoch_year,
            "units": "m",
            "record_years": self.record_years,
            "notes": list(self.notes),
            "warnings": list(self.warnings),
            "timings_s": self.timings_s,
            "cautions": list(self.cautions),
            "assessment": self.assessment.to_dict(),
        }
        return to_jsonable(document)


def _detail_dict(detail) -> dict:
    if hasattr(detail, "to_dict"):
        data = detail.to_dict()
        if isinstance(data, dict):
            data = {k: v for k, v in data.items() if k not in ("curve", "curve_unclustered")}
        return to_jsonable(data)
    return to_jsonable(detail)


def csv_text(frame: pd.DataFrame) -> str:
    """A table as CSV text: times as ISO 8601 UTC with Z, floats to 6 significant digits."""
    frame = frame.copy()
    for column in frame.columns:
        if isinstance(frame[column].dtype, pd.DatetimeTZDtype):
            # ISO 8601 UTC with Z, formatted by numpy (pandas' per-value formatting is slow on long tables)
            values = frame[column].dt.tz_convert("UTC").dt.tz_localize(None).to_numpy(dtype="datetime64[s]")
            text = np.char.add(np.datetime_as_string(values, unit="s"), "Z")
            frame[column] = np.where(np.isnat(values), "", text)
        elif column.startswith("upper") and pd.api.types.is_float_dtype(frame[column]) and \
                np.isposinf(frame[column]).any():
            # an upper bound the data cannot limit (ReturnLevelCurve.upper_m = +inf)
            frame[column] = [("unbounded" if np.isposinf(v) else ("" if np.isnan(v) else f"{v:.6g}"))
                             for v in frame[column]]
    buffer = io.StringIO()
    frame.to_csv(buffer, index=False, float_format="%.6g")
    return buffer.getvalue()


def study_tables(result: StudyResult) -> dict[str, pd.DataFrame]:
    """The CSV tables of a study, by file stem."""
    tables = {
        "return_levels": result.return_level_table(),
        "constituents": pd.DataFrame([c.to_dict() for c in result.tide_model.constituents]),
        "datums": pd.DataFrame({"datum_name": list(result.datums.datums_m),
                                "level_m": list(result.datums.datums_m.values()),
                                "includes": [result.datums.labels[k] for k in result.datums.datums_m]}),
        "annual_mean_sea_level": result.annual_msl.reset_index() if result.annual_msl.index.name
        else result.annual_msl,
        "skew_surges": result.skew_surges,
        "sea_level_rise": pd.DataFrame(result.sea_level_rise.rows),
        "sea_level_rise_by_offset": pd.DataFrame(result.sea_level_rise.by_offset),
        "quality_flags": pd.DataFrame({"flag": list(result.quality.counts),
                                       "rows": list(result.quality.counts.values())}),
    }
    for method, name in (("annual-maxima", "annual_maxima"), ("peaks-over-threshold", "peaks")):
        detail = result.method_details.get(method)
        sample = getattr(detail, "sample", None)
        if isinstance(sample, pd.Series):
            tables[name] = sample.rename("level_m").rename_axis(sample.index.name or "time").reset_index()
        elif isinstance(sample, pd.DataFrame):
            tables[name] = sample.reset_index()
    from extremes.transfer.stage import study_tables as transfer_tables

    tables.update(transfer_tables(result))
    return tables


def write_study(result: StudyResult, out_dir, *, overwrite: bool = False, figures: bool = True,
                progress=None, tables: bool = True) -> Path:
    """Write the results folder of ``result`` to ``out_dir`` atomically.

    Parameters
    ----------
    result : StudyResult
    out_dir : path-like
        The results folder; refused if it already holds results, unless ``overwrite``.
    overwrite : bool, keyword-only
        Replace an existing results folder (only once the new one is complete).
    figures : bool, keyword-only
        Draw the figures and the HTML and PDF report (False: numbers and tables only).
    progress : callable, optional
        Called with a stage name as writing proceeds.
    tables : bool, keyword-only
        Write the CSV tables (False: results.json and the saved models only, as for model points).

    Returns
    -------
    pathlib.Path
        The results folder.
    """
    out_dir = Path(out_dir)
    with output_folder(out_dir, overwrite=overwrite) as work:
        document = result.to_dict()
        if tables:
            (work / "tables").mkdir()
            for stem, frame in study_tables(result).items():
                (work / "tables" / f"{stem}.csv").write_text(csv_text(frame), encoding="utf-8")
        (work / "models").mkdir()
        (work / "models" / "tide_model.json").write_text(
            json.dumps(to_jsonable(result.tide_model.to_dict()), indent=2, allow_nan=False), encoding="utf-8")
        (work / "models" / "curves.json").write_text(dumps(document["curves"]), encoding="utf-8")
        if figures:
            if progress is not None:
                progress("report")
            from extremes.report.study_report import build_study_report

            build_study_report(result, document).write(work)
            from extremes.transfer.stage import study_figures as transfer_figures

            for name, png in transfer_figures(result).items():  # the overlap of a reference-gauge transfer
                (work / "figures").mkdir(exist_ok=True)
                (work / "figures" / f"{name}.png").write_bytes(png)
        (work / "results.json").write_text(dumps(document), encoding="utf-8")
    return out_dir


def load_results(folder) -> dict:
    """Read ``results.json`` of a results folder; :class:`DataError` if it is missing or not ours."""
    path = Path(folder) / "results.json"
    if not Path(folder).is_dir():
        raise DataError(f"{folder}: not a results folder (expected a folder holding results.json)")
    try:
        document = json.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise DataError(f"{path}: not found; expected the results folder of 'extremes run'") from None
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as err:
        raise DataError(f"{path}: not readable as results ({err})") from None
    if not isinstance(document, dict) or document.get("schema") != SCHEMA:
        raise DataError(f"{path}: schema is {document.get('schema') if isinstance(document, dict) else None!r}; "
                        f"expected {SCHEMA!r}")
    return document


def curves_from_results(document: dict) -> dict[str, ReturnLevelCurve]:
    """The saved return-level curves of a results document, by method."""
    curves = document.get("curves")
    if not isinstance(curves, dict) or not curves:
        raise DataError("results hold no saved return-level curves (key 'curves')")
    return {name: ReturnLevelCurve.from_dict(data) for name, data in curves.items()}
