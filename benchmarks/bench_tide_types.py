"""Benchmark: bias of the recommended 100-year level on semidiurnal, mixed and diurnal tides.

    nice python benchmarks/bench_tide_types.py [--seeds 200] [--truth-years 20000] [--years 30]

The simulated process of tests/tide_types_sim.py (storms defined in time, so a storm covers about twice as
many high waters of a semidiurnal tide as of a diurnal one; clustered exceedances) is sampled as ``--years``
records of skew surges with their predicted high waters. Each record goes through what the study does with
skew surges: the tail-focused interaction test decides whether the tide-band stratified convolution is
needed, then the skew-surge joint probability method (the method the recommendation rule picks for records of
10 years and more) gives the level of AEP 1 %, read on its 1/rate curve at T = -1/ln(0.99) = 99.5 years
(METHODS sec. 9). Truth: the empirical 1 % quantile of the annual maxima of ``--truth-years`` simulated years
of the same process (its tide running through the same 18.61-year high-water set).

Printed: one Markdown table row per tide type and process variant: truth, mean estimate, mean bias with its
standard error over seeds, median bias, the share of records the interaction test flagged, the bias had the
unstratified method been used throughout, and what the former fixed 12.42-h clustering step gives on the first
records (it cannot run on a diurnal tide: its blocks are half empty).
"""
from __future__ import annotations

import argparse
import sys
import time
import warnings
from pathlib import Path
from types import SimpleNamespace

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
from extremes.curves import period_from_aep  # noqa: E402
from extremes.errors import ExtremesError  # noqa: E402
from extremes.joint import skew_surge_joint_probability, skew_surge_method_for  # noqa: E402
from extremes.joint.clustering import cycle_positions  # noqa: E402
from extremes.tail_dependence import tail_dependence_test  # noqa: E402
from tests import tide_types_sim as sim  # noqa: E402

AEP = 0.01
#: (label, process options, fit options): the default study and two sensitivities
VARIANTS = [
    ("storms hold their peak a day; default threshold", {}, {}),
    ("same; GPD tail by plain maximum likelihood at the 0.99 quantile (the previous default)", {},
     {"threshold_quantile": 0.99, "tail_method": "mle"}),
    ("peaked storms (exp. decay 15 h); default threshold", {"plateau_hours": 0.0, "decay_hours": 15.0}, {}),
    ("storm peaks damped at high tide, x(1 - 1.5 (tide - mean)); default threshold", {"damping_per_m": 1.5}, {}),
]
#: records per row on which the former fixed 12.42-h clustering step is also run
FORMER_SEEDS = 5


def estimate(kind, seed, years, storm, fit, *, former=False):
    """Recommended level of AEP 1 % from one simulated record (as the study chooses the method), whether the
    interaction test flagged it, and the level of the unstratified method."""
    rec = sim.record(kind, years, seed, **storm)
    tested = SimpleNamespace(level_dependent=tail_dependence_test(rec).dependent)
    options = dict(n_bootstrap=0, seed=seed, **fit)
    if former:
        options["skew_surge_positions"] = cycle_positions(rec["time"], step_hours=12.4206)
    period = period_from_aep([AEP], definition="1/rate")
    hw = sim.nodal_set(kind)
    res, stratified = skew_surge_method_for(hw, rec, interaction=tested, **options)
    level = float(res.curve.level_at(period)[0])
    if not stratified:
        return level, tested.level_dependent, level
    plain = skew_surge_joint_probability(hw, rec, **options).curve.level_at(period)[0]
    return level, tested.level_dependent, float(plain)


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--seeds", type=int, default=200)
    parser.add_argument("--years", type=float, default=30.0)
    parser.add_argument("--truth-years", type=int, default=20_000)
    parser.add_argument("--rows", default=",".join(str(i) for i in range(len(VARIANTS))),
                        help="comma-separated indices of the process variants to run (0: the default study)")
    args = parser.parse_args()
    warnings.simplefilter("ignore")
    print(f"{args.seeds} records of {args.years:g} years per row; truth from {args.truth_years} simulated years\n")
    print("| process | tide | true 100-yr level (AEP 1 %) | mean estimate | mean bias (± s.e.) | median bias "
          "| flagged tide-dependent | bias if never stratified | fixed 12.42-h step (former rule) |")
    print("|---|---|---|---|---|---|---|---|---|")
    for variant, storm, fit in [VARIANTS[int(i)] for i in args.rows.split(",")]:
        for kind in ("semidiurnal", "mixed", "diurnal"):
            t0 = time.perf_counter()
            truth = float(np.quantile(sim.true_annual_maxima(kind, args.truth_years, 12345, **storm), 1 - AEP))
            levels, flags, plain, former = [], [], [], []
            for seed in range(args.seeds):
                level, flagged, unstratified = estimate(kind, seed, args.years, storm, fit)
                levels.append(level)
                flags.append(flagged)
                plain.append(unstratified)
                if seed < FORMER_SEEDS:
                    try:
                        former.append(estimate(kind, seed, args.years, storm, fit, former=True)[2])
                    except ExtremesError:
                        former.append(np.nan)
            bias = np.asarray(levels) / truth - 1.0
            plain_bias = np.asarray(plain) / truth - 1.0
            # the former rule against the new one on the same records
            former_change = np.asarray(former) - np.asarray(plain[:FORMER_SEEDS])
            former_text = (f"same levels (max change {np.max(np.abs(former_change)):.3f} m)"
                           if np.all(np.isfinite(former_change)) else
                           f"fails on {int(np.sum(~np.isfinite(former_change)))} of {former_change.size}")
            print(f"| {variant} | {kind} | {truth:.3f} m | {np.mean(levels):.3f} m | "
                  f"{100 * bias.mean():+.1f} % ± {100 * bias.std(ddof=1) / np.sqrt(bias.size):.1f} | "
                  f"{100 * np.median(bias):+.1f} % | {np.mean(flags):.0%} | {100 * plain_bias.mean():+.1f} % | "
                  f"{former_text} |", flush=True)
            print(f"<!-- {kind}, {variant}: {time.perf_counter() - t0:.0f} s -->", file=sys.stderr)


if __name__ == "__main__":
    main()
