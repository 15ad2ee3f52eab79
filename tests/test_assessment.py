"""The verdict on the levels: each plausibility check fires on what it is meant to catch and not otherwise.

The study and quality report are stood in for by small objects with the attributes the checks read; the
curves are real :class:`ReturnLevelCurve` objects. Thresholds are those of ``extremes.assessment.THRESHOLDS``
(their sources are in the module docstring); each test sits one case on either side of a threshold.
"""
from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pandas as pd
import pytest

from extremes import assessment
from extremes.assessment import Finding, assess, register_check
from extremes.curves import DENSE_PERIODS_YEARS, ReturnLevelCurve


def _curve(method, level_100, half_width=0.3, slope=0.2):
    """A Gumbel-like curve passing through ``level_100`` at 100 years, with a symmetric interval."""
    periods = DENSE_PERIODS_YEARS
    level = level_100 + slope * np.log(periods / 100.0)
    width = half_width * np.sqrt(np.log(periods + 1.0) / np.log(101.0))
    return ReturnLevelCurve(method=method, periods_years=periods, level_m=level, lower_m=level - width,
                            upper_m=level + width)


def _quality(*, n=100_000, flagged=0, missing=0, offsets=None, shifts=None, completeness=None):
    index = pd.date_range("1990-01-01", periods=n, freq="h", tz="UTC")
    counts = {"ok": n - flagged - missing, "missing": missing, "spike": flagged}
    years = completeness if completeness is not None else pd.Series(1.0, index=range(1990, 2001))
    return SimpleNamespace(
        n_samples=n, n_missing=missing, n_flagged=flagged, counts=counts, flags=pd.Series(0, index=index),
        completeness_by_year=years,
        timing_offsets=offsets if offsets is not None else pd.DataFrame(columns=["start", "end", "offset_minutes"]),
        datum_shifts=shifts if shifts is not None else pd.DataFrame(columns=["time", "size_m", "statistic"]))


def _study(*, curves=None, recommended="skew-surge-joint-probability", years=40.0, hat=4.6, surge_max=1.2,
           shapes=None, tail_shape=0.05):
    curves = curves or {recommended: _curve(recommended, 5.8)}
    details = {}
    for method, shape in (shapes or {}).items():
        details[method] = SimpleNamespace(fit=SimpleNamespace(shape=shape))
    details.setdefault(recommended, SimpleNamespace(tail={"all": {"shape": tail_shape}}))
    return SimpleNamespace(
        curves=curves, recommended_method=recommended, record_years=years, method_details=details,
        datums=SimpleNamespace(datums_m={"HAT": hat}),
        skew_surges=pd.DataFrame({"skew_surge_m": [0.1, 0.4, surge_max]}),
        level_epoch_m=pd.Series([hat + 0.3, hat - 3.0]))


def test_sound_study_is_ok():
    result = assess(quality=_quality(), study=_study())
    assert result.status == "ok" and result.reasons == []
    assert result.to_dict()["status"] == "ok"


@pytest.mark.parametrize("shape, recommended, expected", [
    (0.10, True, "ok"), (0.35, True, "check"), (-0.35, True, "check"), (0.55, True, "unreliable"),
    (0.55, False, "check"), (-0.6, False, "check")])
def test_fitted_shape(shape, recommended, expected):
    # thresholds: |xi| > 0.3 (sea-level experience), xi >= 0.5 infinite variance (Coles 2001 sec. 3.1.3),
    # xi < -0.5 non-regular maximum likelihood (Smith 1985)
    method = "skew-surge-joint-probability" if recommended else "annual-maxima"
    study = _study(shapes={"annual-maxima": 0.0}) if recommended else _study(shapes={method: shape})
    if recommended:
        study.method_details[method] = SimpleNamespace(tail={"all": {"shape": shape}})
    result = assess(quality=_quality(), study=study, checks=[assessment.check_fitted_shape])
    assert result.status == expected
    if expected != "ok":
        assert f"{shape:.2f}" in result.reasons[0] and method in result.reasons[0]


@pytest.mark.parametrize("plain, expected", [(0.12, "ok"), (0.62, "check"), (-0.4, "check")])
def test_a_tail_drawn_in_by_the_shape_prior_is_judged_by_its_own_shape(plain, expected):
    # the geophysical prior keeps the fitted shape within (-0.5, 0.5); the data's own (plain maximum-likelihood)
    # shape outside +/-0.3 is the same reviewer's warning sign (common practice), shown as a check
    study = _study()
    study.method_details["skew-surge-joint-probability"] = SimpleNamespace(
        tail={"all": {"shape": 0.18, "shape_mle": plain, "fit": "gml"}})
    result = assess(quality=_quality(), study=study, checks=[assessment.check_fitted_shape])
    assert result.status == expected
    if expected != "ok":
        assert f"{plain:.2f}" in result.reasons[0] and "prior" in result.reasons[0]



@pytest.mark.parametrize("level, expected", [(5.8, "ok"), (4.6 + 2.5 * 1.2, "check"), (4.6 + 3.5 * 1.2, "unreliable")])
def test_level_far_above_record_and_tide(level, expected):
    # R = (z100 - HAT) / largest skew surge: > 2 check, > 3 unreliable (assessment module docstring)
    study = _study(curves={"skew-surge-joint-probability": _curve("skew-surge-joint-probability", level)})
    result = assess(quality=_quality(), study=study, checks=[assessment.check_level_above_record])
    assert result.status == expected
    if expected != "ok":
        assert f"{level:.2f} m" in result.reasons[0] and "HAT" in result.reasons[0]


