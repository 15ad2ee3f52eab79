"""The study report as a PDF for printing and filing, drawn with fpdf2 (pure Python) [1]_.

The PDF holds the same content as the HTML page (:class:`extremes.report.content.ReportContent`):
the summary, the verdict and the cautions on the first page, then the sections in the order of the study,
appendices with the long tables, and the provenance. Every page has a running header (the study's name,
the datum and the epoch) and footer (the date the report was made and ``Page n of N``).

Pages are A4 or US Letter. Margins are wide enough for both: an A4 page printed on Letter paper at actual
size (8.8 mm lost top and bottom) or a Letter page printed on A4 keeps its header, footer and text.
A table or figure that fits on a page is never cut across pages; a longer table continues on the next
page with its header row repeated. The text is set in DejaVu Sans, the font shipped with matplotlib, so
every character (°, ±, –, ²) prints without any system font.

References
----------
.. [1] fpdf2 documentation, "Tables", "Page breaks" and "Unicode" (py-pdf.github.io/fpdf2), version 2.8.
"""
from __future__ import annotations

import datetime as _dt
import io
import logging
import math
import struct
from pathlib import Path

from extremes.errors import DataError
from extremes.report.html import column_label, epoch_text, format_cell

logger = logging.getLogger(__name__)

__all__ = ["render_pdf", "PAGE_SIZES_MM", "MARGINS_MM"]

#: page sizes [mm] (width, height)
PAGE_SIZES_MM = {"A4": (210.0, 297.0), "Letter": (215.9, 279.4)}
#: margins [mm]: left/right, top of the body, bottom of the body; the header's rule at 19 mm from the top
#: and the footer's line at 19 mm from the bottom: inside what survives printing an A4 page on Letter
#: paper at actual size (8.8 mm lost top and bottom) with a printer's unprinted edge of about 5 mm
MARGINS_MM = {"side": 18.0, "top": 26.0, "bottom": 26.0, "header": 19.0, "footer": 19.0}
_VERDICT_RGB = {"ok": (0, 158, 115), "check": (230, 159, 0), "unreliable": (213, 94, 0)}
_BODY_PT, _SMALL_PT, _TABLE_PT = 9.5, 8.0, 7.5
#: table line height, cell padding across and down [mm]
_LINE_MM, _PAD_MM, _PAD_ROW_MM = 3.4, 1.2, 0.5


def _font_files() -> dict[str, Path]:
    import matplotlib

    folder = Path(matplotlib.get_data_path()) / "fonts" / "ttf"
    files = {"": folder / "DejaVuSans.ttf", "B": folder / "DejaVuSans-Bold.ttf",
             "I": folder / "DejaVuSans-Oblique.ttf"}
    missing = [str(p) for p in files.values() if not p.is_file()]
    if missing:
        raise DataError(f"PDF report: matplotlib's DejaVu Sans font files are missing: {missing}")
    return files


def _png_size(png: bytes) -> tuple[int, int]:
    if not png.startswith(b"\x89PNG\r\n\x1a\n"):
        raise DataError("PDF report: a figure is not a PNG image")
    return struct.unpack(">II", png[16:24])


def _document_class():
    from fpdf import FPDF

    class _ReportPDF(FPDF):
        running: dict = {}

        def header(self):
            self.set_y(MARGINS_MM["header"] - 4)
            self.set_font("DejaVu", "", _SMALL_PT)
            self.set_text_color(70)
            width = self.epw / 2
            self.cell(width, 4, self.running["left"], align="L")
            self.cell(width, 4, self.running["right"], align="R")
            self.set_draw_color(160)
            self.line(self.l_margin, MARGINS_MM["header"] + 1, self.w - self.r_margin, MARGINS_MM["header"] + 1)
            self.set_text_color(0)
            self.set_y(MARGINS_MM["top"])

        def footer(self):
            self.set_y(-MARGINS_MM["footer"])
            self.set_font("DejaVu", "", _SMALL_PT)
            self.set_text_color(70)
            width = self.epw / 2
            self.cell(width, 4, self.running["footer"], align="L")
            self.cell(width, 4, f"Page {self.page_no()} of {{nb}}", align="R")
            self.set_text_color(0)

    return _ReportPDF


