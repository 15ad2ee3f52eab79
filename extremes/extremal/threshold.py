r"""Threshold choice for peaks over threshold, as tables with intervals.

Mean residual life (mean excess of declustered peaks), parameter stability (modified scale σ* = σ_u - ξu and
shape against the threshold) and return level against the threshold [1]_ sec. 4.3.1, plus an automatic choice
(:func:`select_threshold`) with a stated rule.

References
----------
.. [1] S. Coles, *An Introduction to Statistical Modeling of Extreme Values*. London, U.K.: Springer, 2001,
       ch. 4, doi: 10.1007/978-1-4471-3675-0.
"""
from __future__ import annotations

import logging
import warnings
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
from scipy import special

from extremes.errors import DataError, ExtremesWarning, FitError
from extremes.extremal import distributions as D
from extremes.extremal.samples import _check_series, peaks_over_threshold

logger = logging.getLogger(__name__)

#: default candidate thresholds: quantiles of the valid samples (hourly sea-level practice: ~99.5-99.7 %)
DEFAULT_QUANTILES = (0.98, 0.985, 0.99, 0.9925, 0.995, 0.996, 0.997, 0.998, 0.999)


def _thresholds(series, thresholds, quantiles):
    s = _check_series(series, name="series")
    if thresholds is None:
        q = np.asarray(quantiles if quantiles is not None else DEFAULT_QUANTILES, dtype=float)
        if np.any((q <= 0) | (q >= 1)):
            raise ValueError(f"quantiles must lie in (0, 1); got {list(q)}")
        thresholds = np.quantile(s.dropna().to_numpy(), q)
        return s, np.asarray(thresholds, float), q
    th = np.atleast_1d(np.asarray(thresholds, dtype=float))
    if not np.all(np.isfinite(th)):
        raise ValueError(f"thresholds must be finite levels [m]; got {list(th)}")
    return s, np.sort(th), None


def mean_residual_life(series, *, thresholds=None, quantiles=None, min_separation_hours=72.0, confidence=0.95):
    r"""Mean residual life: mean excess e(u) = mean(x - u | x > u) of declustered peaks above each threshold.

    Above a threshold where the GPD holds, e(u) is linear in u with slope ξ/(1 - ξ) [1]_ sec. 4.3.1.

    Returns
    -------
    pandas.DataFrame
        ``threshold_m``, ``n_peaks``, ``mean_excess_m``, ``lower_m``, ``upper_m`` (normal interval of the mean).
    """
    s, th, _ = _thresholds(series, thresholds, quantiles)
    z = special.ndtri(0.5 + confidence / 2)
    rows = []
    for u in th:
        p = peaks_over_threshold(s, threshold=u, min_separation_hours=min_separation_hours).peaks.to_numpy() - u
        n = p.size
        m = p.mean() if n else np.nan
        half = z * p.std(ddof=1) / np.sqrt(n) if n > 1 else np.nan
        rows.append((u, n, m, m - half, m + half))
    return pd.DataFrame(rows, columns=["threshold_m", "n_peaks", "mean_excess_m", "lower_m", "upper_m"])


def parameter_stability(series, *, thresholds=None, quantiles=None, min_separation_hours=72.0, confidence=0.95,
                        period_years=100.0):
    r"""GPD fits of declustered peaks over a range of thresholds [1]_ sec. 4.3.4.

    For each threshold u: peaks, rate per observed year, GPD scale and shape with Wald intervals, the modified
    scale σ* = σ_u - ξu (constant above a valid threshold) with its delta-method interval, and the
    ``period_years`` return level with its delta-method interval (including the rate's variance).

    Returns
    -------
    pandas.DataFrame
        ``threshold_m``, ``quantile``, ``n_peaks``, ``rate_per_year``, ``scale_m``, ``shape``, ``shape_lower``,
        ``shape_upper``, ``modified_scale_m``, ``modified_scale_lower_m``, ``modified_scale_upper_m``,
        ``level_m``, ``level_lower_m``, ``level_upper_m``. Rows with fewer than 10 peaks hold NaN estimates.
    """
    from extremes.extremal.uncertainty import _delta_se

    s, th, q = _thresholds(series, thresholds, quantiles)
    z = special.ndtri(0.5 + confidence / 2)
    rows = []
    for i, u in enumerate(th):
        pk = peaks_over_threshold(s, threshold=u, min_separation_hours=min_separation_hours)
        row = {"threshold_m": u, "quantile": np.nan if q is None else q[i], "n_peaks": len(pk),
               "rate_per_year": pk.rate_per_year}
        est = dict.fromkeys(["scale_m", "shape", "shape_lower", "shape_upper", "modified_scale_m",
                             "modified_scale_lower_m", "modified_scale_upper_m", "level_m", "level_lower_m",
                             "level_upper_m"], np.nan)
        if len(pk) >= 10:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore", ExtremesWarning)
                try:
                    fit = D.fit_gpd(pk)
                except (FitError, DataError):
                    fit = None
            if fit is not None:
                se_sig, se_xi = np.sqrt(np.diag(fit.cov))
                grad = np.array([1.0, -u])
                se_mod = float(np.sqrt(grad @ fit.cov @ grad))
                mod = fit.scale - fit.shape * u
                level = float(fit.return_level([period_years])[0]) if period_years * fit.rate_per_year > 1 else np.nan
                se_level = float(_delta_se(fit, np.array([period_years]))[0]) if np.isfinite(level) else np.nan
                est.update(scale_m=fit.scale, shape=fit.shape, shape_lower=fit.shape - z * se_xi,
                           shape_upper=fit.shape + z * se_xi, modified_scale_m=mod,
                           modified_scale_lower_m=mod - z * se_mod, modified_scale_upper_m=mod + z * se_mod,
                           level_m=level, level_lower_m=level - z * se_level, level_upper_m=level + z * se_level)
        row.update(est)
        rows.append(row)
    df = pd.DataFrame(rows)
    df.attrs.update({"units": "m", "confidence": confidence, "period_years": period_years,
                     "min_separation_hours": min_separation_hours})
    return df


