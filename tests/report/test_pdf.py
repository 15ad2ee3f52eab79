"""The PDF report of a study: read back with pypdf (text and positions), pages drawn by poppler where present.

Checks: the first page carries the recommended levels exactly as results.json (to the millimetre), the
datum, the epoch, the verdict and every caution; every page has the running header and footer; nothing is
cut across pages; text stays inside the part of an A4 page that survives printing on Letter paper; no
Python object text anywhere.
"""
from __future__ import annotations

import copy
import io
import json
import shutil
import subprocess

import pytest
from pypdf import PdfReader

from extremes.report.assemble import refresh_report, render_study_report
from extremes.report.content import report_content
from extremes.report.pdf import MARGINS_MM, PAGE_SIZES_MM, render_pdf

from .conftest import OBJECT_TEXT

pytestmark = pytest.mark.slow  # a whole study (the session's study_folder)

MM = 72.0 / 25.4  # PDF points per millimetre


def _pages(pdf: bytes) -> list[str]:
    return [" ".join(page.extract_text().split()) for page in PdfReader(io.BytesIO(pdf)).pages]


def _document(folder) -> dict:
    return json.loads((folder / "results.json").read_text())


def _figures(folder) -> dict:
    return {p.stem: p.read_bytes() for p in (folder / "figures").glob("*.png")}


def test_first_page_holds_the_summary_of_results_json(study_folder):
    document = _document(study_folder)
    pages = _pages((study_folder / "report.pdf").read_bytes())
    first = pages[0]
    method = document["recommended_method"]
    assert f"Recommended method: {method}" in first
    assert f"metres above {document['datum']}" in first and f"epoch {document['epoch_year']:.1f}" in first
    rows = [r for r in document["return_levels"] if r["method"] == method]
    assert len(rows) == 5
    for row in rows:
        numbers = [f"{row[k]:.3f}" if row[k] is not None else "–" for k in ("level_m", "lower_m", "upper_m")]
        assert f"{row['return_period_years']:g} " + " ".join(numbers) in first, row
    assert "Verdict:" in first
    for caution in document["cautions"]:
        assert " ".join(caution.split()[:8]) in first, caution
    assert first.endswith(f"Page 1 of {len(pages)}") or f"Page 1 of {len(pages)}" in first


def test_every_page_has_header_footer_and_no_object_text(study_folder):
    document = _document(study_folder)
    pages = _pages((study_folder / "report.pdf").read_bytes())
    assert len(pages) >= 6
    for number, text in enumerate(pages, 1):
        assert text.startswith("Design still-water levels: orrindale_short.csv"), number
        assert f"m above {document['datum']}" in text and f"Page {number} of {len(pages)}" in text
        assert "Made 20" in text  # the date the report was made
        assert not OBJECT_TEXT.search(text), (number, OBJECT_TEXT.search(text).group(0))
    whole = " ".join(pages)
    for title in ("The record and its quality", "Astronomical tide", "Sea-level rise", "Appendix A", "Provenance"):
        assert title in whole, title


def test_sea_level_rise_is_one_table_of_offsets(study_folder):
    document = _document(study_folder)
    whole = " ".join(_pages((study_folder / "report.pdf").read_bytes()))
    assert "EncounterProbability" not in whole and "DesignLevel" not in whole
    by_offset = document["sea_level_rise_details"]["by_offset"]
    assert [row["offset_m"] for row in by_offset] == [0.0, 0.5, 1.0]
    for row in by_offset:
        # one row: offset, raised 100-year level, its present return period, chance that today's 100-year
        # level is exceeded over the design life [%], design level for the accepted risk
        present = row["present_return_period_years"]
        expected = (f"{row['offset_m']:.3f} {row['level_100_m']:.3f} "
                    + ("–" if present is None else f"{present:.4g}")
                    + f" {100 * row['encounter_probability_of_present_100yr_level']:.1f} {row['design_level_m']:.3f}")
        assert expected in whole, expected


def test_tables_and_figures_that_fit_a_page_are_not_cut(study_folder):
    content = report_content(_document(study_folder), _figures(study_folder))
    placements = []
    pdf = render_pdf(content, placements=placements)
    assert {kind for kind, *_ in placements} == {"table", "figure"}
    for kind, number, first_page, last_page, height_mm in placements:
        if height_mm < PAGE_SIZES_MM["A4"][1] - MARGINS_MM["top"] - MARGINS_MM["bottom"]:
            assert first_page == last_page, (kind, number, height_mm)
    # and read back: the sea-level-rise table's caption and its last row are on one page
    pages = _pages(pdf)
    caption = next(i for i, text in enumerate(pages) if "Sea-level-rise offsets on the recommended levels" in text)
    assert "1.000 " in pages[caption].split("Sea-level-rise offsets on the recommended levels")[1]