class _Writer:
    """Draws the report's parts on an fpdf2 document, keeping tables and figures whole."""

    def __init__(self, pdf, placements=None):
        self.pdf = pdf
        self.tables = 0
        self.figures = 0
        self.placements = placements if placements is not None else []

    # text ---------------------------------------------------------------------------------------------
    def heading(self, text: str, *, size: float = 12.5, keep_mm: float = 45.0):
        pdf = self.pdf
        if pdf.y + keep_mm > pdf.page_break_trigger:  # a heading never ends a page
            pdf.add_page()
        pdf.ln(2)
        pdf.start_section(text)  # an entry in the PDF's outline (bookmarks)
        pdf.set_font("DejaVu", "B", size)
        pdf.multi_cell(0, size * 0.5, text, align="L", new_x="LMARGIN", new_y="NEXT")
        pdf.ln(1)
        pdf.set_font("DejaVu", "", _BODY_PT)

    def paragraph(self, text: str, *, size: float = _BODY_PT, style: str = "", bullet: bool = False):
        pdf = self.pdf
        pdf.set_font("DejaVu", style, size)
        if bullet:
            pdf.cell(4, size * 0.46, "•")
            pdf.multi_cell(pdf.epw - 4, size * 0.46, str(text), align="L", new_x="LMARGIN", new_y="NEXT")
        else:
            pdf.multi_cell(0, size * 0.46, str(text), align="L", new_x="LMARGIN", new_y="NEXT")
        pdf.ln(1.2)

    # tables -------------------------------------------------------------------------------------------
    def _layout(self, frame, width: float):
        """Header, body text, column widths [mm] and alignment of a table."""
        pdf = self.pdf
        columns = [str(c) for c in frame.columns]
        header = [column_label(c) for c in columns]
        body = [[format_cell(v, c) for v, c in zip(row, columns)] for row in frame.itertuples(index=False, name=None)]
        pdf.set_font("DejaVu", "B", _TABLE_PT)
        heads = [min(pdf.get_string_width(name), 40.0) for name in header]
        pdf.set_font("DejaVu", "", _TABLE_PT)
        natural = []
        for k, head in enumerate(heads):
            longest = max([pdf.get_string_width(r[k]) for r in body] or [0.0])
            natural.append(max(min(longest, 60.0), head, 8.0) + 2 * _PAD_MM + 1)
        total = min(width, sum(natural), pdf.epw) - 1e-6
        widths = [w * total / sum(natural) for w in natural]
        align = tuple("LEFT" if k == 0 or not _numeric(body, k) else "RIGHT" for k in range(len(header)))
        return header, body, widths, align

    def _height(self, header, body, widths, caption_lines: int) -> float:
        """Height the table will take [mm], from the wrapped line count of each row's fullest cell."""
        pdf = self.pdf
        height = 4.0 * caption_lines + 3.0
        for bold, row in [(True, header)] + [(False, r) for r in body]:
            pdf.set_font("DejaVu", "B" if bold else "", _TABLE_PT)
            lines = max(math.ceil(pdf.get_string_width(text) / max(w - 2 * _PAD_MM - 0.5, 1.0)) or 1
                        for text, w in zip(row, widths))
            height += lines * _LINE_MM + 2 * _PAD_ROW_MM
        return height

    def table(self, frame, caption: str, *, width: float | None = None):
        """A table with its caption, moved whole to the next page when it would be cut (and fits one);
        a table longer than a page continues on the next with its header row repeated."""
        from fpdf.fonts import FontFace

        if frame is None or len(frame.columns) == 0:
            return
        pdf = self.pdf
        width = width or pdf.epw
        self.tables += 1
        header, body, widths, align = self._layout(frame, width)
        text = f"Table {self.tables}. {caption}"
        pdf.set_font("DejaVu", "B", _SMALL_PT)
        caption_lines = len(pdf.multi_cell(width, 4, text, dry_run=True, output="LINES"))
        height = self._height(header, body, widths, caption_lines)
        fits_a_page = height <= pdf.eph
        if pdf.y + height > pdf.page_break_trigger and pdf.y > pdf.t_margin + 1 and (
                fits_a_page or pdf.y + 40.0 > pdf.page_break_trigger):
            pdf.add_page()  # a table longer than a page starts where it is and repeats its header row
        x0, first_page = pdf.get_x(), pdf.page_no()
        pdf.set_font("DejaVu", "B", _SMALL_PT)
        pdf.multi_cell(width, 4, text, align="L", new_x="LEFT", new_y="NEXT")
        pdf.set_font("DejaVu", "", _TABLE_PT)
        with pdf.table(col_widths=widths, width=sum(widths), align="LEFT", text_align=align,
                       line_height=_LINE_MM, padding=(_PAD_ROW_MM, _PAD_MM), repeat_headings=1,
                       headings_style=FontFace(emphasis="BOLD", fill_color=(236, 240, 244))) as table:
            for row in [header] + body:
                table.row(row)
        pdf.set_x(x0)
        pdf.ln(3)
        self.placements.append(("table", self.tables, first_page, pdf.page_no(), height))

    # figures ------------------------------------------------------------------------------------------
    def figure(self, png: bytes, caption: str):
        """A figure at the text width (smaller if taller than 60% of the page), caption below, never cut."""
        pdf = self.pdf
        width_px, height_px = _png_size(png)
        width = pdf.epw
        height = width * height_px / width_px
        if height > 0.6 * pdf.eph:
            height = 0.6 * pdf.eph
            width = height * width_px / height_px
        self.figures += 1
        text = f"Figure {self.figures}. {caption}"
        pdf.set_font("DejaVu", "", _SMALL_PT)
        lines = len(pdf.multi_cell(pdf.epw, 3.8, text, dry_run=True, output="LINES"))
        if pdf.y + height + 3.8 * lines + 4 > pdf.page_break_trigger:
            pdf.add_page()
        first_page = pdf.page_no()
        pdf.image(io.BytesIO(png), x=pdf.l_margin + (pdf.epw - width) / 2, w=width, h=height, alt_text=caption)
        pdf.ln(1)
        pdf.multi_cell(pdf.epw, 3.8, text, align="L", new_x="LMARGIN", new_y="NEXT")
        self.placements.append(("figure", self.figures, first_page, pdf.page_no(), height + 3.8 * lines + 4))
        pdf.ln(3)


