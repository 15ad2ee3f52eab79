"""Tests of extremes.tide.nodal: exact check table and Doodson-Warburg approximations."""
import numpy as np
import pytest

from extremes.tide.constituents import NODAL_FAMILIES
from extremes.tide.nodal import approximate_factors, family_factors, nodal_corrections, orbital_elements

# METHODS.md sec. 3 check table, exact formulas [C]: N, I, (f, u) for M2, O1, K1, K2, Mf; f for Mm
EXACT = [
    (0.0, 28.5977, {"M2": (0.9632, 0), "O1": (1.1828, 0), "K1": (1.1128, 0), "K2": (1.3162, 0),
                    "Mf": (1.4519, 0), "Mm": (0.8714, 0)}),
    (90.0, 23.9789, {"M2": (1.0002, -2.137), "O1": (1.0233, 10.611), "K1": (1.0148, -8.797),
                     "K2": (1.0152, -17.775), "Mf": (1.0467, -23.360), "Mm": (0.9988, 0)}),
    (180.0, 18.3069, {"M2": (1.0378, 0), "O1": (0.8057, 0), "K1": (0.8817, 0), "K2": (0.7462, 0),
                      "Mf": (0.6252, 0), "Mm": (1.1313, 0)}),
    (125.0698, 20.9002, {"M2": (1.0217, -1.740), "O1": (0.9079, 10.134), "K1": (0.9436, -7.911),
                         "K2": (0.8540, -15.157), "Mf": (0.8065, -22.007), "Mm": (1.0743, 0)}),
]


@pytest.mark.parametrize("node, inclination, values", EXACT)
def test_exact_factors_match_check_table(node, inclination, values):
    assert orbital_elements(node)["I"] == pytest.approx(inclination, abs=6e-5)
    f, u = family_factors(np.array([node]))
    for fam, (f_exp, u_exp) in values.items():
        k = NODAL_FAMILIES.index(fam)
        assert f[0, k] == pytest.approx(f_exp, abs=6e-5), fam
        assert u[0, k] == pytest.approx(u_exp, abs=6e-4), fam


def test_auxiliary_angles_at_node_90():
    # [C] METHODS.md sec. 3: nu = 12.749, xi = 11.680, nu' = 8.797, 2nu'' = 17.775 at N = 90 deg
    el = orbital_elements(90.0)
    assert (el["nu"], el["xi"], el["nu_prime"], el["two_nu_second"]) == pytest.approx(
        (12.749, 11.680, 8.797, 17.775), abs=6e-4)


def test_exact_agrees_with_doodson_warburg_approximations():
    # [V] Doodson & Warburg (1941) as reproduced in Pugh (1987) Table 4.3; METHODS.md: agreement <= 0.006 in f
    # and <= 0.15 deg in u at the tabulated node longitudes
    nodes = np.arange(0.0, 360.0, 15.0)
    f, u = family_factors(nodes)
    approx = approximate_factors(nodes)
    for fam, (fa, ua) in approx.items():
        k = NODAL_FAMILIES.index(fam)
        assert np.max(np.abs(f[:, k] - fa)) <= 0.0065, fam
        du = (u[:, k] - ua + 180) % 360 - 180
        assert np.max(np.abs(du)) <= 0.16, fam


def test_compound_rule_applied():
    nodes = np.array([0.0, 60.0, 200.0])
    f, u = nodal_corrections(["M2", "M4", "2MK3", "MS4", "S2"], nodes)
    assert np.allclose(f[:, 1], f[:, 0] ** 2) and np.allclose(u[:, 1], 2 * u[:, 0])
    fk, uk = nodal_corrections(["K1"], nodes)
    assert np.allclose(f[:, 2], f[:, 0] ** 2 * fk[:, 0]) and np.allclose(u[:, 2], 2 * u[:, 0] - uk[:, 0])
    assert np.allclose(f[:, 3], f[:, 0]) and np.allclose(u[:, 3], u[:, 0])
    assert np.allclose(f[:, 4], 1.0) and np.allclose(u[:, 4], 0.0)


def test_l2_special_term_averages_to_m2_family():
    # Schureman's L2 term: f_L2 = f_M2 / Ra, 1/Ra = sqrt(1 - 12 tan^2(I/2) cos 2P + 36 tan^4(I/2)); over a
    # perigee cycle the factor oscillates about a level near f_M2 and u_L2 - u_M2 averages to about 0
    perigee = np.linspace(0, 360, 721)[:-1]
    node = np.full_like(perigee, 90.0)
    f, u = nodal_corrections(["L2", "M2"], node, perigee)
    assert f[:, 0].min() < f[:, 1].min() and f[:, 0].max() > f[:, 1].max()
    du = (u[:, 0] - u[:, 1] + 180) % 360 - 180
    assert abs(du.mean()) < 1e-6 and np.abs(du).max() < 40
