"""The study report: figures (matplotlib, imported lazily), one self-contained HTML page, and cautions.

- :mod:`extremes.report.figures` -- one function per figure, each returning a matplotlib Figure;
  ``to_png(fig) -> bytes``.
- :mod:`extremes.report.html` -- ``render_report(*, title, summary, sections, cautions, provenance) -> str``
  with :class:`Section`, :class:`FigureItem`, :class:`TableItem`, :class:`Summary`.
- :mod:`extremes.report.cautions` -- ``standard_cautions(*, datum, epoch_year, ...)``, importable without
  matplotlib (results files carry the same cautions).

Importing this package does not import matplotlib.
"""
from extremes.report.cautions import standard_cautions
from extremes.report.html import FigureItem, Section, Summary, TableItem, render_report

__all__ = ["standard_cautions", "render_report", "Section", "FigureItem", "TableItem", "Summary"]
