"""HTML report: structure parsed with the standard library's html.parser; escaping; units in headers."""
from __future__ import annotations

import base64
from html.parser import HTMLParser

import numpy as np
import pandas as pd
import pytest

from extremes.errors import DataError
from extremes.report import FigureItem, Section, Summary, TableItem, render_report
from extremes.report.html import column_label

# the smallest valid PNG (1 x 1 pixel), written out here so these tests need no matplotlib
TINY_PNG = base64.b64decode(
    "iVBORw0KGgoAAAANSUhEUgAAAAEAAAABCAYAAAAfFcSJAAAADUlEQVR42mNk+M9QDwADhgGAWjR9awAAAABJRU5ErkJggg==")


class Collector(HTMLParser):
    def __init__(self):
        super().__init__()
        self.tags: list[tuple[str, dict]] = []
        self.text: list[str] = []

    def handle_starttag(self, tag, attrs):
        self.tags.append((tag, dict(attrs)))

    def handle_data(self, data):
        self.text.append(data)


def parse(page: str) -> Collector:
    parser = Collector()
    parser.feed(page)
    parser.close()
    return parser


def report(**overrides):
    levels = pd.DataFrame({"return_period_years": [10.0, 100.0], "level_m": [3.1234, 3.6],
                           "lower_m": [3.0, np.nan], "upper_m": [3.3, 3.9]})
    args = dict(
        title="Station <A> & co",
        summary=Summary(datum="ODN", epoch_year=2020.5, recommended_method="annual-maxima", levels=levels,
                        paragraphs=("Return periods are 1/AEP.",)),
        sections=[Section(title="Record", paragraphs=["Rows read: 10 < 11"],
                          figures=[FigureItem(TINY_PNG, "The record", alt="time series of the level")]),
                  Section(title="Fits", figures=[FigureItem(TINY_PNG, "Diagnostics")],
                          tables=[TableItem(pd.DataFrame({"method": ["gev"], "shape": [-0.05],
                                                          "trend_m_per_year": [0.0031]}), "Parameters")])],
        cautions=["Still water only <b>", "Local codes govern"],
        provenance={"record": "station.csv", "sha256": "ab" * 32, "options": {"periods_years": [10, 100]},
                    "version": "0.1.0"},
    )
    args.update(overrides)
    return render_report(**args)


def test_report_is_self_contained_and_complete():
    page = report()
    assert page.startswith("<!DOCTYPE html>")
    parsed = parse(page)
    tags = [t for t, _ in parsed.tags]
    assert "script" not in tags and "link" not in tags
    images = [a for t, a in parsed.tags if t == "img"]
    assert len(images) == 2
    for attrs in images:
        assert attrs["src"].startswith("data:image/png;base64,")
        assert base64.b64decode(attrs["src"].split(",", 1)[1]) == TINY_PNG
        assert attrs["alt"]
    assert images[0]["alt"] == "time series of the level" and images[1]["alt"] == "Diagnostics"
    text = " ".join(parsed.text)
    assert "Figure 1. The record" in text and "Figure 2. Diagnostics" in text
    assert "Table 1." in text and "Table 2. Parameters" in text
    for needle in ("Recommended method:", "annual-maxima", "ODN", "2020.5", "Still water only <b>",
                   "Local codes govern", "ab" * 32, "0.1.0", "options: periods [years]", "10, 100"):
        assert needle in text, needle
    assert '"periods_years"' not in text and "{" not in page.split("</style>")[1]  # provenance is no JSON
    assert tags.count("section") == 5  # summary, cautions, 2 sections, provenance
    assert "http://" not in page and "https://" not in page


def test_text_is_escaped():
    page = report()
    assert "<title>Station &lt;A&gt; &amp; co</title>" in page
    assert "Still water only &lt;b&gt;" in page
    assert "Rows read: 10 &lt; 11" in page


def test_tables_carry_units_and_format_numbers():
    assert column_label("level_m") == "level [m]"
    assert column_label("return_period_years") == "return period [years]"
    assert column_label("trend_m_per_year") == "trend [m/year]"
    assert column_label("speed_deg_per_hour") == "speed [°/h]"
    assert column_label("method") == "method"
    page = report()
    text = " ".join(parse(page).text)
    assert "return period [years]" in text and "lower [m]" in text and "trend [m/year]" in text
    assert "3.123" in text and "3.1234" not in text  # levels to the millimetre
    assert "–" in text  # NaN shown as a dash


def test_summary_may_be_a_mapping_and_errors_are_named():
    page = report(summary={"datum": "CD", "epoch_year": None, "recommended_method": "peaks-over-threshold",
                           "levels": pd.DataFrame()})
    assert "not stated" in page and "peaks-over-threshold" in page
    with pytest.raises(DataError, match="datum"):
        report(summary={"epoch_year": 2000})
    with pytest.raises(DataError, match="PNG"):
        report(sections=[Section(title="x", figures=[FigureItem(b"GIF89a", "bad")])])
    with pytest.raises(DataError, match="Section"):
        report(sections=["not a section"])


def test_result_objects_have_dicts_and_one_line_reprs():
    section = Section(title="t", paragraphs="one paragraph", figures=FigureItem(TINY_PNG, "c"))
    assert section.paragraphs == ("one paragraph",) and len(section.figures) == 1
    assert section.to_dict()["figures"][0]["bytes"] == len(TINY_PNG)
    summary = Summary(datum="ODN", epoch_year=2020.0, recommended_method="m",
                      levels=pd.DataFrame({"level_m": [np.nan]}))
    assert summary.to_dict()["levels"] == [{"level_m": None}]
    for obj in (section, summary, FigureItem(TINY_PNG, "c"), TableItem(pd.DataFrame(), "t")):
        assert "\n" not in repr(obj)


def test_an_unbounded_upper_bound_reads_unbounded():
    # CONTRACT.md: an upper bound the data cannot limit is null in JSON and "unbounded" in tables and the report
    from extremes.report.html import format_cell
    from extremes.report.sections import levels_by_method, return_levels

    document = {"curves": {"peaks-over-threshold": {}}, "return_levels": [
        {"method": "peaks-over-threshold", "return_period_years": 10.0, "level_m": 5.1, "lower_m": 4.9,
         "upper_m": 5.6, "upper_unbounded": False},
        {"method": "peaks-over-threshold", "return_period_years": 1000.0, "level_m": 6.2, "lower_m": 5.4,
         "upper_m": None, "upper_unbounded": True}]}
    rows = return_levels(document, "peaks-over-threshold")
    assert [format_cell(v, "upper_m") for v in rows["upper_m"]] == ["5.600", "unbounded"]
    assert format_cell(float("nan"), "upper_m") == "–"  # missing stays a dash
    table = levels_by_method(document)
    assert table["peaks-over-threshold_m"].tolist() == ["5.100 (4.900 to 5.600)", "6.200 (5.400 to unbounded)"]
