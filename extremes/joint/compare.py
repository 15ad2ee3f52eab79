"""Comparison of methods and the recommended method, by a documented rule.

Rule (this package's, in order; never the highest or lowest level):

1. ``skew-surge-joint-probability`` when the skew-surge record covers >= ``min_record_years_jpm`` (10) years
   and the tail-focused interaction test (:mod:`extremes.tail_dependence`) finds no material dependence of the
   skew-surge tail on the tide level, or the tide-band stratified variant was used (the study runs it whenever
   the test finds one): it uses every tide, is free of timing errors and extrapolates through the surge tail
   alone [1]_.
2. ``joint-probability`` (revised JPM, hourly) under the same conditions when no skew-surge curve is given.
3. Otherwise ``peaks-over-threshold`` (it uses every storm, annual maxima one value a year), else
   ``annual-maxima``, else ``r-largest``; direct fits on records shorter than ~20 years extrapolate poorly
   and are flagged. If no direct fit exists, the joint method is reported with a strong caution. Annual
   maxima (GEV) always remain a check.

Every level of the table is on one period basis (``basis``, default ``"1/rate"``): annual-maximum models
(``1/AEP``) are read at the same annual exceedance probability as the rate models, since at 1.5-2 years the
two definitions differ by 0.5 year or more. A method whose curve is missing at the comparison periods is
skipped. The reason states the record length, the interaction verdict and any diagnostics passed in.

References
----------
.. [1] C. Batstone et al., "A UK best-practice approach for extreme sea-level analysis along complex
   topographic coastlines," Ocean Eng., vol. 71, pp. 28-39, 2013, doi:10.1016/j.oceaneng.2013.02.003.
"""
from __future__ import annotations

import logging
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from extremes.errors import DataError, ExtremesError
from extremes.jsonable import to_jsonable

logger = logging.getLogger(__name__)

__all__ = ["MethodComparison", "compare_methods", "COMPARISON_PERIODS_YEARS", "skew_surge_method_for"]

#: default periods of the comparison table [years]
COMPARISON_PERIODS_YEARS = (1.5, 2, 5, 10, 20, 50, 100, 200, 500, 1000)
_BASIS_WORDS = {"1/rate": "average recurrence interval; AEP = 1 - exp(-1/T)", "1/AEP": "reciprocal of the AEP"}


@dataclass(frozen=True, repr=False)
class MethodComparison:
    """All methods at common return periods and the recommended one.

    Attributes
    ----------
    table : pandas.DataFrame
        ``method, return_period_years, level_m, lower_m, upper_m, confidence, period_definition`` (the one
        basis of the table), ``native_return_period_years`` and ``native_period_definition`` (the period each
        level was read at on its own curve) [m, years].
    recommended_method : str
        The method the rule picks (module docstring).
    reason : str
        Why, in words.
    spread_m : pandas.Series
        Highest minus lowest level across methods at each period. [m]
    """

    table: pd.DataFrame
    recommended_method: str
    reason: str
    spread_m: pd.Series = field(default_factory=lambda: pd.Series(dtype=float))

    def __repr__(self) -> str:
        return (f"MethodComparison(n_methods={self.table['method'].nunique()}, "
                f"recommended_method={self.recommended_method!r})")

    def to_dict(self) -> dict:
        """JSON-ready dictionary."""
        return to_jsonable({"table": self.table, "recommended_method": self.recommended_method,
                            "reason": self.reason,
                            "spread_m": {str(k): v for k, v in self.spread_m.items()}})


