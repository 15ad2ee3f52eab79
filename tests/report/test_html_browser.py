"""The report in a real headless browser (Debian's chromium): it loads, and every figure is displayed.

Skipped only when no chromium executable is found (CI installs it through .ci/run).
"""
from __future__ import annotations

import os
import re
import shutil
import subprocess

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from extremes.curves import DENSE_PERIODS_YEARS, ReturnLevelCurve
from extremes.report import FigureItem, Section, Summary, TableItem, figures, render_report, standard_cautions


def _browser() -> str | None:
    for name in ("chromium", "chromium-browser"):
        found = shutil.which(name)
        if found:
            return found
    return "/usr/bin/chromium" if os.path.exists("/usr/bin/chromium") else None


BROWSER = _browser()
pytestmark = pytest.mark.skipif(BROWSER is None, reason="no chromium executable found")

# Appended to a copy of the report: after load, count the images the browser decoded and displayed.
CHECK_SCRIPT = """
<script>
window.addEventListener("load", function () {
  var imgs = Array.prototype.slice.call(document.images);
  var shown = imgs.filter(function (im) {
    var box = im.getBoundingClientRect();
    return im.complete && im.naturalWidth > 0 && im.naturalHeight > 0 && box.width > 0 && box.height > 0;
  });
  var pre = document.createElement("pre");
  pre.id = "check";
  pre.textContent = "images=" + imgs.length + " shown=" + shown.length +
    " widths=" + shown.map(function (im) { return im.naturalWidth; }).join(",") +
    " tables=" + document.querySelectorAll("table").length;
  document.body.appendChild(pre);
});
</script>
"""


def _chromium(args: list[str], profile) -> subprocess.CompletedProcess:
    command = [BROWSER, "--headless", "--no-sandbox", "--disable-gpu", "--disable-dev-shm-usage",
               "--disable-quic", "--no-first-run", "--disable-background-networking",
               "--disable-component-update", "--disable-sync", "--mute-audio", f"--user-data-dir={profile}",
               "--virtual-time-budget=5000", *args]
    return subprocess.run(command, capture_output=True, text=True, timeout=120)


@pytest.fixture(scope="module")
def report_page() -> str:
    level = stats.gumbel_r.isf(1.0 / DENSE_PERIODS_YEARS, loc=3.0, scale=0.2)
    curve = ReturnLevelCurve(method="annual-maxima", periods_years=DENSE_PERIODS_YEARS, level_m=level,
                             lower_m=level - 0.1, upper_m=level + 0.25, datum="ODN", epoch_year=2020.0)
    maxima = stats.gumbel_r.ppf(np.linspace(0.03, 0.97, 25), loc=3.0, scale=0.2)
    times = pd.date_range("2020-01-01", periods=24 * 40, freq="h", tz="UTC")
    tide = pd.Series(np.cos(np.deg2rad(28.9841042) * np.arange(times.size)), index=times)
    observed = tide + 0.1 * np.sin(np.arange(times.size) / 50.0)
    pngs = [
        figures.to_png(figures.record_figure(observed, datum="ODN")),
        figures.to_png(figures.fit_diagnostics_figure(maxima, curve)),
        figures.to_png(figures.sea_level_rise_figure(curve, years=[2020, 2100],
                                                     rise_m={"central": [0.0, 0.5], "high": [0.0, 1.0]})),
    ]
    table = curve.table([10, 100, 1000]).drop(columns="method")
    return render_report(
        title="Browser check station",
        summary=Summary(datum="ODN", epoch_year=2020.0, recommended_method="annual-maxima", levels=table),
        sections=[Section(title="Record", paragraphs=["Synthetic record."],
                          figures=[FigureItem(pngs[0], "The record")]),
                  Section(title="Fit", figures=[FigureItem(pngs[1], "Diagnostics of the annual-maxima fit")],
                          tables=[TableItem(table, "Return levels")]),
                  Section(title="Sea-level rise", figures=[FigureItem(pngs[2], "Levels under rise")])],
        cautions=standard_cautions(datum="ODN", epoch_year=2020.0, record_years=25),
        provenance={"record": "synthetic", "sha256": "0" * 64, "options": {"seed": 1}, "version": "test"},
    )


