r"""Nodal corrections f (amplitude factor) and u (phase) [deg] of tidal constituents.

Exact orbital formulas of Schureman (1958) [1]_ (method notes sec. 3) for the main families M2, O1, K1, K2,
J1, OO1, Mm, Mf, M3 and L2, with obliquity :math:`\omega = 23.4523^\circ` and lunar inclination
:math:`i = 5.1454^\circ`:

* :math:`\cos I = \cos i \cos\omega - \sin i \sin\omega \cos N`,
* :math:`\nu = A - B`, :math:`\xi = N - A - B` with
  :math:`\tan A = \frac{\cos\frac{\omega-i}{2}}{\cos\frac{\omega+i}{2}}\tan\frac N2`,
  :math:`\tan B = \frac{\sin\frac{\omega-i}{2}}{\sin\frac{\omega+i}{2}}\tan\frac N2`,
* :math:`\nu'` and :math:`2\nu''` as in [1]_ for K1 and K2.

L2 uses Schureman's special term: :math:`f = f_{M2}/R_a`,
:math:`1/R_a = \sqrt{1 - 12\tan^2\frac I2\cos 2P + 36\tan^4\frac I2}`, :math:`u = 2\xi - 2\nu - R`,
:math:`\tan R = \sin 2P / (\frac{1}{6}\cot^2\frac I2 - \cos 2P)`, :math:`P = p - \xi`.

M1 (small amplitude): the O1 factors are used as an approximation (departure from Schureman's special
M1 term, which we do not reproduce); a fitted M1 phase therefore carries a perigee modulation.

Compound constituents follow the compound rule (:mod:`extremes.tide.constituents`).
Factors are evaluated at each time given (no mid-record approximation).

References
----------
.. [1] P. Schureman, Manual of Harmonic Analysis and Prediction of Tides, US C&GS Spec. Publ. 98, 1958,
       pp. 25-47, 162-167.
.. [2] A. T. Doodson and H. D. Warburg, Admiralty Manual of Tides. London, U.K.: HMSO, 1941.
.. [3] D. T. Pugh, Tides, Surges and Mean Sea-Level. Chichester, U.K.: Wiley, 1987, Table 4.3.
"""
from __future__ import annotations

import logging

import numpy as np

from extremes.tide.constituents import NODAL_FAMILIES, get_constituent

logger = logging.getLogger(__name__)

OBLIQUITY_DEG = 23.4523
LUNAR_INCLINATION_DEG = 5.1454

_RAD = np.pi / 180.0


def _wrap180(angle_deg):
    return (np.asarray(angle_deg) + 180.0) % 360.0 - 180.0


def orbital_elements(node_deg) -> dict[str, np.ndarray]:
    """Schureman's auxiliary angles for a lunar node longitude N.

    Parameters
    ----------
    node_deg : array-like
        Longitude N of the Moon's ascending node. [deg]

    Returns
    -------
    dict
        ``I``, ``nu``, ``xi``, ``nu_prime``, ``two_nu_second`` [deg] (nu, xi, nu' and 2nu'' in -180..180).
    """
    n = np.deg2rad(_wrap180(node_deg))
    w, i = OBLIQUITY_DEG * _RAD, LUNAR_INCLINATION_DEG * _RAD
    cos_i = np.cos(i) * np.cos(w) - np.sin(i) * np.sin(w) * np.cos(n)
    big_i = np.arccos(cos_i)
    half = n / 2.0
    a = np.arctan2(np.cos((w - i) / 2) * np.sin(half), np.cos((w + i) / 2) * np.cos(half))
    b = np.arctan2(np.sin((w - i) / 2) * np.sin(half), np.sin((w + i) / 2) * np.cos(half))
    nu = a - b
    xi = n - a - b
    nu_prime = np.arctan2(np.sin(2 * big_i) * np.sin(nu), np.sin(2 * big_i) * np.cos(nu) + 0.3347)
    two_nu2 = np.arctan2(np.sin(big_i) ** 2 * np.sin(2 * nu), np.sin(big_i) ** 2 * np.cos(2 * nu) + 0.0727)
    return {
        "I": np.rad2deg(big_i), "nu": _wrap180(np.rad2deg(nu)), "xi": _wrap180(np.rad2deg(xi)),
        "nu_prime": _wrap180(np.rad2deg(nu_prime)), "two_nu_second": _wrap180(np.rad2deg(two_nu2)),
    }


