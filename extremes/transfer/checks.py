"""Checks that decide whether a reference-gauge transfer is supported, and the short-record verdict.

Each check returns :class:`Finding` objects with a severity: ``ok``, ``check`` (a person should look before
the levels are used) or ``unreliable`` (must not be used as it stands). A transfer is supported when no
finding is ``unreliable``. The limits are this package's choices, stated beside each check; the checks
themselves follow METHODS sec. 14 (refuse a transfer when the overlap is short, the correlation weak, or the
overlap's storms atypical of the reference record) and sec. 8 and 14 (tide-surge interaction, as decided by
:class:`extremes.interaction.InteractionTests`).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy import stats

from extremes.constants import DAYS_PER_YEAR
from extremes.errors import DataError, ExtremesError

__all__ = ["Finding", "SEVERITIES", "transfer_checks", "short_record_findings", "worst_severity",
           "MIN_OVERLAP_YEARS", "GOOD_OVERLAP_YEARS", "MIN_CORRELATION", "GOOD_CORRELATION"]

SEVERITIES = ("ok", "check", "unreliable")

#: overlap below which the transfer is refused [years] (half a storm season)
MIN_OVERLAP_YEARS = 0.5
#: overlap below which the transfer needs a look [years] (a full year covers every season, common practice)
GOOD_OVERLAP_YEARS = 1.0
#: correlation of paired skew surges below which the gauges do not share their storms (refused)
MIN_CORRELATION = 0.5
#: correlation below which the transfer needs a look
GOOD_CORRELATION = 0.7
#: storms per year above the level used to count the overlap's storms [1/year]
STORMS_PER_YEAR = 5.0
#: significance of the storm-count and storm-size tests
ALPHA = 0.05
#: residual spread of the largest reference surges over the overall spread above which the noise model
#: needs a look [-]
MAX_SPREAD_RATIO = 2.0
#: a record shorter than this is short: its long-period levels get a verdict [years]
SHORT_RECORD_YEARS = 10.0


@dataclass(frozen=True)
class Finding:
    """The outcome of one check.

    Attributes
    ----------
    check : str
        Short name of the check.
    severity : {"ok", "check", "unreliable"}
    reason : str
        Plain words, with the numbers.
    """

    check: str
    severity: str
    reason: str

    def __post_init__(self):
        if self.severity not in SEVERITIES:
            raise ValueError(f"severity must be one of {SEVERITIES}; got {self.severity!r}")

    def to_dict(self) -> dict:
        return {"check": self.check, "severity": self.severity, "reason": self.reason}


def worst_severity(findings) -> str:
    """The most severe of the findings' severities (``ok`` for none)."""
    return max((f.severity for f in findings), key=SEVERITIES.index, default="ok")


def _overlap(pairs, tides_per_year):
    years = pairs.n_pairs / tides_per_year
    if years < MIN_OVERLAP_YEARS:
        return Finding("overlap length", "unreliable",
                       f"the site and reference records share only {years:.2f} years of tides "
                       f"({pairs.n_pairs} pairs); a transfer needs at least {MIN_OVERLAP_YEARS:g} year, "
                       f"preferably {GOOD_OVERLAP_YEARS:g} or more")
    if years < GOOD_OVERLAP_YEARS:
        return Finding("overlap length", "check",
                       f"the site and reference records share {years:.2f} years of tides; less than a full "
                       "year leaves some storm seasons out of the relation")
    return Finding("overlap length", "ok", f"the records share {years:.2f} years of tides ({pairs.n_pairs} pairs)")


def _correlation(pairs):
    r = pairs.correlation
    text = f"correlation of paired skew surges {r:.2f} at a lag of {pairs.lag_hours:g} h"
    if not np.isfinite(r) or r < MIN_CORRELATION:
        return Finding("skew-surge correlation", "unreliable",
                       f"{text}, below {MIN_CORRELATION:g}: the gauges do not share their storms closely "
                       "enough to carry the reference's storm climate to the site; transfer refused")
    if r < GOOD_CORRELATION:
        return Finding("skew-surge correlation", "check",
                       f"{text}, below {GOOD_CORRELATION:g}: much of the site's surge is local; the transfer "
                       "rests on the noise model")
    return Finding("skew-surge correlation", "ok", text)


