"""What the study report says, built from the results document alone (``results.json``) and its figures.

The same content is rendered as HTML (:mod:`extremes.report.html`) and as PDF
(:mod:`extremes.report.pdf`). Because it needs only the results document and the figure images, a report
can be rebuilt from a results folder (``extremes rerun`` does so after new sea-level-rise offsets).

Order: the summary a reviewer decides on (design levels with intervals, datum and epoch, the verdict and
its reasons, the recommended method and why), the cautions, then the study in the order of its stages,
then appendices with the long tables, then the provenance. Every number is in a labelled table or a
sentence; column names carry their unit (``level_m`` -> ``level [m]``).

No plotting library is imported here.
"""
from __future__ import annotations

import datetime as _dt
import logging
from collections.abc import Mapping
from dataclasses import dataclass

import pandas as pd

from extremes.report.html import FigureItem, Section, Summary, TableItem
from extremes.report.sections import (
    assessment_of,
    fits_section,
    methods_section,
    msl_section,
    record_section,
    return_levels,
    sea_level_rise_section,
    surge_section,
    tide_section,
)

logger = logging.getLogger(__name__)

__all__ = ["ReportContent", "report_content", "fold_table", "FIGURE_CAPTIONS"]

#: caption of each figure of the report, by file stem (``figures/<name>.png``)
FIGURE_CAPTIONS = {
    "record": "The record as read: flagged readings marked by flag, gaps shaded.",
    "tide_fit": "Observed and predicted levels over a sample fortnight, and the spectra of the observed level "
                "and of the residual.",
    "residual": "Non-tidal residual and skew surges: series and histograms.",
    "methods": "Return levels of every method with their confidence intervals (bands may run off the top where "
               "an upper bound is far above the estimate; the tables give every bound).",
    "sea_level_rise": "Left: the recommended curve raised by each offset, with today's 100-year level. Right: "
                      "chance that today's 100-year level is exceeded within the first years of the design "
                      "life, per offset.",
    "sea_level_rise_scenarios": "Return levels by year under each sea-level-rise scenario, and the chance that "
                                "today's 100-year level is exceeded by then.",
}


@dataclass(frozen=True, repr=False)
class ReportContent:
    """Everything the report shows, ready to render.

    Attributes
    ----------
    title : str
        The study's name (the record's file name).
    summary : Summary
        First-page summary: recommended levels, datum, epoch, method and reason, verdict.
    cautions : tuple of str
    sections : tuple of Section
        The study in the order of its stages.
    appendices : tuple of Section
        Long tables.
    provenance : pandas.DataFrame
        Columns ``item`` and ``value``: inputs, checksum, options, software, reruns.
    made : str
        Date the report was made (UTC, ISO 8601 day).
    """

    title: str
    summary: Summary
    cautions: tuple
    sections: tuple
    appendices: tuple
    provenance: pd.DataFrame
    made: str

    def __repr__(self) -> str:
        return (f"ReportContent(title={self.title!r}, sections={len(self.sections)}, "
                f"appendices={len(self.appendices)})")

    @property
    def datum(self) -> str:
        """Vertical datum of every level."""
        return self.summary.datum

    def to_dict(self) -> dict:
        """JSON-ready dictionary (figures by caption and size only)."""
        from extremes.jsonable import to_jsonable

        return {"title": self.title, "summary": self.summary.to_dict(), "cautions": list(self.cautions),
                "sections": [s.to_dict() for s in self.sections],
                "appendices": [s.to_dict() for s in self.appendices],
                "provenance": to_jsonable(self.provenance), "made": self.made}


def fold_table(frame: pd.DataFrame, *, max_rows: int) -> pd.DataFrame:
    """Lay a long, narrow table out in side-by-side blocks of at most ``max_rows`` rows.

    A 30-row table of ``year, completeness`` with ``max_rows=10`` becomes 10 rows of three
    ``year, completeness`` pairs. Cells past the end of the last block are empty (None).
    """
    if len(frame) <= max_rows:
        return frame.reset_index(drop=True)
    blocks = []
    for start in range(0, len(frame), max_rows):
        block = frame.iloc[start:start + max_rows].reset_index(drop=True).astype(object)
        blocks.append(block.reindex(range(max_rows)).where(lambda b: b.notna(), None))
    return pd.concat(blocks, axis=1)


def _figure(figures: Mapping[str, bytes], name: str, caption: str | None = None) -> tuple:
    png = figures.get(name)
    if png is None:
        return ()
    caption = caption or FIGURE_CAPTIONS.get(name, name.replace("_", " "))
    return (FigureItem(png=png, caption=caption, alt=caption),)