def family_factors(node_deg, perigee_deg=None) -> tuple[np.ndarray, np.ndarray]:
    """Exact f and u of each nodal family (:data:`~extremes.tide.constituents.NODAL_FAMILIES`).

    Parameters
    ----------
    node_deg : array-like
        Lunar node longitude N. [deg]
    perigee_deg : array-like or None
        Lunar perigee longitude p, needed by L2 (None: L2 gets the M2 factors). [deg]

    Returns
    -------
    f, u : numpy.ndarray
        Shape ``N.shape + (len(NODAL_FAMILIES),)``; u in degrees.
    """
    el = orbital_elements(node_deg)
    big_i = el["I"] * _RAD
    nu, xi = el["nu"] * _RAD, el["xi"] * _RAD
    s_i, half = np.sin(big_i), big_i / 2
    fam_f = {}
    fam_u = {}
    fam_f["M2"] = np.cos(half) ** 4 / 0.9154
    fam_u["M2"] = 2 * xi - 2 * nu
    fam_f["O1"] = s_i * np.cos(half) ** 2 / 0.3800
    fam_u["O1"] = 2 * xi - nu
    fam_f["K1"] = np.sqrt(0.8965 * np.sin(2 * big_i) ** 2 + 0.6001 * np.sin(2 * big_i) * np.cos(nu) + 0.1006)
    fam_u["K1"] = -el["nu_prime"] * _RAD
    fam_f["K2"] = np.sqrt(19.0444 * s_i**4 + 2.7702 * s_i**2 * np.cos(2 * nu) + 0.0981)
    fam_u["K2"] = -el["two_nu_second"] * _RAD
    fam_f["J1"] = np.sin(2 * big_i) / 0.7214
    fam_u["J1"] = -nu
    fam_f["OO1"] = s_i * np.sin(half) ** 2 / 0.0164
    fam_u["OO1"] = -2 * xi - nu
    fam_f["Mm"] = (2.0 / 3.0 - s_i**2) / 0.5021
    fam_u["Mm"] = np.zeros_like(nu)
    fam_f["Mf"] = s_i**2 / 0.1578
    fam_u["Mf"] = -2 * xi
    fam_f["M3"] = np.cos(half) ** 6 / 0.8758
    fam_u["M3"] = 3 * xi - 3 * nu
    if perigee_deg is None:
        fam_f["L2"], fam_u["L2"] = fam_f["M2"], fam_u["M2"]
    else:
        big_p = np.asarray(perigee_deg, dtype=float) * _RAD - xi
        tan2 = np.tan(half) ** 2
        fam_f["L2"] = fam_f["M2"] * np.sqrt(1 - 12 * tan2 * np.cos(2 * big_p) + 36 * tan2**2)
        r_term = np.arctan2(np.sin(2 * big_p), 1.0 / (6.0 * tan2) - np.cos(2 * big_p))
        fam_u["L2"] = 2 * xi - 2 * nu - r_term
    # M1: documented approximation by the O1 factors (see module docstring)
    fam_f["M1"], fam_u["M1"] = fam_f["O1"], fam_u["O1"]
    f = np.stack([np.broadcast_to(fam_f[k], np.shape(nu)) for k in NODAL_FAMILIES], axis=-1)
    u = np.stack([np.broadcast_to(np.rad2deg(fam_u[k]), np.shape(nu)) for k in NODAL_FAMILIES], axis=-1)
    return f, _wrap180(u)


def approximate_factors(node_deg) -> dict[str, tuple[np.ndarray, np.ndarray]]:
    """Doodson-Warburg approximations of f and u (Pugh 1987 Table 4.3), for cross-checks.

    Returns
    -------
    dict
        Family name -> (f, u [deg]) for Mm, Mf, O1, K1, M2, K2.
    """
    n = np.deg2rad(np.asarray(node_deg, dtype=float))
    c1, c2, s1, s2, s3 = np.cos(n), np.cos(2 * n), np.sin(n), np.sin(2 * n), np.sin(3 * n)
    return {
        "Mm": (1.000 - 0.130 * c1, 0.0 * n),
        "Mf": (1.043 + 0.414 * c1, -23.7 * s1 + 2.7 * s2 - 0.4 * s3),
        "O1": (1.009 + 0.187 * c1 - 0.015 * c2, 10.8 * s1 - 1.3 * s2 + 0.2 * s3),
        "K1": (1.006 + 0.115 * c1 - 0.009 * c2, -8.9 * s1 + 0.7 * s2),
        "M2": (1.000 - 0.037 * c1, -2.1 * s1),
        "K2": (1.024 + 0.286 * c1 + 0.008 * c2, -17.7 * s1 + 0.7 * s2),
    }


def nodal_exponents(names) -> tuple[np.ndarray, np.ndarray]:
    """Matrices (families x constituents) of f powers and u multipliers for the named constituents."""
    f_pow = np.zeros((len(NODAL_FAMILIES), len(names)))
    u_mul = np.zeros((len(NODAL_FAMILIES), len(names)))
    where = {k: i for i, k in enumerate(NODAL_FAMILIES)}
    for j, name in enumerate(names):
        c = get_constituent(name)
        for fam, pw in c.nodal_f:
            f_pow[where[fam], j] += pw
        for fam, mul in c.nodal_u:
            u_mul[where[fam], j] += mul
    return f_pow, u_mul


def nodal_corrections(names, node_deg, perigee_deg=None) -> tuple[np.ndarray, np.ndarray]:
    """f and u [deg] of the named constituents at the given node (and perigee) longitudes.

    Parameters
    ----------
    names : sequence of str
        Constituent names.
    node_deg, perigee_deg : array-like
        Longitudes N and p (shape (n,)). [deg]

    Returns
    -------
    f, u : numpy.ndarray
        Shape (n, m); u in degrees (not wrapped).
    """
    fam_f, fam_u = family_factors(node_deg, perigee_deg)
    f_pow, u_mul = nodal_exponents(names)
    log_f = np.log(np.maximum(fam_f, 1e-300))
    f = np.exp(log_f @ f_pow)
    u = fam_u @ u_mul
    return f, u


__all__ = ["orbital_elements", "family_factors", "approximate_factors", "nodal_exponents", "nodal_corrections"]
