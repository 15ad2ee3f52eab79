"""Result object of the joint-probability methods."""
from __future__ import annotations

from dataclasses import dataclass, field

import pandas as pd

from extremes.curves import ReturnLevelCurve
from extremes.jsonable import to_jsonable

__all__ = ["JointProbabilityResult", "CLUSTERING_TABLE_PERIODS_YEARS"]

#: return periods of the clustering-effect table [years]
CLUSTERING_TABLE_PERIODS_YEARS = (10.0, 100.0, 1000.0)


@dataclass(frozen=True, repr=False)
class JointProbabilityResult:
    """Still-water return levels by a joint-probability method.

    Attributes
    ----------
    method : str
        ``skew-surge-joint-probability`` or ``joint-probability``.
    curve : ReturnLevelCurve
        Return levels with storm clustering (extremal index as a function of level). [m]
    curve_unclustered : ReturnLevelCurve
        The same with :math:`\\theta = 1` (every exceeding tide or hour counted as an event). [m]
    clustering_effect : pandas.DataFrame
        ``return_period_years, level_unclustered_m, level_clustered_m, difference_m`` at 10/100/1000 years.
    extremal_index : pandas.DataFrame or None
        ``level_m, theta, exceedances_per_series``: the extremal index estimated on a grid of levels.
    threshold_m : float
        Surge threshold of the GPD tail. [m]
    tail : dict
        Tail parameters per component (``all``, tide bands or months): threshold, tail probability,
        scale [m], shape.
    events_per_year : float
        Tides (or hours) per year in the tide set, N. [1/year]
    notes : tuple of str
        Assumptions and warnings in plain words.
    diagnostics : dict
        Counts, record years, interaction test, stratification, timings.
    """

    method: str
    curve: ReturnLevelCurve
    curve_unclustered: ReturnLevelCurve
    clustering_effect: pd.DataFrame
    extremal_index: pd.DataFrame | None
    threshold_m: float
    tail: dict
    events_per_year: float
    notes: tuple = field(default_factory=tuple)
    diagnostics: dict = field(default_factory=dict)

    def __repr__(self) -> str:
        return (f"JointProbabilityResult(method={self.method!r}, threshold={self.threshold_m:.3f} m, "
                f"events_per_year={self.events_per_year:.2f}, n_notes={len(self.notes)})")

    def to_dict(self) -> dict:
        """JSON-ready dictionary."""
        return to_jsonable({
            "method": self.method,
            "curve": self.curve.to_dict(),
            "curve_unclustered": self.curve_unclustered.to_dict(),
            "clustering_effect": self.clustering_effect,
            "extremal_index": self.extremal_index,
            "threshold_m": self.threshold_m,
            "tail": self.tail,
            "events_per_year": self.events_per_year,
            "notes": list(self.notes),
            "diagnostics": self.diagnostics,
        })
