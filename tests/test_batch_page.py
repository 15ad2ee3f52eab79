"""A small batch along an invented coast: the summary page in headless Chromium, neighbour flags, verdicts, resume.

Six synthetic stations with positions and chainage (an invented coast): one record is broken (the study
fails), one is read 1 m too high (a datum error: it must disagree with its neighbours), one is short (the
helper's verdict is ``check``). The per-station study is a small helper (TEST HELPER, not the library's)
so the test stays quick; the full study runs through the batch in tests/test_batch.py and
tests/test_batch_points.py.
"""
from __future__ import annotations

import json
import os
import re
import shutil
import subprocess
from html.parser import HTMLParser

import numpy as np
import pandas as pd
import pytest

from extremes import batch
from extremes.batch import page, tasks
from extremes.errors import DataError
from extremes.outputs import output_folder

PERIODS = (10.0, 100.0)


def helper_study(station, *, options, seed, out_dir, overwrite=False):
    """TEST HELPER. Gumbel by the method of moments on annual maxima, 60-resample bootstrap interval
    (seeded), verdict ``check`` when fewer than 8 annual maxima (the helper's own rule)."""
    table = pd.read_csv(station.path)
    level = pd.Series(pd.to_numeric(table["level"], errors="raise").to_numpy(),
                      index=pd.DatetimeIndex(pd.to_datetime(table["time"], utc=True)))
    maxima = level.groupby(level.index.year).max().to_numpy(dtype=float)
    if maxima.size < 3:
        raise DataError(f"{station.name}: {maxima.size} annual maxima; expected at least 3")
    p = 1.0 - 1.0 / np.asarray(PERIODS)

    def gumbel(sample):  # method of moments (Gumbel 1958): scale = sqrt(6) s / pi, loc = mean - gamma scale
        scale = np.sqrt(6.0) * sample.std(axis=-1, ddof=1) / np.pi
        loc = sample.mean(axis=-1) - np.euler_gamma * scale
        return loc[..., None] - scale[..., None] * np.log(-np.log(p))

    boot = gumbel(np.random.default_rng(seed).choice(maxima, (60, maxima.size)))
    lower, upper = np.percentile(boot, [2.5, 97.5], axis=0)
    levels = gumbel(maxima)
    short = maxima.size < 8
    results = {
        "recommended_method": "annual-maxima", "record": {"datum": station.datum, "start": str(level.index[0]),
                                                          "end": str(level.index[-1])},
        "assessment": {"status": "check" if short else "ok",
                       "reasons": [f"only {maxima.size} annual maxima"] if short else []},
        "return_levels": [{"method": "annual-maxima", "return_period_years": float(t), "level_m": float(z),
                           "lower_m": float(lo), "upper_m": float(hi), "confidence": 0.95}
                          for t, z, lo, hi in zip(PERIODS, levels, lower, upper)],
    }
    with output_folder(out_dir, overwrite=overwrite) as work:
        (work / "results.json").write_text(json.dumps(results))
        (work / "report.html").write_text(f"<html><body>{station.name}</body></html>")
    return results


class Options:
    """TEST HELPER: the two option fields the batch reads."""

    seed, periods_years = 5, PERIODS


def write_station(path, *, amplitude, years=10, offset=0.0, broken=False):
    """TEST HELPER: a 3-hourly record [m]; every station sees the same storms (seed 1), tides differ smoothly."""
    times = pd.date_range("2001-01-01", periods=int(years * 365.25 * 8), freq="3h", tz="UTC")
    hours = 3.0 * np.arange(times.size)
    surge = np.convolve(np.random.default_rng(1).gumbel(0.0, 0.06, times.size), np.ones(8) / 4, mode="same")
    level = amplitude * np.sin(2 * np.pi * hours / 12.42) + surge + offset
    frame = pd.DataFrame({"time": times.strftime("%Y-%m-%dT%H:%M:%SZ"), "level": np.round(level, 3)})
    if broken:
        frame["level"] = frame["level"].astype(str)
        frame.loc[10, "level"] = "not-a-number"
    frame.to_csv(path, index=False)


# an invented coast running south-east; stations listed out of coast order in the manifest
COAST = [  # name, lat, lon, chainage [km], amplitude [m], years, datum offset [m], broken
    ("Wrenby Point", -33.10, 151.60, 0.0, 1.00, 10, 0.0, False),
    ("Hallet Cove", -33.25, 151.72, 21.0, 1.02, 10, 0.0, False),
    ("Orrin Head", -33.41, 151.83, 41.0, 1.04, 10, 1.0, False),
    ("Sallow Bay", -33.55, 151.97, 61.0, 1.06, 10, 0.0, False),
    ("Merrit Reef", -33.70, 152.08, 80.0, 1.08, 10, 0.0, True),
    ("Tamsin Spit", -33.86, 152.20, 100.0, 1.10, 5.9, 0.0, False),
]


