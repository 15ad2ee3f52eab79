"""Constants shared by every stage, each defined once with its source.

Every module that needs one of these imports it from here, so that a value (the nodal period, the length of
a year, the default seed) has one definition.
"""
from __future__ import annotations

__all__ = [
    "NODAL_CYCLE_YEARS", "DAYS_PER_YEAR", "HOURS_PER_YEAR", "TROPICAL_YEAR_DAYS", "DEFAULT_SEED",
    "DEFAULT_PERIODS_YEARS", "DEFAULT_SLR_M", "UNIT_TO_METRES", "DEFAULT_CONFIDENCE", "SHAPE_EPS", "EULER_GAMMA",
]

#: Period of the regression of the moon's ascending node (the lunar nodal cycle) [years]. 360 deg divided by
#: the node's rate 0.00220641 deg/h gives 18.613 years (METHODS.md sec. 1; Schureman 1958 rates) [C].
NODAL_CYCLE_YEARS = 18.613

#: Mean Gregorian calendar year [days]: the year of decimal years, record lengths and rates per year.
DAYS_PER_YEAR = 365.2425

#: Hours in the mean calendar year [h].
HOURS_PER_YEAR = DAYS_PER_YEAR * 24.0

#: Tropical year [days] (the period of the sun's mean longitude h; METHODS.md sec. 1), for astronomy only.
TROPICAL_YEAR_DAYS = 365.2422

#: Seed of every random draw unless the user gives one (recorded in every results file).
DEFAULT_SEED = 20261202

#: Return periods reported by default [years] (CONTRACT.md: the default list of ``run``).
DEFAULT_PERIODS_YEARS = (1.0, 2.0, 5.0, 10.0, 20.0, 50.0, 100.0, 200.0, 500.0, 1000.0)

#: Sea-level-rise offsets applied by default [m] (illustrative; a study states its own).
DEFAULT_SLR_M = (0.0, 0.25, 0.5, 1.0)

#: Default confidence level of every interval.
DEFAULT_CONFIDENCE = 0.95

#: Factor that turns a level in these units into metres (1 ft = 0.3048 m exactly, the international foot).
UNIT_TO_METRES = {"m": 1.0, "cm": 0.01, "mm": 0.001, "ft": 0.3048}

#: |shape| below which the GEV/GPD formulas take their shape-zero (Gumbel/exponential) branch (METHODS sec. 9).
SHAPE_EPS = 1e-6

#: Euler-Mascheroni constant (Gumbel mean = location + EULER_GAMMA x scale).
EULER_GAMMA = 0.5772156649015329
