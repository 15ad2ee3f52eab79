"""Time reading + quality control of a long 6-minute record against a plain pandas.read_csv.

Writes a synthetic record (two tidal sinusoids, noise, a few injected spikes, a gap, duplicates) as CSV in a
temporary folder, then times in fresh subprocesses (so peak memory is each step's own):

* ``pandas.read_csv`` of the file alone (the floor any reader pays),
* :func:`extremes.records.read_record`,
* ``read_record`` + :func:`extremes.quality.check_record`.

Prints a table of seconds, ratio to pandas.read_csv and peak resident memory (``ru_maxrss``).
Goal: read + QC within about 3x of read_csv, peak memory < 2 GB, for 50 years of 6-minute data.

    python benchmarks/bench_read_qc.py            # 50 years (~4.4 million rows)
    python benchmarks/bench_read_qc.py --years 5  # quicker
"""
from __future__ import annotations

import argparse
import json
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

STEPS = {
    "pandas.read_csv": "import pandas as pd; df = pd.read_csv(PATH)",
    "read_record": "from extremes.records import read_record; r = read_record(PATH)",
    "read_record + check_record": ("from extremes.records import read_record; "
                                   "from extremes.quality import check_record; q = check_record(read_record(PATH))"),
}


def write_record(path: Path, years: float, seed: int = 1) -> int:
    """Write a synthetic 6-minute record; return the number of rows."""
    n = int(years * 365.25 * 24 * 10)
    rng = np.random.default_rng(seed)
    start = np.datetime64("1970-01-01T00:00", "m")
    stamps = start + np.arange(n, dtype=np.int64) * np.timedelta64(6, "m")
    hours = np.arange(n) * 0.1
    level = (1.2 * np.cos(2 * np.pi * hours / 12.4206012) + 0.4 * np.cos(2 * np.pi * hours / 12.0 + 0.7)
             + 0.05 * rng.standard_normal(n))
    level[rng.integers(0, n, 20)] += 3.0  # spikes
    keep = np.ones(n, dtype=bool)
    keep[n // 3: n // 3 + 240] = False  # a 24-hour gap
    chunk = 200_000  # written in pieces so that this process stays small (children inherit its peak RSS)
    with open(path, "w") as handle:
        handle.write("time,level\n")
        for lo in range(0, n, chunk):
            sel = keep[lo:lo + chunk]
            text = np.datetime_as_string(stamps[lo:lo + chunk][sel], unit="m", timezone="UTC")
            values = np.char.mod("%.3f", level[lo:lo + chunk][sel])
            handle.write("\n".join(np.char.add(np.char.add(text, ","), values).tolist()))
            handle.write("\n")
    return int(keep.sum())


def run_step(code: str, path: Path) -> dict:
    script = (
        "import resource, time, json\n"
        f"PATH = {str(path)!r}\n"
        "t0 = time.perf_counter()\n"
        f"{code}\n"
        "elapsed = time.perf_counter() - t0\n"
        "print(json.dumps({'seconds': elapsed, "
        "'maxrss_mb': resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024}))\n"
    )
    out = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True, check=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


def main(argv=None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--years", type=float, default=50.0, help="record length [years] (default 50)")
    parser.add_argument("--repeat", type=int, default=1, help="runs per step; the fastest is shown")
    args = parser.parse_args(argv)
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "record.csv"
        t0 = time.perf_counter()
        rows = write_record(path, args.years)
        print(f"wrote {rows:,} rows ({path.stat().st_size / 1e6:.0f} MB) in {time.perf_counter() - t0:.1f} s",
              file=sys.stderr)
        results = {}
        for name, code in STEPS.items():
            runs = [run_step(code, path) for _ in range(max(1, args.repeat))]
            results[name] = min(runs, key=lambda r: r["seconds"])
    base = results["pandas.read_csv"]["seconds"]
    print(f"{args.years:g} years of 6-minute data, {rows:,} rows")
    print(f"{'step':<28} {'seconds':>8} {'x read_csv':>10} {'peak RSS MB':>12}")
    for name, res in results.items():
        print(f"{name:<28} {res['seconds']:>8.2f} {res['seconds'] / base:>10.2f} {res['maxrss_mb']:>12.0f}")


if __name__ == "__main__":
    main()
