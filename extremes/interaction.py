r"""Tide-surge interaction tests: timing of surge peaks, and dependence of skew surge on the tide level.

The decision whether skew surge may be combined with the tide as independent rests on the tail-focused test
of :mod:`extremes.tail_dependence` (storm peaks above a high threshold compared across tide bands by a
likelihood-ratio test, with an effect-size rule). Kendall's tau over the whole distribution and the tide-band
quantiles are reported beside it as descriptions; they no longer decide.

References
----------
.. [3] K. J. Horsburgh and C. Wilson, "Tide-surge interaction and its role in the distribution of surge
   residuals in the North Sea," *J. Geophys. Res.*, vol. 112, C08003, 2007, doi:10.1029/2006JC004033.
.. [4] T. Mawdsley and I. D. Haigh, "Spatial and temporal variability and long-term trends in skew surges
   globally," *Front. Mar. Sci.*, vol. 3, 29, 2016, doi:10.3389/fmars.2016.00029.
"""
from __future__ import annotations

import warnings
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd
from scipy import stats

from extremes._levels import _NS_PER_HOUR, _check_level_series, _times
from extremes.errors import DataError, ExtremesWarning
from extremes.residual import non_tidal_residual
from extremes.tail_dependence import TailDependence, tail_dependence_test

__all__ = ["InteractionTests", "interaction_tests", "interaction_tests_from_series"]


@dataclass(frozen=True, repr=False)
class InteractionTests:
    """Tests of tide-surge interaction.

    Attributes
    ----------
    timing_bins_hours : tuple of float
        Bin centres of the surge-peak timing relative to the nearest predicted high water (-6 ... +6). [h]
    timing_counts : tuple of int
        Independent NTR peaks per bin (outer bins collect everything beyond +/-5.5 h).
    timing_expected : tuple of float
        Expected counts if peaks were timed independently of the tide (share of all valid samples per bin).
    timing_chi2, timing_p_value : float
        Chi-square statistic and p-value of the timing test.
    n_peaks : int
        Independent NTR peaks used.
    peak_threshold_m : float
        NTR threshold of the peaks (the ``peak_quantile`` quantile). [m]
    kendall_tau, kendall_p_value : float
        Kendall rank correlation of skew surge and predicted high-water level, and its p-value (a description
        of the whole distribution; it does not decide).
    n_skew_surges : int
        Skew surges available (all enter the tide-band quantiles).
    n_skew_surges_tested : int
        Skew surges at least ``min_separation_hours`` apart that enter the Kendall test.
    band_edges_m : tuple of float
        Predicted high-water levels bounding the tide bands (low ... high). [m]
    band_quantiles_m : dict
        ``{band label: {quantile: skew surge [m]}}`` upper-tail quantiles of skew surge per tide band.
    alpha : float
        Significance level of both tests.
    timing_dependent : bool
        Whether the timing test rejects independence at ``alpha``.
    level_dependent : bool
        Whether the tail-focused test finds a material tide-level dependence of the skew-surge tail
        (``tail.dependent``).
    tail : TailDependence or None
        The tail-focused test (:func:`extremes.tail_dependence.tail_dependence_test`).
    verdict : str
        Plain-words summary.
    """

    timing_bins_hours: tuple
    timing_counts: tuple
    timing_expected: tuple
    timing_chi2: float
    timing_p_value: float
    n_peaks: int
    peak_threshold_m: float
    kendall_tau: float
    kendall_p_value: float
    n_skew_surges: int
    n_skew_surges_tested: int
    band_edges_m: tuple
    band_quantiles_m: dict = field(default_factory=dict)
    alpha: float = 0.05
    timing_dependent: bool = False
    level_dependent: bool = False
    verdict: str = ""
    tail: TailDependence | None = None

    def __repr__(self) -> str:
        return (f"InteractionTests(timing_p={self.timing_p_value:.3g}, n_peaks={self.n_peaks}, "
                f"kendall_tau={self.kendall_tau:.3f}, kendall_p={self.kendall_p_value:.3g}, "
                f"timing_dependent={self.timing_dependent}, level_dependent={self.level_dependent})")

    def to_dict(self) -> dict:
        """JSON-ready dictionary."""
        return {
            "timing": {"bins_hours": list(self.timing_bins_hours), "counts": list(self.timing_counts),
                       "expected": [float(x) for x in self.timing_expected], "chi2": float(self.timing_chi2),
                       "p_value": float(self.timing_p_value), "n_peaks": int(self.n_peaks),
                       "peak_threshold_m": float(self.peak_threshold_m), "dependent": bool(self.timing_dependent)},
            "level": {"kendall_tau": float(self.kendall_tau), "p_value": float(self.kendall_p_value),
                      "n_skew_surges": int(self.n_skew_surges),
                      "n_skew_surges_tested": int(self.n_skew_surges_tested),
                      "band_edges_m": [float(x) for x in self.band_edges_m],
                      "band_quantiles_m": {b: {str(q): float(v) for q, v in d.items()}
                                           for b, d in self.band_quantiles_m.items()},
                      "dependent": bool(self.level_dependent), "decided_by": "tail"},
            "tail": None if self.tail is None else self.tail.to_dict(),
            "alpha": float(self.alpha),
            "verdict": self.verdict,
        }


