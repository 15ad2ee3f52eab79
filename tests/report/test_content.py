"""Report content from a results document: order, tables, the sea-level-rise table, provenance, missing keys."""
from __future__ import annotations

import copy
import json

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from extremes.curves import DENSE_PERIODS_YEARS, ReturnLevelCurve
from extremes.errors import DataError
from extremes.report import render_html
from extremes.report.content import fold_table, provenance_table, report_content
from extremes.report.sections import assessment_of, sea_level_rise_table

from .conftest import OBJECT_TEXT


def test_fold_table_lays_long_tables_side_by_side():
    frame = pd.DataFrame({"year": range(2000, 2025), "complete_percent": np.linspace(90, 100, 25)})
    folded = fold_table(frame, max_rows=10)
    assert folded.shape == (10, 6)
    assert list(folded.iloc[0]) == [2000, 90.0, 2010, pytest.approx(94.1666, abs=1e-3), 2020,
                                    pytest.approx(98.333, abs=1e-3)]
    assert folded.iloc[9, 4] is None and folded.iloc[4, 4] == 2024  # past the end: empty cells
    assert fold_table(frame.head(5), max_rows=10).shape == (5, 2)


def _document(tmp_path_factory=None):
    level = stats.gumbel_r.isf(1.0 / DENSE_PERIODS_YEARS, loc=3.0, scale=0.2)
    curve = ReturnLevelCurve(method="annual-maxima", periods_years=DENSE_PERIODS_YEARS, level_m=level,
                             lower_m=level - 0.1, upper_m=level + 0.3, datum="TEST", epoch_year=2020.0)
    rows = [{"offset_m": o, "return_period_years": p, "level_m": float(curve.level_at([p])[0]) + o,
             "present_return_period_years_of_level": None} for o in (0.0, 0.5) for p in (10.0, 100.0)]
    return {
        "schema": "extremes.results/1", "software": {"name": "extremes", "version": "0.0"},
        "inputs": {"record": "/data/station.csv", "sha256": "ab" * 32,
                   "options": {"study": {"periods_years": [10.0, 100.0], "slr_m": [0.0, 0.5], "seed": 1},
                               "reader": {"datum": "TEST", "missing": [-99.0]}}},
        "datum": "TEST", "epoch_year": 2020.0, "recommended_method": "annual-maxima",
        "return_levels": [dict(r, method="annual-maxima") for r in curve.table([10, 100]).to_dict("records")],
        "curves": {"annual-maxima": curve.to_dict()},
        "sea_level_rise": rows,
        "sea_level_rise_details": {"method": "annual-maxima", "design_life_years": 50, "accepted_risk": 0.1,
                                   "level_100_m": float(curve.level_at([100.0])[0])},
        "cautions": ["Still water only."],
    }


def test_minimal_document_renders_without_object_text():
    document = json.loads(json.dumps(_document()))
    content = report_content(document, {})
    assert [s.title for s in content.sections][:2] == ["The record and its quality", "Astronomical tide"]
    assert content.sections[-1].title == "Sea-level rise"
    assert content.summary.assessment["status"] == "not assessed"
    page = render_html(content)
    text = page.split("</style>", 1)[1]
    assert not OBJECT_TEXT.search(text), OBJECT_TEXT.search(text).group(0)
    assert "station.csv" in content.title and "Appendix A" in page


def test_sea_level_rise_table_from_the_saved_curve_matches_sealevel():
    # an offset the details lack (e.g. after a rerun) gets its numbers from the saved curve with the
    # study's own functions; 1 - (1 - 1/100)^50 = 0.395 without rise (encounter probability, METHODS sec. 11)
    from extremes import sealevel

    document = _document()
    table = sea_level_rise_table(document)
    assert list(table["offset_m"]) == [0.0, 0.5]
    chance = table.filter(like="chance").iloc[:, 0].to_numpy()
    assert chance[0] == pytest.approx(100 * (1 - 0.99**50), abs=0.05)
    curve = ReturnLevelCurve.from_dict(document["curves"]["annual-maxima"])
    design = sealevel.design_level(curve, accepted_probability=0.1, design_life_years=50, rise_m=0.5)
    assert table.filter(like="design level").iloc[1, 0] == pytest.approx(design.level_m)
    assert table.filter(like="present return period").iloc[1, 0] == pytest.approx(
        float(np.ravel(sealevel.present_return_period(curve, [curve.level_at([100.0])[0] + 0.5]))[0]))
    # numbers in the document win
    document["sea_level_rise_details"]["design_levels"] = [{"rise_m": [0.5] * 50, "level_m": 9.999}]
    assert sea_level_rise_table(document).filter(like="design level").iloc[1, 0] == 9.999


