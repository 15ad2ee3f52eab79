"""One self-contained HTML report: inline CSS, figures as base64 PNG, tables from DataFrames.

The page needs no script and loads nothing from outside, so it can be mailed, archived and opened
offline. Every piece of text is escaped. Table headers carry units taken from the column names
(``level_m`` -> ``level [m]``, ``return_period_years`` -> ``return period [years]``).
"""
from __future__ import annotations

import base64
import datetime as _dt
import html
import json
import logging
import math
from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from extremes.errors import DataError

logger = logging.getLogger(__name__)

__all__ = ["FigureItem", "TableItem", "Section", "Summary", "render_report", "column_label"]

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
    """

    datum: str
    epoch_year: float | None
    recommended_method: str
    levels: pd.DataFrame = field(default_factory=pd.DataFrame)
    paragraphs: tuple = ()

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
                "levels": to_jsonable(self.levels), "paragraphs": list(self.paragraphs)}


# ------------------------------------------------------------------------------------------------
def column_label(name) -> str:
    """Header text of a column: words with the unit from the name's suffix in brackets."""
    text = str(name)
    for suffix, unit in _UNIT_SUFFIXES:
        if text.endswith(suffix) and len(text) > len(suffix):
            return f"{text[: -len(suffix)].replace('_', ' ')} [{unit}]"
    return text.replace("_", " ")


def _cell(value, column: str) -> str:
    if value is None:
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
            return "–"
        if column.endswith("_m") or column.endswith("_m_per_year"):
            return f"{value:.3f}"
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
        cells = "".join(f"<td>{html.escape(_cell(v, c))}</td>" for v, c in zip(row, columns))
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


def _provenance_value(value) -> str:
    from extremes.jsonable import to_jsonable

    if isinstance(value, (Mapping, list, tuple)):
        text = json.dumps(to_jsonable(value), indent=2, sort_keys=True, ensure_ascii=False)
        return f"<pre>{html.escape(text)}</pre>"
    plain = to_jsonable(value)
    return f"<code>{html.escape('–' if plain is None else str(plain))}</code>"


_CSS = """
body{font-family:system-ui,-apple-system,"Segoe UI",Roboto,Helvetica,Arial,sans-serif;margin:0 auto;
max-width:1100px;padding:1.5em 2em 3em;color:#1b1b1b;line-height:1.45;background:#fff}
h1{font-size:1.7em;margin:0 0 .2em}h2{font-size:1.3em;border-bottom:2px solid #d0d7de;padding-bottom:.2em;
margin-top:2em}.meta{color:#555;margin:0 0 1em}
.box{border-radius:6px;padding:.8em 1.2em;margin:1em 0}.box h2{border:0;margin:.2em 0 .4em}
.summary{background:#eef6ff;border:1px solid #9cc3ec}.cautions{background:#fff6e5;border:1px solid #e3b45b}
.cautions li{margin:.3em 0}.provenance{background:#f6f8fa;border:1px solid #d0d7de}
nav ol{columns:2;margin:.3em 0}
figure{margin:1.2em 0;text-align:center}figure img{max-width:100%;height:auto;border:1px solid #e1e4e8}
figcaption{font-size:.92em;color:#333;margin-top:.4em;text-align:left}
.table-wrap{overflow-x:auto;margin:1em 0}table{border-collapse:collapse;font-size:.92em}
caption{text-align:left;font-weight:600;padding:.3em 0}th,td{border:1px solid #d0d7de;padding:.25em .6em;
text-align:right}th{background:#f0f3f6}td:first-child,th:first-child{text-align:left}
dl{display:grid;grid-template-columns:max-content 1fr;gap:.3em 1em}dt{font-weight:600}dd{margin:0}
pre{background:#fff;border:1px solid #e1e4e8;padding:.5em;overflow-x:auto;font-size:.85em;margin:0}
@media print{nav{display:none}h2{page-break-after:avoid}figure,table{page-break-inside:avoid}}
"""


