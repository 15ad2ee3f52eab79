r"""Table of tidal constituents: Doodson multipliers, phase offsets, speeds, nodal families.

The argument of constituent *j* is :math:`V_j = n_1\tau + n_2 s + n_3 h + n_4 p + n_5 N' + n_6 p_1 + \varphi_j`
(variables of :mod:`extremes.tide.astronomy`), its speed :math:`\sigma_j = \sum_k n_k \dot{x}_k` with the hourly
rates of Schureman (1958) [1]_. Offsets :math:`\varphi_j` follow Schureman's argument table rewritten in
:math:`\tau`. Conventions recorded here once:

* ``Sa`` has :math:`V = h` (Schureman's Sa, 0.0410686 deg/h), not Doodson's :math:`h - p_1`.
* ``S1`` (radiational) has offset 180 deg with :math:`V = \tau + s - h + 180 = T` (the hour angle of the mean
  Sun counted from midnight), as in Schureman's table.

Shallow-water (compound) constituents are defined once by their formula in base constituents, e.g.
``2MK3 = 2 M2 - K1``; their Doodson vector, offset, speed and nodal phase are the same combination of those of
the bases, and their nodal factor is :math:`\prod f_B^{|b|}` (compound rule [2]_, [1]_ Table 2a).

Equal-speed pairs: ``MO3`` and ``2MK3`` have identical arguments; ``2MN2`` has the argument of ``L2`` plus
180 deg. Only one of each pair can be fitted; :func:`select_constituents` keeps the one earlier in
:data:`PRIORITY`.

References
----------
.. [1] P. Schureman, Manual of Harmonic Analysis and Prediction of Tides, US Coast and Geodetic Survey Special
       Publication 98, rev. ed. Washington, DC, USA, 1958.
.. [2] D. T. Pugh, Tides, Surges and Mean Sea-Level. Chichester, U.K.: Wiley, 1987, ch. 4.
.. [3] G. Godin, The Analysis of Tides. Toronto, ON, Canada: Univ. Toronto Press, 1972.
"""
from __future__ import annotations

import logging
from dataclasses import dataclass

import numpy as np

from extremes.errors import DataError
from extremes.tide.astronomy import RATES_DEG_PER_HOUR

logger = logging.getLogger(__name__)

#: nodal families (Section 3 of the method notes); a constituent's f is a product of powers of these
NODAL_FAMILIES = ("M2", "O1", "K1", "K2", "J1", "OO1", "Mm", "Mf", "M3", "L2", "M1")


@dataclass(frozen=True)
class Constituent:
    """One tidal constituent.

    Attributes
    ----------
    name : str
        Conventional name.
    doodson : tuple of int
        Multipliers of (tau, s, h, p, N', p1).
    offset_deg : float
        Phase offset of the equilibrium argument. [deg]
    nodal_f : tuple of (str, int)
        Nodal family and power, f = prod f_family ** power (empty: f = 1).
    nodal_u : tuple of (str, int)
        Nodal family and multiplier, u = sum multiplier * u_family. [deg]
    formula : tuple of (int, str) or None
        For a compound: (coefficient, base name) pairs; None for a base constituent.
    """

    name: str
    doodson: tuple[int, int, int, int, int, int]
    offset_deg: float
    nodal_f: tuple[tuple[str, int], ...]
    nodal_u: tuple[tuple[str, int], ...]
    formula: tuple[tuple[int, str], ...] | None = None

    @property
    def speed_deg_per_hour(self) -> float:
        """Angular speed from Schureman's hourly rates. [deg/h]"""
        return float(np.dot(self.doodson, RATES_DEG_PER_HOUR))

    @property
    def period_hours(self) -> float:
        """Period 360/speed (inf for a zero speed). [h]"""
        speed = self.speed_deg_per_hour
        return float("inf") if speed == 0 else 360.0 / speed

    @property
    def species(self) -> int:
        """Tidal species (cycles per lunar day): 0 long-period, 1 diurnal, 2 semidiurnal, ..."""
        return self.doodson[0]

    @property
    def doodson_number(self) -> str | None:
        """Doodson number ``n1 (n2+5)(n3+5).(n4+5)(n5+5)(n6+5)``; None when a digit falls outside 0..9."""
        digits = [self.doodson[0]] + [n + 5 for n in self.doodson[1:]]
        if any(not 0 <= d <= 9 for d in digits):
            return None
        return "{}{}{}.{}{}{}".format(*digits)

    def to_dict(self) -> dict:
        return {
            "name": self.name, "doodson": list(self.doodson), "offset_deg": self.offset_deg,
            "speed_deg_per_hour": self.speed_deg_per_hour, "doodson_number": self.doodson_number,
            "formula": None if self.formula is None else " ".join(f"{c:+d}{b}" for c, b in self.formula),
        }

    def __repr__(self) -> str:
        return f"Constituent({self.name}, {self.speed_deg_per_hour:.7f} deg/h)"