@pytest.fixture(scope="module")
def coast_manifest(tmp_path_factory):
    folder = tmp_path_factory.mktemp("coast")
    lines = ["path,station,lat,lon,chainage,datum"]
    for k in (3, 0, 5, 1, 4, 2):
        name, lat, lon, chainage, amplitude, years, offset, broken = COAST[k]
        stem = name.lower().replace(" ", "_")
        write_station(folder / f"{stem}.csv", amplitude=amplitude, years=years, offset=offset, broken=broken)
        lines.append(f"{stem}.csv,{name.replace(' ', '_')},{lat},{lon},{chainage},gauge zero")
    (folder / "manifest.csv").write_text("\n".join(lines) + "\n")
    return folder / "manifest.csv"


@pytest.fixture(scope="module")
def local_cluster():
    from distributed import LocalCluster

    with LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address="127.0.0.1:0",
                      silence_logs=40) as cluster:
        yield cluster


@pytest.fixture(scope="module")
def coast_batch(coast_manifest, local_cluster, tmp_path_factory):
    out = tmp_path_factory.mktemp("coast_out") / "results"
    stations = batch.read_manifest(coast_manifest)
    summary = batch.run_batch(stations, out_dir=out, options=Options(), study=helper_study,
                              settings=batch.BatchSettings(scheduler=local_cluster.scheduler_address,
                                                           errors="ignore"))
    return summary, out


@pytest.mark.slow  # a batch on a local dask cluster
def test_summary_flags_the_inconsistent_station_and_carries_verdicts(coast_batch):
    summary, out = coast_batch
    frame = pd.read_csv(out / "summary.csv", keep_default_na=False).set_index("station")
    assert frame.loc["Merrit_Reef", "status"].startswith("ValueError")
    assert frame.loc["Orrin_Head", "consistency"] == "check"
    reason = frame.loc["Orrin_Head", "consistency_reasons"]
    assert "above every neighbour" in reason and "Hallet_Cove" in reason and "Sallow_Bay" in reason
    # neighbours along the coast skip the failed station; the ends have a single neighbour
    assert frame.loc["Sallow_Bay", "consistency"] == "ok"
    assert frame.loc["Wrenby_Point", "consistency"] == "not assessed"
    assert frame.loc["Tamsin_Spit", "consistency"] == "not assessed"
    assert frame.loc["Tamsin_Spit", "assessment"] == "check"
    assert frame.loc["Tamsin_Spit", "assessment_reasons"] == "only 6 annual maxima"
    assert frame.loc["Hallet_Cove", "assessment"] == "ok"
    # order along the coast by chainage, whatever the manifest's order
    order = frame.sort_values("coast_order").index.tolist()
    assert order == [c[0].replace(" ", "_") for c in COAST]
    assert float(frame.loc["Tamsin_Spit", "record_years"]) == pytest.approx(5.9, abs=0.01)
    assert frame.loc["Hallet_Cove", "report"] == "Hallet_Cove/report.html"
    import xarray as xr

    with xr.open_dataset(out / "summary.nc") as ds:
        assert str(ds["consistency"].sel(station="Orrin_Head").values) == "check"
        assert str(ds["assessment"].sel(station="Tamsin_Spit").values) == "check"
        assert float(ds["chainage"].sel(station="Sallow_Bay")) == 61.0


class _Page(HTMLParser):
    """Rows of the stations table and the links of a page."""

    def __init__(self):
        super().__init__()
        self.rows, self.links = {}, []

    def handle_starttag(self, tag, attrs):
        attrs = dict(attrs)
        if tag == "tr" and "data-station" in attrs:
            self.rows[attrs["data-station"]] = attrs.get("class", "")
        if tag == "a":
            self.links.append(attrs["href"])


def _browser():
    for name in ("chromium", "chromium-browser"):
        if shutil.which(name):
            return shutil.which(name)
    return "/usr/bin/chromium" if os.path.exists("/usr/bin/chromium") else None


CHECK_SCRIPT = """<script>
window.addEventListener("load", function () {
  var imgs = Array.prototype.slice.call(document.images);
  var shown = imgs.filter(function (im) {
    var box = im.getBoundingClientRect();
    return im.complete && im.naturalWidth > 0 && box.width > 0 && box.height > 0; });
  var pre = document.createElement("pre"); pre.id = "check";
  pre.textContent = "images=" + imgs.length + " shown=" + shown.length +
    " rows=" + document.querySelectorAll("#stations tbody tr").length +
    " failed=" + document.querySelectorAll("#stations tr.failed").length +
    " doubtful=" + document.querySelectorAll("#stations tr.doubtful").length +
    " cautions=" + document.querySelectorAll("#cautions li").length;
  document.body.appendChild(pre); });
</script>"""