@pytest.mark.parametrize("paper", ["A4", "Letter"])
def test_text_stays_inside_what_prints_on_a4_and_letter(study_folder, paper):
    content = report_content(_document(study_folder), _figures(study_folder))
    reader = PdfReader(io.BytesIO(render_pdf(content, paper=paper)))
    width, height = PAGE_SIZES_MM[paper]
    # an A4 page printed on Letter at actual size loses (297 - 279.4)/2 = 8.8 mm top and bottom; a Letter
    # page on A4 loses (215.9 - 210)/2 = 3 mm at the sides; printers keep about 5 mm unprinted (common practice)
    safe_x = (PAGE_SIZES_MM["Letter"][0] - PAGE_SIZES_MM["A4"][0]) / 2 + 5.0
    safe_y = (PAGE_SIZES_MM["A4"][1] - PAGE_SIZES_MM["Letter"][1]) / 2 + 5.0 if paper == "A4" else 5.0
    for page in reader.pages:
        assert float(page.mediabox.width) == pytest.approx(width * MM, abs=0.5)
        positions = []

        def visit(text, cm, tm, font, size, found=positions):
            if text.strip():
                found.append((tm[4] * cm[0] + cm[4], tm[5] * cm[3] + cm[5], text))

        page.extract_text(visitor_text=visit)
        assert positions
        for x, y, text in positions:
            assert safe_x * MM <= x <= (width - safe_x) * MM, (text, x / MM)
            assert safe_y * MM <= y <= (height - safe_y) * MM, (text, y / MM)


def test_verdict_from_the_document_or_said_missing(study_folder):
    document = _document(study_folder)
    figures = _figures(study_folder)
    without = copy.deepcopy(document)
    without.pop("assessment", None)
    first = _pages(render_study_report(without, figures).pdf)[0]
    assert "NOT ASSESSED" in first
    document = copy.deepcopy(document)
    document["assessment"] = {"status": "unreliable", "reasons": ["The 100-year interval spans more than 3 m."]}
    report = render_study_report(document, figures)
    first = _pages(report.pdf)[0]
    assert "UNRELIABLE: the levels must not be used as they stand." in first
    assert "The 100-year interval spans more than 3 m." in first
    assert "UNRELIABLE" in report.html and "The 100-year interval spans more than 3 m." in report.html


def test_rerun_refreshes_report_and_sea_level_rise_figure(study_folder, tmp_path):
    from click.testing import CliRunner

    from extremes.cli import cli

    out = tmp_path / "slr"
    result = CliRunner().invoke(cli, ["rerun", str(study_folder), "--slr", "0.3,0.7", "--out", str(out)])
    assert result.exit_code == 0, result.output
    for name in ("report.html", "report.pdf", "figures/sea_level_rise.png", "figures/record.png"):
        assert (out / name).is_file(), name
    assert (out / "figures" / "record.png").read_bytes() == (study_folder / "figures" / "record.png").read_bytes()
    assert ((out / "figures" / "sea_level_rise.png").read_bytes()
            != (study_folder / "figures" / "sea_level_rise.png").read_bytes())
    document = _document(out)
    whole = " ".join(_pages((out / "report.pdf").read_bytes()))
    level_100 = document["sea_level_rise_details"]["level_100_m"]
    for offset in (0.3, 0.7):
        assert f"{offset:.3f} {level_100 + offset:.3f}" in whole
    assert "0.500 " not in whole.split("Sea-level-rise offsets on the recommended levels")[1][:400]
    # the library function on its own, from the folder's saved content
    report = refresh_report(document, out)
    assert report.pdf.startswith(b"%PDF") and set(report.figures) == {p.stem for p in (out / "figures").glob("*.png")}


@pytest.mark.skipif(shutil.which("pdftoppm") is None, reason="poppler's pdftoppm not installed")
def test_pages_render_to_images(study_folder, tmp_path):
    # poppler-utils' pdftoppm draws the first page; a blank page would be nearly all white
    from PIL import Image

    subprocess.run(["pdftoppm", "-r", "40", "-png", "-f", "1", "-l", "2", str(study_folder / "report.pdf"),
                    str(tmp_path / "page")], check=True, timeout=120)
    pages = sorted(tmp_path.glob("page-*.png"))
    assert len(pages) == 2
    for path in pages:
        image = Image.open(path).convert("L")
        width, height = image.size
        assert width / height == pytest.approx(210 / 297, abs=0.01)
        dark = sum(image.histogram()[:128])
        assert dark > 0.01 * width * height, path.name