def test_methods_disagree_only_beyond_their_intervals():
    rec = "skew-surge-joint-probability"
    close = _study(curves={rec: _curve(rec, 5.8), "annual-maxima": _curve("annual-maxima", 6.3)})
    far = _study(curves={rec: _curve(rec, 5.8), "annual-maxima": _curve("annual-maxima", 6.5)})
    assert assess(quality=_quality(), study=close, checks=[assessment.check_methods_disagree]).status == "ok"
    result = assess(quality=_quality(), study=far, checks=[assessment.check_methods_disagree])
    assert result.status == "check" and "annual-maxima 6.50 m" in result.reasons[0]


def test_open_upper_bound_never_counts_as_disagreement():
    rec = "skew-surge-joint-probability"
    other = _curve("annual-maxima", 4.0)
    other = ReturnLevelCurve(method=other.method, periods_years=other.periods_years, level_m=other.level_m,
                             lower_m=other.lower_m, upper_m=np.full(other.level_m.shape, np.nan))
    study = _study(curves={rec: _curve(rec, 5.8), "annual-maxima": other})
    assert assess(quality=_quality(), study=study, checks=[assessment.check_methods_disagree]).status == "ok"


@pytest.mark.parametrize("method, years, expected", [
    ("peaks-over-threshold", 30.0, "ok"), ("peaks-over-threshold", 20.0, "check"),
    ("skew-surge-joint-probability", 12.0, "ok"), ("skew-surge-joint-probability", 8.0, "check")])
def test_recommended_method_on_few_years(method, years, expected):
    study = _study(curves={method: _curve(method, 5.8)}, recommended=method, years=years)
    result = assess(quality=_quality(), study=study, checks=[assessment.check_record_length])
    assert result.status == expected


@pytest.mark.parametrize("flagged, expected", [(500, "ok"), (2_000, "check"), (20_000, "unreliable")])
def test_share_of_flagged_readings(flagged, expected):
    result = assess(quality=_quality(flagged=flagged), checks=[assessment.check_excluded_data])
    assert result.status == expected
    if expected != "ok":
        assert f"{flagged} of 100000" in result.reasons[0]


def test_missing_rows_are_not_counted_as_flagged():
    # 30 % of the rows empty: a gap, not a fault of the readings (the completeness check covers it)
    result = assess(quality=_quality(missing=30_000, flagged=200), checks=[assessment.check_excluded_data])
    assert result.status == "ok"


def test_incomplete_years_and_excluded_clock_spans():
    years = pd.Series([1.0, 0.5, 0.4, 0.95, 0.2], index=range(1990, 1995))
    result = assess(quality=_quality(completeness=years), checks=[assessment.check_excluded_data])
    assert result.status == "check" and "only 2 of 5 years" in result.reasons[0]
    # 100,000 hours is 11.4 years; two years of clock fault kept out is 18 %
    offsets = pd.DataFrame({"start": pd.to_datetime(["1992-01-01"], utc=True),
                            "end": pd.to_datetime(["1994-01-01"], utc=True), "offset_minutes": [60.0]})
    result = assess(quality=_quality(offsets=offsets), checks=[assessment.check_excluded_data])
    assert result.status == "check" and "kept out of the surge statistics" in result.reasons[0]


def test_unresolved_clock_and_datum_faults():
    offsets = pd.DataFrame({"start": pd.to_datetime(["1992-03-01"], utc=True),
                            "end": pd.to_datetime(["1992-06-01"], utc=True), "offset_minutes": [60.0]})
    result = assess(quality=_quality(offsets=offsets), checks=[assessment.check_unresolved_faults])
    assert result.status == "check" and "1992-03-01 to 1992-06-01 (+60 min)" in result.reasons[0]
    small = pd.DataFrame({"time": pd.to_datetime(["1995-01-01"], utc=True), "size_m": [0.1], "statistic": [9.0]})
    large = small.assign(size_m=[0.5])
    # the 100-year interval of the stand-in curve is +/-0.3 m: a 0.1 m step is within it, 0.5 m is not
    assert assess(quality=_quality(shifts=small), study=_study(),
                  checks=[assessment.check_unresolved_faults]).status == "check"
    result = assess(quality=_quality(shifts=large), study=_study(), checks=[assessment.check_unresolved_faults])
    assert result.status == "unreliable" and "+0.500 m at 1995-01" in result.reasons[0]


def test_status_is_the_most_severe_and_reasons_come_most_severe_first():
    study = _study(shapes={"annual-maxima": 0.4})
    study.method_details["skew-surge-joint-probability"] = SimpleNamespace(tail={"all": {"shape": 0.6}})
    result = assess(quality=_quality(flagged=2_000), study=study)
    assert result.status == "unreliable"
    severities = [f.severity for f in result.findings]
    assert severities == sorted(severities, key=lambda s: -assessment.STATUSES.index(s))
    assert result.summary_lines()[0].startswith("assessment: UNRELIABLE")


def test_checks_can_be_added():
    def always(inputs):
        return [Finding("custom", "check", f"record of {inputs.quality.n_samples} rows")]

    result = assess(quality=_quality(), study=_study(), checks=list(assessment.CHECKS) + [always])
    assert result.status == "check" and result.reasons == ["record of 100000 rows"]
    assert "always" in result.to_dict()["checks"]
    before = list(assessment.CHECKS)
    try:
        register_check(always)
        register_check(always)  # once only
        assert assessment.CHECKS == before + [always]
    finally:
        assessment.CHECKS[:] = before


def test_bad_severity_is_refused():
    with pytest.raises(ValueError, match="severity"):
        Finding("x", "bad", "text")