@pytest.mark.slow  # a batch on a local dask cluster
@pytest.mark.skipif(_browser() is None, reason="no chromium executable found")
def test_summary_page_in_headless_chromium(coast_batch, tmp_path):
    summary, out = coast_batch
    text = (out / "summary.html").read_text(encoding="utf-8")
    assert "http://" not in text and "https://" not in text and "<script" not in text  # nothing loaded from outside
    probe = out / "summary_probe.html"
    probe.write_text(text.replace("</body>", CHECK_SCRIPT + "</body>"), encoding="utf-8")
    command = [_browser(), "--headless", "--no-sandbox", "--disable-gpu", "--disable-dev-shm-usage",
               "--no-first-run", "--disable-background-networking", "--disable-component-update",
               "--disable-sync", f"--user-data-dir={tmp_path / 'profile'}", "--virtual-time-budget=5000",
               "--dump-dom", probe.as_uri()]
    try:
        result = subprocess.run(command, capture_output=True, text=True, timeout=120)
    finally:
        probe.unlink()
    assert result.returncode == 0, result.stderr[-2000:]
    found = re.search(r'<pre id="check">([^<]*)</pre>', result.stdout)
    assert found, result.stdout[-2000:]
    check = dict(item.split("=", 1) for item in found.group(1).split())
    assert check == {"images": "2", "shown": "2", "rows": "6", "failed": "1", "doubtful": "2",
                     "cautions": str(len(page.batch_cautions(summary)))}
    parsed = _Page()
    parsed.feed(result.stdout)
    assert parsed.rows["Merrit_Reef"] == "failed"
    assert parsed.rows["Orrin_Head"] == parsed.rows["Tamsin_Spit"] == "doubtful"
    assert list(parsed.rows) == [c[0].replace(" ", "_") for c in COAST]  # coast order
    assert len(parsed.links) == 5 and all((out / link).is_file() for link in parsed.links)  # relative, existing
    for stem in ("levels_along_coast", "station_map"):
        assert (out / page.FIGURE_FOLDER / f"{stem}.png").read_bytes().startswith(b"\x89PNG")
    assert "Orrin_Head" in result.stdout.split('id="attention"')[1].split("</ul>")[0]


@pytest.mark.slow  # a batch on a local dask cluster
def test_resumed_run_rewrites_the_summaries_for_every_station(coast_batch, coast_manifest, local_cluster,
                                                              tmp_path):
    _, out = coast_batch
    copy = tmp_path / "results"
    shutil.copytree(out, copy)
    shutil.rmtree(copy / "Sallow_Bay")
    (copy / "summary.html").write_text("stale")
    stations = batch.read_manifest(coast_manifest)
    again = batch.run_batch(stations, out_dir=copy, options=Options(), study=helper_study,
                            settings=batch.BatchSettings(scheduler=local_cluster.scheduler_address,
                                                         errors="ignore"))
    assert again.n_skipped == 4 and again.n_failed == 1
    text = (copy / "summary.html").read_text(encoding="utf-8")
    assert "6 stations: 5 studied (4 from earlier runs), 1 failed" in text
    assert pd.read_csv(copy / "summary.csv")["station"].size == 6
    first = pd.read_csv(out / "summary.csv").drop(columns=["seconds", "skipped"])
    second = pd.read_csv(copy / "summary.csv").drop(columns=["seconds", "skipped"])
    pd.testing.assert_frame_equal(first, second)


def test_page_without_positions_has_no_map_and_says_so(tmp_path):
    stations = [batch.Station(name=f"g{i}") for i in range(3)]
    rows = [{"method": "annual-maxima", "return_period_years": 100.0, "level_m": 3.0 + 0.1 * i, "lower_m": 2.9,
             "upper_m": None, "confidence": 0.95} for i in range(3)]
    outcomes = tuple(tasks.outcome(s, status="ok", seed=1, results={"recommended_method": "annual-maxima",
                                                                     "return_levels": [r]},
                                   skipped=False, seconds=0.0) for s, r in zip(stations, rows))
    summary = batch.BatchSummary(out_dir=tmp_path, outcomes=outcomes, periods_years=(100.0,))
    assert summary.order.basis == "as given"
    paths = page.write_summary_page(summary)
    assert set(paths) == {"levels_along_coast", "page"}
    text = paths["page"].read_text(encoding="utf-8")
    assert "no map" in text and "unbounded" in text  # an upper bound the data cannot limit is said so
    assert "vertical datum" in text  # stations without a stated datum get the strong caution