def _numeric(body, k: int) -> bool:
    cells = [row[k] for row in body if row[k] not in ("–", "")]
    return bool(cells) and all(c.replace(".", "", 1).replace("-", "", 1).replace(",", "").replace("+", "").isdigit()
                               for c in cells)


def _first_page(writer: _Writer, content):
    pdf = writer.pdf
    summary = content.summary
    pdf.set_font("DejaVu", "B", 15)
    pdf.multi_cell(0, 7, content.title, align="L", new_x="LMARGIN", new_y="NEXT")
    writer.paragraph(f"Still-water levels in metres above {summary.datum}; mean-sea-level epoch "
                     f"{epoch_text(summary.epoch_year)}; times in UTC; report made {content.made}.", size=_SMALL_PT)
    assessment = summary.assessment or {}
    if assessment:
        rgb = _VERDICT_RGB.get(assessment.get("status"), (110, 110, 110))
        pdf.set_draw_color(*rgb)
        pdf.set_line_width(0.8)
        y0 = pdf.y
        pdf.set_x(pdf.l_margin + 2)
        pdf.set_font("DejaVu", "B", 10.5)
        pdf.multi_cell(pdf.epw - 4, 5, f"Verdict: {assessment.get('text', assessment.get('status'))}",
                       align="L", new_x="LMARGIN", new_y="NEXT")
        pdf.set_font("DejaVu", "", _SMALL_PT)
        for reason in assessment.get("reasons") or ():
            pdf.set_x(pdf.l_margin + 2)
            pdf.multi_cell(pdf.epw - 4, 3.8, f"• {reason}", align="L", new_x="LMARGIN", new_y="NEXT")
        if assessment.get("checks"):
            pdf.set_x(pdf.l_margin + 2)
            pdf.set_text_color(70)
            pdf.multi_cell(pdf.epw - 4, 3.8, assessment["checks"], align="L", new_x="LMARGIN", new_y="NEXT")
            pdf.set_text_color(0)
        pdf.rect(pdf.l_margin, y0 - 1.5, pdf.epw, pdf.y - y0 + 3)
        pdf.set_line_width(0.2)
        pdf.set_draw_color(0)
        pdf.ln(4)
    # levels on the left, method and reasons on the right
    top = pdf.y
    half = (pdf.epw - 6) / 2
    writer.table(summary.levels, f"Recommended still-water return levels, metres above {summary.datum}, epoch "
                                 f"{epoch_text(summary.epoch_year)} ({summary.recommended_method})", width=half)
    bottom = pdf.y
    pdf.set_xy(pdf.l_margin + half + 6, top)
    pdf.set_left_margin(pdf.l_margin + half + 6)
    writer.paragraph(f"Recommended method: {summary.recommended_method}.", style="B", size=_SMALL_PT + 0.5)
    for text in summary.paragraphs:
        writer.paragraph(text, size=_SMALL_PT)
    pdf.set_left_margin(MARGINS_MM["side"])
    pdf.set_y(max(bottom, pdf.y))
    writer.heading("Cautions", size=11, keep_mm=20)
    for text in content.cautions:
        writer.paragraph(text, size=_SMALL_PT, bullet=True)


