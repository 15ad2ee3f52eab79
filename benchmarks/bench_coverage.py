"""Coverage benchmark of the return-level intervals: does 95 % mean 95 %?

    nice python3 benchmarks/bench_coverage.py [--records 100] [--resamples 500] [--truth-years 200000]

Simulates independent 30-year records of a known storm-surge process with storm clustering
(tests/simulated_storms.py: clustering that weakens at extreme levels, plus variants with a bounded tail,
shape -0.1, a heavier tail, shape +0.1, and clustering that never fades), runs every method on each record
and prints, per variant, method and return period (10, 50, 100 and 1000 years, and 2 years), the share of
records whose interval holds the truth, the misses below and above, the mean bias of the level against the
truth, the mean width of the interval and how many upper bounds the data could not limit (unbounded).
The truth is the annual-maximum quantile of a long simulation of the same process (``--truth-years``);
methods whose return period is ``1/rate`` are compared at the period of the same AEP (AEP = 1 - exp(-1/T)).

Methods: the skew-surge joint probability (the recommended method) as it is now (GPD tail by generalized
maximum likelihood with the geophysical shape prior, threshold at the 0.985 quantile, profile likelihood whose
deviance is scaled to the larger of the year-clustered sandwich and the whole-year bootstrap variance); with
plain maximum likelihood at the 0.99 quantile and the deviance scaled to the bootstrap variance only
("profile, MLE"; ``--methods all+variants``), with the bias-corrected bootstrap interval instead
(``--methods all+variants``), and as it was when intervals were first checked (automatic stability threshold,
percentile bootstrap holding the threshold and the extremal index: "previous"); peaks over threshold now
(fixed rate of 1.5 peaks a year, at least 30) and as it was (stability threshold), both with profile
likelihood; annual maxima (GEV, profile likelihood) and r-largest (r = 5, delta method, as in the study). The
hourly joint probability is not covered: the simulated process is defined at high waters only.

``--per-record FILE`` writes each record's levels, bounds and tail shape of the recommended method (JSON), to
look at the misses.
"""
from __future__ import annotations

import argparse
import json
import sys
import time
import warnings
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
from extremes.curves import period_from_aep  # noqa: E402
from extremes.extremal import direct  # noqa: E402
from extremes.joint import skew_surge_joint_probability  # noqa: E402
from tests.simulated_storms import PROCESSES, sample_record, true_levels  # noqa: E402

PERIODS_YEARS = (2.0, 10.0, 50.0, 100.0, 1000.0)
CURVE_PERIODS_YEARS = np.unique(np.concatenate([np.geomspace(1.001, 2000.0, 60),
                                                [1.5, 2, 5, 10, 20, 50, 100, 200, 500, 1000]]))


def _at(curve, periods):
    """Level, lower and upper bound of a curve at the periods (its own period definition)."""
    table = curve.table(periods)
    return table["level_m"].to_numpy(), table["lower_m"].to_numpy(), table["upper_m"].to_numpy()


def run_methods(process, seed, *, resamples, methods="all"):
    """{method: curve} for one simulated record (``methods="joint"``: the skew-surge method, now and before)."""
    hw, skew, total = sample_record(process, seed)
    out = {}
    common = dict(periods_years=CURVE_PERIODS_YEARS, seed=seed, n_bootstrap=resamples)
    now = skew_surge_joint_probability(hw, skew, **common)
    out["skew-surge-joint-probability"] = now.curve
    out["_shape"] = now.tail["all"]["shape"] if "all" in now.tail else float("nan")
    if methods == "all+variants":
        out["skew-surge-joint-probability, profile, MLE"] = skew_surge_joint_probability(
            hw, skew, tail_method="mle", threshold_quantile=0.99, **common).curve
        out["skew-surge-joint-probability, bootstrap interval"] = skew_surge_joint_probability(
            hw, skew, interval="bootstrap", **common).curve
    out["skew-surge-joint-probability, previous"] = skew_surge_joint_probability(
        hw, skew, threshold_quantile=None, resample_clustering=False, bias_correction=False, interval="bootstrap",
        **common).curve
    if methods == "joint":
        return out
    coarse = dict(periods_years=CURVE_PERIODS_YEARS, profile_periods_years=(1.5, 2, 5, 10, 20, 50, 100, 200,
                                                                            500, 1000, 2000))
    out["peaks-over-threshold"] = direct.direct_peaks_over_threshold(total, **coarse).curve
    out["peaks-over-threshold, previous"] = direct.direct_peaks_over_threshold(
        total, threshold_rule="stability", **coarse).curve
    out["annual-maxima"] = direct.direct_annual_maxima(total, **coarse).curve
    out["r-largest"] = direct.direct_r_largest(total, ci="delta", **coarse).curve
    return out