# name, (tau s h p N' p1), offset [deg], nodal family (None: f = 1, u = 0)
_BASE = [
    ("Sa", (0, 0, 1, 0, 0, 0), 0.0, None),
    ("Ssa", (0, 0, 2, 0, 0, 0), 0.0, None),
    ("MSm", (0, 1, -2, 1, 0, 0), 0.0, "Mm"),
    ("Mm", (0, 1, 0, -1, 0, 0), 0.0, "Mm"),
    ("Mf", (0, 2, 0, 0, 0, 0), 0.0, "Mf"),
    ("2Q1", (1, -3, 0, 2, 0, 0), -90.0, "O1"),
    ("sigma1", (1, -3, 2, 0, 0, 0), -90.0, "O1"),
    ("Q1", (1, -2, 0, 1, 0, 0), -90.0, "O1"),
    ("rho1", (1, -2, 2, -1, 0, 0), -90.0, "O1"),
    ("O1", (1, -1, 0, 0, 0, 0), -90.0, "O1"),
    ("M1", (1, 0, 0, 1, 0, 0), 90.0, "M1"),
    ("pi1", (1, 1, -3, 0, 0, 1), -90.0, None),
    ("P1", (1, 1, -2, 0, 0, 0), -90.0, None),
    ("S1", (1, 1, -1, 0, 0, 0), 180.0, None),
    ("K1", (1, 1, 0, 0, 0, 0), 90.0, "K1"),
    ("psi1", (1, 1, 1, 0, 0, -1), 90.0, None),
    ("phi1", (1, 1, 2, 0, 0, 0), 90.0, None),
    ("J1", (1, 2, 0, -1, 0, 0), 90.0, "J1"),
    ("OO1", (1, 3, 0, 0, 0, 0), 90.0, "OO1"),
    ("2N2", (2, -2, 0, 2, 0, 0), 0.0, "M2"),
    ("mu2", (2, -2, 2, 0, 0, 0), 0.0, "M2"),
    ("N2", (2, -1, 0, 1, 0, 0), 0.0, "M2"),
    ("nu2", (2, -1, 2, -1, 0, 0), 0.0, "M2"),
    ("M2", (2, 0, 0, 0, 0, 0), 0.0, "M2"),
    ("lambda2", (2, 1, -2, 1, 0, 0), 180.0, "M2"),
    ("L2", (2, 1, 0, -1, 0, 0), 180.0, "L2"),
    ("T2", (2, 2, -3, 0, 0, 1), 0.0, None),
    ("S2", (2, 2, -2, 0, 0, 0), 0.0, None),
    ("R2", (2, 2, -1, 0, 0, -1), 180.0, None),
    ("K2", (2, 2, 0, 0, 0, 0), 0.0, "K2"),
    ("M3", (3, 0, 0, 0, 0, 0), 180.0, "M3"),
]

