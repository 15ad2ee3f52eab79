r"""Skew-surge joint probability at a short site through a long reference gauge.

The steps (METHODS sec. 14; skew-surge joint probability as in sec. 10):

1. the site's tide from its own short record, with inference of what it cannot resolve from the reference's
   harmonic constants (:func:`extremes.transfer.reference.inference_from_reference`), and its predicted high
   waters over an 18.61-year nodal cycle at the epoch (both made by the study);
2. the site's skew surges paired tide by tide with the reference's at the lag of highest correlation
   (:mod:`extremes.transfer.pairing`);
3. the relation of the pairs, a least-squares line with its residuals kept as noise
   (:mod:`extremes.transfer.relation`);
4. a synthetic long site skew-surge record: every predicted site high water over the reference's span gets
   the reference skew surge of its (lagged) reference tide carried through the relation;
5. :func:`extremes.joint.skew_surge_joint_probability` on the site's nodal-cycle high waters and the synthetic
   record, with storm clustering (the extremal index as a function of level, from the synthetic record, whose
   storm sequences are the reference's);
6. intervals from resamples that redraw both the overlap pairs (blocks of consecutive tides; the transfer's
   uncertainty) and whole years of the reference record (its tail), each giving a new relation, noise and
   synthetic record, convolved again with the tail threshold and the extremal index held;
7. the checks of :mod:`extremes.transfer.checks`, which decide whether the transfer is supported.
"""
from __future__ import annotations

import time
import warnings
from dataclasses import dataclass, field, replace

import numpy as np
import pandas as pd

from extremes.constants import DAYS_PER_YEAR
from extremes.errors import DataError, ExtremesError, ExtremesWarning
from extremes.jsonable import to_jsonable
from extremes.transfer.checks import transfer_checks, worst_severity
from extremes.transfer.pairing import OverlapPairs, nearest_indices, pair_overlap
from extremes.transfer.relation import BLOCK_DAYS, SkewSurgeRelation, block_ids, fit_relation, resample_relations

__all__ = ["METHOD", "ReferenceTransferResult", "reference_joint_probability", "synthetic_site_record"]

#: method name of the transferred levels (results.json)
METHOD = "reference-skew-surge-joint-probability"
_DAYS_PER_YEAR = DAYS_PER_YEAR


@dataclass(frozen=True, repr=False)
class ReferenceTransferResult:
    """Still-water levels at a short site through a reference gauge, with the checks of the transfer.

    Attributes
    ----------
    method : str
        ``reference-skew-surge-joint-probability``.
    curve : ReturnLevelCurve
        Levels with storm clustering and intervals carrying the transfer's and the reference tail's
        uncertainty [m].
    joint : JointProbabilityResult
        The skew-surge joint probability of the synthetic record (central fit; its curve has no intervals).
    overlap : OverlapPairs
    relation : SkewSurgeRelation
    findings : tuple of Finding
    supported : bool
        No finding is ``unreliable``.
    reference : dict
        Summary of the reference gauge.
    synthetic_years : float
        Years of the synthetic site record [years].
    notes : tuple of str
    diagnostics : dict
    """

    method: str
    curve: object
    joint: object
    overlap: OverlapPairs
    relation: SkewSurgeRelation
    findings: tuple
    supported: bool
    reference: dict
    synthetic_years: float
    notes: tuple = field(default_factory=tuple)
    diagnostics: dict = field(default_factory=dict)

    def __repr__(self) -> str:
        return (f"ReferenceTransferResult(supported={self.supported}, lag={self.overlap.lag_hours:g} h, "
                f"r={self.overlap.correlation:.2f}, slope={self.relation.slope:.2f})")

    @property
    def verdict(self) -> str:
        """The most severe finding (``ok``, ``check`` or ``unreliable``)."""
        return worst_severity(self.findings)

    def to_dict(self) -> dict:
        """JSON-ready dictionary (the pairs go to a table of their own)."""
        joint = self.joint.to_dict()
        joint.pop("curve", None)
        joint.pop("curve_unclustered", None)
        return to_jsonable({
            "method": self.method, "supported": self.supported, "verdict": self.verdict,
            "findings": [f.to_dict() for f in self.findings], "reference": self.reference,
            "overlap": self.overlap.to_dict(), "relation": self.relation.to_dict(),
            "synthetic_years": self.synthetic_years, "joint_probability": joint,
            "interval_method": self.curve.interval_method, "notes": list(self.notes),
            "diagnostics": self.diagnostics,
        })


