r"""A verdict on every level: the plausibility checks a senior reviewer makes before signing.

:func:`assess` runs every check function of :data:`CHECKS` on a quality report (and, when there is one, a
study result) and returns an :class:`Assessment`: ``status`` (``"ok"``, ``"check"`` or ``"unreliable"``,
the most severe finding) and the findings, each in plain words with the numbers.

* ``ok`` -- every check passes;
* ``check`` -- a level needs a person's look before use;
* ``unreliable`` -- a level must not be used as it stands.

The checks and their thresholds (each names its source; "common practice" marks a reviewer's habit rather
than a published number, "project rule" a choice of this package):

``fitted-shape``
    The shape :math:`\xi` of every GEV/GPD fitted (textbook sign, :math:`\xi > 0` heavy tail). Tide-gauge
    extremes give shapes near zero: Coles (2001) finds :math:`\hat\xi = -0.05` at Port Pirie, and storm-surge
    tails are close to exponential (Howard 2022) [1]_ [2]_; :math:`|\xi| > 0.3` is far outside that
    experience (common practice) -> ``check``. For :math:`\xi \ge 0.5` the fitted distribution has no finite
    variance (Coles 2001, sec. 3.1.3) [1]_, which no sea-level record supports -> ``unreliable`` when it is
    the recommended method, ``check`` for a comparison method. For :math:`\xi < -0.5` maximum likelihood is
    non-regular (Smith 1985) [3]_ -> ``check``. A surge tail fitted with the geophysical shape prior (which
    keeps its shape within (-0.5, 0.5)) is also judged by the shape its data give alone (plain maximum
    likelihood): outside +/-0.3 -> ``check`` (the levels rest partly on the prior).
``level-above-record``
    The 100-year level of the recommended method against what the record and its tide explain: with HAT the
    highest astronomical tide and :math:`s_{max}` the largest skew surge observed,
    :math:`R = (z_{100} - \mathrm{HAT}) / s_{max}`. A 100-year level needs a surge on a high tide beyond
    the record's worst; :math:`R > 2` (a surge twice the largest in the record on the highest tide) ->
    ``check``, :math:`R > 3` -> ``unreliable`` (project rule from common review practice).
``methods-disagree``
    The 100-year levels of the recommended method and of each other method whose confidence intervals do
    not overlap -> ``check`` (the intervals are each method's own statement of its uncertainty; methods on
    the same record should agree within them, Batstone et al. 2013 compare methods this way) [4]_.
``record-length``
    A direct method (annual maxima, peaks over threshold, r-largest) recommended for a 100-year level from
    fewer than 25 years: extrapolating beyond about four times the record length is unsafe (common
    practice, from memory) -> ``check``; any method from fewer than 10 years -> ``check`` (a supported
    reference-gauge transfer rests on the reference's years and is judged by ``short-record`` instead).
``short-record``
    A record under 10 years: the recommended method's levels beyond twice the record length -> ``check``,
    beyond five times -> ``unreliable``, however narrow their interval; with a reference gauge, the checks of
    the transfer (overlap, correlation, overlap storms, interaction, residual spread) that are not ``ok``,
    a refused transfer as ``unreliable`` (:mod:`extremes.transfer.checks`, project rules).
``excluded-data``
    Readings flagged by quality control: more than 1 % of the readings -> ``check`` (a working gauge loses
    well under 1 % to quality control, common practice), more than 10 % -> ``unreliable``. Spans kept out
    of the surge statistics (clock faults): more than 10 % of the record -> ``check``, more than half ->
    ``unreliable``. Fewer than half of the years complete enough for annual maxima -> ``check``.
``unresolved-faults``
    Clock (timing) offsets detected and not corrected -> ``check`` (their spans are kept out of the surge
    statistics). A datum-step candidate not corrected -> ``check``; ``unreliable`` when the step is larger
    than half the width of the 100-year interval of the recommended method, so that the stated interval
    does not cover what the step alone may do to the level.

Extending
---------
A check is a function taking an :class:`AssessmentInputs` and returning an iterable of :class:`Finding`;
add it with :func:`register_check` (or pass ``checks=`` to :func:`assess`). Checks that need a study
return nothing when ``inputs.study`` is None (``extremes inspect`` assesses the record alone).

References
----------
.. [1] S. Coles, An Introduction to Statistical Modeling of Extreme Values. London, U.K.: Springer, 2001.
.. [2] T. Howard, "Technical note: Tail behaviour of the statistical distribution of extreme storm surges,"
   Ocean Sci., vol. 18, pp. 905-913, 2022, doi:10.5194/os-18-905-2022.
.. [3] R. L. Smith, "Maximum likelihood estimation in a class of nonregular cases," Biometrika, vol. 72,
   pp. 67-90, 1985, doi:10.1093/biomet/72.1.67.
.. [4] C. Batstone et al., "A UK best-practice approach for extreme sea-level analysis along complex
   topographic coastlines," Ocean Eng., vol. 71, pp. 28-39, 2013, doi:10.1016/j.oceaneng.2013.02.003.
"""
from __future__ import annotations

