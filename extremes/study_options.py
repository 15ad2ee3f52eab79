"""Options of a study, from command-line flags or a TOML study file.

A study file is plain TOML with up to four tables, all optional::

    [record]                      # how to read the record (the reader options of every command)
    units = "cm"
    missing = [-99, 9999]
    utc_offset = "+10:00"
    datum = "harbour chart datum"

    [study]
    epoch_year = 2024.0           # mean-sea-level epoch of the levels [decimal year]; default: end of record
    periods_years = [2, 10, 100, 1000]
    seed = 7
    confidence = 0.95
    min_year_coverage = 0.9       # a year enters the annual maxima only when this complete
    min_separation_hours = 72     # declustering of storms
    resamples = 500               # resamples for joint-probability intervals

    [sea_level_rise]
    offsets_m = [0.25, 0.5, 1.0]
    scenarios = "rise_scenarios.csv"   # relative to the study file
    design_life_years = 50
    accepted_risk = 0.1

    [reference]                   # a long gauge nearby, for a site with a short record (extremes.transfer)
    record = "long_gauge.csv"     # relative to the study file; --reference on the command line wins
    units = "cm"                  # reader options of the reference; none given: the site's

Flags given on the command line override the file. Every option, defaulted or given, is recorded in the
results so that a reviewer can rerun the study.
"""
from __future__ import annotations

import dataclasses
import tomllib
from dataclasses import dataclass
from pathlib import Path

from extremes.constants import DEFAULT_PERIODS_YEARS, DEFAULT_SEED, DEFAULT_SLR_M
from extremes.errors import DataError

_READER_KEYS = {"time_columns", "level_column", "time_format", "units", "missing", "utc_offset", "datum",
                "decimal", "variable", "corrections"}


@dataclass(frozen=True)
class StudyOptions:
    """Every choice a study makes, with its default.

    Attributes
    ----------
    epoch_year : float or None
        Mean-sea-level epoch at which levels are stated [decimal year]; None = the end of the record.
    periods_years : tuple of float
        Return periods reported [years], each >= 1.
    slr_m : tuple of float
        Sea-level-rise offsets applied to the recommended levels [m] (illustrative by default).
    slr_scenarios : str or None
        Path of a sea-level-rise scenario table (CSV or TOML, see :mod:`extremes.sealevel`).
    design_life_years : float
        Design life for encounter probabilities [years].
    accepted_risk : float
        Accepted probability of exceedance over the design life, for the design level.
    seed : int
        Seed of every random draw.
    confidence : float
        Confidence level of every interval.
    min_year_coverage : float
        Fraction of a year that must hold valid data for its maximum to be used.
    min_separation_hours : float
        Minimum time between independent storm peaks [hours].
    resamples : int
        Resamples for the joint-probability intervals.
    """

    epoch_year: float | None = None
    periods_years: tuple[float, ...] = DEFAULT_PERIODS_YEARS
    slr_m: tuple[float, ...] = DEFAULT_SLR_M
    slr_scenarios: str | None = None
    design_life_years: float = 50.0
    accepted_risk: float = 0.1
    seed: int = DEFAULT_SEED
    confidence: float = 0.95
    min_year_coverage: float = 0.9
    min_separation_hours: float = 72.0
    resamples: int = 500

    def __post_init__(self):
        try:
            self._coerce()
        except (TypeError, ValueError) as err:
            raise DataError(f"study options: a value has the wrong type ({err}); numbers expected for "
                            "epoch_year, periods_years, slr_m, design_life_years, accepted_risk, seed, "
                            "confidence, min_year_coverage, min_separation_hours and resamples") from None

    def _coerce(self):
        for name in ("design_life_years", "accepted_risk", "confidence", "min_year_coverage",
                     "min_separation_hours"):
            object.__setattr__(self, name, float(getattr(self, name)))
        for name in ("seed", "resamples"):
            value = getattr(self, name)
            if isinstance(value, bool) or float(value) != int(value):
                raise ValueError(f"{name} must be a whole number, got {value!r}")
            object.__setattr__(self, name, int(value))
        if self.epoch_year is not None:
            object.__setattr__(self, "epoch_year", float(self.epoch_year))
        if isinstance(self.periods_years, (str, bytes)) or isinstance(self.slr_m, (str, bytes)):
            raise ValueError("periods_years and slr_m must be lists of numbers")
        periods = tuple(float(p) for p in self.periods_years)
        if not periods or any(not (p >= 1) for p in periods):
            raise DataError(f"periods_years must all be >= 1 year; got {list(self.periods_years)}")
        object.__setattr__(self, "periods_years", tuple(sorted(set(periods))))
        object.__setattr__(self, "slr_m", tuple(float(v) for v in self.slr_m))
        checks = [
            ("confidence", 0 < self.confidence < 1, "between 0 and 1"),
            ("accepted_risk", 0 < self.accepted_risk < 1, "between 0 and 1"),
            ("design_life_years", self.design_life_years >= 1, ">= 1"),
            ("min_year_coverage", 0 < self.min_year_coverage <= 1, "in (0, 1]"),
            ("min_separation_hours", self.min_separation_hours > 0, "> 0"),
            ("resamples", int(self.resamples) >= 0, ">= 0"),
            ("seed", int(self.seed) >= 0, ">= 0"),
        ]
        for name, ok, expected in checks:
            if not ok:
                raise DataError(f"study option {name} must be {expected}; got {getattr(self, name)!r}")
        if self.epoch_year is not None and not (1800 <= float(self.epoch_year) <= 2300):
            raise DataError(f"study option epoch_year must be a decimal year 1800-2300; got {self.epoch_year!r}")

    def replace(self, **changes) -> StudyOptions:
        """A copy with ``changes`` applied (None values are ignored, so unset flags keep the file's)."""
        return dataclasses.replace(self, **{k: v for k, v in changes.items() if v is not None})

    def to_dict(self) -> dict:
        """JSON-ready dictionary of every option."""
        out = dataclasses.asdict(self)
        out["periods_years"] = list(self.periods_years)
        out["slr_m"] = list(self.slr_m)
        return out