def render_pdf(content, *, paper: str = "A4", software: str = "", placements: list | None = None) -> bytes:
    """The PDF of a :class:`extremes.report.content.ReportContent`.

    Parameters
    ----------
    content : ReportContent
    paper : {"A4", "Letter"}, keyword-only
        Page size.
    software : str, keyword-only
        Software name and version for the footer.
    placements : list, optional
        Filled with ``(kind, number, first_page, last_page, height_mm)`` of every table and figure, to
        check that none that fits a page is cut across pages.

    Returns
    -------
    bytes
        The PDF file.
    """
    if paper not in PAGE_SIZES_MM:
        raise DataError(f"PDF report: paper must be one of {sorted(PAGE_SIZES_MM)}; got {paper!r}")
    pdf = _document_class()(unit="mm", format=PAGE_SIZES_MM[paper])
    for style, path in _font_files().items():
        pdf.add_font("DejaVu", style, str(path))
    pdf.running = {"left": content.title,
                   "right": f"m above {content.summary.datum}; epoch {epoch_text(content.summary.epoch_year)}",
                   "footer": f"Made {content.made}" + (f" with {software}" if software else "")}
    pdf.set_margins(MARGINS_MM["side"], MARGINS_MM["top"], MARGINS_MM["side"])
    pdf.set_auto_page_break(True, margin=MARGINS_MM["bottom"])
    pdf.set_title(content.title)
    pdf.set_creator(software or "extremes")
    made = _dt.date.fromisoformat(content.made)
    pdf.set_creation_date(_dt.datetime(made.year, made.month, made.day, tzinfo=_dt.UTC))
    pdf.alias_nb_pages()
    pdf.add_page()
    writer = _Writer(pdf, placements)
    _first_page(writer, content)
    pdf.add_page()
    for number, section in enumerate(content.sections, 1):
        _section(writer, f"{number}. {section.title}", section)
    for number, section in enumerate(content.appendices):
        if number == 0:
            pdf.add_page()
        _section(writer, f"Appendix {chr(ord('A') + number)}. {section.title}", section)
    writer.heading("Provenance")
    writer.table(content.provenance, "Inputs, options and software of these results")
    logger.debug("PDF report %r: %d pages, %d tables, %d figures", content.title, pdf.page_no(), writer.tables,
                 writer.figures)
    return bytes(pdf.output())


def _section(writer: _Writer, title: str, section):
    writer.heading(title, keep_mm=_lead_height(writer, section))
    for text in section.paragraphs:
        writer.paragraph(text)
    for item in section.figures:
        writer.figure(item.png, item.caption)
    for item in section.tables:
        writer.table(item.frame, item.caption)


def _lead_height(writer: _Writer, section) -> float:
    """Height [mm] of a section's heading, paragraphs and first figure or table, kept on one page when they
    fit (so that no heading ends a page)."""
    pdf = writer.pdf
    height = 12.0
    pdf.set_font("DejaVu", "", _BODY_PT)
    for text in section.paragraphs:
        height += _BODY_PT * 0.46 * len(pdf.multi_cell(pdf.epw, _BODY_PT * 0.46, str(text), dry_run=True,
                                                       output="LINES")) + 1.2
    block = 0.0
    if section.figures:
        width_px, height_px = _png_size(section.figures[0].png)
        block = min(pdf.epw * height_px / width_px, 0.6 * pdf.eph) + 12.0
    elif section.tables:
        header, body, widths, _ = writer._layout(section.tables[0].frame, pdf.epw)
        block = writer._height(header, body, widths, 1)
    if height + block > pdf.eph:
        return min(height, pdf.eph / 2) + 20.0
    return height + block
