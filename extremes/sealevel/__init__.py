r"""Sea-level rise: offsets, scenarios, future return levels, allowances and encounter probability.

The stage function :func:`assess_sea_level_rise` (:mod:`.stage`) derives everything a study states about
sea-level rise from one return-level curve; the study and ``extremes rerun`` both call it. Beneath it, pure
functions over numbers and :class:`~extremes.curves.ReturnLevelCurve` objects, nothing refitted:
:mod:`.scenarios` (offsets, scenario tables), :mod:`.future` (raised levels and their present return
periods), :mod:`.amplification` (exceedance amplification, Hunter's closed-form allowance),
:mod:`.allowance` (the allowance solved on the curve), :mod:`.encounter` (encounter probability over a
design life, design levels).

Conventions
-----------
- A *rise* or *offset* ``rise_m`` is the change of mean sea level [m] between the curve's mean-sea-level
  epoch (``curve.epoch_year``) and the year of interest. Positive is up; a negative offset (land uplift) is
  allowed.
- Offset rule [1]_: with the storm-tide statistics unchanged relative to mean sea level, the future
  return level is the present return level plus the rise, ``curve.shifted(rise_m)``.
- Exceedance frequency: expected number of exceedance events per year, ``-ln(1 - AEP)`` (Poisson); for a
  ``"1/rate"`` curve this is exactly ``1/T``, for a Gumbel annual-maximum curve it is exactly
  :math:`\exp[-(z-\mu)/\lambda]`, so the amplification :math:`\exp(\Delta z/\lambda)` holds exactly.

Scenario files
--------------
A scenario table gives the rise [m] against calendar year for one or more named scenarios. Two layouts
are read by :func:`read_scenarios`:

CSV (``.csv``, ``.txt``; comma separated; lines starting with ``#`` are comments; the first column is
``year``; every further column is a scenario named by its header; values in metres)::

    # rise of mean sea level relative to 2020 [m]
    year,low,central,high
    2020,0.00,0.00,0.00
    2050,0.10,0.15,0.25
    2100,0.30,0.55,1.00

TOML (``.toml``; a ``[scenarios]`` table with ``years`` and one list per scenario; optional ``units``
(only ``"m"``) and ``reference`` text)::

    [scenarios]
    reference = "rise relative to 2020"
    units = "m"
    years = [2020, 2050, 2100]
    low = [0.00, 0.10, 0.30]
    central = [0.00, 0.15, 0.55]
    high = [0.00, 0.25, 1.00]

Years must increase strictly; at least two rows; every value finite. Between rows the rise is
interpolated linearly in time; outside the table it is not extrapolated (:class:`~extremes.errors.DataError`).

References
----------
.. [1] J. Hunter, "A simple technique for estimating an allowance for uncertain sea-level rise,"
   *Climatic Change*, vol. 113, pp. 239-252, 2012, doi:10.1007/s10584-011-0332-1.
.. [2] J. Hunter, "Estimating sea-level extremes under conditions of uncertain sea-level rise,"
   *Climatic Change*, vol. 99, pp. 331-350, 2010, doi:10.1007/s10584-009-9671-6.
.. [3] L. E. Borgman, "Risk criteria," *J. Waterways Harbors Div., ASCE*, vol. 89, pp. 1-35, 1963.
.. [4] S. Coles, *An Introduction to Statistical Modeling of Extreme Values*. London, U.K.: Springer, 2001.
"""
from __future__ import annotations

from extremes.sealevel.allowance import CurveAllowance, allowance_on_curve, normal_rise_nodes
from extremes.sealevel.amplification import (
    Allowance,
    Amplification,
    allowance_from_samples,
    allowance_normal,
    amplification_from_curve,
    amplification_gpd,
    amplification_gumbel,
    gumbel_scale_of_curve,
)
from extremes.sealevel.encounter import (
    DesignLevel,
    EncounterProbability,
    design_level,
    design_return_period,
    encounter_probability,
    encounter_probability_with_rise,
)
from extremes.sealevel.future import future_return_levels, present_return_period, sea_level_rise_rows
from extremes.sealevel.scenarios import SeaLevelScenarios, parse_offsets, read_scenarios, rise_by_year
from extremes.sealevel.stage import HEADLINE_PERIOD_YEARS, SeaLevelRiseAssessment, assess_sea_level_rise

__all__ = [
    "assess_sea_level_rise", "SeaLevelRiseAssessment", "HEADLINE_PERIOD_YEARS",
    "SeaLevelScenarios", "read_scenarios", "parse_offsets", "rise_by_year", "future_return_levels",
    "present_return_period", "sea_level_rise_rows", "Amplification", "amplification_from_curve",
    "amplification_gumbel", "amplification_gpd", "gumbel_scale_of_curve", "Allowance", "allowance_normal",
    "allowance_from_samples", "CurveAllowance", "allowance_on_curve", "normal_rise_nodes",
    "encounter_probability", "design_return_period", "EncounterProbability", "encounter_probability_with_rise",
    "DesignLevel", "design_level",
]