import math
from collections.abc import Callable, Iterable
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from extremes.constants import DAYS_PER_YEAR
from extremes.errors import DataError
from extremes.jsonable import to_jsonable

__all__ = ["STATUSES", "Finding", "Assessment", "AssessmentInputs", "CHECKS", "register_check", "assess",
           "THRESHOLDS"]

#: statuses from least to most severe
STATUSES = ("ok", "check", "unreliable")
_RANK = {name: rank for rank, name in enumerate(STATUSES)}

#: the thresholds of the checks (module docstring gives their sources)
THRESHOLDS = {
    "shape_check": 0.3,            # |xi| beyond sea-level experience [-]
    "shape_unreliable": 0.5,       # xi at which the variance is infinite [-]
    "shape_nonregular": -0.5,      # xi below which maximum likelihood is non-regular [-]
    "surge_ratio_check": 2.0,      # (z100 - HAT) / largest skew surge [-]
    "surge_ratio_unreliable": 3.0,
    "direct_min_years": 25.0,      # a direct method's 100-year level from fewer years [years]
    "any_min_years": 10.0,         # any method's [years]
    "flagged_check": 0.01,         # share of readings flagged [-]
    "flagged_unreliable": 0.10,
    "excluded_span_check": 0.10,   # share of the record kept out of the surge statistics [-]
    "excluded_span_unreliable": 0.50,
    "complete_years_check": 0.5,   # share of years complete enough for annual maxima [-]
    "year_completeness": 0.9,      # completeness of a complete year [-]
    "datum_step_m": 0.0,           # smallest datum-step candidate reported as unresolved [m]
}
DIRECT_METHODS = ("annual-maxima", "peaks-over-threshold", "r-largest")
_PERIOD = 100.0


@dataclass(frozen=True)
class Finding:
    """One reason of the verdict.

    Attributes
    ----------
    check : str
        Name of the check that found it.
    severity : str
        ``"check"`` or ``"unreliable"``.
    text : str
        The reason in plain words, with the numbers.
    """

    check: str
    severity: str
    text: str

    def __post_init__(self):
        if self.severity not in STATUSES[1:]:
            raise DataError(f"severity must be 'check' or 'unreliable'; got {self.severity!r}")

    def to_dict(self) -> dict:
        return {"check": self.check, "severity": self.severity, "text": self.text}