def _decluster_peaks(residual: pd.Series, threshold: float, min_separation_ns: int) -> np.ndarray:
    """Times [ns] of cluster maxima of exceedances (runs declustering of the extreme-value stage)."""
    from extremes.extremal.samples import peaks_over_threshold

    peaks = peaks_over_threshold(residual, threshold=threshold, min_separation_hours=min_separation_ns / 3.6e12)
    return peaks.peaks.index.as_unit("ns").asi8


def _thin(t_ns: np.ndarray, min_separation_ns: int) -> np.ndarray:
    """Mask keeping, greedily in time order, values at least ``min_separation_ns`` after the last kept one."""
    keep = np.zeros(t_ns.size, dtype=bool)
    last = None
    for i, t in enumerate(t_ns.tolist()):
        if last is None or t - last >= min_separation_ns:
            keep[i] = True
            last = t
    return keep


def _offsets_hours(t_ns: np.ndarray, hw_ns: np.ndarray) -> np.ndarray:
    """Signed time from the nearest predicted high water [h]."""
    k = np.searchsorted(hw_ns, t_ns)
    left = hw_ns[np.clip(k - 1, 0, hw_ns.size - 1)]
    right = hw_ns[np.clip(k, 0, hw_ns.size - 1)]
    nearest = np.where(np.abs(t_ns - left) <= np.abs(right - t_ns), left, right)
    return (t_ns - nearest) / _NS_PER_HOUR


