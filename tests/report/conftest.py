"""A small study run once for the report tests (invented harbour process, 11 years hourly)."""
from __future__ import annotations

import re

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner

#: text that only a Python object's repr or a raw container would put in a report
OBJECT_TEXT = re.compile(r"[A-Z][A-Za-z]+\([a-z_]+=|object at 0x|array\(|np\.float|Timestamp\(|dtype|\{'|\['|'\}|"
                         r"\bNone\b|\bnan\b|\bNaN\b|\bNaT\b")


@pytest.fixture(scope="session")
def study_folder(tmp_path_factory):
    """Results folder of a study of an 11-year hourly record of the invented harbour process."""
    from extremes.cli import cli
    from extremes.example_records import make_examples

    times = pd.date_range("2007-01-01", "2017-12-31 23:00", freq="h", tz="UTC")
    level, _ = make_examples.harbour_levels(times, np.random.default_rng(11))
    base = tmp_path_factory.mktemp("report-study")
    record = base / "orrindale_short.csv"
    pd.DataFrame({"time": times.strftime("%Y-%m-%dT%H:%M:%SZ"), "level_m": np.round(level, 3)}).to_csv(
        record, index=False)
    out = base / "study"
    result = CliRunner().invoke(cli, ["run", str(record), "--out", str(out), "--datum", "Orrindale Gauge Zero",
                                      "--resamples", "30", "--slr", "0,0.5,1", "--periods", "2,10,50,100,500"])
    assert result.exit_code == 0, result.output
    return out
