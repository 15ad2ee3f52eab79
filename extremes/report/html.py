"""One self-contained HTML report: inline CSS, figures as base64 PNG, tables from DataFrames.

The page needs no script and loads nothing from outside, so it can be mailed, archived and opened
offline. Every piece of text is escaped. Table headers carry units taken from the column names
(``level_m`` -> ``level [m]``, ``return_period_years`` -> ``return period [years]``).
"""
from __future__ import annotations

import base64
import datetime as _dt
import html
import logging
import math
from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from extremes.errors import DataError

logger = logging.getLogger(__name__)

__all__ = ["FigureItem", "TableItem", "Section", "Summary", "render_report", "render_html", "column_label",
           "format_cell"]

_PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"

#: column-name suffix -> unit shown in the header (longest suffixes first)
_UNIT_SUFFIXES = (
    ("_deg_per_hour", "°/h"), ("_m_per_year", "m/year"), ("_per_year", "1/year"), ("_years", "years"),
    ("_hours", "h"), ("_minutes", "min"), ("_percent", "%"), ("_deg", "°"), ("_m", "m"),
)


@dataclass(frozen=True, repr=False)
class FigureItem:
    """A figure of the report: PNG bytes (from ``figures.to_png``), a caption and an alt text."""

    png: bytes
    caption: str
    alt: str = ""

    def __repr__(self) -> str:
        return f"FigureItem(caption={self.caption[:40]!r}, bytes={len(self.png)})"

    def to_dict(self) -> dict:
        """JSON-ready dictionary (without the image)."""
        return {"caption": self.caption, "alt": self.alt or self.caption, "bytes": len(self.png)}


@dataclass(frozen=True, repr=False)
class TableItem:
    """A table of the report: a DataFrame (columns named with unit suffixes) and a caption."""

    frame: pd.DataFrame
    caption: str

    def __repr__(self) -> str:
        return f"TableItem(caption={self.caption[:40]!r}, rows={len(self.frame)})"

    def to_dict(self) -> dict:
        """JSON-ready dictionary (caption and columns)."""
        return {"caption": self.caption, "columns": [str(c) for c in self.frame.columns], "rows": len(self.frame)}


@dataclass(frozen=True, repr=False)
class Section:
    """A section of the report: a title, paragraphs of text, figures and tables (shown in that order)."""

    title: str
    paragraphs: tuple = ()
    figures: tuple = ()
    tables: tuple = ()

    def __post_init__(self):
        for name in ("paragraphs", "figures", "tables"):
            value = getattr(self, name)
            object.__setattr__(self, name, (value,) if isinstance(value, (str, FigureItem, TableItem))
                               else tuple(value))

    def __repr__(self) -> str:
        return (f"Section(title={self.title!r}, paragraphs={len(self.paragraphs)}, figures={len(self.figures)}, "
                f"tables={len(self.tables)})")

    def to_dict(self) -> dict:
        """JSON-ready dictionary."""
        return {"title": self.title, "paragraphs": list(self.paragraphs),
                "figures": [f.to_dict() for f in self.figures], "tables": [t.to_dict() for t in self.tables]}


@dataclass(frozen=True, repr=False)
class Summary:
    """The summary box: the recommended still-water levels with their datum and epoch.

    Attributes
    ----------
    datum : str
        Vertical datum of the levels.
    epoch_year : float or None
        Mean-sea-level epoch. [decimal year]
    recommended_method : str
        Method whose levels are recommended.
    levels : pandas.DataFrame
        Recommended levels (e.g. ``return_period_years, level_m, lower_m, upper_m``).
    paragraphs : tuple of str
        Short statements (why this method, the period definition, ...).
    assessment : dict, optional
        The verdict: ``status`` (``ok``, ``check``, ``unreliable`` or ``not assessed``), ``text`` (its
        meaning) and ``reasons`` (plain sentences), from
        :func:`extremes.report.sections.assessment_of`.
    """

    datum: str
    epoch_year: float | None
    recommended_method: str
    levels: pd.DataFrame = field(default_factory=pd.DataFrame)
    paragraphs: tuple = ()
    assessment: dict | None = None

    def __post_init__(self):
        object.__setattr__(self, "paragraphs", (self.paragraphs,) if isinstance(self.paragraphs, str)
                           else tuple(self.paragraphs))

    def __repr__(self) -> str:
        return (f"Summary(method={self.recommended_method!r}, datum={self.datum!r}, epoch_year={self.epoch_year}, "
                f"rows={len(self.levels)})")

    def to_dict(self) -> dict:
        """JSON-ready dictionary."""
        from extremes.jsonable import to_jsonable

        return {"datum": self.datum, "epoch_year": self.epoch_year, "recommended_method": self.recommended_method,
                "levels": to_jsonable(self.levels), "paragraphs": list(self.paragraphs),
                "assessment": to_jsonable(self.assessment)}