def compare_methods(curves, *, record_years, interaction=None, stratified=False, diagnostics=None,
                    periods_years=COMPARISON_PERIODS_YEARS, min_record_years_jpm=10.0,
                    basis="1/rate") -> MethodComparison:
    """One table of every method's levels and a recommended method with its reason.

    Parameters
    ----------
    curves : dict or iterable of ReturnLevelCurve
        Curves by method name (or curves, keyed by their ``method``).
    record_years : float
        Length of the usable record. [years]
    interaction : extremes.surge.InteractionTests, optional
        Interaction tests; ``level_dependent`` true rules out the unstratified joint methods.
    stratified : bool
        Whether the joint-probability curves used the tide-band stratified surge distribution.
    diagnostics : dict, optional
        ``{method: text}`` of fit diagnostics to carry into the reason (e.g. a poor fit).
    periods_years : sequence of float
        Periods of the table. [years]
    min_record_years_jpm : float
        Shortest record for which a joint method is preferred. [years]
    basis : {"1/rate", "1/AEP"}
        The one period definition of the table: every curve is read at the periods under this definition
        (:meth:`extremes.curves.ReturnLevelCurve.table_on_basis`), so levels of annual-maximum models (1/AEP)
        and of rate models (1/rate) are compared at equal annual exceedance probability. Default ``"1/rate"``,
        under which every curve has a level at every period of at least 1 year.

    Returns
    -------
    MethodComparison
    """
    if not isinstance(curves, dict):
        curves = {c.method: c for c in curves}
    if not curves:
        raise DataError("curves is empty; give at least one ReturnLevelCurve")
    if not np.isfinite(record_years) or record_years <= 0:
        raise DataError(f"record_years must be > 0 [years]; got {record_years!r}")
    if basis not in ("1/rate", "1/AEP"):
        raise DataError(f"basis must be '1/rate' or '1/AEP'; got {basis!r}")
    periods = np.asarray(periods_years, dtype=float)
    frames = []
    for name, c in curves.items():
        t = c.table_on_basis(periods, basis=basis)
        t["method"] = name
        frames.append(t[np.isfinite(t["native_return_period_years"])])
    table = pd.concat(frames, ignore_index=True)
    table.attrs.update(units="m", period_definition=basis)
    spread = table.groupby("return_period_years")["level_m"].agg(lambda v: v.max() - v.min())
    dependent = bool(getattr(interaction, "level_dependent", False)) if interaction is not None else None
    joint_ok = record_years >= min_record_years_jpm and (not dependent or stratified)
    why = [f"record of {record_years:.1f} years",
           f"levels compared at one period basis, {basis} ({_BASIS_WORDS[basis]}); a method defined otherwise is "
           "read at the same annual exceedance probability"]
    if interaction is None:
        why.append("no interaction test given (independence of tide and surge assumed)")
    elif dependent:
        why.append("skew surge depends on tide level in its upper tail (tail-focused interaction test)" +
                   ("; the tide-band stratified convolution accounts for it" if stratified else ""))
    else:
        why.append("no material dependence of the skew-surge tail on tide level (tail-focused interaction test)")
    pick = None
    if joint_ok:
        for name in ("skew-surge-joint-probability", "joint-probability"):
            if name in curves:
                pick = name
                why.append(f"{name} uses every tide of the record and the full nodal cycle of tides, so it "
                           "extrapolates through the surge tail alone")
                break
    elif record_years < min_record_years_jpm:
        why.append(f"shorter than {min_record_years_jpm:g} years: the joint methods' surge tail and extremal "
                   "index are not trusted")
    if pick is None:
        # peaks over threshold use every storm, annual maxima one value a year: POT first
        order = ("peaks-over-threshold", "annual-maxima", "r-largest")
        pick = next((m for m in order if m in curves), None)
        if pick is not None:
            why.append(f"{pick} fits the total level directly")
            if record_years < 20:
                why.append("direct fits on fewer than ~20 years extrapolate poorly: treat long periods with care")
        else:
            pick = next((m for m in ("skew-surge-joint-probability", "joint-probability") if m in curves),
                        next(iter(curves)))
            why.append(f"no direct fit was possible, so {pick} is reported although the record is short: treat "
                       "every level beyond a few years with great care")
    if "annual-maxima" in curves and pick != "annual-maxima":
        why.append("annual maxima (GEV) kept as a check")
    for name, text in (diagnostics or {}).items():
        why.append(f"{name}: {text}")
    return MethodComparison(table=table, recommended_method=pick, reason="; ".join(why) + ".", spread_m=spread)


def skew_surge_method_for(high_waters_m, skew_surge, *, interaction, notes=None, **options):
    """The skew-surge joint probability the interaction test calls for: tide-band stratified on dependence.

    When ``interaction.level_dependent`` (the tail-focused test of :mod:`extremes.tail_dependence`), the
    tide-band stratified convolution is run (Tawn & Vassie 1989; Batstone et al. 2013 [1]_); should its
    per-band tail fits fail, the unstratified method is run instead, said so in ``notes``, and reported as not
    stratified, so that :func:`compare_methods` does not recommend it.

    Parameters
    ----------
    high_waters_m, skew_surge
        As in :func:`extremes.joint.skew_surge_joint_probability`.
    interaction : extremes.surge.InteractionTests or None
        The interaction tests.
    notes : list of str, optional
        Receives the note of a fallback.
    **options
        Keyword options of :func:`extremes.joint.skew_surge_joint_probability` (not ``stratify``).

    Returns
    -------
    tuple
        ``(JointProbabilityResult, stratified: bool)``.
    """
    from extremes.joint.skew import skew_surge_joint_probability

    if bool(getattr(interaction, "level_dependent", False)):
        try:
            return skew_surge_joint_probability(high_waters_m, skew_surge, interaction=interaction,
                                                stratify="tide-band", **options), True
        except ExtremesError as err:
            if notes is not None:
                notes.append(f"the tide-band stratified skew-surge method failed ({err}); the unstratified method "
                             "is reported although the skew-surge tail depends on the tide, and is not recommended")
    return skew_surge_joint_probability(high_waters_m, skew_surge, interaction=interaction, **options), False