@dataclass(frozen=True, repr=False)
class Assessment:
    """The verdict: ``status`` and the findings behind it (most severe first).

    Attributes
    ----------
    status : str
        ``"ok"``, ``"check"`` or ``"unreliable"``.
    findings : tuple of Finding
    checks_run : tuple of str
        Names of the checks that ran.
    """

    status: str
    findings: tuple = ()
    checks_run: tuple = ()

    @property
    def reasons(self) -> list[str]:
        """The findings' texts, most severe first."""
        return [f.text for f in self.findings]

    def __repr__(self) -> str:
        return f"Assessment(status={self.status!r}, n_reasons={len(self.findings)})"

    def to_dict(self) -> dict:
        """``{status, reasons, findings, checks, thresholds}`` (``status`` and ``reasons`` per the contract)."""
        return to_jsonable({
            "status": self.status,
            "reasons": self.reasons,
            "findings": [f.to_dict() for f in self.findings],
            "checks": list(self.checks_run),
            "thresholds": dict(THRESHOLDS),
        })

    def summary_lines(self) -> list[str]:
        """Lines for a terminal summary: the verdict, then each reason."""
        head = {"ok": "assessment: ok (every plausibility check passed)",
                "check": "assessment: CHECK -- a person should look at these before using the levels:",
                "unreliable": "assessment: UNRELIABLE -- do not use the levels as they stand:"}[self.status]
        return [head] + [f"  - [{f.severity}] {f.text}" for f in self.findings]


@dataclass(frozen=True, repr=False)
class AssessmentInputs:
    """What the checks look at.

    Attributes
    ----------
    quality : QualityReport
        The record's quality report (after every correction and re-detection).
    study : StudyResult or None
        The study, when there is one.
    """

    quality: object
    study: object = None
    extra: dict = field(default_factory=dict)

    def recommended_curve(self):
        """The recommended method's curve, or None."""
        if self.study is None:
            return None
        return self.study.curves.get(self.study.recommended_method)


Check = Callable[[AssessmentInputs], Iterable[Finding]]
#: the checks :func:`assess` runs, in order
CHECKS: list[Check] = []


def register_check(function: Check) -> Check:
    """Add ``function`` to :data:`CHECKS` (usable as a decorator); returns it unchanged."""
    if function not in CHECKS:
        CHECKS.append(function)
    return function


def assess(*, quality, study=None, checks: Iterable[Check] | None = None, extra: dict | None = None) -> Assessment:
    """Run the plausibility checks and return the verdict.

    Parameters
    ----------
    quality : QualityReport
        The record's quality report.
    study : StudyResult, optional
        The study; without it only the record's checks find anything.
    checks : iterable of callables, optional
        The checks to run (default :data:`CHECKS`).
    extra : dict, optional
        Anything more a custom check needs (passed as ``inputs.extra``).

    Returns
    -------
    Assessment
    """
    inputs = AssessmentInputs(quality=quality, study=study, extra=dict(extra or {}))
    chosen = list(CHECKS if checks is None else checks)
    findings: list[Finding] = []
    for check in chosen:
        findings.extend(check(inputs) or ())
    findings.sort(key=lambda f: -_RANK[f.severity])  # stable: within a severity, in check order
    status = STATUSES[max([0] + [_RANK[f.severity] for f in findings])]
    return Assessment(status=status, findings=tuple(findings),
                      checks_run=tuple(getattr(c, "check_name", c.__name__) for c in chosen))


# ----------------------------------------------------------------------------------------------------------
def _fitted_shapes(study) -> list[tuple[str, str, float]]:
    """(method, what, shape) of every GEV/GPD fitted in the study."""
    shapes = []
    for method, detail in study.method_details.items():
        fit = getattr(detail, "fit", None)
        shape = getattr(fit, "shape", None)
        if shape is not None and math.isfinite(float(shape)):
            kind = "GEV of annual maxima" if method == "annual-maxima" else "GPD of peaks"
            shapes.append((method, kind, float(shape)))
        tail = getattr(detail, "tail", None)
        if isinstance(tail, dict):
            for part, values in tail.items():
                value = values.get("shape") if isinstance(values, dict) else None
                if value is not None and math.isfinite(float(value)):
                    what = "GPD of the surge tail" + ("" if part == "all" else f" ({part})")
                    shapes.append((method, what, float(value)))
    return shapes