def synthetic_site_record(site_high_water_times, reference_skew: pd.Series, relation: SkewSurgeRelation, *,
                          lag_hours: float, window_hours: float, rng: np.random.Generator):
    """Synthetic site skew surges at the site's predicted high waters over the reference's span.

    Each site high water at t takes the reference skew surge of the reference tide nearest t - lag (within
    ``window_hours``) through ``relation`` (with a drawn residual); site tides without one are left out.

    Returns
    -------
    (pandas.Series, numpy.ndarray)
        The synthetic skew surges [m] on the site's UTC times, and the reference skew surge behind each [m].
    """
    times = pd.DatetimeIndex(site_high_water_times)
    ref = reference_skew.dropna().sort_index()
    j = nearest_indices(ref.index.as_unit("ns").asi8, times.as_unit("ns").asi8 - int(round(lag_hours * 3.6e12)),
                        int(window_hours * 3.6e12))
    ok = j >= 0
    source = ref.to_numpy()[j[ok]]
    values = relation.draw(source, rng)
    return pd.Series(values, index=times[ok], name="skew_surge_m"), source


def _site_high_waters(site_model, start, end):
    from extremes.tide.datums import high_low_waters

    pad = pd.Timedelta(hours=30)
    turning = high_low_waters(site_model, start - pad, end + pad)
    highs = turning.loc[turning["kind"] == "high", "time"]
    highs = pd.DatetimeIndex(highs)
    return highs[(highs >= start) & (highs <= end)]


def _resampled_levels(high_waters, source, year_of, relations, central, *, quantile, seed, periods):
    """Levels (B, P) of the resamples: new relation and noise on a redraw of whole reference years."""
    from extremes.joint import skew_surge_joint_probability

    rng = np.random.default_rng(seed + 1)
    members = [np.flatnonzero(year_of == y) for y in range(int(year_of.max()) + 1)]
    shift = central.curve.level_m - central.curve_unclustered.level_m  # extremal index held
    start = pd.Timestamp("2001-01-01", tz="UTC")
    step = pd.Timedelta(hours=12.4206)
    out = np.full((len(relations), periods.size), np.nan)
    for b, relation in enumerate(relations):
        pick = rng.integers(0, len(members), len(members))
        idx = np.concatenate([members[y] for y in pick])
        values = relation.draw(source[idx], rng)
        # with the extremal index held (clustering="none" below) only the values matter, not their times
        series = pd.Series(values, index=pd.date_range(start, periods=idx.size, freq=step))
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore", ExtremesWarning)
                res = skew_surge_joint_probability(high_waters, series, threshold_quantile=quantile,
                                                   clustering="none", n_bootstrap=0, periods_years=periods,
                                                   high_water_years=central.diagnostics.get("high_water_years"))
        except ExtremesError:
            continue
        out[b] = res.curve.level_m + shift
    return out


