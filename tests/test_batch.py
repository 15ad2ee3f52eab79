"""Batch machinery of ``extremes.batch``: dask tasks, failure isolation, resume, seeds, summaries, gridded input.

The dask parts are exercised with a small per-station function defined here (TEST HELPER, not part of the
library): it reads a CSV with pandas, fits a Gumbel distribution to annual maxima with scipy.stats and draws
a seeded bootstrap, so that its numbers depend on the station's seed and can be recomputed in-process.
The full study runs through the batch in the end-to-end tests at the bottom.
"""
from __future__ import annotations

import json
import os
import socket
import subprocess
import sys
import time
import zlib
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import scipy.stats

from extremes import batch
from extremes.errors import DataError, ExtremesWarning
from extremes.outputs import output_folder

pytestmark = pytest.mark.slow  # whole studies, batches or simulations

ROOT = Path(__file__).resolve().parents[1]
PERIODS = (2.0, 10.0, 100.0)


# -- TEST HELPER: a small real per-station study (not the library's) -----------------------------------------
def station_study_for_tests(station, *, options, seed, out_dir, overwrite=False):
    """TEST HELPER. Gumbel fit (scipy) of annual maxima with a 40-resample bootstrap seeded by ``seed``."""
    if station.level_m is not None:
        level = station.level_m
    else:
        table = pd.read_csv(station.path)
        level = pd.Series(pd.to_numeric(table["level"], errors="raise").to_numpy(),
                          index=pd.DatetimeIndex(pd.to_datetime(table["time"], utc=True)))
    maxima = level.groupby(level.index.year).max().to_numpy(dtype=float)
    if maxima.size < 3:
        raise DataError(f"{station.name}: {maxima.size} annual maxima; expected at least 3")
    periods = np.asarray(options.periods_years if options is not None else PERIODS, dtype=float)
    p = 1.0 - 1.0 / periods
    loc, scale = scipy.stats.gumbel_r.fit(maxima)
    rng = np.random.default_rng(seed)
    # bootstrap by the method of moments (a resample may repeat one value, where the MLE is undefined)
    samples = rng.choice(maxima, (40, maxima.size))
    boot_scale = np.sqrt(6.0) * samples.std(axis=1, ddof=1)[:, None] / np.pi
    boot = samples.mean(axis=1)[:, None] - np.euler_gamma * boot_scale - boot_scale * np.log(-np.log(p))
    levels = scipy.stats.gumbel_r.ppf(p, loc, scale)
    lower, upper = np.percentile(boot, [2.5, 97.5], axis=0)
    results = {
        "recommended_method": "annual-maxima",
        "record": {"datum": station.datum},
        "return_levels": [{"method": "annual-maxima", "return_period_years": float(t), "level_m": float(z),
                           "lower_m": float(lo), "upper_m": float(hi), "confidence": 0.95}
                          for t, z, lo, hi in zip(periods, levels, lower, upper)],
    }
    with output_folder(out_dir, overwrite=overwrite) as work:
        (work / "results.json").write_text(json.dumps(results))
    return results


class OptionsForTests:
    """TEST HELPER: the two option fields the batch reads (frozen StudyOptions is used end to end)."""

    def __init__(self, seed=11, periods_years=PERIODS):
        self.seed, self.periods_years = seed, periods_years


def write_synthetic_record(path: Path, *, years=6, seed=0, start="2001-01-01", bad=False):
    """TEST HELPER: an hourly record with a tide-like sine and random surges [m], written as CSV."""
    times = pd.date_range(start, periods=int(years * 365.25 * 24), freq="h", tz="UTC")
    rng = np.random.default_rng(seed)
    hours = np.arange(times.size)
    level = 1.2 * np.sin(2 * np.pi * hours / 12.42) + 0.3 * np.sin(2 * np.pi * hours / 12.0) \
        + np.convolve(rng.normal(0, 0.05, times.size), np.ones(24) / 4, mode="same")
    text = pd.DataFrame({"time": times.strftime("%Y-%m-%dT%H:%M:%SZ"), "level": np.round(level, 3)})
    if bad:
        text["level"] = text["level"].astype(str)
        text.loc[100, "level"] = "not-a-number"
    text.to_csv(path, index=False)
    return path