# compound constituents: name, ((coefficient, base), ...)
_COMPOUND = [
    ("MSf", ((1, "S2"), (-1, "M2"))),
    ("SO1", ((1, "S2"), (-1, "O1"))),
    ("2MN2", ((2, "M2"), (-1, "N2"))),
    ("MNS2", ((1, "M2"), (1, "N2"), (-1, "S2"))),
    ("MSN2", ((1, "M2"), (1, "S2"), (-1, "N2"))),
    ("MKS2", ((1, "M2"), (1, "K2"), (-1, "S2"))),
    ("MSK2", ((1, "M2"), (1, "S2"), (-1, "K2"))),
    ("2SM2", ((2, "S2"), (-1, "M2"))),
    ("MO3", ((1, "M2"), (1, "O1"))),
    ("2MK3", ((2, "M2"), (-1, "K1"))),
    ("SO3", ((1, "S2"), (1, "O1"))),
    ("MK3", ((1, "M2"), (1, "K1"))),
    ("SK3", ((1, "S2"), (1, "K1"))),
    ("N4", ((2, "N2"),)),
    ("MN4", ((1, "M2"), (1, "N2"))),
    ("M4", ((2, "M2"),)),
    ("SN4", ((1, "S2"), (1, "N2"))),
    ("MS4", ((1, "M2"), (1, "S2"))),
    ("MK4", ((1, "M2"), (1, "K2"))),
    ("S4", ((2, "S2"),)),
    ("SK4", ((1, "S2"), (1, "K2"))),
    ("2MK5", ((2, "M2"), (1, "K1"))),
    ("2MN6", ((2, "M2"), (1, "N2"))),
    ("M6", ((3, "M2"),)),
    ("MSN6", ((1, "M2"), (1, "S2"), (1, "N2"))),
    ("2MS6", ((2, "M2"), (1, "S2"))),
    ("2MK6", ((2, "M2"), (1, "K2"))),
    ("2SM6", ((2, "S2"), (1, "M2"))),
    ("MSK6", ((1, "M2"), (1, "S2"), (1, "K2"))),
    ("S6", ((3, "S2"),)),
    ("3MK7", ((3, "M2"), (1, "K1"))),
    ("M8", ((4, "M2"),)),
    ("3MS8", ((3, "M2"), (1, "S2"))),
]


def _merge(pairs: dict, family_pairs, coefficient: int) -> None:
    for family, value in family_pairs:
        pairs[family] = pairs.get(family, 0) + coefficient * value


def _build_table() -> dict[str, Constituent]:
    table: dict[str, Constituent] = {}
    for name, doodson, offset, family in _BASE:
        nodal = ((family, 1),) if family else ()
        table[name] = Constituent(name, doodson, offset, nodal, nodal)
    for name, formula in _COMPOUND:
        doodson = np.zeros(6, dtype=int)
        offset = 0.0
        f_pows: dict[str, int] = {}
        u_coefs: dict[str, int] = {}
        for coefficient, base_name in formula:
            base = table[base_name]
            doodson += coefficient * np.asarray(base.doodson)
            offset += coefficient * base.offset_deg
            _merge(f_pows, base.nodal_f, abs(coefficient))
            _merge(u_coefs, base.nodal_u, coefficient)
        offset = float((offset + 180.0) % 360.0 - 180.0)
        if offset == -180.0:
            offset = 180.0
        table[name] = Constituent(
            name, tuple(int(n) for n in doodson), offset,
            tuple((k, v) for k, v in f_pows.items() if v), tuple((k, v) for k, v in u_coefs.items() if v),
            tuple(formula),
        )
    return table


#: all constituents by name
CONSTITUENTS: dict[str, Constituent] = _build_table()
_LOOKUP = {name.lower(): name for name in CONSTITUENTS}
_LOOKUP.update({"msm": "MSm", "μ2": "mu2", "ν2": "nu2", "λ2": "lambda2", "σ1": "sigma1", "ρ1": "rho1",
                "π1": "pi1", "ψ1": "psi1", "φ1": "phi1"})

#: order in which the automatic choice considers constituents (roughly by typical amplitude): a constituent
#: is taken only if it is resolved (Rayleigh) from every one taken before it. MO3 and 2MN2 are left out
#: (same speed as 2MK3 and L2); ask for them by name instead.
PRIORITY = (
    "M2", "S2", "K1", "O1", "N2", "K2", "P1", "Q1", "M4", "MS4", "MN4", "Sa", "Ssa", "Mm", "Mf", "MSf",
    "2N2", "mu2", "nu2", "L2", "T2", "J1", "M3", "MK3", "2MK3", "M6", "2MS6", "S4", "MK4", "OO1", "rho1",
    "sigma1", "2Q1", "M1", "lambda2", "S1", "MSm", "2SM2", "SK3", "M8", "SN4", "MNS2", "MSN2", "MKS2",
    "MSK2", "SO1", "SO3", "2MN6", "2SM6", "MSN6", "2MK6", "MSK6", "N4", "SK4", "2MK5", "3MK7", "3MS8",
    "R2", "pi1", "psi1", "phi1", "S6",
)

