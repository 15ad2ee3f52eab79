r"""The sea-level-rise stage: everything a study derives from the rise offsets, from one return-level curve.

One function, :func:`assess_sea_level_rise`, serves the study and ``extremes rerun``, so a rerun with new
offsets gives exactly what a fresh study with those offsets gives. From the recommended curve it computes:

* the levels of each return period raised by each offset, with the present return period of each raised
  level (offset rule, Hunter 2012 [1]_);
* the exceedance amplification of the 100-year level for each positive offset;
* for no rise and for each offset (held over the whole design life): the chance that the
  present 100-year level is exceeded at least once over the design life, and the design level whose
  chance of exceedance over the life equals the accepted risk (Borgman 1963 [2]_);
* with a scenario table: the same for each scenario's rise by year, and Hunter's allowance when the table
  has low, central and high scenarios.

References
----------
.. [1] J. Hunter, "A simple technique for estimating an allowance for uncertain sea-level rise,"
   *Climatic Change*, vol. 113, pp. 239-252, 2012, doi:10.1007/s10584-011-0332-1.
.. [2] L. E. Borgman, "Risk criteria," *J. Waterways Harbors Div., ASCE*, vol. 89, pp. 1-35, 1963.
"""
from __future__ import annotations

import logging
from dataclasses import dataclass, field

import numpy as np

from extremes.errors import DataError

logger = logging.getLogger(__name__)

__all__ = ["SeaLevelRiseAssessment", "assess_sea_level_rise", "HEADLINE_PERIOD_YEARS"]

#: the return period whose level is followed through the sea-level-rise stage [years]
HEADLINE_PERIOD_YEARS = 100.0
#: z of the two-sided 90 % range of a normal distribution (5 to 95 %)
_Z90 = 1.6448536


@dataclass(frozen=True, eq=False, repr=False)
class SeaLevelRiseAssessment:
    """What the sea-level-rise stage found, for one curve.

    Attributes
    ----------
    method : str
        Method of the curve raised.
    rows : list of dict
        One per offset and period (CONTRACT.md ``sea_level_rise``). [m, years]
    level_100_m : float
        Present 100-year level. [m]
    design_life_years : int
    accepted_risk : float
    amplification : list of Amplification
        Of the 100-year level, for each positive offset.
    encounter : list of EncounterProbability
        Of the present 100-year level, for no rise and each offset held over the life.
    design_levels : list of DesignLevel
        For no rise and each offset held over the life.
    by_offset : list of dict
        One row per offset (0 first): the offset, the raised 100-year level, its present return period, the
        encounter probability of the present 100-year level over the life and the design level.
    scenarios : SeaLevelScenarios or None
    scenario_results : list of dict
    allowance : dict or None
        Hunter allowance (closed form, ``allowance``), the allowance solved on the curve (``on_curve``, the one
        used: ``used``) and the assumption.
    """

    method: str
    rows: list
    level_100_m: float
    design_life_years: int
    accepted_risk: float
    amplification: list = field(default_factory=list)
    encounter: list = field(default_factory=list)
    design_levels: list = field(default_factory=list)
    by_offset: list = field(default_factory=list)
    scenarios: object = None
    scenario_results: list = field(default_factory=list)
    allowance: dict | None = None

    def __repr__(self) -> str:
        return (f"SeaLevelRiseAssessment(method={self.method!r}, offsets={len(self.by_offset)}, "
                f"life={self.design_life_years} years)")

    def details_dict(self) -> dict:
        """The ``sea_level_rise_details`` object of results.json."""
        return {
            "method": self.method,
            "level_100_m": self.level_100_m,
            "design_life_years": self.design_life_years,
            "accepted_risk": self.accepted_risk,
            "by_offset": self.by_offset,
            "amplification": self.amplification,
            "encounter": self.encounter,
            "design_levels": self.design_levels,
            "scenarios": self.scenario_results,
            "allowance": self.allowance,
        }

    def to_dict(self) -> dict:
        """``{"sea_level_rise": rows, "sea_level_rise_details": ...}`` as in results.json."""
        return {"sea_level_rise": self.rows, "sea_level_rise_details": self.details_dict()}


def _per_offset(sealevel, curve, offsets, *, level_100, life, accepted_risk):
    """Encounter probabilities, design levels and the one-row-per-offset table."""
    encounter, design, table = [], [], []
    for offset in offsets:
        # the offset holds over the whole design life (the level raised by it, as in the rows)
        enc = sealevel.encounter_probability_with_rise(curve, level_m=level_100, design_life_years=life,
                                                       rise_m=float(offset))
        des = sealevel.design_level(curve, accepted_probability=accepted_risk, design_life_years=life,
                                    rise_m=float(offset))
        encounter.append(enc)
        design.append(des)
        raised = level_100 + offset
        present = float(sealevel.present_return_period(curve, [raised])[0])
        table.append({"offset_m": float(offset), "level_100_m": raised,
                      "present_return_period_years": present if np.isfinite(present) else None,
                      "encounter_probability_of_present_100yr_level": enc.probability,
                      "design_life_years": life, "accepted_risk": accepted_risk,
                      "design_level_m": des.level_m})
    return encounter, design, table


def _scenario_results(sealevel, curve, scenarios, *, level_100, life, accepted_risk, epoch_year):
    results = []
    for name in scenarios.names:
        rise = sealevel.rise_by_year(scenarios, name, start_year=epoch_year, design_life_years=life,
                                     reference_year=epoch_year)
        results.append({
            "scenario": name,
            "encounter_100yr_level": sealevel.encounter_probability_with_rise(
                curve, level_m=level_100, design_life_years=life, rise_m=rise),
            "design_level": sealevel.design_level(curve, accepted_probability=accepted_risk,
                                                  design_life_years=life, rise_m=rise),
            "rise_end_of_life_m": float(rise[-1]),
        })
    return results