def return_level_by_threshold(series, *, period_years=100.0, thresholds=None, quantiles=None,
                              min_separation_hours=72.0, confidence=0.95):
    """The ``period_years`` POT return level (ARI) against the threshold, with delta-method intervals.

    Returns
    -------
    pandas.DataFrame
        ``threshold_m``, ``n_peaks``, ``rate_per_year``, ``level_m``, ``lower_m``, ``upper_m``.
    """
    df = parameter_stability(series, thresholds=thresholds, quantiles=quantiles,
                             min_separation_hours=min_separation_hours, confidence=confidence,
                             period_years=period_years)
    out = df[["threshold_m", "n_peaks", "rate_per_year", "level_m", "level_lower_m", "level_upper_m"]]
    return out.rename(columns={"level_lower_m": "lower_m", "level_upper_m": "upper_m"})


@dataclass(frozen=True, eq=False)
class ThresholdChoice:
    """An automatic threshold choice and the table it was made from.

    Attributes
    ----------
    threshold_m : float
        Chosen threshold. [m]
    quantile : float
        Its quantile among the valid samples (NaN for user thresholds). [-]
    n_peaks : int
    rate_per_year : float
        Peaks per observed year. [1/year]
    rule : str
        The rule applied, in words.
    table : pandas.DataFrame
        :func:`parameter_stability` table of all candidates (empty for :func:`threshold_for_rate`).
    """

    threshold_m: float
    quantile: float
    n_peaks: int
    rate_per_year: float
    rule: str = field(repr=False)
    table: pd.DataFrame = field(repr=False)

    def __repr__(self):
        return (f"ThresholdChoice(threshold={self.threshold_m:.4g} m, quantile={self.quantile:.4g}, "
                f"n_peaks={self.n_peaks}, rate={self.rate_per_year:.3g}/yr)")

    def to_dict(self):
        return {"threshold_m": self.threshold_m, "quantile": None if np.isnan(self.quantile) else self.quantile,
                "n_peaks": self.n_peaks, "rate_per_year": self.rate_per_year, "rule": self.rule}


def select_threshold(series, *, thresholds=None, quantiles=None, min_separation_hours=72.0, min_peaks=30,
                     max_rate_per_year=5.0, confidence=0.95):
    r"""Choose a POT threshold automatically.

    Rule (after Coles [1]_ sec. 4.3 and sea-level practice of 2-5 independent events per year): among the
    candidates (quantiles of the valid samples, default 98 %-99.9 %) with at least ``min_peaks`` declustered
    peaks, take the lowest threshold whose rate is at most ``max_rate_per_year`` and whose shape interval (Wald,
    ``confidence``) contains the shape estimates at every higher eligible candidate (shape stable above it). If
    no candidate is stable, the eligible candidate with the narrowest shape interval among those within the rate
    limit is taken (the highest eligible threshold when none is within the limit), with an
    :class:`~extremes.errors.ExtremesWarning`.

    Returns
    -------
    ThresholdChoice

    Raises
    ------
    FitError
        If no candidate threshold has ``min_peaks`` peaks.
    """
    table = parameter_stability(series, thresholds=thresholds, quantiles=quantiles,
                                min_separation_hours=min_separation_hours, confidence=confidence)
    elig = table[(table["n_peaks"] >= min_peaks) & table["shape"].notna()].reset_index(drop=True)
    if elig.empty:
        raise FitError(f"no candidate threshold leaves >= {min_peaks} declustered peaks (most: "
                       f"{int(table['n_peaks'].max())} above {table['threshold_m'].min():.4g} m); "
                       "use a longer record, lower thresholds or a shorter min_separation_hours")
    rule = (f"lowest candidate with >= {min_peaks} peaks, <= {max_rate_per_year:g} peaks/yr and every higher "
            f"candidate's shape inside its {confidence:.0%} shape interval")
    chosen = None
    for i, row in elig.iterrows():
        if row["rate_per_year"] > max_rate_per_year:
            continue
        higher = elig["shape"].to_numpy()[i + 1:]
        if np.all((higher >= row["shape_lower"]) & (higher <= row["shape_upper"])):
            chosen = row
            break
    if chosen is None:
        pool = elig[elig["rate_per_year"] <= max_rate_per_year]
        if pool.empty:  # every candidate too frequent: the highest eligible threshold (lowest rate)
            chosen = elig.loc[elig["rate_per_year"].idxmin()]
            rule = "no stable candidate within the rate limit: highest threshold with enough peaks"
        else:
            chosen = pool.loc[(pool["shape_upper"] - pool["shape_lower"]).idxmin()]
            rule = "no stable candidate: narrowest shape interval within the rate limit"
        warnings.warn(f"no candidate threshold gives a stable shape estimate; {rule}: "
                      f"{chosen['threshold_m']:.4g} m; check the parameter-stability table",
                      ExtremesWarning, stacklevel=2)
    if chosen["n_peaks"] < 50:
        warnings.warn(f"only {int(chosen['n_peaks'])} peaks above the chosen threshold; intervals are wide",
                      ExtremesWarning, stacklevel=2)
    return ThresholdChoice(float(chosen["threshold_m"]), float(chosen["quantile"]), int(chosen["n_peaks"]),
                           float(chosen["rate_per_year"]), rule, table)


