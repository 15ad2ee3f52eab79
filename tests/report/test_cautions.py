"""Standard cautions (practice summarised in METHODS.md sec. 12 [CP])."""
from __future__ import annotations

import subprocess
import sys

from extremes.report.cautions import standard_cautions


def test_cautions_state_what_practice_requires():
    cautions = standard_cautions(datum="ODN", epoch_year=2020.5, record_years=30.0, interval_minutes=60,
                                 methods=["annual-maxima", "skew-surge-joint-probability"], slr_offsets_m=[0.3, 0.5])
    text = " ".join(cautions)
    assert cautions[0].startswith("Still-water levels only")
    for needle in ("wave set-up", "run-up", "freeboard",       # still water only
                   "ODN", "2020.5",                           # datum and epoch
                   "confidence interval", "about 120 years",  # uncertainty; 4 x 30 years of record
                   "stationary", "tail form",                 # assumptions
                   "tide and surge", "independent",           # joint methods
                   "under-read",                              # hourly sampling
                   "0.3 m, 0.5 m",                            # rise offsets
                   "Local codes", "licensed professional"):
        assert needle in text, needle
    assert all(isinstance(c, str) and c for c in cautions)
    assert "[" not in text  # no dangling citation marks in text shown to readers


def test_cautions_adapt_to_missing_datum_and_methods():
    text = " ".join(standard_cautions(datum="unspecified", epoch_year=None))
    assert "not stated" in text and "unknown zero" in text
    assert "tide and surge" in text  # methods not given: the independence caution stays
    text = " ".join(standard_cautions(datum="unspecified", epoch_year=None, methods=["annual-maxima"]))
    assert "tide and surge" not in text  # no joint method
    assert "about" in text and "years of record" not in text


def test_cautions_import_without_matplotlib():
    code = ("import sys; import extremes.report, extremes.report.cautions, extremes.report.html; "
            "assert 'matplotlib' not in sys.modules, 'matplotlib imported'")
    subprocess.run([sys.executable, "-c", code], check=True)
