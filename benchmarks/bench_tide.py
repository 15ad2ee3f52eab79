"""Benchmark of the harmonic analysis and tidal datums (extremes.tide).

Goals (issue 3): 30 years hourly with 60+ constituents analysed in < 5 s on 2 cores; 50 years of 6-minute
data (4.4 M samples) in < 30 s with peak memory < 2 GB; tidal datums over 18.61 years at 10-minute steps in a
few seconds. Each case runs in a fresh Python process so that its peak resident memory is its own.

Usage:  python benchmarks/bench_tide.py [--quick]
"""
from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys

CASE = r"""
import json, resource, time, warnings
import numpy as np, pandas as pd
from extremes.tide.harmonic import analyse_tide, predict_tide
from extremes.tide.datums import tidal_datums
years, minutes, what = {years}, {minutes}, {what!r}
n = int(round(years * 365.2425 * 24 * 60 / minutes))
t = pd.date_range("1970-01-01", periods=n, freq=f"{{minutes}}min", tz="UTC")
names = ["M2", "S2", "N2", "K1", "O1", "K2", "P1", "M4", "Sa"]
y = predict_tide(t, names, [1.1, 0.38, 0.22, 0.12, 0.09, 0.1, 0.04, 0.04, 0.06], [95, 135, 75, 205, 190, 131, 200, 300, 100], z0_m=2.5)
y += np.random.default_rng(1).normal(0, 0.05, n)
y[np.random.default_rng(2).random(n) < 0.05] = np.nan
series = pd.Series(y, index=t)
del y
base = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
start, cpu = time.perf_counter(), time.process_time()
model = analyse_tide(series)
elapsed, cpu = time.perf_counter() - start, time.process_time() - cpu
out = {{"samples": int(series.notna().sum()), "constituents": len(model.constituents), "analysis_s": elapsed, "cpu_s": cpu,
        "m2_error_mm": 1000 * abs(model.get("M2").amplitude_m - 1.1)}}
if what == "datums":
    start = time.perf_counter()
    tidal_datums(model)
    out["datums_s"] = time.perf_counter() - start
out["peak_rss_mb"] = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
out["input_rss_mb"] = base / 1024
print(json.dumps(out))
"""


def run(years: float, minutes: float, what: str = "analysis") -> dict:
    code = CASE.format(years=years, minutes=minutes, what=what)
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    return json.loads(proc.stdout.strip().splitlines()[-1])


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="Skip the 50-year 6-minute case.")
    args = parser.parse_args()
    print(f"load average before: {os.getloadavg()[0]:.1f} on {os.cpu_count()} CPUs (wall times grow with load)")
    print(f"{'case':<40}{'samples':>10}{'const.':>8}{'analysis s':>12}{'cpu s':>8}{'datums s':>10}{'peak MB':>9}"
          f"{'M2 err mm':>10}")
    cases = [(f"{y:g} yr hourly", y, 60.0, "analysis") for y in (1, 2, 5, 10, 20)]
    cases.append(("30 yr hourly (+ datums 18.61 yr/10 min)", 30, 60.0, "datums"))
    if not args.quick:
        cases.append(("50 yr 6-minute", 50, 6.0, "analysis"))
    for label, years, minutes, what in cases:
        r = run(years, minutes, what)
        datums = f"{r['datums_s']:.2f}" if "datums_s" in r else "-"
        print(f"{label:<40}{r['samples']:>10}{r['constituents']:>8}{r['analysis_s']:>12.2f}{r['cpu_s']:>8.2f}{datums:>10}"
              f"{r['peak_rss_mb']:>9.0f}{r['m2_error_mm']:>10.3f}")


if __name__ == "__main__":
    main()
