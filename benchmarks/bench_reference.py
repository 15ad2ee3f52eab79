"""A 2-year site beside a 30-year reference gauge: time of the whole study, and accuracy against truth.

Usage::

    python benchmarks/bench_reference.py [--resamples N] [--seeds N] [--truth-years N]

Timing: a simulated pair of gauges (:mod:`extremes.transfer.simulate`; mixed tide at the site, semidiurnal at
the reference, site surge 0.8 x the reference's two hours earlier plus local noise) is written as two CSV
files; ``extremes run SITE --reference RECORD`` is then timed as a user runs it (read both files, the whole
study, results folder without figures), stage by stage. Goal: under 30 s on 2 cores.

Accuracy (``--seeds N``, N > 0): for N independent simulated pairs, the transferred 10- and 100-year levels
against the site's truth (:func:`extremes.transfer.simulate.true_site_levels`, a Monte Carlo of
``--truth-years`` years of the same storms), the count of truths inside the 95 % interval, and for the
unrelated pair of each seed, whether the transfer is refused. Outside reference: the simulated process.
"""
from __future__ import annotations

import argparse
import os
import tempfile
import time
import warnings
from pathlib import Path

import numpy as np


def _write_csv(series, path):
    frame = series.round(4).rename("level").rename_axis("time").reset_index()
    frame["time"] = frame["time"].dt.strftime("%Y-%m-%dT%H:%MZ")
    frame.to_csv(path, index=False)


def timing(resamples: int) -> None:
    from extremes.results import write_study
    from extremes.study import run_study
    from extremes.study_options import StudyOptions
    from extremes.transfer.simulate import simulate_gauge_pair

    pair = simulate_gauge_pair(reference_years=30.0, site_years=2.0, seed=1)
    with tempfile.TemporaryDirectory() as folder:
        site, ref = Path(folder) / "site.csv", Path(folder) / "reference.csv"
        _write_csv(pair.site_m, site)
        _write_csv(pair.reference_m, ref)
        start, cpu = time.perf_counter(), time.process_time()
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            result = run_study(site, options=StudyOptions(resamples=resamples), reference=ref)
        t0 = time.perf_counter()
        write_study(result, Path(folder) / "study", figures=False)
        stages = dict(result.timings_s)
        stages["write (tables, no figures)"] = time.perf_counter() - t0
        total, cpu = time.perf_counter() - start, time.process_time() - cpu
    print(f"2-year site + 30-year reference, {resamples} resamples; recommended: {result.recommended_method}")
    print(f"{'stage':34s} {'seconds':>8s}")
    for name, seconds in sorted(stages.items(), key=lambda kv: -kv[1]):
        print(f"{name:34s} {seconds:8.2f}")
    print(f"{'total (wall)':34s} {total:8.2f}   (goal < 30 s on 2 cores)")
    print(f"{'total (CPU, all threads)':34s} {cpu:8.2f}   (load average {os.getloadavg()[0]:.1f} at the end)")


def accuracy(seeds: int, resamples: int, truth_years: int) -> None:
    from extremes.study import run_study_record
    from extremes.study_options import StudyOptions
    from extremes.transfer import METHOD, prepare_reference, record_from_series
    from extremes.transfer.simulate import simulate_gauge_pair, true_site_levels

    periods = [10.0, 100.0]
    inside, close, refused = 0, 0, 0
    print(f"{'seed':>4s} {'T':>5s} {'truth':>7s} {'level':>7s} {'lower':>7s} {'upper':>7s}  unrelated")
    for seed in range(seeds):
        pair = simulate_gauge_pair(reference_years=30.0, site_years=2.0, seed=100 + seed)
        other = simulate_gauge_pair(reference_years=30.0, site_years=2.0, seed=100 + seed, related=False)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            reference = prepare_reference(pair.reference_m)
            options = StudyOptions(resamples=resamples, seed=seed)
            result = run_study_record(record_from_series(pair.site_m, source="site"), options=options,
                                      reference=reference)
            unrelated = run_study_record(record_from_series(other.site_m, source="site"), options=options,
                                         reference=reference)
        truth = true_site_levels(pair, periods, epoch=result.tide.epoch_time, years=truth_years)
        table = result.curves[METHOD].table(periods)
        no = not unrelated.method_details[METHOD].supported and unrelated.recommended_method != METHOD
        refused += no
        for (_, row), t in zip(table.iterrows(), truth):
            print(f"{seed:4d} {row.return_period_years:5g} {t:7.3f} {row.level_m:7.3f} {row.lower_m:7.3f} "
                  f"{row.upper_m:7.3f}  {'refused' if no else 'NOT refused'}")
        r100 = table.iloc[1]
        inside += bool(r100.lower_m <= truth[1] <= r100.upper_m)
        close += bool(abs(r100.level_m - truth[1]) < 0.3)
    print(f"100-year level within 0.3 m of truth: {close}/{seeds}; truth inside the 95 % interval: "
          f"{inside}/{seeds}; unrelated site refused: {refused}/{seeds}")


def main(argv=None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--resamples", type=int, default=500, help="study resamples (the transfer uses <= 250)")
    parser.add_argument("--seeds", type=int, default=0, help="simulated pairs for the accuracy check (0: none)")
    parser.add_argument("--truth-years", type=int, default=20_000)
    args = parser.parse_args(argv)
    timing(args.resamples)
    if args.seeds:
        accuracy(args.seeds, args.resamples, args.truth_years)


if __name__ == "__main__":
    np.seterr(all="ignore")
    main()
