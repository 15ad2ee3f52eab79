r"""Non-tidal residual, skew surge, tide-surge interaction and mean-sea-level trend, under one name.

The work is done in modules named for what they do; this module gathers their public names so that
``from extremes import surge; surge.<name>`` keeps working:

* :mod:`extremes.residual`: :func:`residual_from_prediction`, :func:`non_tidal_residual`;
* :mod:`extremes.skewsurge`: :func:`skew_surges_from_turning_points`, :func:`skew_surges`;
* :mod:`extremes.interaction`: :class:`InteractionTests`, :func:`interaction_tests_from_series`,
  :func:`interaction_tests` (timing test and the tail-focused test of tide-level dependence);
* :mod:`extremes.msl`: :func:`annual_mean_sea_level`, :func:`msl_trend`, :class:`MSLTrend`,
  :func:`adjust_to_epoch`, :func:`effective_sample_size`, :func:`decimal_year`.

Conventions: levels in metres, times tz-aware UTC (naive times raise :class:`ValueError`).
"""
from __future__ import annotations

from extremes.interaction import InteractionTests, interaction_tests, interaction_tests_from_series
from extremes.msl import (
                          NODAL_PERIOD_YEARS,
                          MSLTrend,
                          adjust_to_epoch,
                          annual_mean_sea_level,
                          decimal_year,
                          effective_sample_size,
                          msl_trend,
)
from extremes.residual import non_tidal_residual, residual_from_prediction
from extremes.skewsurge import skew_surges, skew_surges_from_turning_points

__all__ = [
    "NODAL_PERIOD_YEARS",
    "InteractionTests",
    "MSLTrend",
    "adjust_to_epoch",
    "annual_mean_sea_level",
    "decimal_year",
    "effective_sample_size",
    "interaction_tests",
    "interaction_tests_from_series",
    "msl_trend",
    "non_tidal_residual",
    "residual_from_prediction",
    "skew_surges",
    "skew_surges_from_turning_points",
]
