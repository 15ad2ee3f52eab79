"""A study's report as files: HTML, PDF and figures, built from a results document or refreshed from a folder.

:func:`render_study_report` turns a results document and its figure images into a :class:`StudyReport`;
:func:`refresh_report` rebuilds the report of a results folder from its saved content (``results.json`` and
``figures/*.png``), redrawing the sea-level-rise figure from the saved curve for the document's offsets, as
``extremes rerun`` needs after new offsets.
"""
from __future__ import annotations

import datetime as _dt
import logging
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path

from extremes.errors import DataError

logger = logging.getLogger(__name__)

__all__ = ["StudyReport", "render_study_report", "refresh_report", "sea_level_rise_figure_of",
           "REFRESHED_FIGURES"]

#: figures that depend on the sea-level-rise offsets: redrawn by :func:`refresh_report`
REFRESHED_FIGURES = ("sea_level_rise",)


@dataclass(frozen=True, repr=False)
class StudyReport:
    """The report of a study: the HTML page, the PDF file and the figures (PNG bytes by name)."""

    html: str
    pdf: bytes
    figures: dict
    content: object

    def __repr__(self) -> str:
        return f"StudyReport(html={len(self.html)} chars, pdf={len(self.pdf)} bytes, figures={len(self.figures)})"

    def to_dict(self) -> dict:
        """JSON-ready summary (sizes and figure names)."""
        return {"html_chars": len(self.html), "pdf_bytes": len(self.pdf), "figures": sorted(self.figures)}

    def write(self, folder) -> list[Path]:
        """Write ``report.html``, ``report.pdf`` and ``figures/<name>.png`` into ``folder``.

        ``folder`` is a results folder being assembled (see :func:`extremes.outputs.output_folder`), so files
        are written directly; existing figures of the same name are replaced.
        """
        folder = Path(folder)
        (folder / "figures").mkdir(exist_ok=True)
        written = []
        for name, png in self.figures.items():
            path = folder / "figures" / f"{name}.png"
            path.write_bytes(png)
            written.append(path)
        (folder / "report.html").write_text(self.html, encoding="utf-8")
        (folder / "report.pdf").write_bytes(self.pdf)
        return written + [folder / "report.html", folder / "report.pdf"]


def _software(document: dict) -> str:
    software = document.get("software") or {}
    return f"{software.get('name', 'extremes')} {software.get('version', '')}".strip()


def render_study_report(document: dict, figures: Mapping[str, bytes], *, made: _dt.date | None = None,
                        paper: str = "A4") -> StudyReport:
    """HTML and PDF of a results document with its figures (PNG bytes by name)."""
    from extremes.report.content import report_content
    from extremes.report.html import render_html
    from extremes.report.pdf import render_pdf

    content = report_content(document, figures, made=made)
    return StudyReport(html=render_html(content), pdf=render_pdf(content, paper=paper, software=_software(document)),
                       figures=dict(figures), content=content)


def sea_level_rise_figure_of(document: dict):
    """The offsets figure of a results document (saved curve, its offsets, design life and risk), or None."""
    from extremes.report import figures
    from extremes.results import curves_from_results

    details = document.get("sea_level_rise_details") or {}
    method = details.get("method") or document.get("recommended_method")
    curve = curves_from_results(document).get(method)
    offsets = sorted({float(row["offset_m"]) for row in document.get("sea_level_rise") or ()})
    if curve is None or not offsets:
        return None
    return figures.offsets_figure(curve, offsets_m=offsets, design_life_years=int(details.get("design_life_years")
                                                                                     or 50),
                                  accepted_risk=float(details.get("accepted_risk") or 0.1))


def refresh_report(document: dict, folder, *, made: _dt.date | None = None, paper: str = "A4") -> StudyReport:
    """The report of ``document`` from the saved figures of the results folder ``folder``.

    The figures that depend on the sea-level-rise offsets (:data:`REFRESHED_FIGURES`) are redrawn from the
    document's saved curve; the others are read from ``folder/figures/*.png`` (a figure missing there is
    left out of the report).

    Parameters
    ----------
    document : dict
        The results document, e.g. after :func:`extremes.rerun.rerun_sea_level_rise`.
    folder : path-like
        The results folder whose figures are reused.

    Returns
    -------
    StudyReport
        Write it with :meth:`StudyReport.write`.
    """
    from extremes.report.plotstyle import to_png

    figures_dir = Path(folder) / "figures"
    if not Path(folder).is_dir():
        raise DataError(f"{folder}: not a results folder")
    pngs = {path.stem: path.read_bytes() for path in sorted(figures_dir.glob("*.png"))} if figures_dir.is_dir() else {}
    figure = sea_level_rise_figure_of(document)
    for name in REFRESHED_FIGURES:
        pngs.pop(name, None)
    if figure is not None:
        pngs["sea_level_rise"] = to_png(figure)
    return render_study_report(document, pngs, made=made, paper=paper)