@register_check
def check_fitted_shape(inputs: AssessmentInputs) -> list[Finding]:
    """Fitted shapes far outside sea-level experience (module docstring)."""
    study = inputs.study
    if study is None:
        return []
    out = []
    for method, what, shape in _fitted_shapes(study):
        recommended = method == study.recommended_method
        role = "recommended method" if recommended else "comparison method"
        if shape >= THRESHOLDS["shape_unreliable"]:
            severity = "unreliable" if recommended else "check"
            out.append(Finding("fitted-shape", severity,
                               f"{method} ({role}): fitted shape {shape:.2f} of the {what} is at or above "
                               f"{THRESHOLDS['shape_unreliable']:g}, a tail with infinite variance that no "
                               f"sea-level record supports; its levels grow without physical limit"))
        elif abs(shape) > THRESHOLDS["shape_check"]:
            out.append(Finding("fitted-shape", "check",
                               f"{method} ({role}): fitted shape {shape:.2f} of the {what} is outside "
                               f"+/-{THRESHOLDS['shape_check']:g}, the range sea-level extremes usually show"))
        if shape < THRESHOLDS["shape_nonregular"]:
            out.append(Finding("fitted-shape", "check",
                               f"{method} ({role}): fitted shape {shape:.2f} is below "
                               f"{THRESHOLDS['shape_nonregular']:g}, where maximum likelihood is non-regular "
                               f"and its intervals are not to be trusted"))
    for method, part, shape, plain in _prior_drawn_shapes(study):
        if abs(plain) > THRESHOLDS["shape_check"]:
            role = "recommended method" if method == study.recommended_method else "comparison method"
            out.append(Finding("fitted-shape", "check",
                               f"{method} ({role}): the surge tail{part} alone gives shape {plain:.2f} (plain "
                               f"maximum likelihood), outside +/-{THRESHOLDS['shape_check']:g}; the levels use "
                               f"{shape:.2f}, drawn in by the geophysical shape prior, so they rest partly on "
                               f"the prior"))
    return out


def _prior_drawn_shapes(study) -> list[tuple[str, str, float, float]]:
    """(method, part, shape used, plain maximum-likelihood shape) of every surge tail fitted with a shape prior."""
    out = []
    for method, detail in study.method_details.items():
        tail = getattr(detail, "tail", None)
        for part, values in (tail.items() if isinstance(tail, dict) else ()):
            plain = values.get("shape_mle") if isinstance(values, dict) else None
            if plain is not None and math.isfinite(float(plain)) and math.isfinite(float(values.get("shape", "nan"))):
                out.append((method, "" if part == "all" else f" ({part})", float(values["shape"]), float(plain)))
    return out


def _largest_surge_m(study) -> float:
    skew = getattr(study, "skew_surges", None)
    if isinstance(skew, pd.DataFrame) and "skew_surge_m" in skew and skew["skew_surge_m"].notna().any():
        return float(skew["skew_surge_m"].max())
    return float("nan")


@register_check
def check_level_above_record(inputs: AssessmentInputs) -> list[Finding]:
    """The 100-year level against HAT plus the largest surge of the record (module docstring)."""
    study, curve = inputs.study, inputs.recommended_curve()
    if curve is None:
        return []
    level = float(curve.level_at([_PERIOD])[0])
    hat = float(study.datums.datums_m.get("HAT", float("nan")))
    surge = _largest_surge_m(study)
    observed = float(np.nanmax(study.level_epoch_m.to_numpy())) if len(study.level_epoch_m) else float("nan")
    if not (math.isfinite(level) and math.isfinite(hat) and math.isfinite(surge) and surge > 0):
        return []
    ratio = (level - hat) / surge
    text = (f"the 100-year level {level:.2f} m ({study.recommended_method}) is {level - hat:.2f} m above HAT "
            f"({hat:.2f} m), {ratio:.1f} times the largest skew surge of the record ({surge:.2f} m); the highest "
            f"level observed is {observed:.2f} m")
    if ratio > THRESHOLDS["surge_ratio_unreliable"]:
        return [Finding("level-above-record", "unreliable", text + "; nothing in the record or its tide explains it")]
    if ratio > THRESHOLDS["surge_ratio_check"]:
        return [Finding("level-above-record", "check", text + "; far above what the record and its tide explain")]
    return []