#: default number of declustered peaks per year of :func:`threshold_for_rate`. Sea-level practice is 2-5 a year
#: [CP]; on the simulated storm process of benchmarks/bench_coverage.py lower rates gave less bias and no misses
#: on the unsafe side (rate 1.5: 100-year bias +10 %, 93 % coverage; rate 3: +18 %, 83 %; 30 records)
DEFAULT_PEAKS_PER_YEAR = 1.5


def threshold_for_rate(series, *, peaks_per_year=DEFAULT_PEAKS_PER_YEAR, min_separation_hours=72.0,
                       min_peaks=30):
    r"""The threshold that leaves a fixed number of declustered peaks per observed year.

    A fixed rule: the threshold depends on the data only through the rate, never on the tail estimates above
    it, so the fit and its intervals are not conditioned on a stability test (Coles [1]_ sec. 4.3 on threshold
    choice; sea-level practice of 2-5 independent events per year, common practice). Peaks are declustered
    first at a low threshold (the 0.9 quantile); the threshold is then the midpoint between the
    ``n``-th and ``(n+1)``-th highest of those peaks, ``n = max(round(peaks_per_year x years), min_peaks)``
    (a short record keeps ``min_peaks`` peaks, so its rate is higher), and the sample is declustered again
    at it (a higher threshold can split a cluster, so the final count may exceed ``n`` by a few).

    Parameters
    ----------
    series : pandas.Series
        Levels on a tz-aware UTC DatetimeIndex. [m]
    peaks_per_year : float
        Target rate of declustered peaks. [1/year]
    min_separation_hours : float
        Declustering separation. [h]
    min_peaks : int
        Fewest peaks accepted.

    Returns
    -------
    ThresholdChoice
        With the stability table of the default candidates for the sensitivity report (not used for the
        choice).

    Raises
    ------
    FitError
        If fewer than ``min_peaks`` peaks would remain.
    """
    if not (np.isfinite(peaks_per_year) and peaks_per_year > 0):
        raise ValueError(f"peaks_per_year must be > 0 [1/year]; got {peaks_per_year!r}")
    s = _check_series(series, name="series")
    low = float(np.quantile(s.dropna().to_numpy(), 0.9))
    pk = peaks_over_threshold(s, threshold=low, min_separation_hours=min_separation_hours)
    n = max(int(round(peaks_per_year * pk.years)), int(min_peaks))
    values = np.sort(pk.peaks.to_numpy())[::-1]
    if values.size <= n:
        raise FitError(f"only {values.size} declustered peaks above the 0.9 quantile in {pk.years:.1f} years; "
                       f"need more than {n} (>= {min_peaks}) for a threshold (a longer record)")
    u = float(0.5 * (values[n - 1] + values[n]))
    final = peaks_over_threshold(s, threshold=u, min_separation_hours=min_separation_hours)
    quantile = float(np.mean(s.dropna().to_numpy() <= u))
    rule = (f"fixed rate: {peaks_per_year:g} declustered peaks a year, at least {min_peaks} "
            f"({min_separation_hours:g} h apart); "
            "shape stability reported separately, not used for the choice")
    return ThresholdChoice(u, quantile, len(final), float(final.rate_per_year), rule, pd.DataFrame())


__all__ = ["DEFAULT_QUANTILES", "DEFAULT_PEAKS_PER_YEAR", "ThresholdChoice", "mean_residual_life",
           "parameter_stability", "return_level_by_threshold", "select_threshold", "threshold_for_rate"]