def _summary(document: dict) -> Summary:
    method = document.get("recommended_method", "")
    curve = (document.get("curves") or {}).get(method, {})
    levels = return_levels(document, method)[["return_period_years", "level_m", "lower_m", "upper_m"]]
    definition = curve.get("period_definition")
    confidence = curve.get("confidence") or 0.95
    reason = (document.get("recommendation") or {}).get("reason")
    paragraphs = []
    if reason:
        paragraphs.append(f"Why this method: {reason}")
    paragraphs.append(
        ("Return periods are 1/AEP (one over the annual exceedance probability)" if definition == "1/AEP" else
         "Return periods are average recurrence intervals (1/rate; AEP = 1 - exp(-1/T))")
        + f"; intervals are {100 * confidence:.0f}% confidence intervals"
        + (f" ({curve['interval_method']})." if curve.get("interval_method") else ".")
        + " An upper bound the data cannot limit is shown as \"unbounded\".")
    return Summary(datum=document.get("datum") or "unspecified", epoch_year=document.get("epoch_year"),
                   recommended_method=method, levels=levels, paragraphs=tuple(paragraphs),
                   assessment=assessment_of(document))


def _appendices(document: dict) -> tuple:
    from extremes.report.sections import appendix_tables

    return tuple(Section(title=title, paragraphs=paragraphs, tables=(TableItem(frame, caption),))
                 for title, paragraphs, frame, caption in appendix_tables(document, fold=fold_table))


def _plain(value) -> str:
    if value is None:
        return "not set"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float):
        return f"{value:g}"
    if isinstance(value, (list, tuple)):
        return ", ".join(_plain(v) for v in value) if value else "none"
    if isinstance(value, Mapping):
        return "; ".join(f"{k.replace('_', ' ')} {_plain(v)}" for k, v in value.items()) or "none"
    return str(value)


def provenance_table(document: dict) -> pd.DataFrame:
    """Inputs, checksum, software and every option as (item, value) rows of plain text."""
    from extremes.report.html import column_label

    inputs = document.get("inputs") or {}
    software = document.get("software") or {}
    rows = [("software", f"{software.get('name', 'extremes')} {software.get('version', '')}".strip()),
            ("record file", str(inputs.get("record", ""))),
            ("record sha256", str(inputs.get("sha256", ""))),
            ("vertical datum", str(document.get("datum", ""))),
            ("mean-sea-level epoch", _plain(document.get("epoch_year")))]
    options = inputs.get("options") or {}
    for group, label in (("reader", "reading"), ("study", "study")):
        for key, value in (options.get(group) or {}).items():
            rows.append((f"{label} option: {column_label(key)}", _plain(value)))
    for group in sorted(set(options) - {"reader", "study"}):
        rows.append((f"option: {group}", _plain(options[group])))
    for rerun in document.get("reruns") or ():
        rows.append(("rerun", f"{rerun.get('at', '')}: offsets {_plain(rerun.get('slr_m'))} m on the "
                              f"{rerun.get('method', '')} levels, from {rerun.get('from', '')}"))
    rows.append(("notes", "; ".join(document.get("notes") or ()) or "none"))
    rows.append(("warnings", "; ".join(document.get("warnings") or ()) or "none"))
    return pd.DataFrame(rows, columns=["item", "value"])


def report_content(document: dict, figures: Mapping[str, bytes] | None = None, *,
                   made: _dt.date | None = None) -> ReportContent:
    """The report of a results document.

    Parameters
    ----------
    document : dict
        A results document (``results.json``, schema ``extremes.results/1``).
    figures : mapping of str to bytes, optional
        PNG images by name (``record``, ``tide_fit``, ``residual``, ``fit_<method>``, ``methods``,
        ``sea_level_rise``, ``sea_level_rise_scenarios``); a missing one is left out.
    made : datetime.date, optional
        Date shown as the report's date (default: today, UTC).

    Returns
    -------
    ReportContent
    """
    figures = dict(figures or {})
    record = str((document.get("inputs") or {}).get("record", "study"))
    name = record.replace("\\", "/").split("/")[-1] or "study"
    sections = tuple(section for section in (
        record_section(document, _figure(figures, "record")),
        tide_section(document, _figure(figures, "tide_fit")),
        msl_section(document),
        surge_section(document, _figure(figures, "residual")),
        fits_section(document, tuple(item for key in sorted(figures) if key.startswith("fit_")
                                     for item in _figure(figures, key, f"Diagnostics of the {key[4:]} fit: "
                                                         "probability plot, quantile plot and return-level plot "
                                                         "with the observed points"
                                                         + (" (the largest event of each year)."
                                                            if key == "fit_r-largest" else ".")))),
        methods_section(document, _figure(figures, "methods")),
        sea_level_rise_section(document, _figure(figures, "sea_level_rise")
                               + _figure(figures, "sea_level_rise_scenarios")),
    ) if section is not None)
    made = made or _dt.datetime.now(_dt.UTC).date()
    return ReportContent(title=f"Design still-water levels: {name}", summary=_summary(document),
                         cautions=tuple(document.get("cautions") or ()), sections=sections,
                         appendices=_appendices(document), provenance=provenance_table(document),
                         made=made.isoformat())
