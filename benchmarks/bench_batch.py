"""Throughput of ``extremes batch``: stations per minute with 1 and 2 workers, peak memory per worker, and
the cost per station against one in-process study of the same record (goal: within 15 %).

    python benchmarks/bench_batch.py                      # 200 stations of 20 years hourly, full study
    python benchmarks/bench_batch.py --stations 20 --years 10
    python benchmarks/bench_batch.py --study light        # dask overhead only: a Gumbel fit per station

``--study full`` is the whole study (extremes.batch.study_station); ``--study light`` reads the record with
pandas and fits a Gumbel distribution to the annual maxima (scipy), to measure the cost the batch adds
around a cheap task. Each mode's table: workers, wall time, stations per minute, seconds per station
(x workers), the ratio of that to the in-process cost, and the peak resident memory of each worker.
The cluster's startup is timed apart. Run it on an otherwise quiet machine: the ratio compares two timings
taken minutes apart, and dask workers run numpy with one BLAS thread each.
"""
from __future__ import annotations

import argparse
import functools
import json
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


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--stations", type=int, default=200)
    parser.add_argument("--years", type=float, default=20.0)
    parser.add_argument("--workers", default="1,2", help="comma-separated worker counts")
    parser.add_argument("--study", choices=("full", "light"), default="full")
    parser.add_argument("--inprocess", type=int, default=3, help="records timed in process for the reference")
    parser.add_argument("--no-figures", action="store_true", help="full study without figures and HTML report")
    parser.add_argument("--data", type=Path, help="folder to keep the synthetic records in (reused if present)")
    args = parser.parse_args()

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
                                      errors="ignore")
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