def load_study_file(path: str | Path) -> tuple[StudyOptions, dict]:
    """Read a TOML study file into study options and reader options.

    Returns
    -------
    (StudyOptions, dict)
        The options of the ``[study]`` and ``[sea_level_rise]`` tables, and the ``[record]`` table as
        keyword arguments of :func:`extremes.records.read_record`.

    Raises
    ------
    DataError
        If the file cannot be read, is not TOML, or holds unknown tables or keys.
    """
    path = Path(path)
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise DataError(f"{path}: study file not found") from None
    except (OSError, UnicodeDecodeError) as err:
        raise DataError(f"{path}: cannot read study file ({err})") from None
    except tomllib.TOMLDecodeError as err:
        raise DataError(f"{path}: not valid TOML ({err})") from None
    unknown = set(data) - {"record", "study", "sea_level_rise", "reference"}  # [reference]: extremes.transfer.stage
    if unknown:
        raise DataError(f"{path}: unknown table(s) {sorted(unknown)}; expected record, study, sea_level_rise, "
                        "reference")
    fields = {f.name for f in dataclasses.fields(StudyOptions)}
    study_keys = fields - {"slr_m", "slr_scenarios", "design_life_years", "accepted_risk"}
    kwargs: dict = {}
    for key, value in data.get("study", {}).items():
        if key not in study_keys:
            raise DataError(f"{path}: unknown key {key!r} in [study]; expected one of {sorted(study_keys)}")
        kwargs[key] = tuple(value) if isinstance(value, list) else value
    slr_names = {"offsets_m": "slr_m", "scenarios": "slr_scenarios", "design_life_years": "design_life_years",
                 "accepted_risk": "accepted_risk"}
    for key, value in data.get("sea_level_rise", {}).items():
        if key not in slr_names:
            raise DataError(f"{path}: unknown key {key!r} in [sea_level_rise]; expected one of {sorted(slr_names)}")
        if key == "scenarios":
            value = str((path.parent / str(value)).resolve())
        kwargs[slr_names[key]] = tuple(value) if isinstance(value, list) else value
    reader = dict(data.get("record", {}))
    unknown_reader = set(reader) - _READER_KEYS - {"time_column"}
    if unknown_reader:
        raise DataError(f"{path}: unknown key(s) {sorted(unknown_reader)} in [record]; "
                        f"expected some of {sorted(_READER_KEYS)}")
    if "time_column" in reader:
        value = reader.pop("time_column")
        reader["time_columns"] = [value] if isinstance(value, str) else list(value)
    try:
        return StudyOptions(**kwargs), reader
    except (TypeError, DataError) as err:
        raise DataError(f"{path}: {err}") from None