def interaction_tests_from_series(residual_m: pd.Series, high_water_times: Any, skew: pd.DataFrame, *,
                                  peak_quantile: float = 0.99, min_separation_hours: float = 48.0,
                                  n_bands: int = 3, tail_quantiles: tuple = (0.5, 0.9, 0.99),
                                  alpha: float = 0.05, tail_threshold_quantile: float = 0.97,
                                  min_effect_m: float = 0.05, min_effect_fraction: float = 0.05,
                                  tides_per_year: float | None = None) -> InteractionTests:
    r"""Tests of tide-surge interaction from a residual series, predicted HW times and skew surges.

    Parameters
    ----------
    residual_m : pandas.Series
        Non-tidal residual on a sorted unique UTC index. [m]
    high_water_times : array-like of datetime
        Predicted high-water times (UTC) covering the record.
    skew : pandas.DataFrame
        Skew surges with columns ``skew_surge_m`` and ``predicted_high_water_m`` [m], from :func:`skew_surges`.
    peak_quantile : float, default 0.99
        Quantile of the residual above which independent peaks are taken for the timing test.
    min_separation_hours : float, default 48.0
        Exceedances closer than this belong to one storm; only its largest is kept. The Kendall test also uses
        only skew surges at least this far apart (see Notes). [h]
    n_bands : int, default 3
        Number of tide bands (quantile bands of predicted high water; 3 = terciles: neap-like, middle,
        spring-like).
    tail_quantiles : tuple of float, default (0.5, 0.9, 0.99)
        Quantiles of skew surge reported per band.
    alpha : float, default 0.05
        Significance level.
    tail_threshold_quantile, min_effect_m, min_effect_fraction, tides_per_year
        Options of the tail-focused test, :func:`extremes.tail_dependence.tail_dependence_test`.

    Returns
    -------
    InteractionTests

    Notes
    -----
    (i) Timing [3]_, [4]_: the time of each independent NTR peak relative to the nearest predicted high water
    is put into 13 hourly bins centred on -6 ... +6 h (outer bins open-ended). The expected count of a bin is
    the share of all valid residual samples that fall in it (the exact "uniform in time" null, which accounts for
    cycles shorter or longer than 13 h), and the counts are compared by a chi-square test
    (``scipy.stats.chisquare``, 12 degrees of freedom). Clustering of peaks on the rising tide is the classic
    sign of interaction. (ii) Level: the tail-focused test of :func:`extremes.tail_dependence.tail_dependence_test`
    decides (storm peaks above a high threshold across tide bands, likelihood ratio and effect size); beside it,
    as descriptions, Kendall's tau between skew surge and predicted high-water level [4]_
    (``scipy.stats.kendalltau``) and upper-tail quantiles of skew surge in tide bands (all cycles). Kendall's
    null distribution assumes independent pairs; skew surges of consecutive cycles are correlated within a storm
    and high-water levels follow the spring-neap cycle, so with every cycle the p-value is far too small. The
    test therefore uses cycles at least ``min_separation_hours`` apart (every fourth semidiurnal cycle with the
    default), which makes the skew surges close to independent; if either series of a pair is serially
    independent, the usual null distribution holds. Hourly samples under-read each crest by up to
    :math:`H(1 - \cos(\sigma \Delta t / 2))` (about 4 cm for a 1.3-m spring M2+S2 tide), more at springs than at
    neaps, which alone makes hourly skew surges fall slightly with HW level; use the native sub-hourly sampling
    where there is one (METHODS sec. 7). The chi-square test
    needs about 5 expected peaks per bin; fewer than 65 peaks gives an :class:`ExtremesWarning`.
    """
    residual = _check_level_series(residual_m, "residual_m")
    hw_ns = np.sort(_times(high_water_times, "high_water_times").asi8)
    if hw_ns.size < 2:
        raise DataError(f"high_water_times needs at least 2 predicted high waters; got {hw_ns.size}")
    if not 0.5 < peak_quantile < 1.0:
        raise ValueError(f"peak_quantile must be in (0.5, 1); got {peak_quantile}")
    if not 0.0 < alpha < 1.0:
        raise ValueError(f"alpha must be in (0, 1); got {alpha}")
    if not isinstance(skew, pd.DataFrame) or not {"skew_surge_m", "predicted_high_water_m"} <= set(skew.columns):
        raise DataError("skew must be a DataFrame with columns skew_surge_m and predicted_high_water_m "
                        "(from skew_surges)")

    # (i) timing of independent NTR peaks
    valid = residual.dropna()
    if valid.size == 0:
        raise DataError("residual_m holds no valid values")
    threshold = float(np.quantile(valid.to_numpy(), peak_quantile))
    peaks_ns = _decluster_peaks(valid, threshold, int(min_separation_hours * _NS_PER_HOUR))
    edges = np.concatenate([[-np.inf], np.arange(-5.5, 6.0, 1.0), [np.inf]])
    counts = np.histogram(_offsets_hours(peaks_ns, hw_ns), bins=edges)[0]
    share = np.histogram(_offsets_hours(valid.index.asi8, hw_ns), bins=edges)[0].astype(float)
    share /= share.sum()
    n_peaks = int(counts.sum())
    if n_peaks < 65:
        warnings.warn(f"only {n_peaks} independent residual peaks above the {peak_quantile} quantile; the timing "
                      "chi-square test needs about 65 (5 per bin)", ExtremesWarning, stacklevel=2)
    if n_peaks > 0:
        expected = share * n_peaks
        chi2, p_timing = stats.chisquare(counts, expected)
    else:
        expected = share * 0.0
        chi2, p_timing = float("nan"), float("nan")

    # (ii) level dependence
    ss = skew[["skew_surge_m", "predicted_high_water_m"]].astype(float)
    keep = np.isfinite(ss.to_numpy()).all(axis=1)
    if "time" in skew.columns:
        skew_ns = _times(skew["time"], "skew['time']").asi8[keep]
        ss = ss[keep]
        order = np.argsort(skew_ns, kind="stable")
        ss, skew_ns = ss.iloc[order], skew_ns[order]
        spaced = _thin(skew_ns, int(min_separation_hours * _NS_PER_HOUR))
    else:
        ss = ss[keep]
        spaced = np.ones(len(ss), dtype=bool)
    n_skew = int(len(ss))
    thin = ss[spaced]
    if len(thin) < 3:
        raise DataError(f"skew holds {len(thin)} usable skew surges {min_separation_hours} h apart; expected at "
                        "least 3")
    tau_res = stats.kendalltau(thin["skew_surge_m"].to_numpy(), thin["predicted_high_water_m"].to_numpy())
    tau, p_tau = float(tau_res.statistic), float(tau_res.pvalue)
    band_edges = np.quantile(ss["predicted_high_water_m"].to_numpy(), np.linspace(0, 1, n_bands + 1))
    band = np.clip(np.searchsorted(band_edges[1:-1], ss["predicted_high_water_m"].to_numpy(), side="right"),
                   0, n_bands - 1)
    band_quantiles: dict = {}
    for b in range(n_bands):
        sel = ss["skew_surge_m"].to_numpy()[band == b]
        label = f"{band_edges[b]:.3f}-{band_edges[b + 1]:.3f} m"
        band_quantiles[label] = {float(q): (float(np.quantile(sel, q)) if sel.size else float("nan"))
                                 for q in tail_quantiles}

    tail = None
    if "time" in skew.columns and n_skew >= 100:
        tail = tail_dependence_test(skew, n_bands=n_bands, threshold_quantile=tail_threshold_quantile,
                                    min_separation_hours=min_separation_hours, alpha=alpha,
                                    min_effect_m=min_effect_m, min_effect_fraction=min_effect_fraction,
                                    tides_per_year=tides_per_year)
    timing_dep = bool(np.isfinite(p_timing) and p_timing < alpha)
    level_dep = bool(tail is not None and tail.dependent)
    verdict = _verdict(alpha, timing_dep, p_timing, counts, expected, tau, p_tau, tail)
    return InteractionTests(
        timing_bins_hours=tuple(float(x) for x in range(-6, 7)), timing_counts=tuple(int(c) for c in counts),
        timing_expected=tuple(float(x) for x in expected), timing_chi2=float(chi2), timing_p_value=float(p_timing),
        n_peaks=n_peaks, peak_threshold_m=threshold, kendall_tau=tau, kendall_p_value=p_tau,
        n_skew_surges=n_skew, n_skew_surges_tested=int(len(thin)),
        band_edges_m=tuple(float(x) for x in band_edges), band_quantiles_m=band_quantiles,
        alpha=float(alpha), timing_dependent=timing_dep, level_dependent=level_dep, verdict=verdict, tail=tail)


