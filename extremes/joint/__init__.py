"""Joint-probability methods: tide x surge convolution into still-water return levels.

Public functions (see each module):

- :func:`skew_surge_joint_probability` (:mod:`extremes.joint.skew`): predicted high waters of a nodal
  cycle x skew surge, with storm clustering as a function of level, block bootstrap of years, optional
  tide-band or monthly stratification.
- :func:`classic_joint_probability` (:mod:`extremes.joint.classic`): hourly tide x hourly non-tidal
  residual (Pugh-Vassie JPM, Tawn-Vassie revised JPM with an extremal index of the hourly level).
- :func:`direct_annual_maxima`, :func:`direct_peaks_over_threshold`, :func:`direct_r_largest`
  (:mod:`extremes.joint.direct`): the direct methods on the total level, as curves for comparison.
- :func:`compare_methods` (:mod:`extremes.joint.compare`): one table and a recommended method by a
  documented rule; :func:`skew_surge_method_for` runs the tide-band stratified skew-surge method when the
  interaction test finds a dependence.
- Cores on plain arrays (:mod:`extremes.joint.core`): :class:`SurgeDistribution`,
  :func:`exceedance_per_tide`, :func:`levels_for_rates`.
"""
from extremes.joint.classic import classic_joint_probability
from extremes.joint.clustering import extremal_index_by_level
from extremes.joint.compare import MethodComparison, compare_methods, skew_surge_method_for
from extremes.joint.core import SurgeDistribution, exceedance_per_tide, levels_for_rates
from extremes.joint.direct import direct_annual_maxima, direct_peaks_over_threshold, direct_r_largest
from extremes.joint.result import JointProbabilityResult
from extremes.joint.skew import skew_surge_joint_probability

__all__ = ["SurgeDistribution", "exceedance_per_tide", "levels_for_rates", "extremal_index_by_level",
           "JointProbabilityResult", "skew_surge_joint_probability", "classic_joint_probability",
           "MethodComparison", "compare_methods", "skew_surge_method_for", "direct_annual_maxima",
           "direct_peaks_over_threshold",
           "direct_r_largest"]
