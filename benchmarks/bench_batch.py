"""Throughput of ``extremes batch``: stations per minute with 1 and 2 workers, peak memory per worker, and
the cost per station against one in-process study of the same record (goal: within 15 %); and the
model-point mode on a gridded file (goal: a file of 1,000 points of 30 years hourly at <= 1.5 s per point
on the 2-core development machine), with its cost split by stage.

    python benchmarks/bench_batch.py                      # 200 stations of 20 years hourly, full study
    python benchmarks/bench_batch.py --stations 20 --years 10
    python benchmarks/bench_batch.py --study light        # dask overhead only: a Gumbel fit per station
    nice python benchmarks/bench_batch.py --points 24 --years 30 --block-size 12   # model points

``--points N`` writes a gridded NetCDF file of N points (hourly, ``--years`` long, one shared time axis,
as model output is), studies one point by the full study in process (no figures) for reference, then the
file through the batch in the model-point mode with 1 and 2 workers. Its table: wall time of the batch, of
its tasks and of the summary files and page written at its end, wall time per point, the CPU time the
workers spent per point (core-seconds: what a point costs whatever else runs on the machine), the
projection to 1,000 points (the tasks' time per point x 1,000 plus the summaries), and the split of a
point's cost by stage (the study's own stage timers; the rest is reading, writing and the task). The load
average is printed before and after the batches (the machine may be shared). Points are independent and a block's first point pays for the
tide design its other points share, so the cost per point is flat in the number of points once blocks
hold a few points: a run of a few dozen points measures the per-point cost of 1,000.

``--study full`` is the whole study (extremes.batch.study_station); ``--study light`` reads the record with
pandas and fits a Gumbel distribution to the annual maxima (scipy), to measure the cost the batch adds
around a cheap task. Each mode's table: workers, wall time, stations per minute, seconds per station
(x workers), the ratio of that to the in-process cost, and the peak resident memory of each worker.
The cluster's startup is timed apart. Run it on an otherwise quiet machine: the ratio compares two timings
taken minutes apart, and dask workers run numpy with one BLAS thread each.
"""
from __future__ import annotations

import argparse
import dataclasses
import functools
import json
import os
import resource
import shutil
import statistics
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

from extremes import batch
from extremes.outputs import output_folder


def light_study(station, *, options, seed, out_dir, overwrite=False):
    """Benchmark helper: Gumbel (scipy) fit of annual maxima read with pandas; writes results.json."""
    import scipy.stats

    table = pd.read_csv(station.path)
    level = pd.Series(table["level"].to_numpy(float), index=pd.DatetimeIndex(pd.to_datetime(table["time"], utc=True)))
    maxima = level.groupby(level.index.year).max().to_numpy()
    periods = np.asarray(options.periods_years, dtype=float)
    loc, scale = scipy.stats.gumbel_r.fit(maxima)
    levels = scipy.stats.gumbel_r.ppf(1 - 1 / periods, loc, scale)
    results = {"recommended_method": "annual-maxima", "return_levels": [
        {"method": "annual-maxima", "return_period_years": float(t), "level_m": float(z), "lower_m": None,
         "upper_m": None, "confidence": 0.95} for t, z in zip(periods, levels)]}
    with output_folder(out_dir, overwrite=overwrite) as work:
        (work / "results.json").write_text(json.dumps(results))
    return results


def write_records(folder: Path, n: int, years: float) -> list[Path]:
    """Synthetic hourly records: two tidal sines, a storm process and noise [m], ISO times in UTC."""
    times = pd.date_range("2000-01-01", periods=int(years * 365.25 * 24), freq="h", tz="UTC")
    stamps = times.strftime("%Y-%m-%dT%H:%M:%SZ")
    hours = np.arange(times.size)
    paths = []
    for i in range(n):
        rng = np.random.default_rng(i)
        amp = 0.6 + 0.8 * rng.random()
        tide = amp * np.cos(2 * np.pi * hours / 12.4206 - rng.random() * 6) + 0.3 * amp * np.cos(
            2 * np.pi * hours / 12.0 - rng.random() * 6) + 0.2 * np.cos(2 * np.pi * hours / 23.9345)
        surge = np.convolve(rng.gumbel(0.0, 0.02, times.size), np.ones(36) / 6, mode="same")
        level = np.round(tide + surge + rng.normal(0, 0.01, times.size), 3)
        path = folder / f"station_{i:04d}.csv"
        pd.DataFrame({"time": stamps, "level": level}).to_csv(path, index=False)
        paths.append(path)
    return paths


def _peak_rss_mb() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def _cpu_seconds() -> float:
    usage = resource.getrusage(resource.RUSAGE_SELF)
    return usage.ru_utime + usage.ru_stime


