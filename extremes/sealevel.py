r"""Sea-level rise: offsets, scenarios, future return levels, allowances and encounter probability.

Pure functions over numbers and :class:`~extremes.curves.ReturnLevelCurve` objects; nothing is refitted.

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

import csv
import logging
import math
import tomllib
import warnings
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from scipy.optimize import brentq
from scipy.special import logsumexp

from extremes.curves import ReturnLevelCurve
from extremes.errors import DataError, ExtremesWarning

logger = logging.getLogger(__name__)

__all__ = [
    "SeaLevelScenarios", "read_scenarios", "parse_offsets", "future_return_levels", "present_return_period", "sea_level_rise_rows",
    "Amplification", "amplification_from_curve", "amplification_gumbel", "amplification_gpd",
    "gumbel_scale_of_curve", "Allowance", "allowance_normal", "allowance_from_samples",
    "encounter_probability", "design_return_period", "EncounterProbability",
    "encounter_probability_with_rise", "DesignLevel", "design_level", "rise_by_year",
]


def _clean(values) -> list:
    return [None if not math.isfinite(float(v)) else float(v) for v in np.atleast_1d(values)]


# ------------------------------------------------------------------------------------------------
# offsets and scenario tables
# ------------------------------------------------------------------------------------------------
def parse_offsets(offsets) -> tuple[float, ...]:
    """Sea-level-rise offsets from a comma-separated string or a sequence of numbers.

    Parameters
    ----------
    offsets : str or iterable of float
        E.g. ``"0,0.3,0.5"`` or ``[0, 0.3, 0.5]``. [m]

    Returns
    -------
    tuple of float
        The offsets in the order given, duplicates removed. [m]

    Raises
    ------
    DataError
        If an entry is not a finite number or the list is empty.
    """
    if isinstance(offsets, str):
        items = [part.strip() for part in offsets.split(",") if part.strip()]
    elif isinstance(offsets, (int, float, np.floating, np.integer)):
        items = [offsets]
    else:
        items = list(offsets)
    out: list[float] = []
    for item in items:
        try:
            value = float(item)
        except (TypeError, ValueError):
            raise DataError(f"sea-level-rise offsets must be numbers in metres; got {item!r}") from None
        if not math.isfinite(value):
            raise DataError(f"sea-level-rise offsets must be finite numbers in metres; got {item!r}")
        if value not in out:
            out.append(value)
    if not out:
        raise DataError(f"sea-level-rise offsets: expected at least one number in metres; got {offsets!r}")
    return tuple(out)


@dataclass(frozen=True, repr=False)
class SeaLevelScenarios:
    """Rise of mean sea level against calendar year for named scenarios.

    Attributes
    ----------
    years : numpy.ndarray
        Strictly increasing calendar years of the table. [decimal year]
    rise_m : dict of str to numpy.ndarray
        Scenario name -> rise at each year, relative to the table's own reference. [m]
    source : str
        File the table was read from (or a description).
    reference : str
        What the rises are relative to (free text from the file; may be empty).
    """

    years: np.ndarray
    rise_m: dict
    source: str = ""
    reference: str = ""

    def __post_init__(self):
        years = np.asarray(self.years, dtype=float)
        if years.ndim != 1 or years.size < 2 or not np.all(np.isfinite(years)) or np.any(np.diff(years) <= 0):
            raise DataError(f"{self.source or 'scenarios'}: years must be at least two finite, strictly "
                            f"increasing numbers; got {years.tolist()}")
        if not self.rise_m:
            raise DataError(f"{self.source or 'scenarios'}: expected at least one scenario column")
        rises = {}
        for name, values in self.rise_m.items():
            arr = np.asarray(values, dtype=float)
            if arr.shape != years.shape or not np.all(np.isfinite(arr)):
                raise DataError(f"{self.source or 'scenarios'}: scenario {name!r} must have {years.size} finite "
                                f"values (one per year); got {arr.tolist()}")
            rises[str(name)] = arr
        object.__setattr__(self, "years", years)
        object.__setattr__(self, "rise_m", rises)

    def __repr__(self) -> str:
        return (f"SeaLevelScenarios(scenarios={list(self.rise_m)}, years={self.years[0]:g}..{self.years[-1]:g}, "
                f"source={self.source!r})")

    @property
    def names(self) -> tuple[str, ...]:
        """Scenario names in table order."""
        return tuple(self.rise_m)

    def rise_at(self, scenario: str, years) -> np.ndarray:
        """Rise [m] of ``scenario`` at ``years`` (linear in time; no extrapolation).

        Raises
        ------
        DataError
            Unknown scenario, or a year outside the table.
        """
        if scenario not in self.rise_m:
            raise DataError(f"{self.source or 'scenarios'}: unknown scenario {scenario!r}; "
                            f"expected one of {list(self.rise_m)}")
        yrs = np.asarray(years, dtype=float)
        if np.any(~np.isfinite(yrs)) or np.any(yrs < self.years[0] - 1e-9) or np.any(yrs > self.years[-1] + 1e-9):
            raise DataError(f"{self.source or 'scenarios'}: years must lie within {self.years[0]:g}.."
                            f"{self.years[-1]:g} (the table is not extrapolated); got "
                            f"{np.atleast_1d(yrs).tolist()}")
        return np.interp(yrs, self.years, self.rise_m[scenario])

    def rise_since(self, scenario: str, years, *, reference_year: float | None) -> np.ndarray:
        """Rise [m] of ``scenario`` from ``reference_year`` (e.g. the curve's epoch) to ``years``.

        With ``reference_year=None`` the table's values are used as they are.
        """
        rise = self.rise_at(scenario, years)
        if reference_year is None:
            return rise
        return rise - self.rise_at(scenario, reference_year)

    def to_dict(self) -> dict:
        """JSON-ready dictionary."""
        return {"years": _clean(self.years), "rise_m": {k: _clean(v) for k, v in self.rise_m.items()},
                "source": self.source, "reference": self.reference, "units": "m"}


def _number(text: str, *, where: str) -> float:
    try:
        value = float(text)
    except (TypeError, ValueError):
        raise DataError(f"{where}: expected a number; got {text!r}") from None
    if not math.isfinite(value):
        raise DataError(f"{where}: expected a finite number; got {text!r}")
    return value


def _read_scenarios_csv(path: Path) -> SeaLevelScenarios:
    try:
        text = path.read_text(encoding="utf-8-sig")
    except (OSError, UnicodeDecodeError) as err:
        raise DataError(f"{path}: cannot read the scenario table: {err}") from err
    header: list[str] | None = None
    years: list[float] = []
    columns: dict[str, list[float]] = {}
    comments: list[str] = []
    last_year_line = 0
    for lineno, row in enumerate(csv.reader(text.splitlines()), start=1):
        cells = [c.strip() for c in row]
        if not any(cells):
            continue
        if cells[0].startswith("#"):
            if header is None:
                comments.append(",".join(row).lstrip("#").strip())
            continue
        if header is None:
            header = cells
            if header[0].lower() not in ("year", "years"):
                raise DataError(f"{path}: line {lineno}: the first column must be 'year'; got {header[0]!r}")
            names = header[1:]
            if not names or any(not n for n in names):
                raise DataError(f"{path}: line {lineno}: expected named scenario columns after 'year' "
                                f"(e.g. year,low,central,high); got {row}")
            if len(set(names)) != len(names):
                raise DataError(f"{path}: line {lineno}: scenario column names must be unique; got {names}")
            columns = {name: [] for name in names}
            continue
        if len(cells) != len(header):
            raise DataError(f"{path}: line {lineno}: expected {len(header)} columns ({','.join(header)}); "
                            f"got {len(cells)}")
        year = _number(cells[0], where=f"{path}: line {lineno}, column 'year'")
        if years and year <= years[-1]:
            raise DataError(f"{path}: line {lineno}, column 'year': years must increase strictly; got {year:g} "
                            f"after {years[-1]:g} (line {last_year_line})")
        years.append(year)
        last_year_line = lineno
        for name, cell in zip(header[1:], cells[1:]):
            columns[name].append(_number(cell, where=f"{path}: line {lineno}, column {name!r}"))
    if header is None or len(years) < 2:
        raise DataError(f"{path}: expected a header 'year,<scenario>,...' and at least two rows of years; "
                        f"got {len(years)} rows")
    return SeaLevelScenarios(years=np.array(years), rise_m={k: np.array(v) for k, v in columns.items()},
                             source=str(path), reference=" ".join(comments))


def _read_scenarios_toml(path: Path) -> SeaLevelScenarios:
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8"))
    except tomllib.TOMLDecodeError as err:
        raise DataError(f"{path}: not valid TOML: {err}") from err
    except (OSError, UnicodeDecodeError) as err:
        raise DataError(f"{path}: cannot read the scenario table: {err}") from err
    table = data.get("scenarios")
    if not isinstance(table, dict):
        raise DataError(f"{path}: expected a [scenarios] table with 'years' and one list per scenario")
    table = dict(table)
    units = table.pop("units", "m")
    if units != "m":
        raise DataError(f"{path}: [scenarios] units must be \"m\"; got {units!r}")
    reference = table.pop("reference", "")
    if not isinstance(reference, str):
        raise DataError(f"{path}: [scenarios] reference must be text; got {reference!r}")
    if "years" not in table:
        raise DataError(f"{path}: [scenarios] has no 'years' list")
    raw_years = table.pop("years")

    def as_numbers(key, values):
        if not isinstance(values, list):
            raise DataError(f"{path}: [scenarios] {key} must be a list of numbers; got {values!r}")
        out = []
        for i, v in enumerate(values):
            if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
                raise DataError(f"{path}: [scenarios] {key}[{i}]: expected a finite number; got {v!r}")
            out.append(float(v))
        return out

    years = as_numbers("years", raw_years)
    if len(years) < 2 or any(b <= a for a, b in zip(years, years[1:])):
        raise DataError(f"{path}: [scenarios] years must be at least two strictly increasing numbers; got {years}")
    if not table:
        raise DataError(f"{path}: [scenarios] has no scenario lists (e.g. low = [...], central = [...])")
    rises = {}
    for key, values in table.items():
        numbers = as_numbers(key, values)
        if len(numbers) != len(years):
            raise DataError(f"{path}: [scenarios] {key} has {len(numbers)} values; expected {len(years)} "
                            f"(one per year)")
        rises[key] = np.array(numbers)
    return SeaLevelScenarios(years=np.array(years), rise_m=rises, source=str(path), reference=reference)


def read_scenarios(path) -> SeaLevelScenarios:
    """Read a sea-level-rise scenario table (CSV or TOML; layouts in the module docstring).

    Parameters
    ----------
    path : path-like
        ``.toml`` file, or a comma-separated text file (any other suffix).

    Returns
    -------
    SeaLevelScenarios

    Raises
    ------
    DataError
        Unreadable file or wrong layout; the message names the file, line and column.
    """
    path = Path(path)
    if not path.is_file():
        raise DataError(f"{path}: scenario file not found")
    if path.suffix.lower() == ".toml":
        return _read_scenarios_toml(path)
    return _read_scenarios_csv(path)


def rise_by_year(scenarios: SeaLevelScenarios, scenario: str, *, start_year: float, design_life_years: int,
                 reference_year: float | None) -> np.ndarray:
    """Rise [m] in each year of a design life, relative to ``reference_year``.

    The years are ``start_year + k + 0.5`` (mid-year), ``k = 0 .. design_life_years - 1``.
    """
    years = float(start_year) + np.arange(int(design_life_years)) + 0.5
    return scenarios.rise_since(scenario, years, reference_year=reference_year)


# ------------------------------------------------------------------------------------------------
# future return levels
# ------------------------------------------------------------------------------------------------
def _present_period(curve: ReturnLevelCurve, levels) -> np.ndarray:
    """Present return period of levels; NaN where the level lies outside the curve's range."""
    levels = np.asarray(levels, dtype=float)
    periods = curve.period_of_level(levels)
    finite = curve.level_m[np.isfinite(curve.level_m)]
    outside = (levels < finite.min()) | (levels > finite.max())
    return np.where(outside, np.nan, periods)


def present_return_period(curve: ReturnLevelCurve, level_m) -> np.ndarray:
    """Return period [years] today of levels ``level_m`` [m] (e.g. future return levels).

    NaN where a level lies outside the curve's range (rarer than its longest period, or more common than its
    shortest).
    """
    return _present_period(curve, level_m)


def sea_level_rise_rows(curve: ReturnLevelCurve, *, offsets_m, periods_years) -> list[dict]:
    """The ``sea_level_rise`` rows of ``results.json`` for one curve.

    Parameters
    ----------
    curve : ReturnLevelCurve
        Present-day curve (levels at the epoch ``curve.epoch_year``).
    offsets_m : iterable of float
        Sea-level-rise offsets. [m]
    periods_years : iterable of float
        Return periods. [years]

    Returns
    -------
    list of dict
        One row per offset and period: ``offset_m``, ``return_period_years``, ``level_m`` (future level
        = present level + offset [1]_), ``present_return_period_years_of_level`` (how rare that level is
        today; ``None`` beyond the curve's range).
    """
    offsets = parse_offsets(offsets_m)
    periods = np.asarray(list(periods_years), dtype=float)
    present = curve.level_at(periods)
    rows = []
    for offset in offsets:
        future = present + offset
        present_periods = _present_period(curve, future)
        for period, level, present_period in zip(periods, future, present_periods):
            rows.append({
                "offset_m": float(offset),
                "return_period_years": float(period),
                "level_m": float(level),
                "present_return_period_years_of_level":
                    None if not math.isfinite(present_period) else float(present_period),
            })
    return rows


def future_return_levels(curve: ReturnLevelCurve, *, offsets_m, periods_years):
    """Table of future return levels for each offset (see :func:`sea_level_rise_rows`).

    Returns
    -------
    pandas.DataFrame
        Columns ``offset_m, return_period_years, level_m, lower_m, upper_m,
        present_return_period_years_of_level``.
    """
    import pandas as pd

    rows = []
    periods = np.asarray(list(periods_years), dtype=float)
    for offset in parse_offsets(offsets_m):
        table = curve.shifted(offset).table(periods)
        table.insert(0, "offset_m", offset)
        table["present_return_period_years_of_level"] = _present_period(curve, table["level_m"].to_numpy())
        rows.append(table.drop(columns=["method", "confidence"]))
    frame = pd.concat(rows, ignore_index=True)
    frame.attrs.update(units="m", datum=curve.datum, epoch_year=curve.epoch_year, method=curve.method)
    return frame


# ------------------------------------------------------------------------------------------------
# amplification of exceedance frequency
# ------------------------------------------------------------------------------------------------
@dataclass(frozen=True, repr=False)
class Amplification:
    """How often a present-day level is exceeded after a rise.

    Attributes
    ----------
    level_m : float
        The level (e.g. today's 100-year level). [m]
    rise_m : float
        The rise of mean sea level. [m]
    present_aep, future_aep : float
        Annual exceedance probability of the level today and after the rise.
    present_events_per_year, future_events_per_year : float
        Expected exceedance events per year, ``-ln(1 - AEP)``. [1/year]
    factor : float
        ``future_events_per_year / present_events_per_year`` (NaN when the future frequency lies beyond
        the curve's range).
    """

    level_m: float
    rise_m: float
    present_aep: float
    future_aep: float
    present_events_per_year: float
    future_events_per_year: float
    factor: float

    def __repr__(self) -> str:
        return f"Amplification(level={self.level_m:.3f} m, rise={self.rise_m:.3f} m, factor={self.factor:.4g})"

    def to_dict(self) -> dict:
        """JSON-ready dictionary (NaN and inf become None)."""
        return {k: _clean(getattr(self, k))[0] for k in (
            "level_m", "rise_m", "present_aep", "future_aep", "present_events_per_year",
            "future_events_per_year", "factor")}


def amplification_from_curve(curve: ReturnLevelCurve, *, rise_m: float, level_m: float | None = None,
                             period_years: float = 100.0) -> Amplification:
    r"""Amplification of the exceedance frequency of a present level after a rise, read from the curve.

    The future AEP of level :math:`z` is the present AEP of :math:`z - \Delta z` (offset rule [1]_), so no
    tail form is assumed: this is the general version of Hunter's :math:`\exp(\Delta z/\lambda)` [2]_.

    Parameters
    ----------
    curve : ReturnLevelCurve
        Present-day curve.
    rise_m : float, keyword-only
        Rise of mean sea level. [m]
    level_m : float, optional
        The level; default the present ``period_years`` level. [m]
    period_years : float
        Return period of the level when ``level_m`` is not given (default 100). [years]

    Returns
    -------
    Amplification
        ``factor`` is NaN (with an :class:`~extremes.errors.ExtremesWarning`) when the lowered level
        lies below the curve's shortest period: the level would then be exceeded in most years.
    """
    rise = float(rise_m)
    if not math.isfinite(rise):
        raise DataError(f"rise_m must be a finite number [m]; got {rise_m!r}")
    level = float(curve.level_at(period_years)) if level_m is None else float(level_m)
    present_aep = float(curve.aep_of_level(level))
    future_aep = float(curve.aep_of_level(level - rise))
    lowest = np.nanmin(curve.level_m)
    present_rate = -math.log1p(-present_aep) if present_aep < 1 else math.inf
    future_rate = -math.log1p(-future_aep) if future_aep < 1 else math.inf
    if level - rise < lowest:
        warnings.warn(f"amplification: the level {level:.3f} m lowered by the rise {rise:.3f} m lies below the "
                      f"{curve.method} curve's range (shortest period {curve.periods_years[0]:g} years); "
                      f"the factor is not defined there", ExtremesWarning, stacklevel=2)
        factor = math.nan
    elif present_rate == 0:
        factor = math.inf
    else:
        factor = future_rate / present_rate
    return Amplification(level_m=level, rise_m=rise, present_aep=present_aep, future_aep=future_aep,
                         present_events_per_year=present_rate, future_events_per_year=future_rate,
                         factor=factor)


def amplification_gumbel(rise_m, *, scale_m: float) -> np.ndarray:
    r"""Hunter's amplification of exceedance frequency for a Gumbel (exponential) tail [2]_.

    :math:`N = \exp(\Delta z / \lambda)`.

    Parameters
    ----------
    rise_m : float or array-like
        Rise of mean sea level. [m]
    scale_m : float, keyword-only
        Gumbel scale :math:`\lambda` (GEV with ξ = 0 or GPD with ξ = 0). [m]
    """
    if not (scale_m > 0):
        raise DataError(f"scale_m must be > 0 [m]; got {scale_m!r}")
    return np.exp(np.asarray(rise_m, dtype=float) / scale_m)


def amplification_gpd(rise_m, *, level_m: float, threshold_m: float, scale_m: float, shape: float) -> np.ndarray:
    r"""Amplification of exceedance frequency of ``level_m`` for a generalised Pareto tail [4]_.

    :math:`N = \{[1 + \xi(z - \Delta z - u)/\sigma] / [1 + \xi(z - u)/\sigma]\}^{-1/\xi}`, with the
    exponential limit :math:`\exp(\Delta z/\sigma)` at ξ = 0. Both levels must lie above the threshold.
    Beyond a bounded tail's end (ξ < 0) the present frequency is zero and ``inf`` is returned.

    Parameters
    ----------
    rise_m : float or array-like
        Rise. [m]
    level_m, threshold_m, scale_m : float
        Level :math:`z`, threshold :math:`u`, GPD scale :math:`\sigma`. [m]
    shape : float
        GPD shape ξ (Coles sign: ξ > 0 heavy tail).
    """
    if not (scale_m > 0):
        raise DataError(f"scale_m must be > 0 [m]; got {scale_m!r}")
    rise = np.asarray(rise_m, dtype=float)
    if np.any(level_m - rise < threshold_m):
        raise DataError(f"amplification_gpd: level_m - rise_m must stay above the threshold {threshold_m:g} m; "
                        f"got level {level_m:g} m and rises {np.atleast_1d(rise).tolist()}")
    if abs(shape) < 1e-9:
        return np.exp(rise / scale_m)
    now = 1.0 + shape * (level_m - threshold_m) / scale_m
    then = 1.0 + shape * (level_m - rise - threshold_m) / scale_m
    with np.errstate(divide="ignore", invalid="ignore"):
        out = (np.maximum(then, 0.0) / now) ** (-1.0 / shape) if now > 0 else np.full(rise.shape, np.inf)
    return out


def gumbel_scale_of_curve(curve: ReturnLevelCurve, *, period_years: float = 100.0, span: float = 2.0) -> float:
    r"""Local Gumbel scale :math:`\lambda` [m] of a curve around ``period_years``.

    The slope of the level against the Gumbel reduced variate :math:`y = -\ln[-\ln(1 - \mathrm{AEP})]`
    between ``period_years / span`` and ``period_years * span`` (clipped to the curve). For a Gumbel curve it
    is exactly the Gumbel scale, under either period definition; for other tails it is the scale of the
    Gumbel tail that matches the curve locally, which Hunter's allowance needs [1]_. (A Gumbel fit to the
    annual maxima is the other common choice; pass its scale directly.)
    """
    lo = max(period_years / span, curve.periods_years[0])
    hi = min(period_years * span, curve.periods_years[-1])
    if not hi > lo:
        raise DataError(f"period_years {period_years:g} gives no span within the curve's periods")
    periods = np.array([lo, hi])
    levels = curve.level_at(periods)
    aep = 1.0 / periods if curve.period_definition == "1/AEP" else -np.expm1(-1.0 / periods)
    reduced = -np.log(-np.log1p(-aep))
    scale = float((levels[1] - levels[0]) / (reduced[1] - reduced[0]))
    if not scale > 0:
        raise DataError(f"the {curve.method} curve is not increasing near {period_years:g} years; "
                        f"no Gumbel scale (got {scale:g} m)")
    return scale


# ------------------------------------------------------------------------------------------------
# allowance for uncertain rise
# ------------------------------------------------------------------------------------------------
@dataclass(frozen=True, repr=False)
class Allowance:
    """Hunter's allowance for an uncertain rise.

    Attributes
    ----------
    allowance_m : float
        Height to add to present levels to keep the expected number of exceedances unchanged. [m]
    mean_rise_m, sd_rise_m : float
        Mean and standard deviation of the rise. [m]
    scale_m : float
        Gumbel scale used. [m]
    method : str
        ``"normal"`` (closed form) or ``"samples"``.
    n_samples : int
        Number of samples (0 for the closed form).
    """

    allowance_m: float
    mean_rise_m: float
    sd_rise_m: float
    scale_m: float
    method: str
    n_samples: int = 0

    def __repr__(self) -> str:
        return (f"Allowance(allowance={self.allowance_m:.4f} m, mean={self.mean_rise_m:.3f} m, "
                f"sd={self.sd_rise_m:.3f} m, scale={self.scale_m:.3f} m, method={self.method!r})")

    def to_dict(self) -> dict:
        """JSON-ready dictionary."""
        return {"allowance_m": self.allowance_m, "mean_rise_m": self.mean_rise_m, "sd_rise_m": self.sd_rise_m,
                "scale_m": self.scale_m, "method": self.method, "n_samples": self.n_samples}


def allowance_normal(*, mean_m: float, sd_m: float, scale_m: float) -> Allowance:
    r"""Allowance for a normally distributed rise [1]_: :math:`A = m + s^2/(2\lambda)`.

    The closed form of :math:`A = \lambda \ln E[\exp(\Delta z/\lambda)]` for
    :math:`\Delta z \sim N(m, s^2)`, with a Gumbel tail of scale :math:`\lambda` (from a Gumbel fit or
    :func:`gumbel_scale_of_curve`).

    Parameters
    ----------
    mean_m, sd_m : float, keyword-only
        Mean and standard deviation of the projected rise. [m]
    scale_m : float, keyword-only
        Gumbel scale :math:`\lambda`. [m]
    """
    if not (scale_m > 0) or not (sd_m >= 0) or not math.isfinite(mean_m):
        raise DataError(f"allowance: need scale_m > 0, sd_m >= 0 and a finite mean_m [m]; got scale_m={scale_m!r},"
                        f" sd_m={sd_m!r}, mean_m={mean_m!r}")
    return Allowance(allowance_m=mean_m + sd_m ** 2 / (2.0 * scale_m), mean_rise_m=float(mean_m),
                     sd_rise_m=float(sd_m), scale_m=float(scale_m), method="normal")


def allowance_from_samples(rise_samples_m, *, scale_m: float) -> Allowance:
    r"""Allowance from samples of the rise [1]_: :math:`A = \lambda \ln[\frac1n \sum_i \exp(\Delta z_i/\lambda)]`.

    Use this form for skewed or fat-tailed projections. Computed with a log-sum-exp for stability.

    Parameters
    ----------
    rise_samples_m : array-like
        Samples (or equally likely members) of the projected rise. [m]
    scale_m : float, keyword-only
        Gumbel scale :math:`\lambda`. [m]
    """
    samples = np.asarray(rise_samples_m, dtype=float).ravel()
    if samples.size == 0 or not np.all(np.isfinite(samples)):
        raise DataError(f"allowance: rise samples must be finite numbers [m]; got {samples.size} values "
                        f"({int(np.sum(~np.isfinite(samples)))} not finite)")
    if not (scale_m > 0):
        raise DataError(f"scale_m must be > 0 [m]; got {scale_m!r}")
    value = scale_m * (logsumexp(samples / scale_m) - math.log(samples.size))
    return Allowance(allowance_m=float(value), mean_rise_m=float(samples.mean()),
                     sd_rise_m=float(samples.std(ddof=1)) if samples.size > 1 else 0.0, scale_m=float(scale_m),
                     method="samples", n_samples=int(samples.size))


# ------------------------------------------------------------------------------------------------
# encounter probability and design levels
# ------------------------------------------------------------------------------------------------
def _check_life(design_life_years) -> int:
    life = int(design_life_years)
    if life != design_life_years or life < 1:
        raise DataError(f"design_life_years must be a whole number of years >= 1; got {design_life_years!r}")
    return life


def encounter_probability(aep, *, design_life_years) -> np.ndarray:
    r"""Probability of at least one exceedance in a design life [3]_: :math:`P = 1 - (1 - p)^L`.

    Parameters
    ----------
    aep : float or array-like
        Annual exceedance probability, 0 <= p <= 1.
    design_life_years : int, keyword-only
        Design life :math:`L`. [years]

    Examples
    --------
    A 1 % AEP level over 30 and 100 years (about 26 % and 63 %, common practice):

    >>> [round(float(encounter_probability(0.01, design_life_years=life)), 3) for life in (30, 100)]
    [0.26, 0.634]
    """
    p = np.asarray(aep, dtype=float)
    if np.any(~((p >= 0) & (p <= 1))):
        raise DataError(f"aep must lie in [0, 1]; got {np.atleast_1d(p).tolist()}")
    life = np.asarray(design_life_years, dtype=float)
    if np.any(~(life > 0)):
        raise DataError(f"design_life_years must be > 0; got {design_life_years!r}")
    return -np.expm1(life * np.log1p(-p))


def design_return_period(accepted_probability, *, design_life_years) -> np.ndarray:
    r"""Return period [years] whose encounter probability over the design life is the accepted risk [3]_.

    :math:`T = 1/[1 - (1 - R)^{1/L}]` (period as 1/AEP).

    Examples
    --------
    10 % risk over a 50-year life calls for about the 475-year level (common practice):

    >>> round(float(design_return_period(0.10, design_life_years=50)), 2)
    475.06
    """
    risk = np.asarray(accepted_probability, dtype=float)
    if np.any(~((risk > 0) & (risk < 1))):
        raise DataError(f"accepted_probability must lie strictly between 0 and 1; got {accepted_probability!r}")
    life = np.asarray(design_life_years, dtype=float)
    if np.any(~(life > 0)):
        raise DataError(f"design_life_years must be > 0; got {design_life_years!r}")
    return -1.0 / np.expm1(np.log1p(-risk) / life)


def _rise_vector(rise_m, life: int) -> np.ndarray:
    if callable(rise_m):
        rise = np.asarray(rise_m(np.arange(life)), dtype=float)
    else:
        rise = np.asarray(rise_m, dtype=float)
    if rise.ndim == 0:
        rise = np.full(life, float(rise))
    if rise.shape != (life,) or not np.all(np.isfinite(rise)):
        raise DataError(f"rise_m must be one finite number or one per year of the {life}-year design life [m]; "
                        f"got shape {rise.shape}")
    return rise


@dataclass(frozen=True, repr=False)
class EncounterProbability:
    """Chance that a level is exceeded at least once during a design life with a rising sea.

    Attributes
    ----------
    level_m : float
        The level. [m]
    design_life_years : int
        Design life. [years]
    rise_m : numpy.ndarray
        Rise in each year of the life, relative to the curve's epoch. [m]
    aep : numpy.ndarray
        Annual exceedance probability of the level in each year.
    probability : float
        :math:`1 - \\prod_y (1 - p_y)`.
    """

    level_m: float
    design_life_years: int
    rise_m: np.ndarray
    aep: np.ndarray
    probability: float

    def __repr__(self) -> str:
        return (f"EncounterProbability(level={self.level_m:.3f} m, life={self.design_life_years} years, "
                f"probability={self.probability:.4f})")

    def to_dict(self) -> dict:
        """JSON-ready dictionary."""
        return {"level_m": self.level_m, "design_life_years": self.design_life_years,
                "rise_m": _clean(self.rise_m), "aep": _clean(self.aep), "probability": self.probability}


def _encounter(curve: ReturnLevelCurve, level: float, rise: np.ndarray) -> tuple[np.ndarray, float]:
    aep = curve.aep_of_level(level - rise)  # present AEP of z - Δz_y = AEP of z on the shifted curve
    return aep, float(-np.expm1(np.sum(np.log1p(-np.minimum(aep, 1.0)))))


def encounter_probability_with_rise(curve: ReturnLevelCurve, *, level_m: float, design_life_years: int,
                                    rise_m=0.0) -> EncounterProbability:
    r"""Encounter probability of ``level_m`` over a design life in which mean sea level rises.

    :math:`P = 1 - \prod_y (1 - p_y)`, where :math:`p_y` is the AEP of the level on the curve shifted by
    the rise in year :math:`y` (offset rule [1]_; encounter probability [3]_).

    Parameters
    ----------
    curve : ReturnLevelCurve
        Present-day curve.
    level_m : float, keyword-only
        The level. [m]
    design_life_years : int, keyword-only
        Design life. [years]
    rise_m : float, array-like or callable
        Rise relative to the curve's epoch: one number for all years, one value per year of the life
        (e.g. from :func:`rise_by_year`), or a function of the year index ``0 .. L-1``. [m]
    """
    life = _check_life(design_life_years)
    rise = _rise_vector(rise_m, life)
    aep, probability = _encounter(curve, float(level_m), rise)
    return EncounterProbability(level_m=float(level_m), design_life_years=life, rise_m=rise, aep=aep,
                                probability=probability)


@dataclass(frozen=True, repr=False)
class DesignLevel:
    """Level whose chance of exceedance during the design life equals the accepted probability.

    Attributes
    ----------
    level_m : float
        The design still-water level. [m]
    accepted_probability : float
        Accepted chance of at least one exceedance during the life.
    design_life_years : int
        Design life. [years]
    present_return_period_years : float
        Return period of the level on the present curve. [years]
    design_return_period_years : float
        :math:`1/[1 - (1 - R)^{1/L}]`, the period that would be needed without rise. [years]
    rise_m : numpy.ndarray
        Rise in each year of the life. [m]
    """

    level_m: float
    accepted_probability: float
    design_life_years: int
    present_return_period_years: float
    design_return_period_years: float
    rise_m: np.ndarray

    def __repr__(self) -> str:
        return (f"DesignLevel(level={self.level_m:.3f} m, risk={self.accepted_probability:g}, "
                f"life={self.design_life_years} years)")

    def to_dict(self) -> dict:
        """JSON-ready dictionary."""
        return {"level_m": self.level_m, "accepted_probability": self.accepted_probability,
                "design_life_years": self.design_life_years,
                "present_return_period_years": _clean(self.present_return_period_years)[0],
                "design_return_period_years": self.design_return_period_years, "rise_m": _clean(self.rise_m)}


def design_level(curve: ReturnLevelCurve, *, accepted_probability: float, design_life_years: int,
                 rise_m=0.0) -> DesignLevel:
    """Level with the accepted chance of at least one exceedance over a design life with a rising sea.

    Solves :math:`1 - \\prod_y [1 - p_y(z)] = R` for :math:`z` with Brent's method, where
    :math:`p_y(z)` is the present AEP of :math:`z - \\Delta z_y` (see
    :func:`encounter_probability_with_rise`). Without rise the answer is the level of the design return
    period :math:`1/[1 - (1 - R)^{1/L}]` [3]_.

    Parameters
    ----------
    curve : ReturnLevelCurve
        Present-day curve.
    accepted_probability : float, keyword-only
        Accepted risk :math:`R`, 0 < R < 1.
    design_life_years : int, keyword-only
        Design life :math:`L`. [years]
    rise_m : float, array-like or callable
        Rise by year of the life (as in :func:`encounter_probability_with_rise`). [m]

    Raises
    ------
    DataError
        When the level lies beyond the range of the curve (risk too small or too large for its periods).
    """
    life = _check_life(design_life_years)
    risk = float(accepted_probability)
    period = float(design_return_period(risk, design_life_years=life))
    rise = _rise_vector(rise_m, life)
    finite = curve.level_m[np.isfinite(curve.level_m)]
    # above the curve's top a level has AEP 0, so the search ends where no year can exceed it
    low, high = float(finite.min() + rise.max()), float(finite.max() + rise.max()) + 1e-3

    def excess(z):
        return _encounter(curve, z, rise)[1] - risk

    beyond = DataError(f"design level for risk {risk:g} over {life} years lies beyond the {curve.method} curve "
                       f"(periods {curve.periods_years[0]:g}..{curve.periods_years[-1]:g} years)")
    if not high > low or excess(low) < 0:
        raise beyond
    level = float(brentq(excess, low, high, xtol=1e-7))
    if abs(excess(level)) > 1e-3 * risk or level - rise.max() >= finite.max():
        raise beyond  # stopped at the curve's end (every year beyond its longest period), not at a root
    if level - rise.min() > finite.max():
        warnings.warn(f"design level {level:.3f} m: in the years of least rise it lies above the {curve.method} "
                      f"curve's longest period ({curve.periods_years[-1]:g} years); those years count as "
                      "no chance of exceedance", ExtremesWarning, stacklevel=2)
    return DesignLevel(level_m=level, accepted_probability=risk, design_life_years=life,
                       present_return_period_years=float(_present_period(curve, level)),
                       design_return_period_years=period, rise_m=rise)