def test_report_loads_and_shows_every_figure(tmp_path, report_page):
    page = report_page.replace("</body>", CHECK_SCRIPT + "</body>")
    path = tmp_path / "report_check.html"
    path.write_text(page, encoding="utf-8")
    result = _chromium(["--dump-dom", path.as_uri()], tmp_path / "profile")
    assert result.returncode == 0, result.stderr[-2000:]
    found = re.search(r'<pre id="check">([^<]*)</pre>', result.stdout)
    assert found, result.stdout[-2000:]
    check = dict(item.split("=", 1) for item in found.group(1).split())
    assert check["images"] == "3" and check["shown"] == "3", found.group(1)
    assert check["tables"] == "3"  # two and the provenance
    assert [int(w) for w in check["widths"].split(",")] == [840, 840, 840]  # 7-inch figures x plotstyle.DPI
    assert "Browser check station" in result.stdout and "Cautions" in result.stdout


def test_report_screenshot(tmp_path, report_page):
    path = tmp_path / "report.html"
    path.write_text(report_page, encoding="utf-8")
    shot = tmp_path / "report.png"
    result = _chromium([f"--screenshot={shot}", "--window-size=1200,2400", "--hide-scrollbars", path.as_uri()],
                       tmp_path / "profile")
    assert result.returncode == 0, result.stderr[-2000:]
    data = shot.read_bytes()
    assert data.startswith(b"\x89PNG\r\n\x1a\n") and len(data) > 20_000  # a blank page compresses to a few kB
    if os.environ.get("EXTREMES_KEEP_SCREENSHOT"):
        shutil.copy(shot, os.environ["EXTREMES_KEEP_SCREENSHOT"])


# After load: the summary table's cells, where the verdict and the cautions box sit, and every image shown.
STUDY_SCRIPT = """
<script>
window.addEventListener("load", function () {
  var imgs = Array.prototype.slice.call(document.images);
  var shown = imgs.filter(function (im) {
    var box = im.getBoundingClientRect();
    return im.complete && im.naturalWidth > 0 && box.width > 0 && box.height > 0;
  });
  var cells = Array.prototype.slice.call(document.querySelectorAll("#summary table tbody tr")).map(
    function (tr) {
      return Array.prototype.slice.call(tr.cells).map(function (td) { return td.textContent; }).join("|");
    });
  var top = function (sel) {
    var el = document.querySelector(sel);
    return el ? Math.round(el.getBoundingClientRect().top) : -1;
  };
  var out = {images: imgs.length, shown: shown.length, rows: cells, verdict: top(".verdict"),
             table: top("#summary table"), cautions: top("#cautions"), firstSection: top("#section-1"),
             text: document.body.innerText};
  var pre = document.createElement("pre");
  pre.id = "check";
  pre.textContent = JSON.stringify(out);
  document.body.appendChild(pre);
});
</script>
"""


@pytest.mark.slow  # a whole study (the session's study_folder)
def test_study_report_first_screen_in_the_browser(tmp_path, study_folder):
    import html as html_module
    import json

    from .conftest import OBJECT_TEXT

    document = json.loads((study_folder / "results.json").read_text())
    page = (study_folder / "report.html").read_text(encoding="utf-8").replace("</body>", STUDY_SCRIPT + "</body>")
    path = tmp_path / "study.html"
    path.write_text(page, encoding="utf-8")
    result = _chromium(["--window-size=1280,1000", "--dump-dom", path.as_uri()], tmp_path / "profile")
    assert result.returncode == 0, result.stderr[-2000:]
    found = re.search(r'<pre id="check">([^<]*)</pre>', result.stdout)
    assert found, result.stdout[-2000:]
    check = json.loads(html_module.unescape(found.group(1)))
    assert check["images"] == check["shown"] >= 6
    # the first screen (1000 px): levels table and verdict; the cautions start on it, before any section
    assert 0 < check["table"] < 400 and 0 < check["verdict"] < 400
    assert check["cautions"] < 1000 and check["cautions"] < check["firstSection"]
    method = document["recommended_method"]
    expected = [f"{r['return_period_years']:g}|" + "|".join("–" if r[k] is None else f"{r[k]:.3f}"
                                                          for k in ("level_m", "lower_m", "upper_m"))
                for r in document["return_levels"] if r["method"] == method]
    assert check["rows"] == expected
    assert not OBJECT_TEXT.search(check["text"]), OBJECT_TEXT.search(check["text"]).group(0)
    assert "Provenance" in check["text"] and "Appendix A" in check["text"]