def _storms(pairs, reference_skew: pd.Series):
    """Are the overlap's storms typical of the reference record? Count and size of reference storms."""
    from extremes.extremal import samples

    findings = []
    ref = reference_skew.dropna()
    start, end = pairs.pairs["reference_time"].min(), pairs.pairs["reference_time"].max()
    record_years = (ref.index[-1] - ref.index[0]) / pd.Timedelta(days=DAYS_PER_YEAR)
    inside = (ref.index >= start) & (ref.index <= end)
    overlap_years = (end - start) / pd.Timedelta(days=DAYS_PER_YEAR)
    # storms: peaks 72 h apart above the 0.95 quantile; the level exceeded by STORMS_PER_YEAR of them a year
    base = samples.peaks_over_threshold(ref, threshold=float(np.quantile(ref.to_numpy(), 0.95)),
                                        min_separation_hours=72.0).peaks
    n_keep = int(round(STORMS_PER_YEAR * record_years))
    if base.size < max(n_keep, 10):
        return [Finding("overlap storms", "check", "too few reference storms to judge whether the overlap's "
                                                   "storms are typical")]
    level = float(np.sort(base.to_numpy())[::-1][n_keep - 1])
    all_peaks = base[base >= level]
    in_peaks = all_peaks[(all_peaks.index >= start) & (all_peaks.index <= end)]
    out_peaks = all_peaks[(all_peaks.index < start) | (all_peaks.index > end)]
    rate = all_peaks.size / record_years
    expected = rate * overlap_years
    k = int(in_peaks.size)
    p_count = float(min(1.0, 2 * min(stats.poisson.cdf(k, expected), stats.poisson.sf(k - 1, expected))))
    text = (f"{k} reference storms above {level:.2f} m in the overlap against {expected:.1f} expected from the "
            f"reference record")
    if p_count < ALPHA:
        findings.append(Finding("overlap storms", "check",
                                f"{text} (Poisson p = {p_count:.3f}): the overlap's storminess is atypical of the "
                                "reference record; the relation may not hold for the reference's other storms"))
    else:
        findings.append(Finding("overlap storms", "ok", f"{text} (Poisson p = {p_count:.2f})"))
    # largest storm of the overlap against the reference's annual rate: was the relation seen in a storm?
    largest = float(ref[inside].max()) if inside.any() else float("nan")
    n_above = int(np.sum(all_peaks.to_numpy() >= largest)) if np.isfinite(largest) else 0
    period = record_years / max(n_above, 1)
    if not np.isfinite(largest) or period < 0.5:
        findings.append(Finding("overlap storms", "check",
                                f"the largest reference skew surge in the overlap ({largest:.2f} m) recurs about "
                                f"every {period:.2f} years in the reference record: the relation has not been "
                                "seen in a storm"))
    if in_peaks.size >= 5 and out_peaks.size >= 5:
        ks = stats.ks_2samp(in_peaks.to_numpy(), out_peaks.to_numpy())
        if ks.pvalue < ALPHA:
            findings.append(Finding("overlap storms", "check",
                                    f"the sizes of the overlap's reference storms differ from the rest of the "
                                    f"reference record (two-sample Kolmogorov-Smirnov p = {ks.pvalue:.3f})"))
    return findings