def reference_joint_probability(site_skew, high_waters, reference, *, site_model, site_interaction=None,
                                n_bootstrap: int = 500, confidence: float = 0.95, seed: int = 0,
                                datum: str = "unspecified", epoch_year: float | None = None,
                                max_lag_hours: float = 12.0) -> ReferenceTransferResult:
    """Still-water return levels at a short site from its tide and the reference gauge's storm climate.

    Parameters
    ----------
    site_skew : pandas.DataFrame
        The site's skew surges over its own record (frame of
        :func:`extremes.surge.skew_surges_from_turning_points`, epoch-adjusted) [m].
    high_waters : pandas.Series
        The site's predicted high waters over a nodal cycle at the epoch, on UTC times [m].
    reference : extremes.transfer.reference.ReferenceGauge
        The prepared reference gauge.
    site_model : extremes.tide.harmonic.TideModel
        The site's tide (predicts the site's high waters over the reference's span).
    site_interaction : extremes.surge.InteractionTests, optional
        Interaction tests of the site's own record.
    n_bootstrap : int
        Resamples for the intervals (0: none).
    confidence : float
        Level of the intervals.
    seed : int
        Seed of the noise and the resamples.
    datum : str
        Vertical datum of the site's levels.
    epoch_year : float, optional
        Mean-sea-level epoch of the levels [decimal year].
    max_lag_hours : float
        Half-width of the lag window [h].

    Returns
    -------
    ReferenceTransferResult

    Raises
    ------
    DataError
        If the records do not overlap, or the synthetic record is too short for the joint probability.
    """
    from extremes.joint import skew_surge_joint_probability

    t0 = time.perf_counter()
    if not 0 < confidence < 1:
        raise DataError(f"confidence must be in (0, 1); got {confidence!r}")
    rng = np.random.default_rng(seed)
    ref_skew = reference.skew_surge_series
    overlap = pair_overlap(site_skew, reference.skew_surges, max_lag_hours=max_lag_hours)
    pairs = overlap.pairs
    relation = fit_relation(pairs["site_skew_surge_m"].to_numpy(), pairs["reference_skew_surge_m"].to_numpy())
    hw_times = _site_high_waters(site_model, reference.start, reference.end)
    synthetic, source = synthetic_site_record(hw_times, ref_skew, relation, lag_hours=overlap.lag_hours,
                                              window_hours=overlap.window_hours, rng=rng)
    hw_per_year = high_waters.size / ((high_waters.index[-1] - high_waters.index[0])
                                      / pd.Timedelta(days=_DAYS_PER_YEAR))
    synthetic_years = float(synthetic.size / hw_per_year)
    joint = skew_surge_joint_probability(high_waters, synthetic, interaction=site_interaction, n_bootstrap=0,
                                         confidence=confidence, datum=datum, epoch_year=epoch_year, seed=seed)
    findings = transfer_checks(overlap, relation, ref_skew, tides_per_year=hw_per_year,
                               site_interaction=site_interaction, reference_interaction=reference.interaction)
    supported = worst_severity(findings) != "unreliable"
    periods = joint.curve.periods_years
    lower = upper = np.full(periods.shape, np.nan)
    n_used = 0
    if n_bootstrap and supported:
        t_pairs = pd.DatetimeIndex(pairs["site_time"]).as_unit("ns").asi8
        relations = resample_relations(pairs["site_skew_surge_m"].to_numpy(),
                                       pairs["reference_skew_surge_m"].to_numpy(), block_ids(t_pairs),
                                       n_resamples=n_bootstrap, rng=np.random.default_rng(seed + 2))
        year_of = np.unique(np.asarray(synthetic.index.year), return_inverse=True)[1]
        # the tail threshold is held as a quantile: a resampled relation moves every value
        quantile = float(np.mean(synthetic.to_numpy() <= joint.threshold_m))
        levels = _resampled_levels(high_waters, source, year_of, relations, joint, quantile=quantile, seed=seed,
                                   periods=periods)
        n_used = int(np.sum(np.isfinite(levels[:, 0])))
        alpha = (1 - confidence) / 2
        if n_used >= max(10, n_bootstrap // 2):
            lower = np.nanquantile(levels, alpha, axis=0)
            upper = np.nanquantile(levels, 1 - alpha, axis=0)
    notes = [
        f"site skew surges carried from the reference gauge ({reference.record_years:.1f} years): site = "
        f"{relation.intercept_m:.3f} m + {relation.slope:.3f} x reference skew surge + noise (residual sd "
        f"{relation.residual_sd_m:.3f} m), fitted on {overlap.n_pairs} tides of the overlap at a lag of "
        f"{overlap.lag_hours:g} h (correlation {overlap.correlation:.2f})",
        f"synthetic site record of {synthetic_years:.1f} years convolved with the site's predicted high waters "
        "of a nodal cycle at the epoch (skew-surge joint probability, storm clustering of the reference's "
        "storm sequences)",
    ] + list(overlap.notes) + list(reference.notes)
    if not supported:
        notes.append("transfer not supported, so no interval computed: " + "; ".join(
            f.reason for f in findings if f.severity == "unreliable"))
    interval = (f"percentile bootstrap ({n_used} resamples): blocks of {BLOCK_DAYS:g} days of overlap pairs (the "
                "relation) and whole years of the reference record (its tail) redrawn together, noise redrawn; "
                "tail threshold (as a quantile) and extremal index held")
    curve = replace(joint.curve, method=METHOD, lower_m=lower, upper_m=upper, interval_method=interval,
                    notes=tuple(notes) + tuple(joint.curve.notes))
    diagnostics = {"seconds": time.perf_counter() - t0, "bootstrap_resamples_used": n_used,
                   "site_high_waters_over_reference": int(hw_times.size), "synthetic_tides": int(synthetic.size)}
    return ReferenceTransferResult(method=METHOD, curve=curve, joint=joint, overlap=overlap, relation=relation,
                                   findings=findings, supported=supported, reference=reference.to_dict(),
                                   synthetic_years=synthetic_years, notes=tuple(notes), diagnostics=diagnostics)
