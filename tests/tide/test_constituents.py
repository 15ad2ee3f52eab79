"""Tests of extremes.tide.constituents: published speeds, compound rule, Rayleigh selection."""
import numpy as np
import pytest

from extremes.errors import DataError
from extremes.tide.constituents import CONSTITUENTS, PRIORITY, get_constituent, select_constituents

# The standard published 37-constituent list (Schureman 1958; METHODS.md sec. 2 "pub." column [V]), 7 decimals
PUBLISHED_SPEEDS = {
    "M2": 28.9841042, "S2": 30.0000000, "N2": 28.4397295, "K1": 15.0410686, "M4": 57.9682084,
    "O1": 13.9430356, "M6": 86.9523127, "MK3": 44.0251729, "S4": 60.0000000, "MN4": 57.4238337,
    "nu2": 28.5125831, "S6": 90.0000000, "mu2": 27.9682084, "2N2": 27.8953548, "OO1": 16.1391017,
    "lambda2": 29.4556253, "S1": 15.0000000, "M1": 14.4966939, "J1": 15.5854433, "Mm": 0.5443747,
    "Ssa": 0.0821373, "Sa": 0.0410686, "MSf": 1.0158958, "Mf": 1.0980331, "rho1": 13.4715145,
    "Q1": 13.3986609, "T2": 29.9589333, "R2": 30.0410667, "2Q1": 12.8542862, "P1": 14.9589314,
    "2SM2": 31.0158958, "M3": 43.4761563, "L2": 29.5284789, "2MK3": 42.9271398, "K2": 30.0821373,
    "M8": 115.9364169, "MS4": 58.9841042,
}

# METHODS.md sec. 2 table [C/M]: Doodson numbers and offsets of a sample of rows
DOODSON = {"M2": ("255.555", 0), "K1": ("165.555", 90), "O1": ("145.555", -90), "S1": ("164.555", 180),
           "L2": ("265.455", 180), "M3": ("355.555", 180), "2MK3": ("345.555", -90), "MK3": ("365.555", 90),
           "SK3": ("383.555", 90), "MSf": ("073.555", 0), "2SM2": ("291.555", 0), "T2": ("272.556", 0),
           "R2": ("274.554", 180), "pi1": ("162.556", -90), "psi1": ("166.554", 90), "M8": ("855.555", 0)}


def test_at_least_60_constituents_all_species():
    assert len(CONSTITUENTS) >= 60
    species = {c.species for c in CONSTITUENTS.values()}
    assert species >= {0, 1, 2, 3, 4, 5, 6, 7, 8}


@pytest.mark.parametrize("name", sorted(PUBLISHED_SPEEDS))
def test_speed_matches_published_list(name):
    # [V] Schureman (1958) / METHODS.md sec. 2 "pub." column, to 7 decimals
    assert round(get_constituent(name).speed_deg_per_hour, 7) == pytest.approx(PUBLISHED_SPEEDS[name], abs=1e-9)


@pytest.mark.parametrize("name", sorted(DOODSON))
def test_doodson_numbers_and_offsets(name):
    number, offset = DOODSON[name]
    c = get_constituent(name)
    assert c.doodson_number == number
    assert c.offset_deg == offset


def test_compound_rule():
    # compound rule (Pugh 1987 [M]; Schureman Table 2a [M]): vector, speed, u are the combination; f powers |a|
    m2, k1, s2 = (get_constituent(n) for n in ("M2", "K1", "S2"))
    c = get_constituent("2MK3")
    assert c.doodson == tuple(2 * np.array(m2.doodson) - np.array(k1.doodson))
    assert c.speed_deg_per_hour == pytest.approx(2 * m2.speed_deg_per_hour - k1.speed_deg_per_hour)
    assert dict(c.nodal_f) == {"M2": 2, "K1": 1} and dict(c.nodal_u) == {"M2": 2, "K1": -1}
    # MS4: f = f_M2, u = u_M2 (Pugh 1987 choice, METHODS.md sec. 2 [V]/[C])
    ms4 = get_constituent("MS4")
    assert dict(ms4.nodal_f) == {"M2": 1} and dict(ms4.nodal_u) == {"M2": 1}
    # MSf: f_M2, -u_M2 (METHODS.md sec. 2 table)
    msf = get_constituent("MSf")
    assert dict(msf.nodal_f) == {"M2": 1} and dict(msf.nodal_u) == {"M2": -1}
    assert s2.speed_deg_per_hour - m2.speed_deg_per_hour == pytest.approx(msf.speed_deg_per_hour)
    # MO3 and 2MK3 share V and speed (METHODS.md sec. 2)
    assert get_constituent("MO3").doodson == c.doodson


def test_lookup_case_and_greek():
    assert get_constituent("m2").name == "M2"
    assert get_constituent("μ2").name == "mu2"
    with pytest.raises(DataError, match="XX9"):
        get_constituent("XX9")


def test_rayleigh_minimum_spans():
    # [C] METHODS.md sec. 4: M2-S2 354.37 h; K1-O1 327.86 h; M2-N2 661.31 h; S2-K2 and K1-P1 182.62 d
    assert "S2" not in select_constituents(354.0)
    assert "S2" in select_constituents(354.5)
    month = select_constituents(29 * 24.0, sampling_hours=1.0)
    for name in ("M2", "S2", "N2", "K1", "O1", "M4", "MS4"):
        assert name in month
    assert "K2" not in month and "P1" not in month and "Sa" not in month
    half_year = select_constituents(183.0 * 24)
    assert "K2" in half_year and "P1" in half_year
    assert "K2" not in select_constituents(182.5 * 24)
    year = select_constituents(366.0 * 24, sampling_hours=1.0)
    assert "Sa" in year and len(year) >= 55
    # equal-speed pairs never both chosen; Nyquist respected
    assert "MO3" not in year
    assert "M8" not in select_constituents(366.0 * 24, sampling_hours=3.5)


def test_priority_holds_known_names_only():
    assert len(set(PRIORITY)) == len(PRIORITY)
    for name in PRIORITY:
        get_constituent(name)


def test_selection_input_checks():
    with pytest.raises(DataError, match="span_hours"):
        select_constituents(-1.0)
    with pytest.raises(DataError, match="rayleigh"):
        select_constituents(100.0, rayleigh=0.0)