def _summary(summary) -> Summary:
    if isinstance(summary, Summary):
        return summary
    if isinstance(summary, Mapping):
        try:
            return Summary(datum=summary["datum"], epoch_year=summary.get("epoch_year"),
                           recommended_method=summary["recommended_method"],
                           levels=summary.get("levels", pd.DataFrame()), paragraphs=summary.get("paragraphs", ()))
        except KeyError as err:
            raise DataError(f"report summary: missing key {err}; expected datum, epoch_year, recommended_method, "
                            f"levels") from None
    raise DataError(f"report summary: expected a Summary or a mapping; got {type(summary).__name__}")


def render_report(*, title: str, summary, sections, cautions, provenance: Mapping) -> str:
    """Render the study as one self-contained HTML page.

    Parameters
    ----------
    title : str
        Page title (e.g. the station name).
    summary : Summary or mapping
        The recommended still-water levels with datum, epoch and method (mapping keys as the fields of
        :class:`Summary`).
    sections : iterable of Section
        The body, in order (figures numbered through the page, as are tables).
    cautions : iterable of str
        Cautions shown in their own box (from :func:`extremes.report.cautions.standard_cautions`).
    provenance : mapping
        Inputs, their sha256, options and software version; nested values are shown as JSON.

    Returns
    -------
    str
        The HTML document (UTF-8 text). It has no script and loads nothing from outside.
    """
    summary = _summary(summary)
    sections = list(sections)
    for section in sections:
        if not isinstance(section, Section):
            raise DataError(f"report sections: expected Section objects; got {type(section).__name__}")
    esc = html.escape
    parts = ["<!DOCTYPE html>", '<html lang="en">', "<head>", '<meta charset="utf-8">',
             '<meta name="viewport" content="width=device-width, initial-scale=1">',
             f"<title>{esc(title)}</title>", f"<style>{_CSS}</style>", "</head>", "<body>",
             f"<header><h1>{esc(title)}</h1>"]
    epoch = "not stated" if summary.epoch_year is None else f"{summary.epoch_year:.1f}"
    parts.append(f'<p class="meta">Still-water levels in metres above {esc(summary.datum)}; mean-sea-level '
                 f"epoch {esc(epoch)}; times in UTC.</p></header>")

    figure_no = table_no = 0
    parts.append('<section class="box summary" id="summary"><h2>Summary</h2>')
    parts.append(f"<p><strong>Recommended method:</strong> {esc(summary.recommended_method)}. "
                 f"<strong>Datum:</strong> {esc(summary.datum)}. <strong>Mean-sea-level epoch:</strong> "
                 f"{esc(epoch)}.</p>")
    for text in summary.paragraphs:
        parts.append(f"<p>{esc(str(text))}</p>")
    if len(summary.levels):
        table_no += 1
        parts.append(_table_html(summary.levels, "Recommended still-water return levels "
                                 f"({summary.recommended_method}; {summary.datum}; epoch {epoch})", table_no))
    parts.append("</section>")

    parts.append('<section class="box cautions" id="cautions"><h2>Cautions</h2><ul>')
    parts.extend(f"<li>{esc(str(text))}</li>" for text in cautions)
    parts.append("</ul></section>")

    if sections:
        parts.append('<nav aria-label="Contents"><h2>Contents</h2><ol>')
        parts.extend(f'<li><a href="#section-{i}">{esc(s.title)}</a></li>' for i, s in enumerate(sections, 1))
        parts.append('<li><a href="#provenance">Provenance</a></li></ol></nav>')
    for i, section in enumerate(sections, 1):
        parts.append(f'<section id="section-{i}"><h2>{i}. {esc(section.title)}</h2>')
        parts.extend(f"<p>{esc(str(text))}</p>" for text in section.paragraphs)
        for item in section.figures:
            figure_no += 1
            parts.append(_figure_html(item, figure_no))
        for item in section.tables:
            table_no += 1
            parts.append(_table_html(item.frame, item.caption, table_no))
        parts.append("</section>")

    parts.append('<section class="box provenance" id="provenance"><h2>Provenance</h2><dl>')
    for key, value in dict(provenance).items():
        parts.append(f"<dt>{esc(str(key))}</dt><dd>{_provenance_value(value)}</dd>")
    parts.append("</dl></section>")
    parts.append("</body></html>")
    logger.debug("report %r: %d sections, %d figures, %d tables", title, len(sections), figure_no, table_no)
    return "\n".join(parts) + "\n"
