"""Fixtures of the extremal tests: the evd reference data sets (tests/data/README.md)."""
from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

DATA = Path(__file__).resolve().parents[1] / "data"


@pytest.fixture(scope="session")
def ref():
    """Reference fits computed with the R package evd 2.3-6.1 (tests/data/evd_reference_values.json)."""
    return json.loads((DATA / "evd_reference_values.json").read_text())


@pytest.fixture(scope="session")
def portpirie():
    """Port Pirie annual maxima 1923-1987 [m] (evd; Coles 2001 sec. 3.4.1)."""
    return pd.read_csv(DATA / "portpirie.csv").set_index("year")["annual_max_m"]


@pytest.fixture(scope="session")
def venice():
    """Venice ten largest annual sea levels 1931-1981 [cm] (evd; Smith 1986; Coles 2001 sec. 3.5)."""
    return pd.read_csv(DATA / "venice.csv").set_index("year")


@pytest.fixture(scope="session")
def x10():
    """The 10-value sample of METHODS.md sec. 9."""
    return np.array([1.2, 1.5, 1.1, 1.9, 1.4, 1.3, 1.7, 2.2, 1.6, 1.45])


@pytest.fixture(scope="session")
def q50():
    """METHODS.md sec. 9 deterministic sample "Q50": GEV(2, 0.2, 0.1) quantiles at (i - 0.5)/50."""
    from scipy import stats

    p = (np.arange(1, 51) - 0.5) / 50
    return stats.genextreme.ppf(p, -0.1, loc=2.0, scale=0.2)  # scipy c = -xi


def hourly_series(values, start="2000-01-01"):
    idx = pd.date_range(start, periods=len(values), freq="h", tz="UTC")
    return pd.Series(np.asarray(values, dtype=float), index=idx)