def _interaction(site_interaction, reference_interaction):
    findings = []
    for who, tests in (("site", site_interaction), ("reference", reference_interaction)):
        if tests is None:
            continue
        if bool(getattr(tests, "level_dependent", False)):
            verdict = str(getattr(tests, "verdict", "")).strip()
            findings.append(Finding("tide-surge interaction", "check",
                                    f"skew surge at the {who} depends on its predicted high-water level"
                                    + (f" ({verdict})" if verdict else "") + ": the transfer and the "
                                    "convolution assume skew surge independent of the tide"))
    if not findings and site_interaction is not None:
        findings.append(Finding("tide-surge interaction", "ok",
                                "no dependence of skew surge on tide level found at the site (a short record "
                                "tests weakly)"))
    return findings


def _spread(relation):
    if relation.upper_spread_ratio > MAX_SPREAD_RATIO:
        return [Finding("residual spread", "check",
                        f"the residual spread at the largest reference surges is {relation.upper_spread_ratio:.1f}"
                        " times the overall spread: the site responds to storms in a way the linear relation "
                        "describes poorly")]
    return []


def transfer_checks(pairs, relation, reference_skew, *, tides_per_year, site_interaction=None,
                    reference_interaction=None) -> tuple[Finding, ...]:
    """Every check of a transfer: overlap length, correlation, overlap storms, interaction, residual spread.

    Parameters
    ----------
    pairs : extremes.transfer.pairing.OverlapPairs
    relation : extremes.transfer.relation.SkewSurgeRelation
    reference_skew : pandas.Series
        The reference's whole skew-surge record on UTC times [m].
    tides_per_year : float
        The site's high waters per year (to turn pairs into years).
    site_interaction, reference_interaction : extremes.surge.InteractionTests, optional

    Returns
    -------
    tuple of Finding
    """
    findings = [_overlap(pairs, tides_per_year), _correlation(pairs)]
    try:
        findings += _storms(pairs, reference_skew)
    except (ExtremesError, ValueError) as err:
        findings.append(Finding("overlap storms", "check", f"the overlap's storms could not be compared with the "
                                                           f"reference record ({err})"))
    findings += _interaction(site_interaction, reference_interaction)
    findings += _spread(relation)
    return tuple(findings)


def short_record_findings(record_years: float, periods_years, *, method: str,
                          transfer_supported: bool = False) -> tuple[Finding, ...]:
    """The verdict on the long-period levels of a short record (fewer than ``SHORT_RECORD_YEARS`` years).

    Levels beyond twice the record's length need a look (``check``) and beyond five times it must not be used
    as they stand (``unreliable``), whatever the method and however narrow its interval: a few years of
    storms cannot show the tail that sets them (METHODS sec. 14; the 2-to-5-times rule is this package's,
    in line with the common practice of extrapolating direct fits no further than a few record lengths).
    A supported reference-gauge transfer carries the reference's storms, so the rule is then not applied
    to its method.

    Returns
    -------
    tuple of Finding
        Empty when the record is not short.
    """
    if not np.isfinite(record_years) or record_years <= 0:
        raise DataError(f"record_years must be > 0; got {record_years!r}")
    if record_years >= SHORT_RECORD_YEARS:
        return ()
    if transfer_supported and method == "reference-skew-surge-joint-probability":
        return (Finding("short record", "ok",
                        f"a {record_years:.1f}-year record: long-period levels rest on the reference gauge's "
                        "storm climate carried to the site"),)
    periods = np.asarray(periods_years, dtype=float)
    bad = periods[periods > 5 * record_years]
    doubtful = periods[(periods > 2 * record_years) & (periods <= 5 * record_years)]
    out = []

    def listing(p):
        return ", ".join(f"{v:g}" for v in p)

    if bad.size:
        out.append(Finding("short record", "unreliable",
                           f"a {record_years:.1f}-year record cannot support the {listing(bad)}-year levels of "
                           f"{method} (beyond five times its length), whatever their interval; use a longer "
                           "record or a long reference gauge nearby (--reference)"))
    if doubtful.size:
        out.append(Finding("short record", "check",
                           f"the {listing(doubtful)}-year levels of {method} extrapolate a "
                           f"{record_years:.1f}-year record beyond twice its length"))
    return tuple(out)