def write_gridded(path: Path, n_points: int, years: float) -> None:
    """Synthetic model output: hourly tides of five constituents varying along a coast, shared storms, noise."""
    import xarray as xr

    times = pd.date_range("1994-01-01", periods=int(years * 365.25 * 24), freq="h")
    hours = np.arange(times.size)
    rng = np.random.default_rng(0)
    storms = np.convolve(rng.gumbel(0.0, 0.03, times.size), np.ones(24) / 6, mode="same")
    level = np.empty((times.size, n_points), dtype="float32")
    speeds = (28.9841042, 30.0, 15.0410686, 13.9430356, 28.4397295)  # M2 S2 K1 O1 N2 [deg/h] (Schureman 1958)
    for j in range(n_points):
        amps = np.array((1.0, 0.35, 0.2, 0.15, 0.08)) * (0.8 + 0.4 * j / max(n_points - 1, 1))
        tide = sum(a * np.cos(np.deg2rad(sp * hours - 3.0 * j - 40 * k)) for k, (a, sp) in enumerate(zip(amps, speeds)))
        level[:, j] = 100 * (tide + storms * (1 + 0.2 * j / max(n_points - 1, 1)) + rng.normal(0, 0.01, times.size))
    xr.Dataset({"zeta": (("time", "node"), level, {"units": "cm", "standard_name": "sea_surface_height"})},
               coords={"time": times, "lat": ("node", np.linspace(-40.0, -41.0, n_points)),
                       "lon": ("node", np.linspace(172.0, 173.0, n_points)),
                       "chainage": ("node", np.arange(n_points) * 5.0)}).to_netcdf(path, engine="netcdf4")