def _at_100(curve) -> tuple[float, float, float]:
    table = curve.table([_PERIOD])
    row = table.iloc[0]
    return float(row["level_m"]), float(row["lower_m"]), float(row["upper_m"])


@register_check
def check_methods_disagree(inputs: AssessmentInputs) -> list[Finding]:
    """Methods whose 100-year intervals do not overlap the recommended method's (module docstring)."""
    study, curve = inputs.study, inputs.recommended_curve()
    if curve is None:
        return []
    level, lower, upper = _at_100(curve)
    out = []
    for method, other in study.curves.items():
        if method == study.recommended_method:
            continue
        o_level, o_lower, o_upper = _at_100(other)
        if not all(math.isfinite(v) for v in (level, o_level)):
            continue
        # an open (null) upper bound never excludes overlap
        above = math.isfinite(o_lower) and math.isfinite(upper) and o_lower > upper
        below = math.isfinite(lower) and math.isfinite(o_upper) and o_upper < lower
        if above or below:
            out.append(Finding(
                "methods-disagree", "check",
                f"100-year levels disagree beyond their intervals: {study.recommended_method} {level:.2f} m "
                f"({lower:.2f}-{upper:.2f}) against {method} {o_level:.2f} m ({o_lower:.2f}-"
                f"{'open' if not math.isfinite(o_upper) else f'{o_upper:.2f}'})"))
    return out


@register_check
def check_record_length(inputs: AssessmentInputs) -> list[Finding]:
    """Recommended method fitted to few years (module docstring)."""
    study = inputs.study
    if study is None:
        return []
    years = float(study.record_years)
    method = study.recommended_method
    if not math.isfinite(years) or method == "reference-skew-surge-joint-probability":
        return []  # a transfer rests on the reference's years: check_short_record_and_reference judges it
    if method in DIRECT_METHODS and years < THRESHOLDS["direct_min_years"]:
        return [Finding("record-length", "check",
                        f"the recommended {method} extrapolates {years:.1f} years of record to 100 years, beyond "
                        f"about four times the record length")]
    if years < THRESHOLDS["any_min_years"]:
        return [Finding("record-length", "check",
                        f"the recommended {method} rests on {years:.1f} years of record (fewer than "
                        f"{THRESHOLDS['any_min_years']:g})")]
    return []


def _excluded_span_years(quality) -> float:
    offsets = getattr(quality, "timing_offsets", None)
    if not isinstance(offsets, pd.DataFrame) or offsets.empty:
        return 0.0
    return float(((offsets["end"] - offsets["start"]) / pd.Timedelta(days=DAYS_PER_YEAR)).sum())