#: equilibrium amplitude ratios used to infer an unresolved constituent from its reference (phase difference 0)
EQUILIBRIUM_INFERENCE = {"P1": ("K1", 0.331), "K2": ("S2", 0.272), "N2": ("M2", 0.191), "Q1": ("O1", 0.191)}

#: constituents inferred by default when the record does not resolve them
DEFAULT_INFERRED = ("P1", "K2")


def get_constituent(name: str) -> Constituent:
    """Look up a constituent by name (case-insensitive; Greek letters or spelled names).

    Raises
    ------
    DataError
        If the name is unknown.
    """
    key = _LOOKUP.get(str(name).strip().lower())
    if key is None:
        raise DataError(f"constituent {name!r} is unknown; expected one of {', '.join(CONSTITUENTS)}")
    return CONSTITUENTS[key]


def doodson_matrix(names) -> tuple[np.ndarray, np.ndarray]:
    """Doodson multipliers (m x 6) and offsets (m,) [deg] of the named constituents."""
    items = [get_constituent(n) for n in names]
    return (np.array([c.doodson for c in items], dtype=float).reshape(len(items), 6),
            np.array([c.offset_deg for c in items], dtype=float))


def speeds(names) -> np.ndarray:
    """Speeds of the named constituents [deg/h]."""
    return np.array([get_constituent(n).speed_deg_per_hour for n in names], dtype=float)


def select_constituents(span_hours: float, *, rayleigh: float = 1.0, sampling_hours: float | None = None,
                        candidates=None) -> list[str]:
    r"""Automatic choice of constituents that a record of the given span resolves.

    Candidates are taken in :data:`PRIORITY` order; a candidate is accepted when
    :math:`|\sigma_j - \sigma_k| L \ge 360^\circ R` against every constituent already accepted and against
    the mean (speed 0), and when its speed is below the Nyquist speed ``180/sampling_hours``.

    Parameters
    ----------
    span_hours : float
        Span L of the record (first to last valid sample). [h]
    rayleigh : float, keyword-only
        Rayleigh factor R (1 by default; below 1 only with high signal-to-noise).
    sampling_hours : float or None, keyword-only
        Sampling interval; constituents above the Nyquist speed are dropped. [h]
    candidates : sequence of str or None, keyword-only
        Candidates in priority order (default :data:`PRIORITY`).

    Returns
    -------
    list of str
        Accepted constituent names, in priority order.

    References
    ----------
    .. [1] G. Godin, The Analysis of Tides. Univ. Toronto Press, 1972.
    """
    if not np.isfinite(span_hours) or span_hours <= 0:
        raise DataError(f"span_hours must be a positive number of hours; got {span_hours}")
    if not rayleigh > 0:
        raise DataError(f"rayleigh must be > 0; got {rayleigh}")
    limit = 360.0 * rayleigh / span_hours
    nyquist = np.inf if sampling_hours is None else 180.0 / sampling_hours
    accepted: list[str] = []
    accepted_speeds: list[float] = [0.0]
    for name in (PRIORITY if candidates is None else candidates):
        speed = get_constituent(name).speed_deg_per_hour
        if speed >= nyquist * (1 - 1e-9):
            continue
        if all(abs(speed - other) >= limit for other in accepted_speeds):
            accepted.append(get_constituent(name).name)
            accepted_speeds.append(speed)
    return accepted


__all__ = [
    "Constituent", "CONSTITUENTS", "NODAL_FAMILIES", "PRIORITY", "EQUILIBRIUM_INFERENCE", "DEFAULT_INFERRED",
    "get_constituent", "doodson_matrix", "speeds", "select_constituents",
]
