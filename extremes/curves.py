"""Return-level curves: the common currency of every method's result.

Each method (annual maxima, peaks over threshold, r-largest, joint probability, skew-surge joint
probability) ends in a :class:`ReturnLevelCurve`: levels (with interval bounds) on a dense, ascending grid
of return periods. Sea-level-rise reruns, the comparison table and the report read only these curves, so
they need no refitting.

Return period conventions (stated in every curve's ``period_definition``):

- ``"1/AEP"``: the return period is the reciprocal of the annual exceedance probability (annual maxima).
- ``"1/rate"``: the return period is the average recurrence interval, the reciprocal of the expected number
  of exceedance events per year (peaks over threshold, joint probability). Then
  :math:`AEP = 1 - \\exp(-1/T)`.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Literal

import numpy as np
import pandas as pd

from extremes.errors import DataError

PeriodDefinition = Literal["1/AEP", "1/rate"]

#: the dense grid of return periods on which curves are stored [years]
DENSE_PERIODS_YEARS = np.unique(
    np.concatenate([np.geomspace(1.001, 10_000.0, 241), [1.01, 1.1, 1.5, 2, 5, 10, 20, 50, 100, 200, 500,
                                                          1000, 2000, 5000, 10_000]])
)


def aep_from_period(periods_years, *, definition: PeriodDefinition) -> np.ndarray:
    """Annual exceedance probability of return periods ``periods_years`` [years] under ``definition``.

    Examples
    --------
    An average recurrence interval of 100 years is an AEP of 0.995 % (METHODS.md sec. 9):

    >>> round(float(aep_from_period(100.0, definition="1/rate")), 6)
    0.00995
    """
    periods = np.asarray(periods_years, dtype=float)
    if definition == "1/AEP":
        return 1.0 / periods
    if definition == "1/rate":
        return -np.expm1(-1.0 / periods)
    raise DataError(f"period definition must be '1/AEP' or '1/rate'; got {definition!r}")


def period_from_aep(aep, *, definition: PeriodDefinition) -> np.ndarray:
    """Return period [years] of annual exceedance probabilities ``aep`` under ``definition``."""
    p = np.asarray(aep, dtype=float)
    if definition == "1/AEP":
        return 1.0 / p
    if definition == "1/rate":
        return -1.0 / np.log1p(-p)
    raise DataError(f"period definition must be '1/AEP' or '1/rate'; got {definition!r}")


@dataclass(frozen=True, repr=False)
class ReturnLevelCurve:
    """Still-water return levels of one method on a grid of return periods.

    Attributes
    ----------
    method : str
        Method name (``annual-maxima``, ``peaks-over-threshold``, ``r-largest``, ``joint-probability``,
        ``skew-surge-joint-probability``).
    periods_years : numpy.ndarray
        Ascending return periods. [years]
    level_m : numpy.ndarray
        Return levels above ``datum`` at the mean-sea-level epoch ``epoch_year``. [m]
    lower_m, upper_m : numpy.ndarray
        Bounds of the interval at level ``confidence`` (NaN where not computed; ``upper_m`` is +inf where
        the data cannot limit the upper bound: ``null`` in JSON with ``upper_unbounded`` true). [m]
    confidence : float
        Confidence level of the bounds, e.g. 0.95.
    period_definition : {"1/AEP", "1/rate"}
        How a return period relates to the annual exceedance probability (module docstring).
    datum : str
        Vertical datum of the levels.
    epoch_year : float or None
        Mean-sea-level epoch of the levels. [decimal year]
    interval_method : str
        How the bounds were obtained (e.g. ``profile likelihood``, ``bootstrap of storms``).
    notes : tuple of str
        Assumptions and diagnostics in plain words.
    """

    method: str
    periods_years: np.ndarray
    level_m: np.ndarray
    lower_m: np.ndarray
    upper_m: np.ndarray
    confidence: float = 0.95
    period_definition: PeriodDefinition = "1/AEP"
    datum: str = "unspecified"
    epoch_year: float | None = None
    interval_method: str = ""
    notes: tuple[str, ...] = field(default_factory=tuple)

    def __post_init__(self):
        periods = np.asarray(self.periods_years, dtype=float)
        arrays = {}
        for name in ("level_m", "lower_m", "upper_m"):
            value = getattr(self, name)
            arr = np.full(periods.shape, np.nan) if value is None else np.asarray(value, dtype=float)
            if arr.shape != periods.shape:
                raise DataError(f"ReturnLevelCurve.{name} has shape {arr.shape}; expected {periods.shape}")
            arrays[name] = arr
        if periods.ndim != 1 or periods.size < 2 or np.any(np.diff(periods) <= 0) or periods[0] < 1:
            raise DataError("ReturnLevelCurve.periods_years must be an ascending grid of periods >= 1 year")
        object.__setattr__(self, "periods_years", periods)
        for name, arr in arrays.items():
            object.__setattr__(self, name, arr)
        object.__setattr__(self, "notes", tuple(self.notes))

    def __repr__(self) -> str:
        return (f"ReturnLevelCurve(method={self.method!r}, n_periods={self.periods_years.size}, "
                f"datum={self.datum!r}, epoch_year={self.epoch_year})")

    # -- evaluation -------------------------------------------------------------------------------
    def _interp(self, values: np.ndarray, periods_years) -> np.ndarray:
        periods = np.asarray(periods_years, dtype=float)
        if np.any(~np.isfinite(periods)) or np.any(periods < 1.0) or np.any(
            periods > self.periods_years[-1] * (1 + 1e-9)
        ):
            raise DataError(
                f"return periods must lie within 1..{self.periods_years[-1]:g} "
                f"years for {self.method}; got {np.atleast_1d(periods).tolist()}"
            )
        logp, logq = np.log(self.periods_years), np.log(np.maximum(periods, 1.0))
        with np.errstate(invalid="ignore"):
            out = np.interp(logq, logp, values)
        if np.any(np.isinf(values)):
            # an unbounded bound (+inf) stays unbounded between its grid period and the neighbouring ones
            j = np.clip(np.searchsorted(logp, logq), 1, logp.size - 1)
            left, right = values[j - 1], values[j]
            at_left, at_right = logq <= logp[j - 1], logq >= logp[j]
            value_inf = np.where(at_left, left, np.where(at_right, right, np.where(np.isinf(left), left, right)))
            out = np.where((np.isinf(left) | np.isinf(right)) & np.isinf(value_inf), value_inf, out)
        below = logq < logp[0]
        if np.any(below):
            # short linear extrapolation in log period down to 1 year (the grid starts just above 1 year);
            # under the 1/AEP definition a 1-year level is undefined (every year exceeds it): NaN.
            slope = (values[1] - values[0]) / (logp[1] - logp[0])
            out = np.where(below, values[0] + slope * (logq - logp[0]), out)
            if self.period_definition == "1/AEP":
                out = np.where(periods <= 1.0, np.nan, out)
        return out

    def level_at(self, periods_years) -> np.ndarray:
        """Return level [m] at ``periods_years`` (linear in log period between grid points)."""
        return self._interp(self.level_m, periods_years)

    def period_of_level(self, level_m) -> np.ndarray:
        """Return period [years] of each level in ``level_m``, by inverting the curve.

        Levels below the lowest grid level give the lowest period; above the highest, ``inf`` (the level is
        rarer than the curve reaches).
        """
        levels = np.asarray(level_m, dtype=float)
        finite = np.isfinite(self.level_m)
        lv, lp = self.level_m[finite], np.log(self.periods_years[finite])
        # keep the curve monotone for inversion
        lv = np.maximum.accumulate(lv)
        keep = np.concatenate([[True], np.diff(lv) > 0])
        lv, lp = lv[keep], lp[keep]
        out = np.exp(np.interp(levels, lv, lp))
        return np.where(levels > lv[-1], np.inf, out)

    def aep_of_level(self, level_m) -> np.ndarray:
        """Annual exceedance probability of each level in ``level_m``."""
        periods = self.period_of_level(level_m)
        with np.errstate(divide="ignore"):
            return np.where(np.isinf(periods), 0.0, aep_from_period(periods, definition=self.period_definition))

    def shifted(self, offset_m: float) -> ReturnLevelCurve:
        """The curve with every level raised by ``offset_m`` (a sea-level-rise offset). [m]"""
        return ReturnLevelCurve(
            method=self.method, periods_years=self.periods_years, level_m=self.level_m + offset_m,
            lower_m=self.lower_m + offset_m, upper_m=self.upper_m + offset_m, confidence=self.confidence,
            period_definition=self.period_definition, datum=self.datum, epoch_year=self.epoch_year,
            interval_method=self.interval_method,
            notes=self.notes + (f"raised by a sea-level-rise offset of {offset_m:g} m",),
        )

    def table(self, periods_years) -> pd.DataFrame:
        """Rows ``method, return_period_years, level_m, lower_m, upper_m, confidence, period_definition``."""
        periods = np.asarray(periods_years, dtype=float)
        return pd.DataFrame({
            "method": self.method,
            "return_period_years": periods,
            "level_m": self.level_at(periods),
            "lower_m": self._interp(self.lower_m, periods),
            "upper_m": self._interp(self.upper_m, periods),
            "confidence": self.confidence,
            "period_definition": self.period_definition,
        })

    def table_on_basis(self, periods_years, *, basis: PeriodDefinition) -> pd.DataFrame:
        """As :meth:`table`, with ``periods_years`` defined by ``basis`` whatever the curve's own definition.

        A period under one definition is turned into the curve's own through the AEP (module docstring), e.g.
        a 2-year average recurrence interval is an AEP of 39.3 %, a 2.54-year period under ``"1/AEP"``.
        ``native_return_period_years`` gives the curve's own period; levels are NaN where it falls outside the
        curve (an AEP of 1 or more has no ``"1/AEP"`` level).
        """
        periods = np.asarray(periods_years, dtype=float)
        if basis == self.period_definition:
            native = periods
        else:
            with np.errstate(divide="ignore", invalid="ignore"):
                native = period_from_aep(aep_from_period(periods, definition=basis),
                                         definition=self.period_definition)
        inside = np.isfinite(native) & (native >= self.periods_years[0]) & (native <= self.periods_years[-1])
        safe = np.where(inside, native, self.periods_years[0])
        out = self.table(safe)
        out["return_period_years"] = periods
        out["native_return_period_years"] = np.where(inside, native, np.nan)
        out["native_period_definition"] = self.period_definition
        out["period_definition"] = basis
        for column in ("level_m", "lower_m", "upper_m"):
            out.loc[~inside, column] = np.nan
        return out

    def rows(self, periods_years) -> pd.DataFrame:
        """:meth:`table` plus the curve's ``period_definition`` and ``interval_method`` on every row (the
        ``return_levels`` rows of results.json, CONTRACT.md)."""
        table = self.table(periods_years)
        return table.assign(period_definition=self.period_definition, interval_method=self.interval_method,
                            upper_unbounded=np.isposinf(table["upper_m"].to_numpy(dtype=float)))

    # -- persistence ------------------------------------------------------------------------------
    def to_dict(self) -> dict:
        """JSON-ready dictionary (NaN becomes None)."""
        def clean(arr):
            return [None if not np.isfinite(v) else float(v) for v in arr]

        return {
            "method": self.method,
            "periods_years": clean(self.periods_years),
            "level_m": clean(self.level_m),
            "lower_m": clean(self.lower_m),
            "upper_m": clean(self.upper_m),
            "upper_unbounded": [bool(v) for v in np.isposinf(self.upper_m)],
            "confidence": self.confidence,
            "period_definition": self.period_definition,
            "datum": self.datum,
            "epoch_year": self.epoch_year,
            "interval_method": self.interval_method,
            "notes": list(self.notes),
        }

    @classmethod
    def from_dict(cls, data: dict) -> ReturnLevelCurve:
        """Inverse of :meth:`to_dict`; :class:`DataError` on a malformed dictionary."""
        try:
            def arr(key):
                return np.array([np.nan if v is None else v for v in data[key]], dtype=float)

            upper = arr("upper_m")
            unbounded = np.asarray(data.get("upper_unbounded", [False] * upper.size), dtype=bool)
            return cls(
                method=str(data["method"]), periods_years=arr("periods_years"), level_m=arr("level_m"),
                lower_m=arr("lower_m"), upper_m=np.where(unbounded, np.inf, upper), confidence=float(data["confidence"]),
                period_definition=data["period_definition"], datum=str(data["datum"]),
                epoch_year=None if data.get("epoch_year") is None else float(data["epoch_year"]),
                interval_method=str(data.get("interval_method", "")), notes=tuple(data.get("notes", ())),
            )
        except (KeyError, TypeError, ValueError) as err:
            raise DataError(f"malformed return-level curve: {err}") from err