@register_check
def check_excluded_data(inputs: AssessmentInputs) -> list[Finding]:
    """Large parts of the record flagged, kept out or incomplete (module docstring)."""
    quality = inputs.quality
    out = []
    readings = quality.n_samples - quality.n_missing
    if readings > 0:
        share = quality.n_flagged / readings
        counts = {k: v for k, v in quality.counts.items() if k not in ("ok", "missing", "sentinel") and v}
        detail = ", ".join(f"{name} {count}" for name, count in sorted(counts.items(), key=lambda kv: -kv[1]))
        text = (f"quality control flagged {quality.n_flagged} of {readings} readings ({100 * share:.1f} %: "
                f"{detail})")
        if share > THRESHOLDS["flagged_unreliable"]:
            out.append(Finding("excluded-data", "unreliable", text + "; the record is not what it seems"))
        elif share > THRESHOLDS["flagged_check"]:
            out.append(Finding("excluded-data", "check", text))
    index = quality.flags.index
    span_years = float((index.max() - index.min()) / pd.Timedelta(days=DAYS_PER_YEAR)) if len(index) else 0.0
    excluded = _excluded_span_years(quality)
    if span_years > 0 and excluded > 0:
        share = excluded / span_years
        text = (f"{excluded:.1f} of {span_years:.1f} years ({100 * share:.0f} %) are kept out of the surge "
                f"statistics for clock faults")
        if share > THRESHOLDS["excluded_span_unreliable"]:
            out.append(Finding("excluded-data", "unreliable", text))
        elif share > THRESHOLDS["excluded_span_check"]:
            out.append(Finding("excluded-data", "check", text))
    years = quality.completeness_by_year
    if len(years) >= 2:
        complete = int((years >= THRESHOLDS["year_completeness"]).sum())
        if complete < THRESHOLDS["complete_years_check"] * len(years):
            out.append(Finding("excluded-data", "check",
                               f"only {complete} of {len(years)} years are at least "
                               f"{100 * THRESHOLDS['year_completeness']:.0f} % complete"))
    return out


@register_check
def check_unresolved_faults(inputs: AssessmentInputs) -> list[Finding]:
    """Clock offsets and datum steps detected and not corrected (module docstring)."""
    quality = inputs.quality
    out = []
    offsets = getattr(quality, "timing_offsets", None)
    if isinstance(offsets, pd.DataFrame) and not offsets.empty:
        spans = "; ".join(f"{r.start:%Y-%m-%d} to {r.end:%Y-%m-%d} ({r.offset_minutes:+.0f} min)"
                          for r in offsets.itertuples())
        out.append(Finding("unresolved-faults", "check",
                           f"clock faults detected and not corrected: {spans}; these spans are kept out of the "
                           f"surge statistics (give --corrections to correct them)"))
    shifts = getattr(quality, "datum_shifts", None)
    if isinstance(shifts, pd.DataFrame) and not shifts.empty:
        half_width = float("nan")
        curve = inputs.recommended_curve()
        if curve is not None:
            _, lower, upper = _at_100(curve)
            half_width = 0.5 * (upper - lower)
        for row in shifts.itertuples():
            size = float(row.size_m)
            if abs(size) < THRESHOLDS["datum_step_m"]:
                continue
            text = (f"datum-step candidate of {size:+.3f} m at {pd.Timestamp(row.time):%Y-%m}, not corrected; "
                    f"check the gauge's levelling records and give --corrections")
            if math.isfinite(half_width) and abs(size) > half_width:
                out.append(Finding("unresolved-faults", "unreliable",
                                   text + f" (the step exceeds half the 100-year interval, {half_width:.2f} m)"))
            else:
                out.append(Finding("unresolved-faults", "check", text))
    return out


@register_check
def check_short_record_and_reference(inputs: AssessmentInputs) -> list[Finding]:
    """A short record's long-period levels, and a reference-gauge transfer's checks
    (:func:`extremes.transfer.stage.study_findings`)."""
    if inputs.study is None:
        return []
    from extremes.transfer.stage import study_findings

    return [Finding(check, severity, text) for check, severity, text in study_findings(inputs.study)]


for _check, _name in ((check_fitted_shape, "fitted-shape"), (check_level_above_record, "level-above-record"),
                      (check_methods_disagree, "methods-disagree"), (check_record_length, "record-length"),
                      (check_excluded_data, "excluded-data"), (check_unresolved_faults, "unresolved-faults"),
                      (check_short_record_and_reference, "short-record")):
    _check.check_name = _name
