r"""Harmonic tide prediction and least-squares harmonic analysis.

Conventions: times UTC; phases are Greenwich phase lags G relative to the equilibrium argument V (Set A
astronomy, :mod:`extremes.tide.astronomy`) and nodal phase u, so that the tide is

.. math:: \eta(t) = Z_0 + \sum_j f_j(t) H_j \cos(V_j(t) + u_j(t) - G_j)

with f, u evaluated at each time [1]_, [2]_.

References
----------
.. [1] P. Schureman, Manual of Harmonic Analysis and Prediction of Tides, US C&GS Spec. Publ. 98, 1958.
.. [2] D. T. Pugh, Tides, Surges and Mean Sea-Level. Chichester, U.K.: Wiley, 1987, ch. 4.
.. [3] G. Godin, The Analysis of Tides. Toronto, ON, Canada: Univ. Toronto Press, 1972.
"""
from __future__ import annotations

import logging

import numpy as np

from extremes.errors import DataError
from extremes.tide.astronomy import days_since_epoch, doodson_variables_days
from extremes.tide.constituents import NODAL_FAMILIES, doodson_matrix, get_constituent
from extremes.tide.nodal import family_factors, nodal_exponents

logger = logging.getLogger(__name__)

#: samples per block when building design matrices or predictions (memory ~ CHUNK x constituents)
CHUNK = 100_000
_RAD = np.pi / 180.0


class _Basis:
    """Precomputed Doodson vectors, offsets and nodal exponents of a list of constituents."""

    def __init__(self, names):
        self.names = [get_constituent(n).name for n in names]
        self.doodson, self.offset = doodson_matrix(self.names)
        self.f_pow, self.u_mul = nodal_exponents(self.names)
        self.needs_perigee = "L2" in {fam for n in self.names for fam, _ in get_constituent(n).nodal_f}

    def phase_and_f(self, d: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Phase V + u [rad] and nodal factor f, both of shape (len(d), m), at ``d`` days since JD 2415020."""
        args = doodson_variables_days(d)
        fam_f, fam_u = family_factors(-args[:, 4], args[:, 3] if self.needs_perigee else None)
        phase = args @ self.doodson.T + self.offset + fam_u @ self.u_mul
        f = np.exp(np.log(np.maximum(fam_f, 1e-300)) @ self.f_pow)
        return phase * _RAD, f


def _synthesise(d: np.ndarray, basis: _Basis, amplitudes_m: np.ndarray, phases_deg: np.ndarray) -> np.ndarray:
    out = np.empty(d.shape[0])
    g = phases_deg * _RAD
    for start in range(0, d.shape[0], CHUNK):
        sl = slice(start, start + CHUNK)
        phase, f = basis.phase_and_f(d[sl])
        out[sl] = (f * np.cos(phase - g)) @ amplitudes_m
    return out


def predict_tide(times, names, amplitudes_m, phases_deg, *, z0_m: float = 0.0) -> np.ndarray:
    r"""Tide synthesised from harmonic constants (Greenwich phase lags, UTC), nodal corrections at each time.

    Parameters
    ----------
    times : array-like of tz-aware datetimes
        Prediction instants (converted to UTC; naive times are refused).
    names : sequence of str
        Constituent names (see :data:`extremes.tide.constituents.CONSTITUENTS`).
    amplitudes_m : array-like of float
        Amplitudes H. [m]
    phases_deg : array-like of float
        Greenwich phase lags G relative to the equilibrium argument. [deg]
    z0_m : float, keyword-only
        Mean level added to the tide. [m]

    Returns
    -------
    numpy.ndarray
        :math:`Z_0 + \sum_j f_j H_j \cos(V_j + u_j - G_j)`. [m]

    Raises
    ------
    DataError
        If the times are naive, names unknown or the three sequences differ in length.

    References
    ----------
    .. [1] P. Schureman, Manual of Harmonic Analysis and Prediction of Tides, US C&GS SP 98, 1958, p. 47.
    """
    names = list(names)
    amplitudes_m = np.asarray(amplitudes_m, dtype=float).reshape(-1)
    phases_deg = np.asarray(phases_deg, dtype=float).reshape(-1)
    if not len(names) == amplitudes_m.size == phases_deg.size:
        raise DataError(f"names, amplitudes_m and phases_deg must have the same length; got {len(names)}, "
                        f"{amplitudes_m.size}, {phases_deg.size}")
    if not (np.all(np.isfinite(amplitudes_m)) and np.all(np.isfinite(phases_deg))):
        raise DataError("amplitudes_m and phases_deg must be finite numbers")
    d = days_since_epoch(times)
    if not names:
        return np.full(d.shape[0], float(z0_m))
    return _synthesise(d, _Basis(names), amplitudes_m, phases_deg) + float(z0_m)


__all__ = ["predict_tide"]
