"""Speed and memory on a record shaped like a real 40-year archive (about 1.7 million readings, three eras).

The record (tests/archive_records.py: the invented example harbour's process) changes from hourly
(1984-1998) to 15-minute (1999-2009) to 6-minute readings (2010-2023), holds a clock on UTC+1 for a summer, a
datum step, a record storm and seasonal outages. Each step runs in a fresh subprocess (so its peak memory is
its own), timed inside the process after the imports:

* ``pandas.read_csv`` of the file alone (the floor any reader pays);
* ``inspect``: :func:`extremes.records.read_record` + :func:`extremes.quality.check_record` (eras, clock
  check, datum steps) + the record's assessment, as ``extremes inspect`` does;
* ``study``: the whole study without figures (:func:`extremes.study.run_study`), with the gauge's corrections.

Goals (issue "Real long records"): inspect within 3 x read_csv; the study within 60 s; under 2 GB.

    nice python benchmarks/bench_archive.py            # 40 years
    nice python benchmarks/bench_archive.py --years 12  # quicker
"""
from __future__ import annotations

import argparse
import json
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]

STEPS = {
    "pandas.read_csv": "import pandas as pd; df = pd.read_csv(PATH)",
    "inspect (read + QC + verdict)": (
        "from extremes.records import read_record; from extremes.quality import check_record; "
        "from extremes.assessment import assess; q = check_record(read_record(PATH, missing=[-99])); "
        "a = assess(quality=q); d = q.to_dict(max_gaps=None)"),
    "study, no figures, corrected": (
        "from extremes.study import run_study; from extremes.study_options import StudyOptions; "
        "r = run_study(PATH, reader={'missing': [-99], 'corrections': CORRECTIONS}); d = r.to_dict()"),
}


def plan(years: float) -> dict:
    """The archive plan for a record of ``years`` ending on 2024-01-01 (three eras in proportion 15:11:14)."""
    end = 2024
    start = end - int(round(years))
    span = end - start
    quarter = start + max(1, round(span * 15 / 40))
    six = quarter + max(1, round(span * 11 / 40))
    return {
        "eras": [(f"{start}-01-01", "60min"), (f"{quarter}-01-01", "15min"), (f"{six}-01-01", "6min")],
        "end": f"{end}-01-01",
        "clock": {"start": f"{start + 1}-03-29T01:00Z", "end": f"{start + 1}-10-25T01:00Z", "offset_minutes": 60,
                  "outage_hours": 3},
        "datum_step": {"time": f"{quarter + 1}-06-01T00:00Z", "size_m": 0.12},
        "storm": {"peak": f"{end - 2}-01-19T10:30Z", "extra_m": 1.2, "rise_hours": 7.0, "fall_hours": 10.0},
        "outages": [(f"{start + 2}-01-08", 21), (f"{quarter - 1}-07-01", 45), (f"{six - 1}-01-20", 18)],
        "spikes": [(f"{start + 3}-05-03T07:00Z", 1.5), (f"{end - 1}-03-09T04:36Z", 1.8)],
        "missing_code": "-99",
        "missing_codes": [f"{start + 4}-06-01T05:00Z", f"{end - 2}-11-02T17:12Z"],
    }


#: one BLAS thread in every step (as the batch benchmark): on a shared, oversubscribed machine OpenBLAS's
#: spinning threads can make a small matrix product a thousand times slower and swamp every other cost
ENV = {"OPENBLAS_NUM_THREADS": "1", "OMP_NUM_THREADS": "1", "MKL_NUM_THREADS": "1"}


def run_step(code: str, path: Path, corrections: Path) -> dict:
    import os

    script = (
        "import resource, time, json, warnings\n"
        "warnings.simplefilter('ignore')\n"
        "import numpy, pandas, scipy.linalg\n"
        f"PATH = {str(path)!r}\nCORRECTIONS = {str(corrections)!r}\n"
        "t0 = time.perf_counter()\n"
        f"{code}\n"
        "elapsed = time.perf_counter() - t0\n"
        "use = resource.getrusage(resource.RUSAGE_SELF)\n"
        "print(json.dumps({'seconds': elapsed, 'cpu_seconds': use.ru_utime + use.ru_stime, "
        "'maxrss_mb': use.ru_maxrss / 1024}))\n"
    )
    out = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True, check=True, cwd=ROOT,
                         env=dict(os.environ, **ENV))
    return json.loads(out.stdout.strip().splitlines()[-1])


def main(argv=None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--years", type=float, default=40.0, help="record length [years] (default 40)")
    parser.add_argument("--repeat", type=int, default=1, help="runs per step; the fastest is shown")
    args = parser.parse_args(argv)
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "archive.csv"
        corrections = Path(folder) / "logs.csv"
        t0 = time.perf_counter()
        # written by a child process, so that this process (whose peak memory the steps would inherit) stays small
        writer = ("import json, sys; sys.path.insert(0, '.'); from tests.archive_records import archive_record; "
                  "from benchmarks.bench_archive import plan; "
                  f"text, truth = archive_record(plan({args.years!r})); "
                  f"open({str(path)!r}, 'w').write(text); open({str(corrections)!r}, 'w').write(truth['corrections_csv']); "
                  "print(truth['n_rows'])")
        n_rows = int(subprocess.run([sys.executable, "-c", writer], capture_output=True, text=True, check=True,
                                    cwd=ROOT).stdout.split()[-1])
        print(f"wrote {n_rows:,} rows ({path.stat().st_size / 1e6:.0f} MB) in "
              f"{time.perf_counter() - t0:.1f} s", file=sys.stderr)
        results = {}
        for name, code in STEPS.items():
            runs = [run_step(code, path, corrections) for _ in range(max(1, args.repeat))]
            results[name] = min(runs, key=lambda r: r["seconds"])
    base = results["pandas.read_csv"]["seconds"]
    print(f"{args.years:g}-year archive record, {n_rows:,} rows, eras 60/15/6 min, one BLAS thread")
    print(f"{'step':<32} {'seconds':>8} {'CPU s':>8} {'x read_csv':>10} {'peak RSS MB':>12}")
    for name, res in results.items():
        print(f"{name:<32} {res['seconds']:>8.2f} {res['cpu_seconds']:>8.2f} {res['seconds'] / base:>10.2f} "
              f"{res['maxrss_mb']:>12.0f}")


if __name__ == "__main__":
    main()
