"""Checks of a transfer and the verdict on a short record's long-period levels."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from extremes.errors import DataError
from extremes.transfer import Finding, fit_relation, pair_overlap, short_record_findings, transfer_checks
from extremes.transfer.checks import worst_severity

M2 = pd.Timedelta(hours=12.4206)


def _reference(years, rng, *, storm_boost=None):
    """Skew surges of a reference: AR(1) over tides plus storms; ``storm_boost`` = (start, end) tide indices
    where storms are twice as large."""
    n = int(years * 705.75)
    x = np.empty(n)
    e = rng.normal(0, 0.08, n)
    x[0] = e[0]
    for i in range(1, n):
        x[i] = 0.5 * x[i - 1] + e[i]
    centres = rng.integers(0, n, int(6 * years))
    peaks = 0.2 + rng.exponential(0.2, centres.size)
    if storm_boost is not None:
        inside = (centres >= storm_boost[0]) & (centres < storm_boost[1])
        peaks[inside] *= 2.5
    for d in range(-2, 3):
        idx = np.clip(centres + d, 0, n - 1)
        np.add.at(x, idx, peaks * 0.6 ** abs(d))
    times = pd.Timestamp("1990-01-01", tz="UTC") + M2 * np.arange(n)
    return pd.Series(x, index=times)


def _site(reference, first, count, rng, slope=0.8, noise=0.04):
    part = reference.iloc[first:first + count]
    return pd.Series(slope * part.to_numpy() + rng.normal(0, noise, count), index=part.index + pd.Timedelta(hours=1))


def _checks(reference, site, **kw):
    pairs = pair_overlap(site, reference, max_lag_hours=3.0)
    rel = fit_relation(pairs.pairs["site_skew_surge_m"], pairs.pairs["reference_skew_surge_m"])
    return transfer_checks(pairs, rel, reference, tides_per_year=705.75, **kw)


def by_check(findings):
    out = {}
    for f in findings:
        out.setdefault(f.check, []).append(f.severity)
    return {k: worst_severity([Finding(k, s, "") for s in v]) for k, v in out.items()}


def test_a_related_site_of_two_years_passes():
    rng = np.random.default_rng(2)
    ref = _reference(25, rng)
    findings = _checks(ref, _site(ref, 10_000, 1412, rng))
    assert by_check(findings) == {"overlap length": "ok", "skew-surge correlation": "ok", "overlap storms": "ok"}


def test_overlap_of_a_few_months_is_refused_and_of_nine_months_needs_a_look():
    rng = np.random.default_rng(2)
    ref = _reference(25, rng)
    assert by_check(_checks(ref, _site(ref, 10_000, 200, rng)))["overlap length"] == "unreliable"
    assert by_check(_checks(ref, _site(ref, 10_000, 530, rng)))["overlap length"] == "check"


def test_weak_correlation_needs_a_look_and_none_is_refused():
    rng = np.random.default_rng(5)
    ref = _reference(25, rng)
    sd = float(ref.std())
    # r = 0.8 s / sqrt(0.64 s^2 + n^2): noise n = 0.8 s gives r ~ 0.71 (check band 0.5-0.7 reached at n ~ s)
    weak = by_check(_checks(ref, _site(ref, 10_000, 1412, rng, noise=1.0 * sd)))
    assert weak["skew-surge correlation"] == "check"
    none = by_check(_checks(ref, _site(ref, 10_000, 1412, rng, slope=0.0, noise=sd)))
    assert none["skew-surge correlation"] == "unreliable"


def test_an_overlap_of_unusual_storms_needs_a_look():
    rng = np.random.default_rng(8)
    ref = _reference(25, rng, storm_boost=(10_000, 11_412))
    findings = _checks(ref, _site(ref, 10_000, 1412, rng))
    assert by_check(findings)["overlap storms"] == "check"
    assert any("atypical" in f.reason or "differ" in f.reason for f in findings)


def test_short_record_verdict_by_period():
    findings = short_record_findings(2.0, [1, 2, 5, 10, 100], method="peaks-over-threshold")
    assert [f.severity for f in findings] == ["unreliable", "check"]
    assert "the 100-year levels" in findings[0].reason and "the 5, 10-year levels" in findings[1].reason
    assert short_record_findings(12.0, [100], method="annual-maxima") == ()
    ok = short_record_findings(2.0, [100], method="reference-skew-surge-joint-probability",
                               transfer_supported=True)
    assert [f.severity for f in ok] == ["ok"]
    refused = short_record_findings(2.0, [100], method="reference-skew-surge-joint-probability")
    assert refused[0].severity == "unreliable"
    with pytest.raises(DataError):
        short_record_findings(0.0, [100], method="x")
    with pytest.raises(ValueError):
        Finding("x", "fine", "")


def test_study_findings_for_the_assessment():
    # the transfer's findings that are not ok, and the short-record verdict on the recommended method
    from types import SimpleNamespace

    from extremes.transfer.stage import study_findings

    transfer = SimpleNamespace(supported=False, findings=(
        Finding("overlap length", "ok", "fine"),
        Finding("skew-surge correlation", "unreliable", "correlation 0.04"),
        Finding("overlap storms", "check", "few storms")))
    study = SimpleNamespace(method_details={"reference-skew-surge-joint-probability": transfer},
                            options={"study": {"periods_years": [2.0, 5.0, 100.0]}}, record_years=2.0,
                            recommended_method="peaks-over-threshold")
    found = study_findings(study)
    assert [(c, s) for c, s, _ in found] == [("reference-skew-surge-correlation", "unreliable"),
                                            ("reference-overlap-storms", "check"),
                                            ("short-record", "unreliable"), ("short-record", "check")]
    assert found[0][2].startswith("reference transfer refused: correlation 0.04")
    supported = SimpleNamespace(supported=True, findings=(Finding("overlap length", "ok", "fine"),))
    study = SimpleNamespace(method_details={"reference-skew-surge-joint-probability": supported},
                            options={"study": {"periods_years": [100.0]}}, record_years=2.0,
                            recommended_method="reference-skew-surge-joint-probability")
    assert study_findings(study) == []
