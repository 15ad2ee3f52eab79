"""The study report: figures (matplotlib, imported lazily), an HTML page and a PDF, and the cautions.

- :mod:`extremes.report.content` -- ``report_content(document, figures)``: what the report says, built from
  a results document (``results.json``) and figure images alone; sections in :mod:`extremes.report.sections`.
- :mod:`extremes.report.html` -- ``render_html(content)`` / ``render_report(*, title, summary, sections,
  cautions, provenance, appendices)``: one self-contained HTML page, with :class:`Section`,
  :class:`FigureItem`, :class:`TableItem`, :class:`Summary`.
- :mod:`extremes.report.pdf` -- ``render_pdf(content, *, paper="A4")``: the same report as a PDF (fpdf2).
- :mod:`extremes.report.assemble` -- ``render_study_report(document, figures)`` and
  ``refresh_report(document, folder)`` (rebuild a results folder's report, e.g. after ``extremes rerun``).
- :mod:`extremes.report.figures` (and :mod:`~extremes.report.figures_levels`) -- one function per figure,
  each returning a matplotlib Figure; ``to_png(fig) -> bytes``; the look and the fit check in
  :mod:`extremes.report.plotstyle`.
- :mod:`extremes.report.cautions` -- ``standard_cautions(*, datum, epoch_year, ...)``, importable without
  matplotlib (results files carry the same cautions).

Importing this package does not import matplotlib.
"""
from extremes.report.assemble import StudyReport, refresh_report, render_study_report
from extremes.report.cautions import standard_cautions
from extremes.report.content import ReportContent, report_content
from extremes.report.html import FigureItem, Section, Summary, TableItem, render_html, render_report

__all__ = ["standard_cautions", "render_report", "render_html", "Section", "FigureItem", "TableItem", "Summary",
           "ReportContent", "report_content", "StudyReport", "render_study_report", "refresh_report"]
