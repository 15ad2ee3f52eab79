"""Time the whole study (``extremes run``) on the example record, stage by stage.

Usage::

    python benchmarks/bench_study.py [--record PATH] [--resamples N] [--no-figures]

Prints each stage's seconds and share of the total, so that the slowest stage is known. The goal for 30
years of hourly data, report included, is under 20 s on 2 cores.
"""
from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path


def main(argv=None) -> None:
    from extremes.examples import example_record_path
    from extremes.results import write_study
    from extremes.study import run_study
    from extremes.study_options import StudyOptions

    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--record", type=Path, default=None, help="record to study (default: the demo record)")
    parser.add_argument("--resamples", type=int, default=StudyOptions().resamples)
    parser.add_argument("--no-figures", action="store_true")
    args = parser.parse_args(argv)
    record = args.record or example_record_path()
    reader = {} if args.record else {"missing": [-99.0], "datum": "Orrindale Gauge Zero (invented)"}

    start = time.perf_counter()
    result = run_study(record, reader=reader, options=StudyOptions(resamples=args.resamples))
    study_s = time.perf_counter() - start
    with tempfile.TemporaryDirectory() as folder:
        t0 = time.perf_counter()
        write_study(result, Path(folder) / "study", figures=not args.no_figures)
        write_s = time.perf_counter() - t0
    stages = dict(result.timings_s)
    stages["write (tables, figures, report)"] = write_s
    total = sum(stages.values())
    print(f"record: {record.name}, {result.record_years:.1f} years, {len(result.curves)} methods, "
          f"{args.resamples} resamples")
    print(f"{'stage':34s} {'seconds':>8s} {'share':>7s}")
    for name, seconds in sorted(stages.items(), key=lambda kv: -kv[1]):
        print(f"{name:34s} {seconds:8.2f} {100 * seconds / total:6.1f}%")
    print(f"{'total':34s} {total:8.2f}   (run_study {study_s:.2f} s; goal < 20 s for 30 years hourly)")


if __name__ == "__main__":
    main()
