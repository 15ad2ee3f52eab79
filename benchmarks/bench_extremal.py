"""Speed of the extreme-value fits (extremes.extremal) against scipy.stats and pyextremes.

Goals (issue 4): a 1000-sample bootstrap of a 40-value GEV fit < 0.3 s; profile-likelihood intervals for ten
return periods < 0.5 s; the whole ``extremes fit FILE --ci bootstrap --bootstrap 1000`` process at least 10x
faster than pyextremes' ``EVA.get_summary(n_samples=1000)`` on the same series.

Run:  python benchmarks/bench_extremal.py   (prints a table; wall-clock and CPU seconds, best of a few runs)
"""
from __future__ import annotations

import resource
import subprocess
import sys
import time
import warnings
from pathlib import Path

import numpy as np
import pandas as pd
from scipy import stats

ROOT = Path(__file__).resolve().parents[1]
DATA = ROOT / "tests" / "data"


def best_of(func, repeat=5):
    walls, cpus = [], []
    for _ in range(repeat):
        w0, c0 = time.perf_counter(), time.process_time()
        func()
        walls.append(time.perf_counter() - w0)
        cpus.append(time.process_time() - c0)
    return min(walls), min(cpus)


def _children_cpu():
    r = resource.getrusage(resource.RUSAGE_CHILDREN)
    return r.ru_utime + r.ru_stime


def main():
    from extremes.extremal import bootstrap_parameters, fit_gev, gev_return_level, return_levels

    rows = []
    rng = np.random.default_rng(1)
    x40 = stats.genextreme.rvs(-0.1, loc=2.0, scale=0.2, size=40, random_state=rng)
    fit40 = fit_gev(x40)

    def boot():
        P = bootstrap_parameters(fit40, n_bootstrap=1000, seed=2)
        return gev_return_level(np.array([10, 100])[None, :], loc=P[:, :1], scale=P[:, 1:2], shape=P[:, 2:3])

    w, c = best_of(boot)
    rows.append(("bootstrap 1000 x GEV fit, n=40 (extremes)", w, c, "< 0.3 s"))

    sims = stats.genextreme.rvs(-0.1, loc=2.0, scale=0.2, size=(50, 40), random_state=rng)

    def scipy_fits():
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            for s in sims:
                stats.genextreme.fit(s)

    w_s, c_s = best_of(scipy_fits, repeat=2)
    rows.append(("  scipy genextreme.fit x 1000 (from 50)", w_s * 20, c_s * 20, f"ratio {w_s * 20 / w:.0f}x"))

    pp = pd.read_csv(DATA / "portpirie.csv")["annual_max_m"].to_numpy()
    fit_pp = fit_gev(pp)
    periods = [2, 5, 10, 20, 50, 100, 200, 500, 1000, 10000]
    w, c = best_of(lambda: return_levels(fit_pp, periods, ci="profile"))
    rows.append(("profile 95% intervals, 10 periods, n=65", w, c, "< 0.5 s"))

    # whole process: our command line against pyextremes on the same series (Port Pirie annual maxima)
    cmd = [sys.executable, "-m", "extremes", "fit", str(DATA / "portpirie.csv"), "--ci", "bootstrap",
           "--bootstrap", "1000", "--seed", "1", "--periods", "2,5,10,20,50,100,200,500,1000", "--json"]
    walls, cpus = [], []
    for _ in range(3):
        w0, c0 = time.perf_counter(), _children_cpu()
        subprocess.run(cmd, check=True, capture_output=True)
        walls.append(time.perf_counter() - w0)
        cpus.append(_children_cpu() - c0)
    w_cli, c_cli = min(walls), min(cpus)
    rows.append(("`extremes fit --ci bootstrap --bootstrap 1000` process", w_cli, c_cli, ""))

    script = (
        "import time, warnings, pandas as pd\n"
        "warnings.simplefilter('ignore')\n"
        "t0 = time.perf_counter()\n"
        "from pyextremes import EVA\n"
        f"d = pd.read_csv({str(DATA / 'portpirie.csv')!r})\n"
        "s = pd.Series(d['annual_max_m'].to_numpy(), index=pd.to_datetime(d['year'].astype(str) + '-07-01'))\n"
        "eva = EVA(s)\n"
        "eva.get_extremes(method='BM', block_size='365.2425D')\n"
        "eva.fit_model(model='MLE', distribution='genextreme')  # the same model as ours\n"
        "eva.get_summary(return_period=[2, 5, 10, 20, 50, 100, 200, 500, 1000], alpha=0.95, n_samples=1000)\n"
        "print(time.perf_counter() - t0)\n"
    )
    w0, c0 = time.perf_counter(), _children_cpu()
    out = subprocess.run([sys.executable, "-c", script], check=True, capture_output=True, text=True)
    w_pyx, c_pyx = time.perf_counter() - w0, _children_cpu() - c0
    inside = float(out.stdout.strip().splitlines()[-1])
    rows.append(("pyextremes EVA.get_summary(n_samples=1000) process", w_pyx, c_pyx,
                 f"ratio wall {w_pyx / w_cli:.1f}x, cpu {c_pyx / c_cli:.1f}x (goal >= 10x)"))
    rows.append(("  pyextremes, inside the process (import..summary)", inside, float("nan"), ""))

    print(f"{'benchmark':58s} {'wall [s]':>9s} {'cpu [s]':>9s}  note")
    for name, wall, cpu, note in rows:
        print(f"{name:58s} {wall:9.3f} {cpu:9.3f}  {note}")


if __name__ == "__main__":
    main()