def bench_points(args, work: Path) -> None:
    """The model-point mode on a gridded file: per-point cost by stage, 1 and 2 workers."""
    from extremes.study_options import StudyOptions

    path = work / "model.nc"
    t0 = time.perf_counter()
    write_gridded(path, args.points, args.years)
    print(f"wrote {args.points} points of {args.years:g} years hourly in {time.perf_counter() - t0:.1f} s")
    options = StudyOptions()
    blocks = batch.gridded_blocks(path, block_size=args.block_size, datum="model datum")
    first = blocks[0].stations()[0]
    series = batch.block_series(blocks[0], [blocks[0].indices[0]])[0]
    point = batch.Station(name=first.name, level_m=series, datum=first.datum, source=first.source)
    (work / "ref").mkdir()
    t0, c0 = time.perf_counter(), _cpu_seconds()
    batch.study_station(point, options=options, seed=1, out_dir=work / "ref" / "full", figures=False)
    full_wall, full_cpu = time.perf_counter() - t0, _cpu_seconds() - c0
    print(f"full study of one point in process, no figures: {full_wall:.2f} s wall, {full_cpu:.2f} s CPU")
    # the model-point mode in process on the first block (its first point builds the shared tide design)
    from extremes.tide.harmonic import shared_design

    cpu, stage_rows = [], []
    with shared_design():
        for k, point in enumerate(blocks[0].stations()[: args.inprocess + 1]):
            level = batch.block_series(blocks[0], [blocks[0].indices[k]])[0]
            c0 = _cpu_seconds()
            done = batch.study_point(dataclasses.replace(point, level_m=level), options=options, seed=1,
                                     out_dir=work / "ref" / point.name)
            cpu.append(_cpu_seconds() - c0)
            stage_rows.append(done["timings_s"])
    later = cpu[1:] or cpu
    print(f"model-point mode in process: first point of a block {cpu[0]:.2f} s CPU, the next {len(later)} "
          f"{statistics.mean(later):.2f} s CPU each (stages: " + ", ".join(
              f"{k} {statistics.mean(r.get(k, 0.0) for r in stage_rows[1:] or stage_rows):.2f}"
              for k in stage_rows[0]) + " s wall)")

    print(f"\nload average before the batches: {', '.join(f'{v:.2f}' for v in os.getloadavg())}")
    print(f"{'workers':>7} {'wall_s':>7} {'tasks_s':>7} {'summary_s':>9} {'s/point':>8} {'core_s/point':>12} "
          f"{'1000 points':>12} {'failed':>6} {'peak_MB/worker':>16}")
    stages = None
    for n_workers in [int(w) for w in args.workers.split(",")]:
        with batch.dask_client(workers=n_workers) as client:
            client.wait_for_workers(n_workers)
            before = client.run(_cpu_seconds)
            t1 = time.perf_counter()
            summary = batch.run_batch(blocks, out_dir=work / f"points_{n_workers}", options=options, client=client,
                                      settings=batch.BatchSettings(mode="points", errors="ignore"))
            wall = time.perf_counter() - t1
            after, peaks = client.run(_cpu_seconds), client.run(_peak_rss_mb)
        core = sum(after[w] - before[w] for w in after) / args.points
        # the tasks (summary.seconds: until the last point is back) and the summary files and page, written once
        # per batch whatever its size; 1,000 points: the tasks' cost per point x 1,000 plus the summaries
        tasks, pages = summary.seconds, wall - summary.seconds
        per_point = wall / args.points
        projected = (tasks / args.points * 1000 + pages) / 60
        print(f"{n_workers:>7} {wall:>7.1f} {tasks:>7.1f} {pages:>9.1f} {per_point:>8.2f} {core:>12.2f} "
              f"{projected:>8.1f} min {summary.n_failed:>6} {', '.join(f'{v:.0f}' for v in peaks.values()):>16}")
        stages = summary.outcomes
    print(f"load average after: {', '.join(f'{v:.2f}' for v in os.getloadavg())}")
    rows = [o for o in stages if o["status"] == "ok"]
    names = list(dict.fromkeys(k for o in rows for k in o["stage_seconds"]))
    split = {k: float(np.mean([o["stage_seconds"].get(k, 0.0) for o in rows])) for k in names}
    total = float(np.mean([o["seconds"] for o in rows]))
    split["read, write and task"] = total - sum(split.values())
    print(f"\ncost of a point by stage (last run, mean wall time in the task, {len(rows)} points): "
          + ", ".join(f"{k} {v:.2f} s ({100 * v / total:.0f} %)" for k, v in split.items()) + f"; total {total:.2f} s")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--stations", type=int, default=200)
    parser.add_argument("--years", type=float, default=20.0)
    parser.add_argument("--workers", default="1,2", help="comma-separated worker counts")
    parser.add_argument("--study", choices=("full", "light"), default="full")
    parser.add_argument("--inprocess", type=int, default=3, help="records timed in process for the reference")
    parser.add_argument("--no-figures", action="store_true", help="full study without figures and HTML report")
    parser.add_argument("--data", type=Path, help="folder to keep the synthetic records in (reused if present)")
    parser.add_argument("--points", type=int, help="model-point mode on a gridded file of this many points")
    parser.add_argument("--block-size", type=int, default=12, help="points per task of the gridded file")
    args = parser.parse_args()
    if args.points:
        work = Path(tempfile.mkdtemp(prefix="bench_batch_"))
        try:
            bench_points(args, work)
        finally:
            shutil.rmtree(work, ignore_errors=True)
        return

    if args.study == "full":
        from extremes.study_options import StudyOptions
        options = StudyOptions()
        study = functools.partial(batch.study_station, figures=not args.no_figures)
    else:
        class _Options:
            seed, periods_years = batch.DEFAULT_SEED, (2, 10, 100, 1000)
        options, study = _Options(), light_study

    work = Path(tempfile.mkdtemp(prefix="bench_batch_"))
    data = args.data or work / "records"
    data.mkdir(parents=True, exist_ok=True)
    paths = sorted(data.glob("station_*.csv"))[: args.stations]
    if len(paths) < args.stations:
        t0 = time.perf_counter()
        paths = write_records(data, args.stations, args.years)
        print(f"wrote {len(paths)} records of {args.years:g} years hourly in {time.perf_counter() - t0:.1f} s")
    stations = batch.stations_from_paths(paths, reader={"datum": "benchmark"})

    # reference: the same per-station study in this process, no dask
    ref_times = []
    (work / "inprocess").mkdir()
    for station in stations[: args.inprocess]:
        t0 = time.perf_counter()
        study(station, options=options, seed=batch.station_seed(options.seed, station.name),
              out_dir=work / "inprocess" / station.name, overwrite=False)
        ref_times.append(time.perf_counter() - t0)
    ref = statistics.median(ref_times)
    print(f"in-process study of one record ({args.study}): median {ref:.3f} s over {len(ref_times)} records; "
          f"peak RSS of this process {_peak_rss_mb():.0f} MB")

    print(f"\n{'workers':>7} {'startup_s':>9} {'wall_s':>8} {'stations/min':>12} {'s/station*w':>11} "
          f"{'vs_inproc':>9} {'failed':>6} {'peak_MB/worker':>16}")
    for n_workers in [int(w) for w in args.workers.split(",")]:
        out = work / f"out_{n_workers}"
        t0 = time.perf_counter()
        with batch.dask_client(workers=n_workers) as client:
            client.wait_for_workers(n_workers)
            startup = time.perf_counter() - t0
            t1 = time.perf_counter()
            summary = batch.run_batch(stations, out_dir=out, options=options, study=study, client=client,
                                      settings=batch.BatchSettings(errors="ignore", summary_page=False))
            wall = time.perf_counter() - t1
            peaks = client.run(_peak_rss_mb)
        per_station = wall * n_workers / len(stations)
        peak = ", ".join(f"{v:.0f}" for v in peaks.values())
        print(f"{n_workers:>7} {startup:>9.1f} {wall:>8.1f} {60 * len(stations) / wall:>12.1f} {per_station:>11.3f} "
              f"{per_station / ref:>9.2f} {summary.n_failed:>6} {peak:>16}")
        if summary.n_failed:
            print("   first failure:", next(o["status"] for o in summary.outcomes if o["status"] != "ok"))
    shutil.rmtree(work, ignore_errors=True)


if __name__ == "__main__":
    main()