def test_provenance_is_a_table_of_plain_text():
    table = provenance_table(_document())
    items = dict(zip(table["item"], table["value"]))
    assert items["study option: periods [years]"] == "10, 100"
    assert items["reading option: missing"] == "-99"
    assert items["record sha256"] == "ab" * 32
    assert not any(OBJECT_TEXT.search(v) for v in table["value"])


def test_assessment_is_read_from_the_document():
    document = copy.deepcopy(_document())
    assert assessment_of(document)["status"] == "not assessed"
    document["assessment"] = {"status": "ok", "reasons": []}
    assert assessment_of(document)["text"].startswith("OK")
    document["assessment"] = {"status": "check", "reasons": ["short record"],
                              "checks": ["fitted-shape", "record-length"]}
    found = assessment_of(document)
    assert found["text"].startswith("CHECK") and found["reasons"] == ("short record",)
    assert found["checks"] == "Checks run: fitted-shape, record-length."
    page = render_html(report_content(json.loads(json.dumps(document)), {}))
    assert "short record" in page and "Checks run: fitted-shape, record-length." in page
    document["assessment"] = {"status": "fine", "reasons": []}  # not a contract status: said so
    assert assessment_of(document)["status"] == "not assessed"


def test_pdf_of_a_minimal_document():
    # fpdf2 output read back with pypdf: the running header and footer on every page, the summary numbers
    import io

    from pypdf import PdfReader

    from extremes.report.pdf import render_pdf

    document = json.loads(json.dumps(_document()))
    pdf = render_pdf(report_content(document, {}), software="extremes test")
    pages = [" ".join(p.extract_text().split()) for p in PdfReader(io.BytesIO(pdf)).pages]
    for number, text in enumerate(pages, 1):
        assert "Design still-water levels: station.csv" in text and f"Page {number} of {len(pages)}" in text
        assert "m above TEST" in text and "with extremes test" in text
        assert not OBJECT_TEXT.search(text), OBJECT_TEXT.search(text).group(0)
    row = document["return_levels"][1]
    assert f"100 {row['level_m']:.3f} {row['lower_m']:.3f} {row['upper_m']:.3f}" in pages[0]
    with pytest.raises(DataError, match="paper"):
        render_pdf(report_content(document, {}), paper="A3")


def test_record_eras_clock_faults_and_corrections_are_tables():
    document = json.loads(json.dumps(_document()))
    document["record"] = {
        "n_samples": 1000, "start": "2000-01-01T00:00:00Z", "end": "2020-12-31T23:54:00Z", "interval_minutes": 6.0,
        "n_flagged": 3, "n_missing": 1, "n_ok": 996, "flags": {"spike": 3, "gap_hours": 12.0}, "n_gaps": 2,
        "sampling": [{"start": "2000-01-01T00:00:00Z", "end": "2009-12-31T23:00:00Z", "interval_minutes": 60.0,
                      "n_stamps": 10}, {"start": "2010-01-01T00:00:00Z", "end": "2020-12-31T23:54:00Z",
                                        "interval_minutes": 6.0, "n_stamps": 20}],
        "timing_offsets": [{"start": "2003-03-01T00:00:00Z", "end": "2003-07-01T00:00:00Z", "offset_minutes": 60.0}],
        "corrections": [{"start": "2005-01-01T00:00:00Z", "end": None, "add_m": 0.05, "shift_minutes": 0.0,
                         "rows": 100}],
    }
    section = report_content(document, {}).sections[0]
    assert "2000-01-01 00:00 to 2020-12-31 23:54" in section.paragraphs[0]
    assert any("several sampling eras" in p for p in section.paragraphs)
    captions = [t.caption for t in section.tables]
    assert any(c.startswith("Clock faults") for c in captions) and any(c.startswith("Known corrections") for c in captions)
    page = render_html(report_content(document, {}))
    assert "end of record" in page and "2003-03-01 00:00 UTC" in page and "offset [min]" in page
    assert not OBJECT_TEXT.search(page.split("</style>", 1)[1])
