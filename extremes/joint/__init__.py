"""Joint-probability methods: tide x surge convolution into still-water return levels.

Public functions (see each module):

- :func:`skew_surge_joint_probability` (:mod:`extremes.joint.skew`): predicted high waters of a nodal
  cycle x skew surge, with storm clustering as a function of level, block bootstrap of years, optional
  tide-band or monthly stratification.
- :func:`classic_joint_probability` (:mod:`extremes.joint.classic`): hourly tide x hourly non-tidal
  residual (Pugh-Vassie JPM, Tawn-Vassie revised JPM with an extremal index of the hourly level).
- :func:`compare_methods` (:mod:`extremes.joint.compare`): one table and a recommended method by a
  documented rule; :func:`skew_surge_method_for` runs the tide-band stratified skew-surge method when the
  interaction test finds a dependence.
- Convolution on plain arrays (:mod:`extremes.joint.convolution`): :class:`SurgeDistribution`,
  :func:`exceedance_per_tide`, :func:`levels_for_rates`.
- Tail fits per tide set, rates on a level grid and the block bootstrap of years
  (:mod:`extremes.joint.year_bootstrap`); profile-likelihood intervals adjusted for storm clustering
  (:mod:`extremes.joint.tail_profile`).

The direct methods on the total level (annual maxima, peaks over threshold, r-largest) are curves built by
the extreme-value stage: :mod:`extremes.extremal.direct`.
"""
from extremes.joint.classic import classic_joint_probability
from extremes.joint.clustering import extremal_index_by_level
from extremes.joint.compare import MethodComparison, compare_methods, skew_surge_method_for
from extremes.joint.convolution import SurgeDistribution, exceedance_per_tide, levels_for_rates
from extremes.joint.result import JointProbabilityResult
from extremes.joint.skew import skew_surge_joint_probability

__all__ = ["SurgeDistribution", "exceedance_per_tide", "levels_for_rates", "extremal_index_by_level",
           "JointProbabilityResult", "skew_surge_joint_probability", "classic_joint_probability",
           "MethodComparison", "compare_methods", "skew_surge_method_for"]