def _allowance(sealevel, curve, scenarios, *, life, epoch_year):
    """Hunter (2012) allowance when the scenario table has low, central and high scenarios."""
    names = {name.lower(): name for name in scenarios.names}
    if not {"low", "central", "high"} <= set(names):
        return None
    # the rise at the end of the design life taken as normal: mean = the central scenario, 5-95 % range = low
    # to high (an assumption, stated in the results)
    ends = {key: float(sealevel.rise_by_year(scenarios, names[key], start_year=epoch_year, design_life_years=life,
                                             reference_year=epoch_year)[-1])
            for key in ("low", "central", "high")}
    from extremes.sealevel.allowance import allowance_on_curve

    scale = sealevel.gumbel_scale_of_curve(curve, period_years=HEADLINE_PERIOD_YEARS)
    sd = (ends["high"] - ends["low"]) / (2 * _Z90)
    return {
        "allowance": sealevel.allowance_normal(mean_m=ends["central"], sd_m=sd, scale_m=scale),
        # solved on the fitted curve itself (used); Hunter's closed form above, with the local Gumbel slope, beside
        "on_curve": allowance_on_curve(curve, mean_m=ends["central"], sd_m=sd, period_years=HEADLINE_PERIOD_YEARS),
        "used": "on_curve",
        "assumption": "rise at the end of the design life normal, mean = central scenario, 5-95 % range = low to "
                      "high scenario; closed form with the Gumbel scale from the 100-year slope of the curve",
    }


def assess_sea_level_rise(curve, *, offsets_m, periods_years, design_life_years: float = 50.0,
                          accepted_risk: float = 0.1, scenarios=None,
                          epoch_year: float | None = None) -> SeaLevelRiseAssessment:
    r"""Everything derived from sea-level-rise offsets (and scenarios) for one return-level curve.

    Parameters
    ----------
    curve : ReturnLevelCurve
        The present curve (levels at the mean-sea-level epoch). [m]
    offsets_m : sequence of float, keyword-only
        Rise offsets. [m]
    periods_years : sequence of float, keyword-only
        Return periods of the raised levels. [years]
    design_life_years : float, keyword-only
        Design life (rounded to whole years). [years]
    accepted_risk : float, keyword-only
        Accepted chance of at least one exceedance over the design life.
    scenarios : SeaLevelScenarios, path-like or None, keyword-only
        Rise-by-year scenarios (:func:`extremes.sealevel.read_scenarios`).
    epoch_year : float, optional
        Epoch of the curve [decimal year]; default the curve's own.

    Returns
    -------
    SeaLevelRiseAssessment

    Raises
    ------
    DataError
        If the offsets, life or risk are invalid, or the scenario table cannot be read.

    Notes
    -----
    The raised level is :math:`z_T + \Delta z` (Hunter 2012 [1]_); its present return period reads the
    present curve at that level. Encounter probability over a life of L years with rise
    :math:`\Delta z_y` in year y is :math:`1 - \prod_y [1 - p(z - \Delta z_y)]` (Borgman 1963 [2]_).

    References
    ----------
    .. [1] J. Hunter, *Climatic Change*, vol. 113, pp. 239-252, 2012, doi:10.1007/s10584-011-0332-1.
    .. [2] L. E. Borgman, *J. Waterways Harbors Div., ASCE*, vol. 89, pp. 1-35, 1963.
    """
    from extremes import sealevel

    offsets = sealevel.parse_offsets(offsets_m)
    if not (0 < float(accepted_risk) < 1):
        raise DataError(f"accepted_risk must be between 0 and 1; got {accepted_risk!r}")
    life = int(round(float(design_life_years)))
    if life < 1:
        raise DataError(f"design_life_years must be >= 1; got {design_life_years!r}")
    epoch = curve.epoch_year if epoch_year is None else float(epoch_year)
    if scenarios is not None and not isinstance(scenarios, sealevel.SeaLevelScenarios):
        scenarios = sealevel.read_scenarios(scenarios)
    rows = sealevel.sea_level_rise_rows(curve, offsets_m=offsets, periods_years=periods_years)
    level_100 = float(curve.level_at([HEADLINE_PERIOD_YEARS])[0])
    amplification = [sealevel.amplification_from_curve(curve, rise_m=o, period_years=HEADLINE_PERIOD_YEARS)
                     for o in offsets if o > 0]
    with_zero = (0.0,) + tuple(o for o in offsets if o != 0.0)
    encounter, design, by_offset = _per_offset(sealevel, curve, with_zero, level_100=level_100, life=life,
                                               accepted_risk=float(accepted_risk))
    scenario_results, allowance = [], None
    if scenarios is not None:
        if epoch is None:
            raise DataError("sea-level-rise scenarios need the curve's mean-sea-level epoch (epoch_year)")
        scenario_results = _scenario_results(sealevel, curve, scenarios, level_100=level_100, life=life,
                                             accepted_risk=float(accepted_risk), epoch_year=epoch)
        allowance = _allowance(sealevel, curve, scenarios, life=life, epoch_year=epoch)
    return SeaLevelRiseAssessment(method=curve.method, rows=rows, level_100_m=level_100, design_life_years=life,
                                  accepted_risk=float(accepted_risk), amplification=amplification,
                                  encounter=encounter, design_levels=design, by_offset=by_offset,
                                  scenarios=scenarios, scenario_results=scenario_results, allowance=allowance)
