"""Sea-level-rise offsets and scenario tables (rise against calendar year); layouts in :mod:`extremes.sealevel`."""
from __future__ import annotations

import csv
import logging
import math
import tomllib
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from extremes.errors import DataError
from extremes.sealevel._numbers import _clean

logger = logging.getLogger(__name__)


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


