"""A site with a short record: the storm climate of a long neighbouring gauge carried to the site.

- :func:`prepare_reference` (:mod:`extremes.transfer.reference`): the reference record read, checked,
  de-tided and reduced to skew surges; :func:`inference_from_reference` gives the site's harmonic
  analysis the reference's ratios for constituents a short record cannot resolve.
- :func:`pair_overlap` (:mod:`extremes.transfer.pairing`): site and reference skew surges matched tide by
  tide at the lag of highest correlation.
- :func:`fit_relation` (:mod:`extremes.transfer.relation`): the regression with its residuals kept as noise.
- :func:`reference_joint_probability` (:mod:`extremes.transfer.site`): the synthetic long site record and
  the skew-surge joint probability at the site, with intervals carrying the transfer's uncertainty.
- :func:`transfer_checks`, :func:`short_record_findings` (:mod:`extremes.transfer.checks`): the findings
  that decide whether the transfer is supported, and the verdict on a short record's long-period levels.
- :mod:`extremes.transfer.simulate`: a simulated pair of gauges with the site's true levels, for checks.
"""
from extremes.transfer.checks import Finding, short_record_findings, transfer_checks, worst_severity
from extremes.transfer.pairing import OverlapPairs, match_skew_surges, pair_overlap
from extremes.transfer.reference import ReferenceGauge, inference_from_reference, prepare_reference, record_from_series
from extremes.transfer.relation import SkewSurgeRelation, fit_relation
from extremes.transfer.site import METHOD, ReferenceTransferResult, reference_joint_probability

__all__ = ["Finding", "short_record_findings", "transfer_checks", "worst_severity", "OverlapPairs",
           "match_skew_surges", "pair_overlap", "ReferenceGauge", "inference_from_reference", "prepare_reference",
           "record_from_series", "SkewSurgeRelation", "fit_relation", "METHOD", "ReferenceTransferResult",
           "reference_joint_probability"]
