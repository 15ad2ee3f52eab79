"""Benchmark: bias of the recommended 100-year level on semidiurnal, mixed and diurnal tides.

    nice python benchmarks/bench_tide_types.py [--seeds 30] [--truth-years 20000] [--years 30]

The simulated process of tests/tide_types_sim.py (storms defined in time, so a storm covers about twice as
many high waters of a semidiurnal tide as of a diurnal one; clustered exceedances) is sampled as ``--years``
records of skew surges with their predicted high waters. Each record goes through what the study does with
skew surges: the tail-focused interaction test decides whether the tide-band stratified convolution is
needed, then the skew-surge joint probability method (the method the recommendation rule picks for records of
10 years and more) gives the level of AEP 1 %, read on its 1/rate curve at T = -1/ln(0.99) = 99.5 years
(METHODS sec. 9). Truth: the empirical 1 % quantile of the annual maxima of ``--truth-years`` simulated years
of the same process (its tide running through the same 18.61-year high-water set).

Printed: one Markdown table row per tide type and process variant: truth, mean estimate, mean bias with its
standard error over seeds, median bias, the share of records the interaction test flagged, and the bias under
the former fixed 12.42-h clustering step (where it runs at all).
"""
from __future__ import annotations

import argparse
import sys
import time
import warnings
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
from extremes.curves import period_from_aep  # noqa: E402
from extremes.errors import ExtremesError  # noqa: E402
from extremes.joint import skew_surge_joint_probability  # noqa: E402
from extremes.joint.clustering import cycle_positions  # noqa: E402
from extremes.tail_dependence import tail_dependence_test  # noqa: E402
from tests import tide_types_sim as sim  # noqa: E402

AEP = 0.01
VARIANTS = {
    "storms hold their peak a day": {},
    "peaked storms (sensitivity)": {"plateau_hours": 0.0, "decay_hours": 15.0},
}


def estimate(kind, seed, years, storm, *, former=False):
    """Recommended level of AEP 1 % from one simulated record, and whether the interaction test flagged it."""
    rec = sim.record(kind, years, seed, **storm)
    flagged = tail_dependence_test(rec).dependent
    options = dict(n_bootstrap=0, seed=seed, stratify="tide-band" if flagged else None)
    if former:
        options["skew_surge_positions"] = cycle_positions(rec["time"], step_hours=12.4206)
    res = skew_surge_joint_probability(sim.nodal_set(kind), rec, **options)
    return float(res.curve.level_at(period_from_aep([AEP], definition="1/rate"))[0]), flagged


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--seeds", type=int, default=30)
    parser.add_argument("--years", type=float, default=30.0)
    parser.add_argument("--truth-years", type=int, default=20_000)
    args = parser.parse_args()
    warnings.simplefilter("ignore")
    print(f"{args.seeds} records of {args.years:g} years per row; truth from {args.truth_years} simulated years\n")
    print("| process | tide | true 100-yr level (AEP 1 %) | mean estimate | mean bias (± s.e.) | median bias "
          "| flagged tide-dependent | bias, fixed 12.42-h step |")
    print("|---|---|---|---|---|---|---|---|")
    for variant, storm in VARIANTS.items():
        for kind in ("semidiurnal", "mixed", "diurnal"):
            t0 = time.perf_counter()
            truth = float(np.quantile(sim.true_annual_maxima(kind, args.truth_years, 12345, **storm), 1 - AEP))
            levels, flags, former = [], [], []
            for seed in range(args.seeds):
                level, flagged = estimate(kind, seed, args.years, storm)
                levels.append(level)
                flags.append(flagged)
                try:
                    former.append(estimate(kind, seed, args.years, storm, former=True)[0])
                except ExtremesError:
                    former.append(np.nan)
            bias = np.asarray(levels) / truth - 1.0
            former_bias = np.asarray(former) / truth - 1.0
            former_text = (f"{100 * np.mean(former_bias):+.1f} %" if np.all(np.isfinite(former_bias))
                           else f"fails on {int(np.sum(~np.isfinite(former_bias)))} of {args.seeds}")
            print(f"| {variant} | {kind} | {truth:.3f} m | {np.mean(levels):.3f} m | "
                  f"{100 * bias.mean():+.1f} % ± {100 * bias.std(ddof=1) / np.sqrt(bias.size):.1f} | "
                  f"{100 * np.median(bias):+.1f} % | {np.mean(flags):.0%} | {former_text} |", flush=True)
            print(f"<!-- {kind}, {variant}: {time.perf_counter() - t0:.0f} s -->", file=sys.stderr)


if __name__ == "__main__":
    main()