# ------------------------------------------------------------------------------------------------
def column_label(name) -> str:
    """Header text of a column: words with the unit from the name's suffix in brackets."""
    text = str(name)
    for suffix, unit in _UNIT_SUFFIXES:
        if text.endswith(suffix) and len(text) > len(suffix):
            return f"{text[: -len(suffix)].replace('_', ' ')} [{unit}]"
    return text.replace("_", " ")


def format_cell(value, column: str) -> str:
    """Text of one table cell: levels to the millimetre, periods to four figures, times in UTC, a dash
    for a missing value (the same in the HTML and the PDF report)."""
    column = str(column)
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "–"
    if isinstance(value, (pd.Timestamp, _dt.datetime)):
        ts = pd.Timestamp(value)
        if ts is pd.NaT:
            return "–"
        return (ts.tz_convert("UTC") if ts.tzinfo else ts).strftime("%Y-%m-%d %H:%M") + (" UTC" if ts.tzinfo else "")
    if isinstance(value, (bool, np.bool_)):
        return "yes" if value else "no"
    if isinstance(value, (int, np.integer)):
        return str(int(value))
    if isinstance(value, (float, np.floating)):
        if not math.isfinite(value):
            return "unbounded" if value > 0 and column.startswith("upper") else "–"
        if column.endswith("_m") or column.endswith("_m_per_year"):
            return f"{value:.3f}"
        if column.endswith("_percent"):
            return f"{value:.1f}"
        if column.endswith("_years") and value >= 1:
            return f"{value:.4g}" if value < 1e4 else f"{value:,.0f}"
        return f"{value:.4g}"
    return str(value)


def _table_html(frame: pd.DataFrame, caption: str, number: int) -> str:
    if not isinstance(frame, pd.DataFrame):
        raise DataError(f"report table {caption!r}: expected a pandas DataFrame; got {type(frame).__name__}")
    columns = [str(c) for c in frame.columns]
    head = "".join(f'<th scope="col">{html.escape(column_label(c))}</th>' for c in columns)
    body = []
    for row in frame.itertuples(index=False, name=None):
        cells = "".join(f"<td>{html.escape(format_cell(v, c))}</td>" for v, c in zip(row, columns))
        body.append(f"<tr>{cells}</tr>")
    return (f'<div class="table-wrap"><table><caption>Table {number}. {html.escape(caption)}</caption>'
            f"<thead><tr>{head}</tr></thead><tbody>{''.join(body)}</tbody></table></div>")


def _figure_html(item: FigureItem, number: int) -> str:
    if not isinstance(item.png, (bytes, bytearray)) or not bytes(item.png).startswith(_PNG_SIGNATURE):
        raise DataError(f"report figure {item.caption!r}: expected PNG bytes (from figures.to_png)")
    data = base64.b64encode(bytes(item.png)).decode("ascii")
    alt = html.escape(item.alt or item.caption, quote=True)
    return (f'<figure><img src="data:image/png;base64,{data}" alt="{alt}">'
            f"<figcaption>Figure {number}. {html.escape(item.caption)}</figcaption></figure>")


def _plain(value) -> str:
    """Readable text of an option value: lists joined with commas, mappings as ``name value`` pairs."""
    if value is None:
        return "not set"
    if isinstance(value, Mapping):
        return "; ".join(f"{str(k).replace('_', ' ')} {_plain(v)}" for k, v in value.items()) or "none"
    if isinstance(value, (list, tuple)):
        return ", ".join(_plain(v) for v in value) or "none"
    if isinstance(value, float):
        return f"{value:g}"
    return str(value)


def provenance_rows(provenance) -> pd.DataFrame:
    """Provenance as a two-column table (``item``, ``value``) of plain text; a mapping's nested values
    become one row each (``options: seed`` ...)."""
    if isinstance(provenance, pd.DataFrame):
        return provenance
    if not isinstance(provenance, Mapping):
        raise DataError(f"report provenance: expected a mapping or a DataFrame; got {type(provenance).__name__}")
    rows = []
    for key, value in provenance.items():
        if isinstance(value, Mapping) and value:
            rows.extend((f"{key}: {column_label(k)}", _plain(v)) for k, v in value.items())
        else:
            rows.append((str(key), _plain(value)))
    return pd.DataFrame(rows, columns=["item", "value"])