@pytest.fixture(scope="module")
def records(tmp_path_factory):
    folder = tmp_path_factory.mktemp("records")
    good = [write_synthetic_record(folder / f"st{i}.csv", seed=i) for i in range(3)]
    bad = write_synthetic_record(folder / "broken.csv", seed=9, bad=True)
    return good, bad


@pytest.fixture(scope="module")
def local_cluster():
    from distributed import LocalCluster

    with LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address="127.0.0.1:0",
                      silence_logs=40) as cluster:
        yield cluster


def _free_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


@pytest.fixture(scope="module")
def loopback_scheduler():
    """A dask scheduler and two single-thread workers as subprocesses on 127.0.0.1."""
    from distributed import Client

    port = _free_port()
    address = f"tcp://127.0.0.1:{port}"
    env = dict(os.environ, PYTHONPATH=os.pathsep.join([str(ROOT), os.environ.get("PYTHONPATH", "")]))
    dask_cmd = [sys.executable, "-m", "distributed.cli.dask_scheduler"]
    scheduler = subprocess.Popen(dask_cmd + ["--host", "127.0.0.1", "--port", str(port), "--no-dashboard"],
                                 env=env, cwd=ROOT, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    worker = subprocess.Popen([sys.executable, "-m", "distributed.cli.dask_worker", address, "--nworkers", "2",
                               "--nthreads", "1", "--no-dashboard", "--host", "127.0.0.1"],
                              env=env, cwd=ROOT, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        deadline = time.monotonic() + 60
        while True:
            try:
                with Client(address, timeout="5s") as client:
                    client.wait_for_workers(2, timeout=60)
                break
            except OSError:
                if time.monotonic() > deadline:
                    raise
                time.sleep(0.5)
        yield address
    finally:
        for proc in (worker, scheduler):
            proc.terminate()
            try:
                proc.wait(timeout=20)
            except subprocess.TimeoutExpired:
                proc.kill()
                proc.wait()


def _numbers(frame: pd.DataFrame) -> pd.DataFrame:
    return frame.drop(columns=["seconds", "skipped", "source"]).set_index("station")


# -- seeds, names, manifests --------------------------------------------------------------------------------
def test_station_seed_is_stable_across_processes_and_differs_by_name():
    seeds = {name: batch.station_seed(5, name) for name in ("alpha", "beta", "point_0", "point_1")}
    assert len(set(seeds.values())) == 4
    assert batch.station_seed(6, "alpha") != seeds["alpha"]
    # Python's hash() of a str changes between processes; the station seed must not
    code = "from extremes.batch import station_seed; print(station_seed(5, 'alpha'), hash('alpha'))"
    outs = [subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True,
                           env=dict(os.environ, PYTHONHASHSEED=str(h))).stdout.split() for h in (1, 2)]
    assert outs[0][1] != outs[1][1]
    assert int(outs[0][0]) == int(outs[1][0]) == seeds["alpha"]
    # numpy's SeedSequence over (base seed, CRC-32 of the name) -- zlib's CRC-32 of b"alpha" is from the library
    assert seeds["alpha"] == int(np.random.SeedSequence([5, zlib.crc32(b"alpha")]).generate_state(1)[0])


def test_station_name_drops_compression_suffix():
    assert batch.station_name("a/b/Port_X.csv.gz") == "Port_X"
    assert batch.station_name("gauge.nc") == "gauge"


def test_expand_records_globs_and_refuses_unmatched(tmp_path):
    for name in ("b.csv", "a.csv", "c.txt"):
        (tmp_path / name).write_text("time,level\n")
    got = batch.expand_records([str(tmp_path / "*.csv"), str(tmp_path / "c.txt")])
    assert [p.name for p in got] == ["a.csv", "b.csv", "c.txt"]
    with pytest.raises(DataError, match="no file matches"):
        batch.expand_records([str(tmp_path / "*.dat")])


def test_read_manifest_columns_relative_paths_and_overrides(tmp_path):
    (tmp_path / "data").mkdir()
    (tmp_path / "data" / "one.csv").write_text("x\n")
    (tmp_path / "two.txt").write_text("x\n")
    (tmp_path / "list.csv").write_text(
        "path,station,units,missing,utc_offset,time_column,lat,lon\n"
        "data/one.csv,,cm,-99;9999,+10:00,date;clock,-34.9,138.6\n"
        f"{tmp_path / 'two.txt'},Harbour,,,,,,\n")
    one, two = batch.read_manifest(tmp_path / "list.csv", reader={"units": "m", "datum": "CD", "missing": []})
    assert one.name == "one" and one.path == tmp_path / "data" / "one.csv"
    assert one.reader == {"units": "cm", "datum": "CD", "missing": [-99.0, 9999.0], "utc_offset": "+10:00",
                          "time_columns": ["date", "clock"]}
    assert (one.lat, one.lon) == (-34.9, 138.6)
    assert two.name == "Harbour" and two.reader == {"units": "m", "datum": "CD", "missing": []}
    assert np.isnan(two.lat)


@pytest.mark.parametrize("text, match", [
    ("file,units\na.csv,m\n", "expected a 'path' column"),
    ("path,colour\na.csv,red\n", "unknown columns"),
    ("path\nmissing.csv\n", "line 2: record file"),
    ("path,lat\na.csv,north\n", "column 'lat' expected a number"),
    ("path,units\na.csv,inches\n", "units must be one of"),
])
def test_read_manifest_errors_name_the_line_and_column(tmp_path, text, match):
    (tmp_path / "a.csv").write_text("x\n")
    (tmp_path / "m.csv").write_text(text)
    with pytest.raises(DataError, match=match):
        batch.read_manifest(tmp_path / "m.csv")


def test_repeated_station_names_are_refused(tmp_path, records):
    good, _ = records
    stations = batch.stations_from_paths([good[0], good[0]])
    with pytest.raises(DataError, match="unique"):
        batch.run_batch(stations, out_dir=tmp_path / "out", study=station_study_for_tests)


# -- the batch on a LocalCluster and on a loopback scheduler -------------------------------------------------
def test_failure_isolation_resume_and_summaries(tmp_path, records, local_cluster):
    good, bad = records
    stations = batch.stations_from_paths([good[0], bad, good[1], good[2]], reader={"datum": "CD"})
    options = OptionsForTests()
    with pytest.warns(ExtremesWarning, match="1 of 4 stations failed"):
        first = batch.run_batch(stations, out_dir=tmp_path / "out", options=options, study=station_study_for_tests,
                                settings=batch.BatchSettings(scheduler=local_cluster.scheduler_address))
    assert [o["station"] for o in first.outcomes] == ["st0", "broken", "st1", "st2"]
    assert (first.n_ok, first.n_failed, first.n_skipped) == (3, 1, 0)
    status = {o["station"]: o["status"] for o in first.outcomes}
    assert status["broken"].startswith("ValueError") and "not-a-number" in status["broken"]
    assert "\n" not in status["broken"]

    # every good station's numbers equal the helper run in this process with the station's seed
    (tmp_path / "direct").mkdir()
    for station in (s for s in stations if s.name != "broken"):
        direct = station_study_for_tests(station, options=options, seed=batch.station_seed(11, station.name),
                                         out_dir=tmp_path / "direct" / station.name)
        outcome = next(o for o in first.outcomes if o["station"] == station.name)
        assert outcome["return_levels"] == direct["return_levels"]
        assert (tmp_path / "out" / station.name / "results.json").is_file()
    assert not (tmp_path / "out" / "broken").exists()

    frame = pd.read_csv(tmp_path / "out" / "summary.csv")
    assert list(frame["station"]) == ["st0", "broken", "st1", "st2"]
    assert list(frame["status"] == "ok") == [True, False, True, True]
    for column in ("recommended_method", "level_100_m", "lower_100_m", "upper_100_m", "lat", "lon",
                   "level_2_m", "annual-maxima_level_10_m", "annual-maxima_upper_100_m"):
        assert column in frame.columns, column
    row = frame.set_index("station").loc["st1"]
    expected = next(r for r in first.outcomes[2]["return_levels"] if r["return_period_years"] == 100.0)
    assert row["level_100_m"] == pytest.approx(expected["level_m"], rel=1e-12)
    assert row["lower_100_m"] < row["upper_100_m"]
    assert np.isnan(frame.set_index("station").loc["broken", "level_100_m"])

    # second run: done stations are skipped and counted, the broken one is tried again
    (tmp_path / "out" / "st2" / "results.json").write_text("{\"truncated")  # an incomplete station folder
    second = batch.run_batch(stations, out_dir=tmp_path / "out", options=options, study=station_study_for_tests,
                             settings=batch.BatchSettings(scheduler=local_cluster.scheduler_address, errors="ignore"))
    assert second.n_skipped == 2 and second.n_failed == 1
    assert [o["skipped"] for o in second.outcomes] == [True, False, True, False]
    pd.testing.assert_frame_equal(_numbers(second.to_frame()), _numbers(first.to_frame()))

    # --overwrite studies everything again
    third = batch.run_batch(stations, out_dir=tmp_path / "out", options=options, study=station_study_for_tests,
                            settings=batch.BatchSettings(
                                scheduler=local_cluster.scheduler_address, errors="ignore", overwrite=True))
    assert third.n_skipped == 0 and third.n_ok == 3

    with pytest.raises(DataError, match="station broken: ValueError"):
        batch.run_batch(stations, out_dir=tmp_path / "out", options=options, study=station_study_for_tests,
                        settings=batch.BatchSettings(scheduler=local_cluster.scheduler_address, errors="raise"))


def test_summary_netcdf_is_cf_with_station_dimension(tmp_path, records, local_cluster):
    import xarray as xr

    good, bad = records
    stations = [batch.Station(name="north", path=good[0], lat=-30.5, lon=150.25, source=str(good[0])),
                batch.Station(name="south", path=bad, source=str(bad))]
    summary = batch.run_batch(stations, out_dir=tmp_path / "out", options=OptionsForTests(),
                              study=station_study_for_tests,
                              settings=batch.BatchSettings(scheduler=local_cluster.scheduler_address, errors="ignore"))
    with xr.open_dataset(tmp_path / "out" / "summary.nc") as ds:
        assert ds.attrs["Conventions"] == "CF-1.8"
        assert ds.sizes["station"] == 2 and list(ds["station"].values) == ["north", "south"]
        assert list(ds["return_period"].values) == list(PERIODS)
        assert ds["level_m"].dims == ("station", "method", "return_period")
        assert ds["level_m"].attrs["units"] == "m" and ds["level_m"].attrs["long_name"]
        assert ds["lat"].attrs["standard_name"] == "latitude" and float(ds["lat"][0]) == -30.5
        assert str(ds["status"].values[0]) == "ok" and str(ds["status"].values[1]) != "ok"
        assert np.isnan(ds["recommended_level_m"].sel(station="south")).all()
        rows = summary.outcomes[0]["return_levels"]
        np.testing.assert_allclose(ds["recommended_upper_m"].sel(station="north").values,
                                   [r["upper_m"] for r in rows], rtol=1e-12)


def test_local_cluster_and_loopback_scheduler_give_identical_numbers(tmp_path, records, local_cluster,
                                                                      loopback_scheduler):
    good, bad = records
    stations = batch.stations_from_paths(good + [bad])
    runs = [batch.run_batch(stations, out_dir=tmp_path / name, options=OptionsForTests(seed=3),
                            study=station_study_for_tests,
                            settings=batch.BatchSettings(scheduler=address, errors="ignore"))
            for name, address in (("local", local_cluster.scheduler_address), ("remote", loopback_scheduler))]
    pd.testing.assert_frame_equal(_numbers(runs[0].to_frame()), _numbers(runs[1].to_frame()))
    assert runs[1].n_failed == 1
    # the remote workers wrote the station folders where asked
    assert json.loads((tmp_path / "remote" / "st1" / "results.json").read_text())["return_levels"]


def test_progress_is_called_once_per_task(tmp_path, records, local_cluster):
    good, _ = records
    calls = []
    batch.run_batch(batch.stations_from_paths(good), out_dir=tmp_path / "out", options=OptionsForTests(),
                    study=station_study_for_tests,
                    progress=lambda done, total, name: calls.append((done, total, name)),
                    settings=batch.BatchSettings(scheduler=local_cluster.scheduler_address))
    assert [c[:2] for c in calls] == [(1, 3), (2, 3), (3, 3)]
    assert sorted(c[2] for c in calls) == ["st0", "st1", "st2"]


# -- gridded model output -------------------------------------------------------------------------------------
def _write_gridded(path: Path, *, names=True, n_points=5, years=4, units="cm"):
    import xarray as xr

    times = pd.date_range("2000-01-01", periods=int(years * 365.25 * 24), freq="h")
    rng = np.random.default_rng(42)
    hours = np.arange(times.size)[:, None]
    level = 100 * (np.sin(2 * np.pi * hours / 12.42) * np.linspace(0.5, 1.5, n_points)
                   + rng.normal(0, 0.1, (times.size, n_points)))
    coords = {"time": times, "lat": ("node", np.linspace(-40, -30, n_points), {"standard_name": "latitude"}),
              "lon": ("node", np.linspace(140, 150, n_points), {"standard_name": "longitude"})}
    if names:
        coords["station_name"] = ("node", np.array([f"node{i:02d}" for i in range(n_points)], dtype=object),
                                  {"cf_role": "timeseries_id"})
    ds = xr.Dataset({"zeta": (("time", "node"), level.astype("float32"),
                              {"units": units, "standard_name": "sea_surface_height_above_geopotential_datum"}),
                     "depth": ("node", np.full(n_points, 10.0))}, coords=coords)
    ds.to_netcdf(path, engine="netcdf4")
    return ds


class CountingScheduler:
    """TEST HELPER: a dask scheduler that counts computes (STYLE.md: batch tests check laziness)."""

    def __init__(self):
        self.calls = 0

    def __call__(self, dsk, keys, **kwargs):
        import dask

        self.calls += 1
        return dask.get(dsk, keys, **kwargs)


def test_gridded_reader_stays_lazy_until_the_tasks_run(tmp_path):
    import dask
    import dask.array

    path = tmp_path / "model.nc"
    _write_gridded(path)
    counter = CountingScheduler()
    with dask.config.set(scheduler=counter):
        array = batch.open_gridded(path)
        blocks = batch.gridded_blocks(path, block_size=2)
        assert isinstance(array.data, dask.array.Array)
        assert array.dims == ("time", "node")
        assert counter.calls == 0
        total = float(array.isel(node=0).sum().compute())
    assert counter.calls == 1 and np.isfinite(total)
    assert [b.indices for b in blocks] == [(0, 1), (2, 3), (4,)]
    assert blocks[1].names == ("node02", "node03") and blocks[0].lat[1] == pytest.approx(-37.5)


def test_gridded_points_studied_in_blocks_match_the_file(tmp_path, local_cluster):
    import xarray as xr

    path = tmp_path / "model.nc"
    ds = _write_gridded(path, names=False, n_points=3)
    blocks = batch.gridded_blocks(path, block_size=2, datum="MSL")
    assert blocks[0].names == ("point_0", "point_1") and blocks[0].variable == "zeta"
    summary = batch.run_batch(blocks, out_dir=tmp_path / "out", options=OptionsForTests(),
                              study=station_study_for_tests,
                              settings=batch.BatchSettings(scheduler=local_cluster.scheduler_address))
    assert [o["station"] for o in summary.outcomes] == ["point_0", "point_1", "point_2"]
    # each point equals the helper run on the series taken straight from the file with xarray (cm -> m)
    with xr.open_dataset(path) as raw:
        series = raw["zeta"].isel(node=2).to_series() / 100.0
    series.index = series.index.tz_localize("UTC")
    direct = station_study_for_tests(batch.Station(name="point_2", level_m=series), options=OptionsForTests(),
                                     seed=batch.station_seed(11, "point_2"), out_dir=tmp_path / "direct")
    got = summary.outcomes[2]["return_levels"]
    np.testing.assert_allclose([r["level_m"] for r in got], [r["level_m"] for r in direct["return_levels"]],
                               rtol=1e-6)
    assert summary.outcomes[2]["datum"] == "MSL" and summary.outcomes[2]["lat"] == pytest.approx(-30.0)
    again = batch.run_batch(blocks, out_dir=tmp_path / "out", options=OptionsForTests(),
                            study=station_study_for_tests,
                            settings=batch.BatchSettings(scheduler=local_cluster.scheduler_address))
    assert again.n_skipped == 3
    del ds


def test_gridded_errors(tmp_path):
    path = tmp_path / "model.nc"
    _write_gridded(path, n_points=2, units="furlongs")
    with pytest.raises(DataError, match="no variable 'eta'"):
        batch.gridded_blocks(path, variable="eta")
    with pytest.raises(DataError, match="block_size must be >= 1"):
        batch.gridded_blocks(path, block_size=0)
    block = batch.gridded_blocks(path)[0]
    outcomes = batch.run_item(block, study=station_study_for_tests, options=OptionsForTests(), base_seed=1,
                               out_dir=tmp_path / "out", overwrite=False)
    assert [o["status"] for o in outcomes] == ["gridded file " + str(path) + ": variable 'zeta' has units "
                                               "'furlongs'; expected one of ['cm', 'feet', 'ft', 'm', 'meter', "
                                               "'meters', 'metre', 'metres', 'mm']"] * 2
    (tmp_path / "text.nc").write_text("not netcdf")
    with pytest.raises(DataError, match="cannot be opened"):
        batch.gridded_blocks(tmp_path / "text.nc")


# -- end to end: the full study through the batch ---------------------------------------------------------------
def write_tidal_record(path: Path, *, years=2.0, seed=0):
    """TEST HELPER: hourly synthetic gauge record [m]: M2, S2, K1, O1 tides, storm surges and noise."""
    times = pd.date_range("2010-01-01", periods=int(years * 365.25 * 24), freq="h", tz="UTC")
    rng = np.random.default_rng(seed)
    hours = np.arange(times.size)
    tide = sum(a * np.cos(2 * np.pi * hours * speed / 360.0 - rng.uniform(0, 2 * np.pi))
               for a, speed in ((1.0, 28.984104), (0.35, 30.0), (0.2, 15.041069), (0.15, 13.943036)))
    surge = np.convolve(rng.gumbel(0.0, 0.03, times.size), np.ones(24) / 6, mode="same")
    level = np.round(tide + surge + rng.normal(0, 0.01, times.size), 3)
    pd.DataFrame({"time": times.strftime("%Y-%m-%dT%H:%M:%SZ"), "level": level}).to_csv(path, index=False)
    return path


@pytest.fixture(scope="module")
def tidal_records(tmp_path_factory):
    folder = tmp_path_factory.mktemp("tidal")
    good = [write_tidal_record(folder / "harbour0.csv", seed=0)]
    (folder / "empty.csv").write_text("time,level\n")
    return good, folder / "empty.csv"


def test_full_study_through_the_batch_local_and_loopback(tmp_path, tidal_records, local_cluster,
                                                         loopback_scheduler):
    import functools

    pytest.importorskip("extremes.study", reason="the study module has not landed yet")
    from extremes.study_options import StudyOptions

    good, empty = tidal_records
    stations = batch.stations_from_paths(good + [empty], reader={"datum": "CD"})
    options = StudyOptions(periods_years=(10.0, 100.0), resamples=20, seed=7)
    study = functools.partial(batch.study_station, figures=False)
    local = batch.run_batch(stations, out_dir=tmp_path / "local", options=options, study=study,
                            settings=batch.BatchSettings(scheduler=local_cluster.scheduler_address, errors="ignore"))
    assert [o["status"] == "ok" for o in local.outcomes] == [True, False]
    assert "empty.csv" in local.outcomes[1]["status"]
    for outcome in local.outcomes[:1]:
        results = json.loads((tmp_path / "local" / outcome["station"] / "results.json").read_text())
        recorded = results["inputs"]["options"]
        assert recorded.get("study", recorded)["seed"] == batch.station_seed(7, outcome["station"])
        assert results["record"]["datum"] == "CD"
        best = next(r for r in results["return_levels"]
                    if r["method"] == results["recommended_method"] and r["return_period_years"] == 100)
        row = local.to_frame().set_index("station").loc[outcome["station"]]
        assert row["recommended_method"] == results["recommended_method"]
        assert row["level_100_m"] == best["level_m"]
    remote = batch.run_batch(stations, out_dir=tmp_path / "remote", options=options, study=study,
                             settings=batch.BatchSettings(scheduler=loopback_scheduler, errors="ignore"))
    pd.testing.assert_frame_equal(_numbers(local.to_frame()), _numbers(remote.to_frame()))
    again = batch.run_batch(stations, out_dir=tmp_path / "local", options=options, study=study,
                            settings=batch.BatchSettings(scheduler=local_cluster.scheduler_address, errors="ignore"))
    assert again.n_skipped == 1 and again.n_failed == 1
