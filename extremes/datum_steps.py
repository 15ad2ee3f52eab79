r"""Candidate steps in the level datum, told apart from the year-to-year change of mean sea level.

Monthly mean sea level carries interannual variability with red noise (a warm year, a windy winter), so a
plain step test on monthly means finds "steps" in every long record. :func:`datum_shift_candidates` models
the noise and calibrates its threshold by simulation, in the manner of the penalised maximal t test with
autocorrelated errors (Wang 2008) [1]_:

1. monthly means, each sample weighted by the time it represents (its era's interval), of the months at
   least ``min_month_completeness`` covered;
2. the seasonal cycle: on records of four years or more the median of each calendar month about a
   Theil-Sen line [2]_, removed first; on records of two to four years a value per calendar month fitted
   together with the line and each candidate step (removing it first would confound it with a step);
3. the noise of the record around a line: an interannual AR(1) (one value a year, linear between
   mid-years) plus a month-to-month AR(1), their variances and lag-one correlations estimated from the annual
   means and the within-year deviations (lag-one correlations corrected for their small-sample bias);
4. for every split month :math:`k` (at least ``min_segment_months`` from either end), the step
   :math:`\hat\delta_k` of a generalised-least-squares fit of a line plus a step at :math:`k` under that
   noise covariance, and :math:`T_k = |\hat\delta_k| / \mathrm{se}(\hat\delta_k)`: whitening makes a
   smooth swing of several years weigh little and a sharp step much, which is what tells a resurvey from the
   ocean;
5. the critical value of :math:`\max_k T_k` is the ``1 - alpha`` quantile over ``n_simulations`` series of
   the same noise and gaps (seeded), so the test holds its false-alarm rate whatever the record's length
   and redness;
6. binary segmentation [3]_: a significant split is a candidate and each side is searched again;
7. the step's time is refined to the day from daily means within 45 days of the monthly split, and the sizes
   are re-estimated together (line plus one step per candidate).

On simulated records of 30 years with interannual swings of 3 cm (lag-one 0.6 between years) and weather
noise, at the default ``alpha`` of 0.01, no step was reported in 20 records without one (seeds 100-119), and
steps of 0.12 m were found in 16 of 20 and of 0.2 m in all; steps near an end of the record are the least
certain (of seeds 1-10, two report a 6-9 cm step within 15 months of an end) (``tests/test_datum_steps.py`` checks a few). A resurvey moves the datum but not the tidal range;
a gauge moved to another place may change both (common practice): the candidates are what to check against
the gauge's levelling records, and are not corrected unless the user says so (``--corrections``).

References
----------
.. [1] X. L. Wang, "Accounting for autocorrelation in detecting mean shifts in climate data series using
   the penalized maximal t or F test," J. Appl. Meteor. Climatol., vol. 47, pp. 2423-2444, 2008. [from memory]
.. [2] P. K. Sen, "Estimates of the regression coefficient based on Kendall's tau," J. Amer. Statist.
   Assoc., vol. 63, pp. 1379-1389, 1968, doi:10.1080/01621459.1968.10480934.
.. [3] P. Fryzlewicz, "Wild binary segmentation for multiple change-point detection," Ann. Statist.,
   vol. 42, no. 6, pp. 2243-2281, 2014, doi:10.1214/14-AOS1245 (binary segmentation, the plain variant).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import pandas as pd

from extremes import sampling
from extremes.constants import DAYS_PER_YEAR

__all__ = ["datum_shift_candidates", "monthly_means"]

#: seed of the null simulations (fixed, so a record always gives the same candidates)
SIMULATION_SEED = 20080601


def empty_shifts() -> pd.DataFrame:
    """An empty table of datum-step candidates."""
    return pd.DataFrame({"time": pd.DatetimeIndex([], tz="UTC"), "size_m": np.array([], dtype=float),
                         "statistic": np.array([], dtype=float), "critical": np.array([], dtype=float)})


def monthly_means(level_m: pd.Series, *, eras: pd.DataFrame | None = None) -> pd.DataFrame:
    """Time-weighted monthly means and coverage of a level series.

    Returns
    -------
    pandas.DataFrame
        Indexed by month start (UTC): ``mean_m`` [m] and ``coverage`` (share of the month represented).
    """
    weights = sampling.sample_intervals_ns(level_m.index, eras).astype(float)
    values = level_m.to_numpy(dtype=float)
    finite = np.isfinite(values)
    # calendar month of each sample as an integer (numpy months, no per-sample pandas objects)
    month = level_m.index.tz_convert("UTC").tz_localize(None).to_numpy().astype("datetime64[M]").astype(np.int64)
    first, last = int(month.min()), int(month.max())
    w = np.bincount(month - first, weights=np.where(finite, weights, 0.0), minlength=last - first + 1)
    wy = np.bincount(month - first, weights=np.where(finite, weights * np.where(finite, values, 0.0), 0.0),
                     minlength=last - first + 1)
    starts = pd.DatetimeIndex(np.arange(first, last + 2).astype("datetime64[M]").astype("datetime64[ns]"))
    length = np.diff(starts.asi8).astype(float)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = wy / w
    return pd.DataFrame({"mean_m": mean, "coverage": np.minimum(1.0, w / length)},
                        index=starts[:-1].tz_localize("UTC"))


def _lag1(values: np.ndarray, consecutive: np.ndarray) -> float:
    r"""Lag-one autocorrelation from the pairs (i-1, i) flagged ``consecutive`` [i], corrected for its
    small-sample bias, :math:`\hat\phi + (1 + 4\hat\phi)/n` (Marriott and Pope 1954, from memory), and clipped to
    [0, 0.9]."""
    v = values - values.mean()
    den = float(np.dot(v, v))
    if den <= 0 or not consecutive[1:].any():
        return 0.0
    pairs = np.flatnonzero(consecutive[1:]) + 1
    phi = float(np.dot(v[pairs], v[pairs - 1])) * (len(v) / max(len(pairs), 1)) / den
    phi += (1.0 + 4.0 * phi) / len(v)
    return min(max(phi, 0.0), 0.9)


def _step_statistics(y: np.ndarray, t: np.ndarray, min_segment: int, chol: np.ndarray | None = None,
                     season: np.ndarray | None = None):
    r"""For every split k: the step of a line-plus-step fit and :math:`T_k = |\delta_k| / \mathrm{se}_k`.

    With ``chol`` (the lower Cholesky factor of the noise covariance) the fit is generalised least squares:
    the series and the design are whitened first, so smooth interannual swings weigh little and a sharp
    step much. ``y`` may hold one series per column (the null simulations).
    """
    from scipy.linalg import solve_triangular

    m = t.size
    base = np.column_stack([np.ones(m), t - t.mean()] + ([] if season is None else [season]))
    splits = np.arange(min_segment, m - min_segment + 1)
    steps = (np.arange(m)[:, None] >= splits[None, :]).astype(float)
    y2 = y if y.ndim == 2 else y[:, None]
    if chol is not None:
        base = solve_triangular(chol, base, lower=True)
        steps = solve_triangular(chol, steps, lower=True)
        y2 = solve_triangular(chol, y2, lower=True)
    q, _ = np.linalg.qr(base)
    steps_res = steps - q @ (q.T @ steps)            # steps with the line projected out (Frisch-Waugh)
    norm = np.einsum("ij,ij->j", steps_res, steps_res)
    y_res = y2 - q @ (q.T @ y2)
    delta = (steps_res.T @ y_res) / norm[:, None]    # splits x series
    sigma = np.sqrt(np.einsum("ij,ij->j", y_res, y_res) / max(m - base.shape[1] - 1, 1))
    stat = np.abs(delta) * np.sqrt(norm)[:, None] / np.where(sigma > 0, sigma, np.inf)[None, :]
    return splits, delta, stat


@dataclass(frozen=True)
class _Noise:
    """Two-scale red noise of monthly mean sea level: an interannual AR(1) (one value a year, varying
    linearly between mid-years) plus a month-to-month AR(1)."""

    sigma_month: float
    phi_month: float
    sigma_year: float
    phi_year: float

    @staticmethod
    def fit(residual: np.ndarray, month_number: np.ndarray) -> _Noise:
        year = month_number // 12
        years, inverse, counts = np.unique(year, return_inverse=True, return_counts=True)
        annual = np.bincount(inverse, weights=residual) / counts
        within = residual - annual[inverse]
        consecutive = np.concatenate([[False], (np.diff(month_number) == 1) & (np.diff(year) == 0)])
        phi_m = _lag1(within, consecutive)
        sigma_m = float(np.std(within)) * math.sqrt(12.0 / 11.0)
        full = counts >= 6
        sigma_y, phi_y = 0.0, 0.0
        if full.sum() >= 4:
            inflation = (1.0 + phi_m) / (1.0 - phi_m)
            var_y = float(np.var(annual[full])) - sigma_m**2 * inflation / 12.0
            sigma_y = math.sqrt(max(var_y, 0.0))
            phi_y = _lag1(annual[full], np.concatenate([[False], np.diff(years[full]) == 1]))
        return _Noise(sigma_m, phi_m, sigma_y, phi_y)

    def covariance(self, month_number: np.ndarray) -> np.ndarray:
        """Covariance of the noise at the months ``month_number`` (integers, months since year 0) [m^2]."""
        lag = np.abs(month_number[:, None] - month_number[None, :])
        cov = self.sigma_month**2 * self.phi_month ** lag
        if self.sigma_year > 0:
            first = int(month_number.min())
            y0 = first // 12
            n_years = (int(month_number.max())) // 12 - y0 + 2
            centres = np.arange(-1, n_years) * 12.0 + 5.5
            at = (month_number - y0 * 12).astype(float)
            lo = np.clip(np.searchsorted(centres, at) - 1, 0, centres.size - 2)
            w = (at - centres[lo]) / 12.0
            weights = np.zeros((month_number.size, centres.size))
            rows = np.arange(month_number.size)
            weights[rows, lo] = 1.0 - w
            weights[rows, lo + 1] = w
            years = np.arange(centres.size)
            annual = self.sigma_year**2 * self.phi_year ** np.abs(years[:, None] - years[None, :])
            cov = cov + weights @ annual @ weights.T
        return cov

    def simulate(self, month_number: np.ndarray, n_sim: int, rng: np.random.Generator) -> np.ndarray:
        first = int(month_number.min())
        n_months = int(month_number.max()) - first + 1
        x = _ar1_paths(n_months, n_sim, self.phi_month, rng) * self.sigma_month
        if self.sigma_year > 0:
            y0 = first // 12
            n_years = (first + n_months - 1) // 12 - y0 + 2
            annual = _ar1_paths(n_years + 1, n_sim, self.phi_year, rng) * self.sigma_year
            centres = np.arange(-1, n_years) * 12.0 + 5.5
            at = np.arange(n_months) + (first - y0 * 12)
            lo = np.clip(np.searchsorted(centres, at) - 1, 0, centres.size - 2)
            w = ((at - centres[lo]) / 12.0)[:, None]
            x += annual[lo] * (1.0 - w) + annual[lo + 1] * w
        return x[month_number - first]


def _ar1_paths(n: int, n_sim: int, phi: float, rng: np.random.Generator) -> np.ndarray:
    """``(n, n_sim)`` unit-variance AR(1) paths."""
    e = rng.standard_normal((n, n_sim)) * math.sqrt(1.0 - phi * phi)
    x = np.empty_like(e)
    x[0] = rng.standard_normal(n_sim)
    for i in range(1, n):
        x[i] = phi * x[i - 1] + e[i]
    return x


def datum_shift_candidates(level_m: pd.Series, *, eras: pd.DataFrame | None = None,
                           interval: pd.Timedelta | None = None, threshold: float | None = None,
                           alpha: float | None = None, min_month_completeness: float = 0.5, min_segment_months: int = 12,
                           max_shifts: int = 5, n_simulations: int = 500) -> pd.DataFrame:
    r"""Candidate datum steps of a clean level series (module docstring for the method).

    Parameters
    ----------
    level_m : pandas.Series
        Clean levels on a tz-aware UTC index [m] (NaN for gaps and flagged samples).
    eras : pandas.DataFrame, optional
        Sampling eras (:func:`extremes.sampling.sampling_eras`); found from the index when not given.
    interval : pandas.Timedelta, optional
        Accepted for compatibility; the eras give each sample's interval.
    threshold : float, optional
        A fixed critical value of :math:`\max_k T_k` in place of the simulated one.
    alpha : float, keyword-only
        False-alarm probability of each split search on a record without a step (default 0.01 on records of
        four years or more, 0.05 on shorter ones, where a step is harder to see and a false candidate costs
        only a look at the levelling log).
    min_month_completeness : float, keyword-only
        Months less covered are left out.
    min_segment_months : int, keyword-only
        Shortest stretch on either side of a step [months].
    max_shifts : int, keyword-only
        Most candidates reported.
    n_simulations : int, keyword-only
        AR(1) series simulated for the critical value.

    Returns
    -------
    pandas.DataFrame
        ``time`` (first day on the new datum, UTC), ``size_m`` (the step up at ``time``) [m], ``statistic``
        (:math:`T_k`) and ``critical`` (its critical value).
    """
    if len(level_m) == 0 or np.isfinite(level_m.to_numpy(dtype=float)).sum() < 2:
        return empty_shifts()
    months = monthly_means(level_m, eras=eras)
    months = months[(months["coverage"] >= min_month_completeness) & months["mean_m"].notna()]
    n = len(months)
    if n < 2 * min_segment_months:
        return empty_shifts()
    t_years = ((months.index - months.index[0]) / pd.Timedelta(days=DAYS_PER_YEAR)).to_numpy(dtype=float)
    x = months["mean_m"].to_numpy(dtype=float)
    calendar_month = months.index.month.to_numpy()
    # the seasonal cycle (a value per calendar month) is fitted with the line and the step, from two years
    # of months on; pre-removing it would confound it with a step on short records
    with_season = n >= 2 * 12
    long_record = n >= 4 * 12

    def season_columns(sel: slice) -> np.ndarray | None:
        cm = calendar_month[sel]
        present = [mth for mth in range(1, 13) if (cm == mth).any()]
        if long_record or not with_season or len(present) < 2 or cm.size < 24:
            return None
        return np.column_stack([(cm == mth).astype(float) for mth in present[1:]])

    y = x
    if long_record:
        # four years or more: the seasonal cycle as the median of each calendar month about a Theil-Sen
        # line [2], removed before the search (robust to a step, and the better-calibrated test on long
        # records: see the simulations in the module notes)
        i, j = np.triu_indices(n, k=1)
        slope = float(np.median((x[j] - x[i]) / (t_years[j] - t_years[i])))
        residual = x - slope * t_years
        season = np.array([np.median(residual[calendar_month == mth]) if (calendar_month == mth).any() else 0.0
                           for mth in range(1, 13)])
        y = x - (season - np.median(residual))[calendar_month - 1]
    if alpha is None:
        alpha = 0.01 if long_record else 0.05
    rng = np.random.default_rng(SIMULATION_SEED)
    month_number = (months.index.year.to_numpy() * 12 + months.index.month.to_numpy() - 1).astype(np.int64)
    found: list[tuple[int, float, float]] = []
    noise: list[_Noise] = []

    def search(lo: int, hi: int) -> None:
        if len(found) >= max_shifts or hi - lo < 2 * min_segment_months:
            return
        season = season_columns(slice(lo, hi))
        if threshold is not None:
            splits, _, stat = _step_statistics(y[lo:hi], t_years[lo:hi], min_segment_months, season=season)
            best, critical = int(np.argmax(stat[:, 0])), float(threshold)
        else:
            if not noise:
                # the noise of the whole record, estimated around a line without a step (a step would be
                # taken for noise only if it were smooth; a conservative choice, so that year-to-year swings
                # are not reported as steps)
                whole = season_columns(slice(0, n))
                design = np.column_stack([np.ones(n), t_years] + ([] if whole is None else [whole]))
                coef, *_ = np.linalg.lstsq(design, y, rcond=None)
                noise.append(_Noise.fit(y - design @ coef, month_number))
            cov = noise[0].covariance(month_number[lo:hi])
            chol = np.linalg.cholesky(cov + 1e-10 * np.trace(cov) / cov.shape[0] * np.eye(cov.shape[0]))
            splits, _, stat = _step_statistics(y[lo:hi], t_years[lo:hi], min_segment_months, chol, season)
            best = int(np.argmax(stat[:, 0]))
            simulated = chol @ rng.standard_normal((hi - lo, n_simulations))
            _, _, null_stat = _step_statistics(simulated, t_years[lo:hi], min_segment_months, chol, season)
            critical = float(np.quantile(null_stat.max(axis=0), 1.0 - alpha))
        if not stat[best, 0] > critical:
            return
        k = lo + int(splits[best])
        found.append((k, float(stat[best, 0]), critical))
        search(lo, k)
        search(k, hi)

    search(0, n)
    if not found:
        return empty_shifts()
    found.sort()
    times = [_refine_to_day(level_m, months.index[k]) for k, _, _ in found]
    # sizes together: line, seasonal cycle (a value per calendar month) and one step per candidate, fitted
    # to the monthly means (the seasonal medians of the search confound a step with the season on short
    # records), by generalised least squares under the noise estimated around that fit
    month_mid = months.index + pd.Timedelta(days=15)
    whole = season_columns(slice(0, n))
    if long_record:
        whole = np.column_stack([(calendar_month == mth).astype(float) for mth in range(2, 13)
                                 if (calendar_month == mth).any()])
    design = np.column_stack([np.ones(n), t_years] + ([] if whole is None else [whole])
                             + [(month_mid >= when).astype(float) for when in times])
    n_steps = len(times)
    target = x
    coef, *_ = np.linalg.lstsq(design, x, rcond=None)  # the sizes from the monthly means with the season
    if threshold is None and long_record:
        from scipy.linalg import solve_triangular

        cov = _Noise.fit(x - design @ coef, month_number).covariance(month_number)
        chol = np.linalg.cholesky(cov + 1e-10 * np.trace(cov) / n * np.eye(n))
        design, target = solve_triangular(chol, design, lower=True), solve_triangular(chol, x, lower=True)
    coef, *_ = np.linalg.lstsq(design, target, rcond=None)
    return pd.DataFrame({"time": pd.DatetimeIndex(times), "size_m": coef[-n_steps:],
                         "statistic": [s for _, s, _ in found], "critical": [c for _, _, c in found]})


def _refine_to_day(level_m: pd.Series, month_start: pd.Timestamp, *, window_days: int = 45) -> pd.Timestamp:
    """The day within ``window_days`` of ``month_start`` that best splits the daily means into two levels."""
    lo, hi = month_start - pd.Timedelta(days=window_days), month_start + pd.Timedelta(days=window_days)
    piece = level_m[(level_m.index >= lo - pd.Timedelta(days=30)) & (level_m.index < hi + pd.Timedelta(days=30))]
    daily = piece.tz_convert("UTC").tz_localize(None).resample("D").mean().dropna()
    if len(daily) < 10:
        return month_start
    values = daily.to_numpy()
    days = daily.index.tz_localize("UTC")
    best, best_score = month_start, -1.0
    total = values.sum()
    cumulative = np.cumsum(values)
    for k in range(1, len(values)):
        if not (lo <= days[k] <= hi):
            continue
        n1, n2 = k, len(values) - k
        diff = (total - cumulative[k - 1]) / n2 - cumulative[k - 1] / n1
        score = abs(diff) * math.sqrt(n1 * n2 / (n1 + n2))
        if score > best_score:
            best, best_score = days[k], score
    return pd.Timestamp(best)