def _verdict(alpha, timing_dep, p_timing, counts, expected, tau, p_tau, tail) -> str:
    """The plain-words summary of the tests."""
    parts = []
    if timing_dep:
        peak_bin = int(np.argmax(counts - expected)) - 6
        parts.append(f"surge peaks are not timed independently of the tide (chi-square p = {p_timing:.3g}; "
                     f"most excess peaks about {peak_bin:+d} h from high water)")
    else:
        parts.append(f"surge-peak timing shows no dependence on the tide (chi-square p = {p_timing:.3g})")
    whole = f"Kendall tau over the whole distribution = {tau:.3f}, p = {p_tau:.3g}, a description only"
    if tail is None:
        parts.append("the tail-focused test of tide-level dependence could not be run (needs the times of at "
                     f"least 100 skew surges); skew surge is taken as independent of the tide ({whole})")
    elif not tail.testable:
        parts.append(f"too few storms per tide band ({', '.join(str(n) for n in tail.n_peaks)}) above "
                     f"{tail.threshold_m:.3f} m for the tail-focused test; skew surge is taken as independent of "
                     f"the tide ({whole})")
    else:
        effect = (f"1-year skew surge {tail.skew_surge_1yr_m[0]:.3f} m in the lowest and "
                  f"{tail.skew_surge_1yr_m[-1]:.3f} m in the highest tide band (change {tail.effect_m:+.3f} m)")
        if tail.dependent:
            parts.append(f"the skew-surge tail depends on the predicted high-water level (likelihood-ratio "
                         f"p = {tail.p_value:.3g}; {effect}); treat tide and skew surge as dependent: the tide-band "
                         f"stratified convolution applies ({whole})")
        elif tail.significant:
            parts.append(f"the skew-surge tail differs between tide bands (likelihood-ratio p = {tail.p_value:.3g}) "
                         f"but not materially ({effect}); skew surge may be combined with the tide as "
                         f"independent ({whole})")
        else:
            parts.append(f"the skew-surge tail shows no dependence on the predicted high-water level "
                         f"(likelihood-ratio p = {tail.p_value:.3g}; {effect}); skew surge may be combined with "
                         f"the tide as independent ({whole})")
    return f"At the {alpha:g} level: " + "; ".join(parts) + "."


def interaction_tests(level_m: pd.Series, model: Any, skew: pd.DataFrame, *, step_minutes: float = 10.0,
                      **options: Any) -> InteractionTests:
    """Tests of tide-surge interaction for a record and its fitted tide model.

    Parameters
    ----------
    level_m : pandas.Series
        Observed levels on a sorted unique UTC index. [m]
    model : TideModel
        Fitted tide model (residual and predicted high waters).
    skew : pandas.DataFrame
        Skew surges from :func:`skew_surges`.
    step_minutes : float, default 10.0
        Step used to locate predicted high waters. [min]
    **options
        Keyword options of :func:`interaction_tests_from_series`.

    Returns
    -------
    InteractionTests
    """
    from extremes.tide.datums import high_low_waters

    residual = non_tidal_residual(level_m, model)
    pad = pd.Timedelta(hours=30)
    table = high_low_waters(model, residual.index[0] - pad, residual.index[-1] + pad, step_minutes=step_minutes)
    hw = table.loc[table["kind"] == "high", "time"]
    return interaction_tests_from_series(residual, hw, skew, **options)
