r"""Tail-focused test of tide-level dependence of skew surge: storm exceedances compared across tide bands.

A dependence of skew surge on the predicted high-water level that matters for design levels sits in the upper
tail (large storms damped or amplified at spring tides), and a rank correlation over every tide can miss it
while flagging harmless dependence of the bulk (Williams et al. 2016 [1]_; Idier et al. 2012 [2]_). This test
looks at the tail only (METHODS sec. 14):

1. The predicted high waters of the skew surges are split into ``n_bands`` tide-level bands (terciles by
   default: neap-like, middle, spring-like).
2. Above a high common skew-surge threshold :math:`u` (the ``threshold_quantile`` quantile), exceedances
   closer than ``min_separation_hours`` are one storm; each storm keeps its largest skew surge, in the band of
   its own high water (declustered exceedances, so the storms are close to independent).
3. Model per band :math:`b`: a storm peak occurs at a tide of the band with probability :math:`p_b`
   (binomial over the band's :math:`N_b` tides) and its excess over :math:`u` is GPD
   :math:`(\sigma_b, \xi)`. The likelihood-ratio statistic of the band-specific model against the common one
   (:math:`p_b = p`, :math:`\sigma_b = \sigma`) is referred to :math:`\chi^2` with :math:`2(B - 1)` degrees of
   freedom (Wilks). The shape is common to the bands under both models: a band holds a few dozen storms,
   too few to estimate a shape each (this package's choice).
4. Effect size: the 1-year skew surge of each band, the storm-peak level exceeded once a year if every tide
   were in that band, :math:`s_1 = u + \sigma_b[(p_b N_t)^{\xi} - 1]/\xi` with :math:`N_t` tides per year
   (Batstone et al. 2013 [3]_ compare tide bands the same way, [M]). The change from the lowest to the highest
   band is material when at least ``min_effect_m`` and ``min_effect_fraction`` of the pooled 1-year skew surge.

Skew surge is declared tide-dependent when the test rejects at ``alpha`` **and** the effect is material; a
significant but small effect is reported and not acted upon.

References
----------
.. [1] J. Williams, K. J. Horsburgh, J. A. Williams and R. N. F. Proctor, "Tide and skew surge independence:
   new insights for flood risk," *Geophys. Res. Lett.*, vol. 43, pp. 6410-6417, 2016,
   doi:10.1002/2016GL069522.
.. [2] D. Idier, F. Dumas and H. Muller, "Tide-surge interaction in the English Channel," *Nat. Hazards Earth
   Syst. Sci.*, vol. 12, pp. 3709-3718, 2012, doi:10.5194/nhess-12-3709-2012.
.. [3] C. Batstone et al., "A UK best-practice approach for extreme sea-level analysis along complex
   topographic coastlines," *Ocean Eng.*, vol. 71, pp. 28-39, 2013, doi:10.1016/j.oceaneng.2013.02.003.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy import optimize, stats

from extremes._levels import _NS_PER_HOUR, _times
from extremes.constants import HOURS_PER_YEAR
from extremes.errors import DataError

__all__ = ["TailDependence", "tail_dependence_test", "gpd_band_loglik"]

#: fewest storm peaks per band for the test [-]
MIN_PEAKS_PER_BAND = 8


@dataclass(frozen=True, repr=False)
class TailDependence:
    """Result of :func:`tail_dependence_test`.

    Attributes
    ----------
    threshold_m : float
        Common skew-surge threshold. [m]
    band_edges_m : tuple of float
        Predicted high-water levels bounding the bands (low ... high). [m]
    n_tides, n_peaks : tuple of int
        Tides (skew surges) and declustered storm peaks per band.
    rate_per_tide : tuple of float
        Storm peaks per tide in each band (band-specific fit).
    scale_m : tuple of float
        GPD scale per band (band-specific fit, common shape). [m]
    shape, shape_common : float
        GPD shape of the band-specific and of the common fit.
    scale_common_m : float
        GPD scale of the common fit. [m]
    lr_statistic, p_value : float
        Likelihood-ratio statistic and its chi-square p-value.
    degrees_of_freedom : int
    skew_surge_1yr_m : tuple of float
        1-year skew surge of each band. [m]
    skew_surge_1yr_pooled_m : float
        1-year skew surge of the common fit. [m]
    effect_m : float
        1-year skew surge of the highest band minus that of the lowest band. [m]
    material : bool
        Whether ``|effect_m|`` reaches the effect-size rule.
    significant : bool
        Whether the likelihood-ratio test rejects at ``alpha``.
    dependent : bool
        ``significant and material``.
    testable : bool
        False when a band holds fewer than the fewest storm peaks the test needs (then ``dependent`` is False).
    alpha, min_effect_m, min_effect_fraction, tides_per_year : float
        Options used.
    rule : str
        The decision rule in words.
    """

    threshold_m: float
    band_edges_m: tuple
    n_tides: tuple
    n_peaks: tuple
    rate_per_tide: tuple
    scale_m: tuple
    shape: float
    scale_common_m: float
    shape_common: float
    lr_statistic: float
    p_value: float
    degrees_of_freedom: int
    skew_surge_1yr_m: tuple
    skew_surge_1yr_pooled_m: float
    effect_m: float
    material: bool
    significant: bool
    dependent: bool
    testable: bool
    alpha: float
    min_effect_m: float
    min_effect_fraction: float
    tides_per_year: float
    rule: str

    def __repr__(self) -> str:
        return (f"TailDependence(p_value={self.p_value:.3g}, effect_m={self.effect_m:+.3f}, "
                f"dependent={self.dependent}, n_peaks={self.n_peaks})")

    def to_dict(self) -> dict:
        """JSON-ready dictionary."""
        def num(x):
            return None if not np.isfinite(x) else float(x)

        return {
            "threshold_m": num(self.threshold_m), "band_edges_m": [num(x) for x in self.band_edges_m],
            "n_tides": list(self.n_tides), "n_peaks": list(self.n_peaks),
            "rate_per_tide": [num(x) for x in self.rate_per_tide], "scale_m": [num(x) for x in self.scale_m],
            "shape": num(self.shape), "scale_common_m": num(self.scale_common_m),
            "shape_common": num(self.shape_common), "lr_statistic": num(self.lr_statistic),
            "p_value": num(self.p_value), "degrees_of_freedom": self.degrees_of_freedom,
            "skew_surge_1yr_m": [num(x) for x in self.skew_surge_1yr_m],
            "skew_surge_1yr_pooled_m": num(self.skew_surge_1yr_pooled_m), "effect_m": num(self.effect_m),
            "material": self.material, "significant": self.significant, "dependent": self.dependent,
            "testable": self.testable, "alpha": self.alpha, "min_effect_m": self.min_effect_m,
            "min_effect_fraction": self.min_effect_fraction, "tides_per_year": self.tides_per_year,
            "rule": self.rule,
        }


def gpd_band_loglik(excess_m, band, params, n_bands) -> float:
    """GPD log-likelihood of excesses with a scale per band and a common shape (Coles 2001 eq. 4.10).

    ``params`` = (log scale of band 0, ..., log scale of band B-1, shape); ``band`` gives each excess's band.
    """
    y = np.asarray(excess_m, dtype=float)
    scale = np.exp(np.asarray(params[:n_bands], dtype=float))[band]
    xi = float(params[n_bands])
    if abs(xi) < 1e-8:
        return float(np.sum(-np.log(scale) - y / scale))
    t = 1.0 + xi * y / scale
    if np.any(t <= 0):
        return -np.inf
    return float(np.sum(-np.log(scale) - (1.0 + 1.0 / xi) * np.log(t)))


def _fit_gpd_bands(excess, band, n_bands):
    """Maximum-likelihood (scales per band, common shape); returns (params, log-likelihood)."""
    start_scale = np.log(max(float(np.mean(excess)), 1e-6))

    def objective(p):
        value = -gpd_band_loglik(excess, band, p, n_bands)
        return value if np.isfinite(value) else 1e12  # outside the support: a large finite penalty

    best = None
    for xi0 in (0.0, -0.1, 0.1):
        x0 = np.concatenate([np.full(n_bands, start_scale), [xi0]])
        res = optimize.minimize(objective, x0, method="Nelder-Mead",
                                options={"xatol": 1e-7, "fatol": 1e-9, "maxiter": 4000 * (n_bands + 1)})
        if res.fun < 1e12 and (best is None or res.fun < best.fun):
            best = res
    if best is None:
        raise DataError("the GPD fit of the storm peaks failed; expected positive excesses over the threshold")
    return best.x, -float(best.fun)


def _binomial_loglik(k, n, p):
    k, n, p = np.asarray(k, float), np.asarray(n, float), np.asarray(p, float)
    with np.errstate(divide="ignore", invalid="ignore"):
        terms = np.where(k > 0, k * np.log(p), 0.0) + np.where(n - k > 0, (n - k) * np.log1p(-p), 0.0)
    return float(np.sum(terms))


def _one_year(u, scale, xi, rate_per_year):
    """Level exceeded once a year by storm peaks: u + scale/xi ((rate)^xi - 1) (Coles 2001 eq. 4.13)."""
    if not rate_per_year > 1.0:
        return float(u)  # fewer than one storm peak a year above u: the 1-year level is below the threshold
    if abs(xi) < 1e-8:
        return float(u + scale * math.log(rate_per_year))
    return float(u + scale / xi * (rate_per_year ** xi - 1.0))


def _storm_peaks(values, t_ns, threshold, min_separation_ns):
    """Index of the largest value of each storm (exceedances closer than the separation are one storm)."""
    above = np.flatnonzero(values > threshold)
    if above.size == 0:
        return above
    new = np.concatenate([[True], np.diff(t_ns[above]) > min_separation_ns])
    storm = np.cumsum(new) - 1
    order = np.lexsort((-values[above], storm))
    first = np.concatenate([[True], np.diff(storm[order]) != 0])
    return above[order[first]]


def _check_skew(skew):
    if not isinstance(skew, pd.DataFrame) or not {"time", "skew_surge_m", "predicted_high_water_m"} <= set(skew):
        raise DataError("skew must be a DataFrame with columns time, skew_surge_m and predicted_high_water_m "
                        "(from extremes.surge.skew_surges)")
    t_ns = _times(skew["time"], "skew['time']").asi8
    s = skew["skew_surge_m"].to_numpy(dtype=float)
    x = skew["predicted_high_water_m"].to_numpy(dtype=float)
    ok = np.isfinite(s) & np.isfinite(x)
    order = np.argsort(t_ns[ok], kind="stable")
    return t_ns[ok][order], s[ok][order], x[ok][order]


def tail_dependence_test(skew, *, n_bands=3, threshold_quantile=0.97, min_separation_hours=48.0, alpha=0.05,
                         min_effect_m=0.05, min_effect_fraction=0.05, tides_per_year=None) -> TailDependence:
    """Likelihood-ratio test of tide-band dependence of the skew-surge tail, with an effect-size rule.

    Parameters
    ----------
    skew : pandas.DataFrame
        Skew surges with columns ``time`` (UTC), ``skew_surge_m`` and ``predicted_high_water_m`` [m].
    n_bands : int, keyword-only
        Tide-level bands (quantile bands of the predicted high waters of the skew surges).
    threshold_quantile : float, keyword-only
        Quantile of skew surge used as the common threshold.
    min_separation_hours : float, keyword-only
        Exceedances closer than this are one storm. [h]
    alpha : float, keyword-only
        Significance level of the likelihood-ratio test.
    min_effect_m, min_effect_fraction : float, keyword-only
        Effect-size rule: the band change of the 1-year skew surge is material when at least ``min_effect_m``
        [m] and at least ``min_effect_fraction`` of the pooled 1-year skew surge.
    tides_per_year : float, optional
        Tides per year :math:`N_t`; default from the record (skew surges per year of their time span,
        counting the gaps). [1/year]

    Returns
    -------
    TailDependence
        See the module notes for the method.
    """
    if not 0.5 < threshold_quantile < 1.0:
        raise ValueError(f"threshold_quantile must be in (0.5, 1); got {threshold_quantile}")
    if not (isinstance(n_bands, (int, np.integer)) and n_bands >= 2):
        raise ValueError(f"n_bands must be an integer >= 2; got {n_bands!r}")
    t_ns, s, x = _check_skew(skew)
    if s.size < 100:
        raise DataError(f"skew holds {s.size} usable skew surges; the tail test needs at least 100")
    if tides_per_year is None:
        step = float(np.median(np.diff(t_ns))) if t_ns.size > 1 else 12.42 * _NS_PER_HOUR
        tides_per_year = HOURS_PER_YEAR * _NS_PER_HOUR / step
    edges = np.quantile(x, np.linspace(0.0, 1.0, n_bands + 1))
    band_of = np.clip(np.searchsorted(edges[1:-1], x, side="right"), 0, n_bands - 1)
    u = float(np.quantile(s, threshold_quantile))
    peaks = _storm_peaks(s, t_ns, u, int(min_separation_hours * _NS_PER_HOUR))
    n_tides = np.bincount(band_of, minlength=n_bands)
    n_peaks = np.bincount(band_of[peaks], minlength=n_bands)
    excess, pband = s[peaks] - u, band_of[peaks]
    testable = bool(np.all(n_peaks >= MIN_PEAKS_PER_BAND))
    # common model
    p0 = n_peaks.sum() / n_tides.sum()
    if excess.size >= 2:
        params0, ll0_gpd = _fit_gpd_bands(excess, np.zeros(excess.size, dtype=int), 1)
        pooled_1yr = _one_year(u, math.exp(params0[0]), params0[1], p0 * tides_per_year)
    else:
        params0, ll0_gpd, pooled_1yr = np.array([np.nan, np.nan]), float("nan"), float("nan")
    ll0 = _binomial_loglik(n_peaks, n_tides, p0) + ll0_gpd
    if testable:
        p1 = n_peaks / n_tides
        params1, ll1_gpd = _fit_gpd_bands(excess, pband, n_bands)
        ll1 = _binomial_loglik(n_peaks, n_tides, p1) + ll1_gpd
        lr = max(0.0, 2.0 * (ll1 - ll0))
        dof = 2 * (n_bands - 1)
        p_value = float(stats.chi2.sf(lr, dof))
        scales = np.exp(params1[:n_bands])
        xi1 = float(params1[n_bands])
        one_year = [_one_year(u, scales[b], xi1, p1[b] * tides_per_year) for b in range(n_bands)]
        effect = one_year[-1] - one_year[0]
    else:
        p1 = n_peaks / np.maximum(n_tides, 1)
        scales = np.full(n_bands, np.nan)
        xi1, lr, dof, p_value = float("nan"), float("nan"), 2 * (n_bands - 1), float("nan")
        one_year, effect = [float("nan")] * n_bands, float("nan")
    needed = max(min_effect_m, min_effect_fraction * abs(pooled_1yr))
    material = bool(np.isfinite(effect) and abs(effect) >= needed)
    significant = bool(np.isfinite(p_value) and p_value < alpha)
    rule = (f"tide-dependent when the likelihood-ratio test (band-specific storm rate and GPD scale against "
            f"common ones, {dof} degrees of freedom) rejects at {alpha:g} and the 1-year skew surge changes by at "
            f"least {needed:.3f} m between the lowest and highest tide bands (max of {min_effect_m:g} m and "
            f"{min_effect_fraction:g} x the pooled 1-year skew surge); storms {min_separation_hours:g} h apart above "
            f"the {threshold_quantile:g} quantile ({u:.3f} m)")
    return TailDependence(
        threshold_m=u, band_edges_m=tuple(float(e) for e in edges), n_tides=tuple(int(n) for n in n_tides),
        n_peaks=tuple(int(n) for n in n_peaks), rate_per_tide=tuple(float(p) for p in p1),
        scale_m=tuple(float(v) for v in scales), shape=xi1, scale_common_m=float(math.exp(params0[0])),
        shape_common=float(params0[1]), lr_statistic=float(lr), p_value=p_value, degrees_of_freedom=int(dof),
        skew_surge_1yr_m=tuple(float(v) for v in one_year), skew_surge_1yr_pooled_m=float(pooled_1yr),
        effect_m=float(effect), material=material, significant=significant,
        dependent=bool(testable and significant and material), testable=testable, alpha=float(alpha),
        min_effect_m=float(min_effect_m), min_effect_fraction=float(min_effect_fraction),
        tides_per_year=float(tides_per_year), rule=rule)