_CSS = """
body{font-family:system-ui,-apple-system,"Segoe UI",Roboto,Helvetica,Arial,sans-serif;margin:0 auto;
max-width:1100px;padding:1em 2em 3em;color:#1b1b1b;line-height:1.4;background:#fff}
h1{font-size:1.5em;margin:0 0 .1em}h2{font-size:1.25em;border-bottom:2px solid #d0d7de;padding-bottom:.2em;
margin-top:1.8em}.meta{color:#444;margin:0 0 .6em}
.box{border-radius:6px;padding:.5em 1em;margin:.6em 0}.box h2{border:0;margin:.1em 0 .3em;font-size:1.15em}
.summary{background:#eef6ff;border:1px solid #9cc3ec}.cautions{background:#fff6e5;border:1px solid #e3b45b;
font-size:.9em}.cautions li{margin:.15em 0}.provenance{background:#f6f8fa;border:1px solid #d0d7de}
.columns{display:flex;flex-wrap:wrap;gap:0 2em}.columns>div{flex:1 1 22em}.summary p{margin:.35em 0}
.columns>div:last-child{font-size:.93em}
.verdict{font-weight:700;padding:.25em .6em;border-radius:4px;display:inline-block;border:2px solid}
.verdict-ok{border-color:#009E73}.verdict-check{border-color:#E69F00;background:#fff3d6}
.verdict-unreliable{border-color:#D55E00;background:#fde3d6}.verdict-not{border-color:#777}
.reasons{margin:.3em 0 .3em 1.2em;padding:0}
nav ol{columns:2;margin:.3em 0}
figure{margin:1.2em 0;text-align:center}figure img{max-width:100%;height:auto;border:1px solid #e1e4e8}
figcaption{font-size:.92em;color:#333;margin-top:.4em;text-align:left}
.table-wrap{overflow-x:auto;margin:.8em 0}table{border-collapse:collapse;font-size:.9em}
caption{text-align:left;font-weight:600;padding:.3em 0}th,td{border:1px solid #d0d7de;padding:.2em .55em;
text-align:right}th{background:#f0f3f6}td:first-child,th:first-child{text-align:left}
.provenance td{text-align:left;word-break:break-all}
@page{size:A4;margin:18mm 16mm}
@media print{nav{display:none}body{max-width:none;padding:0}h2{page-break-after:avoid}
figure,table,.box{page-break-inside:avoid}}
"""


def _summary(summary) -> Summary:
    if isinstance(summary, Summary):
        return summary
    if isinstance(summary, Mapping):
        try:
            return Summary(datum=summary["datum"], epoch_year=summary.get("epoch_year"),
                           recommended_method=summary["recommended_method"],
                           levels=summary.get("levels", pd.DataFrame()), paragraphs=summary.get("paragraphs", ()),
                           assessment=summary.get("assessment"))
        except KeyError as err:
            raise DataError(f"report summary: missing key {err}; expected datum, epoch_year, recommended_method, "
                            f"levels") from None
    raise DataError(f"report summary: expected a Summary or a mapping; got {type(summary).__name__}")


def epoch_text(epoch_year) -> str:
    """The epoch as shown in the report (one decimal), or ``not stated``."""
    return "not stated" if epoch_year is None else f"{epoch_year:.1f}"


def _verdict_html(assessment) -> str:
    esc = html.escape
    if not assessment:
        return ""
    status = str(assessment.get("status", "not assessed"))
    parts = [f'<p><strong>Verdict:</strong> <span class="verdict verdict-{esc(status.split()[0])}">'
             f"{esc(str(assessment.get('text') or status))}</span></p>"]
    reasons = list(assessment.get("reasons") or ())
    if reasons:
        parts.append('<ul class="reasons">' + "".join(f"<li>{esc(str(r))}</li>" for r in reasons) + "</ul>")
    if assessment.get("checks"):
        parts.append(f'<p class="meta">{esc(str(assessment["checks"]))}</p>')
    return "".join(parts)