def summarise(truth, rows):
    """Coverage, misses, bias and width of one method (rows: list of (level, lower, upper) per record)."""
    level = np.array([r[0] for r in rows])
    lower = np.array([r[1] for r in rows])
    upper = np.array([r[2] for r in rows])
    unbounded = np.isinf(upper)
    finite_upper = np.where(unbounded, np.nan, upper)
    below = lower > truth            # the whole interval above the truth
    above = truth > upper            # the truth above the upper bound (unsafe side); never for an unbounded one
    valid = np.isfinite(level) & np.isfinite(lower) & ~np.isnan(upper)
    n = valid.sum(axis=0)
    return {
        "n": n,
        "coverage": np.where(n > 0, ((~below & ~above) & valid).sum(axis=0) / np.maximum(n, 1), np.nan),
        "miss_low": (below & valid).sum(axis=0),
        "miss_high": (above & valid).sum(axis=0),
        "bias": np.nanmean(level / truth - 1.0, axis=0),
        "width": np.nanmean(finite_upper - lower, axis=0),
        "median_width": np.nanmedian(finite_upper - lower, axis=0),
        "unbounded": unbounded.sum(axis=0),
    }


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--records", type=int, default=100, help="simulated records per variant")
    parser.add_argument("--resamples", type=int, default=500, help="bootstrap resamples of the joint method")
    parser.add_argument("--truth-years", type=int, default=200_000, help="years simulated for the truth")
    parser.add_argument("--variants", default=",".join(PROCESSES), help="comma-separated variant names")
    parser.add_argument("--first-seed", type=int, default=1000)
    parser.add_argument("--methods", choices=("all", "all+variants", "joint"), default="all",
                        help="every method, plus variants of the joint method, or the joint method (now, before)")
    parser.add_argument("--per-record", type=Path, help="write each record's recommended levels to this JSON file")
    parser.add_argument("--json", type=Path, help="also write the summary as JSON to this file")
    parser.add_argument("--truth-cache", type=Path, help="JSON file of true levels to reuse between runs")
    args = parser.parse_args(argv)
    warnings.simplefilter("ignore")
    periods = np.asarray(PERIODS_YEARS)
    summary, records = {}, []
    t_start = time.perf_counter()
    print(f"# coverage of 95 % intervals: {args.records} records of 30 years per variant, {args.resamples} "
          f"resamples, truth from {args.truth_years:,} simulated years\n")
    for variant in args.variants.split(","):
        process = PROCESSES[variant]
        cache = json.loads(args.truth_cache.read_text()) if args.truth_cache and args.truth_cache.exists() else {}
        key = f"{variant}|{args.truth_years}|{','.join(f'{t:g}' for t in periods)}"
        if key in cache:
            truth = np.asarray(cache[key])
        else:
            truth = true_levels(process, periods, years=args.truth_years)
            if args.truth_cache:
                cache[key] = truth.tolist()
                args.truth_cache.write_text(json.dumps(cache))
        rows = {}
        for r in range(args.records):
            curves = run_methods(process, args.first_seed + r, resamples=args.resamples, methods=args.methods)
            shape = curves.pop("_shape")
            for name, curve in curves.items():
                at = period_from_aep(1.0 / periods, definition="1/rate") if curve.period_definition == "1/rate" \
                    else periods
                rows.setdefault(name, []).append(_at(curve, at))
            level, lower, upper = rows["skew-surge-joint-probability"][-1]
            records.append({"variant": variant, "seed": args.first_seed + r, "shape": shape,
                            "level_m": level.tolist(), "lower_m": lower.tolist(),
                            "upper_m": [None if np.isinf(v) else v for v in upper.tolist()]})
        summary[variant] = {"truth_m": truth.tolist(), "methods": {}}
        print(f"## {variant}: true levels " + ", ".join(f"{t:g} yr {z:.3f} m" for t, z in zip(periods, truth)))
        print("| method | period (years) | coverage | misses below / above | mean bias | mean width (m) | "
              "median width (m) | unbounded |")
        print("|---|---|---|---|---|---|---|---|")
        for name, method_rows in rows.items():
            s = summarise(truth, method_rows)
            summary[variant]["methods"][name] = {k: np.asarray(v).tolist() for k, v in s.items()}
            for j, t in enumerate(periods):
                print(f"| {name} | {t:g} | {s['coverage'][j]:.0%} | {s['miss_low'][j]} / {s['miss_high'][j]} | "
                      f"{s['bias'][j]:+.1%} | {s['width'][j]:.3f} | {s['median_width'][j]:.3f} | {s['unbounded'][j]} |")
        new = summary[variant]["methods"]["skew-surge-joint-probability"]["width"]
        old = summary[variant]["methods"]["skew-surge-joint-probability, previous"]["width"]
        ratio = np.asarray(new) / np.asarray(old)
        print("\nwidth of the recommended method's interval against the previous one: "
              + ", ".join(f"{t:g} yr x{q:.2f}" for t, q in zip(periods, ratio)) + "\n", flush=True)
    print(f"total time {time.perf_counter() - t_start:.0f} s")
    if args.json:
        args.json.write_text(json.dumps(summary, indent=1))
    if args.per_record:
        args.per_record.write_text(json.dumps({"periods_years": list(PERIODS_YEARS), "records": records}, indent=0))


if __name__ == "__main__":
    main()
