"""The cautions every results file and report states (no plotting imports here).

Written from the practice summarised in METHODS.md section 12: still water only, datum and epoch, the
uncertainty of extrapolation, the method's assumptions, and that local codes govern.

References
----------
.. [1] J. Hunter, "A simple technique for estimating an allowance for uncertain sea-level rise,"
   *Climatic Change*, vol. 113, pp. 239-252, 2012, doi:10.1007/s10584-011-0332-1.
.. [2] S. Coles, *An Introduction to Statistical Modeling of Extreme Values*. London, U.K.: Springer, 2001.
.. [3] T. Howard, "Technical note: Tail behaviour of the statistical distribution of extreme storm surges,"
   *Ocean Sci.*, vol. 18, pp. 905-913, 2022, doi:10.5194/os-18-905-2022.
"""
from __future__ import annotations

import logging
import math

logger = logging.getLogger(__name__)

__all__ = ["standard_cautions"]

_JOINT = {"joint-probability", "skew-surge-joint-probability"}


def standard_cautions(*, datum: str, epoch_year: float | None, record_years: float | None = None,
                      interval_minutes: float | None = None, methods=(), recommended_method: str | None = None,
                      slr_offsets_m=()) -> list[str]:
    """The cautions to print beside every set of design still-water levels.

    Parameters
    ----------
    datum : str, keyword-only
        Name of the vertical datum of the levels (``"unspecified"`` gives a stronger warning).
    epoch_year : float or None, keyword-only
        Mean-sea-level epoch of the levels. [decimal year]
    record_years : float, optional
        Length of the record used, to state the limit of sensible extrapolation (~4x). [years]
    interval_minutes : float, optional
        Sampling interval of the record; hourly or coarser values under-read peaks. [min]
    methods : iterable of str
        Method names in the results. The tide-surge independence caution is left out only when the
        methods are given and none is a joint-probability method.
    recommended_method : str, optional
        The method whose levels are recommended.
    slr_offsets_m : iterable of float
        Sea-level-rise offsets applied. [m]

    Returns
    -------
    list of str
        Plain sentences, one caution each, in a fixed order.
    """
    cautions = [
        "Still-water levels only: wave set-up, wave run-up, overtopping, seiches and river flow are not "
        "included; a design crest level adds these, an allowance for sea-level rise and a freeboard on top.",
    ]
    if not datum or datum == "unspecified":
        cautions.append("The vertical datum of the record was not stated: the levels are relative to an unknown "
                        "zero and must not be used until the datum is confirmed.")
    else:
        cautions.append(f"Levels are in metres above {datum}. Check the datum against the local levelling "
                        "datum (chart datum and land datums differ) before use.")
    if epoch_year is None:
        cautions.append("The mean-sea-level epoch is not stated; levels are at the mean sea level of the record.")
    else:
        cautions.append(f"Levels are stated at the mean-sea-level epoch {epoch_year:.1f}; mean sea level has "
                        "changed since and will change further, so add the rise from that epoch to the "
                        "year of interest.")
    extrapolation = ("Levels for return periods far beyond the record length (rule of thumb: more than about "
                     "four times)")
    if record_years is not None and math.isfinite(record_years) and record_years > 0:
        extrapolation += f", here beyond about {4 * record_years:.0f} years for {record_years:.1f} years of record,"
    # extrapolation limit and interval advice: practice per [2], [3] (METHODS.md sec. 12)
    cautions.append(
        "Every level is an estimate with an uncertainty shown by its confidence interval. "
        + extrapolation + " are very uncertain; consider the upper bound of the interval where the "
        "consequences of exceedance are serious.")
    assumptions = ("The methods assume that, after removal of the mean-sea-level trend, storm statistics are "
                   "stationary; that the chosen tail form (generalised extreme value or generalised Pareto) "
                   "holds beyond the observed events; and that return periods are stated either as 1/AEP "
                   "or as average recurrence intervals (each table says which).")
    cautions.append(assumptions)
    methods = set(methods) | ({recommended_method} if recommended_method else set())
    if not methods or methods & _JOINT:  # stated unless the methods are known and none is a joint one
        cautions.append("The joint-probability methods assume tide and surge (or skew surge) independent, or "
                        "model their dependence; check the interaction tests before relying on them.")
    if interval_minutes is not None and interval_minutes >= 60:
        cautions.append(f"The record is sampled every {interval_minutes:g} minutes; sampled values under-read "
                        "the true peaks of short events.")
    offsets = [float(x) for x in slr_offsets_m]
    if offsets:
        cautions.append("Future levels add sea-level-rise offsets (" + ", ".join(f"{x:g} m" for x in offsets)
                        # offset rule of [1]
                        + ") to present levels, assuming storm-tide statistics relative to mean sea level do not "
                        "change; tidal range may change with rise in shallow water.")
    cautions.append("These results are inputs to engineering judgement. Local codes, permits, agency guidance "
                    "and licensed professional practice govern any design level.")
    return cautions
