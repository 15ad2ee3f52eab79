"""Tests of extremes.tide.datums: HAT/LAT check value, high/low waters, form factor and tide type."""
import numpy as np
import pandas as pd
import pytest

from extremes.errors import DataError
from extremes.tide.datums import RADIATIONAL, form_factor, high_low_waters, tidal_datums, tide_type
from extremes.tide.harmonic import FittedConstituent, TideModel
from extremes.tide.nodal import nodal_corrections


def _model(amplitudes, phases=None, z0=0.0, datum="CD"):
    phases = phases or {}
    items = tuple(FittedConstituent(n, 0.0, h, phases.get(n, 0.0), 0.0, 0.0, np.inf) for n, h in amplitudes.items())
    return TideModel(z0_m=z0, constituents=items, datum=datum,
                     reference_time=pd.Timestamp("2005-01-01", tz="UTC"))


@pytest.fixture(scope="module")
def m2s2_datums():
    model = _model({"M2": 1.0, "S2": 0.3})
    return tidal_datums(model, start=pd.Timestamp("1996-01-01", tz="UTC"), step_minutes=6.0)


def test_hat_lat_of_m2_s2_example(m2s2_datums):
    # [C] METHODS.md sec. 6: M2 1.0 m + S2 0.3 m, G = 0, exact f,u, 6-min steps from 1996-01-01 for 18.61 yr
    # -> HAT = 1.3378 m, LAT = -1.3378 m (= max f_M2 * 1.0 + 0.3, max f_M2 = 1.0378 at N ~ 180 deg)
    assert m2s2_datums.HAT == pytest.approx(1.3378, abs=1e-4)
    assert m2s2_datums.LAT == pytest.approx(-1.3378, abs=1e-4)
    f_max = nodal_corrections(["M2"], np.array([180.0]))[0][0, 0]
    assert m2s2_datums.HAT == pytest.approx(f_max + 0.3, abs=1e-4)


def test_spring_neap_and_mean_levels(m2s2_datums):
    d = m2s2_datums
    # Pugh (1987) [M]: MHWS/MLWS = Z0 +- (M2 + S2), MHWN/MLWN = Z0 +- (M2 - S2)
    assert (d.MHWS, d.MLWS, d.MHWN, d.MLWN) == pytest.approx((1.3, -1.3, 0.7, -0.7))
    assert d.MSL == 0.0 and d.MTL == pytest.approx(0.5 * (d.MHW + d.MLW))
    # mean HW of M2 + S2 about mean f_M2 (~1.0) since S2 averages out; between neaps and springs
    assert d.MHWN < d.MHW < d.MHWS and d.MHHW >= d.MHW and d.MLLW <= d.MLW
    assert set(d.to_dict()["datums_m"]) >= {"HAT", "LAT", "MHWS", "MLWS", "MSL"}


def test_parabolic_refinement_makes_step_irrelevant():
    model = _model({"M2": 1.0, "S2": 0.3})
    start = pd.Timestamp("2006-01-01", tz="UTC")
    fine = tidal_datums(model, start=start, years=1.0, step_minutes=1.0)
    coarse = tidal_datums(model, start=start, years=1.0, step_minutes=30.0)
    assert coarse.HAT == pytest.approx(fine.HAT, abs=2e-4)
    assert coarse.MHW == pytest.approx(fine.MHW, abs=2e-4)


def test_high_low_waters_of_pure_m2():
    # pure M2, G = 0: high water where V + u = 0; levels f_M2; spacing 12 h 25.2 min (METHODS.md sec. 6 [C])
    model = _model({"M2": 1.0}, z0=0.5)
    start, end = pd.Timestamp("2010-03-01", tz="UTC"), pd.Timestamp("2010-03-05", tz="UTC")
    hl = high_low_waters(model, start, end, step_minutes=10.0)
    assert list(hl.columns) == ["time", "level_m", "kind"]
    highs = hl[hl["kind"] == "high"]
    spacing_min = np.diff(highs["time"].to_numpy()).astype("timedelta64[s]").astype(float) / 60
    assert np.allclose(spacing_min, 12 * 60 + 25.2, atol=0.2)
    # refined levels against a 10-second prediction
    fine = model.predict(pd.date_range(start, end, freq="10s")).to_numpy()
    assert highs["level_m"].max() == pytest.approx(fine.max(), abs=1e-5)
    assert set(hl["kind"]) == {"high", "low"} and hl["time"].is_monotonic_increasing


def test_radiational_constituents_left_out_by_default():
    model = _model({"M2": 1.0, "Sa": 0.1})
    start = pd.Timestamp("2006-01-01", tz="UTC")
    default = tidal_datums(model, start=start, years=1.0)
    kept = tidal_datums(model, start=start, years=1.0, include_radiational=True)
    assert "Sa" in RADIATIONAL and "S1" in RADIATIONAL
    assert kept.HAT - default.HAT == pytest.approx(0.1, abs=0.01)
    # every value says what it includes
    assert default.constituents == ("M2",) and set(kept.constituents) == {"M2", "Sa"}
    for name in ("HAT", "LAT", "MHW", "MLW", "MHHW", "MLLW"):
        assert "Sa, Ssa, S1 left out" in default.labels[name] and "Sa, Ssa, S1 included" in kept.labels[name]
        assert "2006-01-01" in default.labels[name]
    assert set(default.labels) == set(default.datums_m)
    assert "M2 and S2" in default.labels["MHWS"]
    assert default.to_dict()["labels"] == default.labels


def test_mixed_tide_higher_high_water():
    model = _model({"M2": 0.5, "K1": 0.4, "O1": 0.3})
    d = tidal_datums(model, start=pd.Timestamp("2006-01-01", tz="UTC"), years=1.0)
    assert d.MHHW > d.MHW + 0.1 and d.MLLW < d.MLW - 0.02


def test_form_factor_and_tide_type():
    # [C] METHODS.md sec. 6 checks; bounds of Courtier (1938) as given by Pugh (1987) [M/V]
    f1 = form_factor({"M2": 1.0, "S2": 0.3, "K1": 0.1, "O1": 0.08})
    assert f1 == pytest.approx(0.138, abs=5e-4) and tide_type(f1) == "semidiurnal"
    f2 = form_factor(_model({"M2": 0.2, "S2": 0.05, "K1": 0.5, "O1": 0.4}))
    assert f2 == pytest.approx(3.6) and tide_type(f2) == "diurnal"
    assert tide_type(0.2499) == "semidiurnal" and tide_type(0.25) == "mixed, mainly semidiurnal"
    assert tide_type(1.5) == "mixed, mainly semidiurnal" and tide_type(1.51) == "mixed, mainly diurnal"
    assert tide_type(3.0) == "mixed, mainly diurnal" and tide_type(3.01) == "diurnal"
    with pytest.raises(DataError, match="form_factor"):
        tide_type(float("nan"))


def test_datum_input_errors():
    model = _model({"M2": 1.0})
    t = pd.Timestamp("2006-01-01", tz="UTC")
    with pytest.raises(DataError, match="after"):
        high_low_waters(model, t, t)
    with pytest.raises(DataError, match="naive"):
        high_low_waters(model, pd.Timestamp("2006-01-01"), t + pd.Timedelta("1D"))
    with pytest.raises(DataError, match="step_minutes"):
        high_low_waters(model, t, t + pd.Timedelta("1D"), step_minutes=0)
    with pytest.raises(DataError, match="TideModel"):
        tidal_datums({"M2": 1.0})