def _summary_html(summary: Summary, table_no: int) -> str:
    esc = html.escape
    epoch = epoch_text(summary.epoch_year)
    parts = ['<section class="box summary" id="summary"><h2>Summary</h2><div class="columns"><div>']
    if len(summary.levels):
        parts.append(_table_html(summary.levels, f"Recommended still-water return levels, metres above "
                                 f"{summary.datum}, epoch {epoch} ({summary.recommended_method})", table_no))
    parts.append("</div><div>")
    parts.append(_verdict_html(summary.assessment))
    parts.append(f"<p><strong>Datum:</strong> {esc(summary.datum)}. <strong>Mean-sea-level epoch:</strong> "
                 f"{esc(epoch)}.</p><p><strong>Recommended method:</strong> "
                 f"{esc(summary.recommended_method)}.</p>")
    parts.extend(f"<p>{esc(str(text))}</p>" for text in summary.paragraphs)
    parts.append("</div></div></section>")
    return "".join(parts)


def render_report(*, title: str, summary, sections, cautions, provenance, appendices=(),
                  made: str | None = None) -> str:
    """Render the study as one self-contained HTML page.

    Parameters
    ----------
    title : str
        Page title (e.g. the station name).
    summary : Summary or mapping
        The recommended still-water levels with datum, epoch, method and verdict (mapping keys as the fields
        of :class:`Summary`).
    sections : iterable of Section
        The body, in order (figures numbered through the page, as are tables).
    cautions : iterable of str
        Cautions shown in their own box right after the summary.
    provenance : mapping or pandas.DataFrame
        Inputs, their sha256, options and software version, shown as a two-column table (nested mappings
        give one row per entry; see :func:`provenance_rows`).
    appendices : iterable of Section
        Long tables, after the body (lettered A, B, ...).
    made : str, optional
        Date the report was made, shown under the title.

    Returns
    -------
    str
        The HTML document (UTF-8 text). It has no script and loads nothing from outside.
    """
    summary = _summary(summary)
    sections, appendices = list(sections), list(appendices)
    for section in sections + appendices:
        if not isinstance(section, Section):
            raise DataError(f"report sections: expected Section objects; got {type(section).__name__}")
    provenance = provenance_rows(provenance)
    esc = html.escape
    epoch = epoch_text(summary.epoch_year)
    parts = ["<!DOCTYPE html>", '<html lang="en">', "<head>", '<meta charset="utf-8">',
             '<meta name="viewport" content="width=device-width, initial-scale=1">',
             f"<title>{esc(title)}</title>", f"<style>{_CSS}</style>", "</head>", "<body>",
             f"<header><h1>{esc(title)}</h1>",
             f'<p class="meta">Still-water levels in metres above {esc(summary.datum)}; mean-sea-level '
             f"epoch {esc(epoch)}; times in UTC" + (f"; report made {esc(made)}" if made else "") + ".</p></header>"]
    figure_no = table_no = 0
    table_no += bool(len(summary.levels))
    parts.append(_summary_html(summary, table_no))
    parts.append('<section class="box cautions" id="cautions"><h2>Cautions</h2><ul>')
    parts.extend(f"<li>{esc(str(text))}</li>" for text in cautions)
    parts.append("</ul></section>")

    numbered = [(str(i), s) for i, s in enumerate(sections, 1)] + [
        (chr(ord("A") + i), s) for i, s in enumerate(appendices)]
    if numbered:
        parts.append('<nav aria-label="Contents"><h2>Contents</h2><ol>')
        parts.extend(f'<li><a href="#section-{key}">{"Appendix " if key.isalpha() else ""}{key}. '
                     f"{esc(s.title)}</a></li>" for key, s in numbered)
        parts.append('<li><a href="#provenance">Provenance</a></li></ol></nav>')
    for key, section in numbered:
        label = f"Appendix {key}" if key.isalpha() else key
        parts.append(f'<section id="section-{key}"><h2>{label}. {esc(section.title)}</h2>')
        parts.extend(f"<p>{esc(str(text))}</p>" for text in section.paragraphs)
        for item in section.figures:
            figure_no += 1
            parts.append(_figure_html(item, figure_no))
        for item in section.tables:
            table_no += 1
            parts.append(_table_html(item.frame, item.caption, table_no))
        parts.append("</section>")

    parts.append('<section class="box provenance" id="provenance"><h2>Provenance</h2>')
    parts.append(_table_html(provenance, "Inputs, options and software of these results", table_no + 1))
    parts.append("</section></body></html>")
    logger.debug("report %r: %d sections, %d figures, %d tables", title, len(sections), figure_no, table_no)
    return "\n".join(parts) + "\n"


def render_html(content) -> str:
    """The HTML page of a :class:`extremes.report.content.ReportContent`."""
    return render_report(title=content.title, summary=content.summary, sections=content.sections,
                         cautions=content.cautions, provenance=content.provenance, appendices=content.appendices,
                         made=content.made)
