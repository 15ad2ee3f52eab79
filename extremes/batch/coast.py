"""Stations along a coast: their order, and whether each 100-year level agrees with its neighbours.

Order (:func:`coast_order`): by ``chainage`` (distance along the coast given in the manifest or the
gridded file) when every station with a level has one; otherwise by position, as a nearest-neighbour
chain that starts from the station furthest out along the main axis of the stations' positions (so a
curved coast is followed, not cut across); otherwise as given.

Neighbour consistency (:func:`neighbour_consistency`): a station's neighbours are the nearest station
with a level on each side along the coast (chainage), or its two nearest stations by great-circle
distance (positions only). Two estimates differ by more than their intervals allow when

.. math:: |L_i - L_j| > \\sqrt{h_i^2 + h_j^2},

with :math:`h` the half-width of each interval on the side facing the other level (for independent,
roughly normal estimates at the same confidence level this is the test of their difference at that level;
common practice). Neighbouring gauges see the same storms, so their errors are positively correlated and
the test is conservative: it flags only clear disagreements. A station is flagged ``check`` when it
differs in this way from every neighbour (at least two), all in the same direction; a single
disagreement between two stations cannot say which is wrong and is not flagged. Stations without two
neighbours with levels, or without an order, are ``not assessed``.
"""
from __future__ import annotations

import logging
import math
from dataclasses import dataclass

import numpy as np

logger = logging.getLogger(__name__)

__all__ = ["CoastOrder", "coast_order", "NeighbourCheck", "neighbour_consistency", "distance_km",
           "EARTH_RADIUS_KM"]

#: mean radius of the Earth (IUGG mean radius R1) [km]
EARTH_RADIUS_KM = 6371.0088


def distance_km(lat1, lon1, lat2, lon2):
    """Great-circle distance by the haversine formula (R. W. Sinnott, Sky & Telescope 68(2), 1984). [km]"""
    p1, p2 = np.radians(lat1), np.radians(lat2)
    dlat, dlon = p2 - p1, np.radians(np.asarray(lon2) - np.asarray(lon1))
    a = np.sin(dlat / 2) ** 2 + np.cos(p1) * np.cos(p2) * np.sin(dlon / 2) ** 2
    return 2 * EARTH_RADIUS_KM * np.arcsin(np.sqrt(np.clip(a, 0.0, 1.0)))


@dataclass(frozen=True)
class CoastOrder:
    """The order of the stations along the coast.

    Attributes
    ----------
    rank : tuple of int
        Position of each station (in the order given) along the coast, 0 first.
    along : tuple of float
        Coordinate along the coast of each station: the chainage, or the distance along the chain of
        stations [km] when ordered by position, or the rank when ordered as given (NaN when unplaced).
    basis : str
        ``"chainage"``, ``"position"`` or ``"as given"``.
    """

    rank: tuple
    along: tuple
    basis: str

    def to_dict(self) -> dict:
        """JSON-ready dictionary."""
        return {"rank": list(self.rank), "along": [None if not math.isfinite(v) else v for v in self.along],
                "basis": self.basis}

    @property
    def label(self) -> str:
        """Axis label of :attr:`along`."""
        return {"chainage": "chainage along the coast", "position": "distance along the chain of stations [km]",
                "as given": "station number as given"}[self.basis]


def coast_order(lat, lon, chainage, *, placed=None) -> CoastOrder:
    """Order stations along the coast (module docstring).

    Parameters
    ----------
    lat, lon : sequence of float
        Positions [degrees north, degrees east]; NaN where unknown.
    chainage : sequence of float
        Distance along the coast; NaN where unknown.
    placed : sequence of bool, optional
        Stations that must have a chainage or position for that basis to be used (default: all).

    Returns
    -------
    CoastOrder
    """
    lat, lon, chainage = (np.asarray(v, dtype=float) for v in (lat, lon, chainage))
    n = lat.size
    placed = np.ones(n, bool) if placed is None else np.asarray(placed, bool)
    if n and np.isfinite(chainage[placed]).all() and np.isfinite(chainage).any():
        key = np.where(np.isfinite(chainage), chainage, np.inf)
        order = np.argsort(key, kind="stable")
        return CoastOrder(_ranks(order), tuple(float(v) for v in chainage), "chainage")
    known = np.isfinite(lat) & np.isfinite(lon)
    if known.sum() >= 2 and known[placed].all():
        chain, along_chain = _chain(lat[known], lon[known])
        idx = np.flatnonzero(known)[chain]
        order = np.concatenate([idx, np.flatnonzero(~known)])
        along = np.full(n, np.nan)
        along[known] = along_chain
        return CoastOrder(_ranks(order), tuple(float(v) for v in along), "position")
    return CoastOrder(tuple(range(n)), tuple(float(i) for i in range(n)), "as given")


def _ranks(order: np.ndarray) -> tuple:
    rank = np.empty(order.size, dtype=int)
    rank[order] = np.arange(order.size)
    return tuple(int(r) for r in rank)


def _chain(lat: np.ndarray, lon: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Nearest-neighbour chain from the end of the main axis; (order, cumulative distance [km] by station).

    One vectorised distance row per step (no distance matrix): memory grows with the number of stations.
    """
    x = np.radians(lon - lon.mean()) * math.cos(math.radians(float(lat.mean()))) * EARTH_RADIUS_KM
    y = np.radians(lat - lat.mean()) * EARTH_RADIUS_KM
    xy = np.column_stack([x, y])
    _, _, vt = np.linalg.svd(xy - xy.mean(axis=0), full_matrices=False)
    current = int(np.argmin(xy @ vt[0]))
    visited = np.zeros(lat.size, bool)
    order, along = [current], [0.0]
    visited[current] = True
    for _ in range(lat.size - 1):
        dist = distance_km(lat[current], lon[current], lat, lon)
        dist[visited] = np.inf
        current = int(np.argmin(dist))  # ties: the first listed
        along.append(along[-1] + float(dist[current]))
        order.append(current)
        visited[current] = True
    out = np.empty(lat.size)
    out[np.array(order)] = along
    return np.array(order), out


@dataclass(frozen=True)
class NeighbourCheck:
    """Whether a station's 100-year level agrees with its neighbours'.

    Attributes
    ----------
    status : str
        ``"ok"``, ``"check"`` or ``"not assessed"``.
    reasons : tuple of str
        Why, in plain words (empty when ``ok``).
    neighbours : tuple of str
        The stations it was compared with.
    """

    status: str
    reasons: tuple = ()
    neighbours: tuple = ()

    def to_dict(self) -> dict:
        """JSON-ready dictionary."""
        return {"status": self.status, "reasons": list(self.reasons), "neighbours": list(self.neighbours)}


def _unit_vectors(lat, lon) -> np.ndarray:
    """Points on the unit sphere: chord length grows with great-circle distance, so a k-d tree finds the nearest."""
    p, q = np.radians(lat), np.radians(lon)
    return np.column_stack([np.cos(p) * np.cos(q), np.cos(p) * np.sin(q), np.sin(p)])


def _nearest_two(usable: np.ndarray, lat, lon) -> np.ndarray:
    """For every station, its two nearest usable stations (-1 where none), by a k-d tree (scipy)."""
    from scipy.spatial import cKDTree

    pool = np.flatnonzero(usable)
    out = np.full((lat.size, 2), -1)
    if pool.size < 2:
        return out
    known = np.isfinite(lat) & np.isfinite(lon)
    k = min(3, pool.size)
    chord, found = cKDTree(_unit_vectors(lat[pool], lon[pool])).query(_unit_vectors(lat[known], lon[known]), k=k)
    for i, dist, row in zip(np.flatnonzero(known), np.atleast_2d(chord), np.atleast_2d(found)):
        # nearest first; equal distances (to 1 mm) in the order the stations were given
        others = sorted((round(float(d) * EARTH_RADIUS_KM, 6), int(pool[j])) for d, j in zip(dist, row) if pool[j] != i)
        others = [j for _, j in others[:2]]
        out[i, :len(others)] = others
    return out


def _neighbours(i: int, order: CoastOrder, ranked: np.ndarray, nearest: np.ndarray | None) -> tuple[list[int], str]:
    """The neighbours of station ``i`` and how they were chosen (``ranked``: usable stations in coast order)."""
    if order.basis == "chainage":
        where = int(np.searchsorted(np.asarray(order.rank)[ranked], order.rank[i]))
        before = ranked[:where][-1:]
        after = ranked[where:]
        after = after[after != i][:1]
        return [int(j) for j in np.concatenate([before, after])], "along the coast"
    if order.basis == "position" and nearest is not None:
        return [int(j) for j in nearest[i] if j >= 0], "nearest by distance"
    return [], ""


def _half_width(level: float, bound: float, above: bool) -> float:
    """Half-width of an interval on one side; inf when that bound is missing (the data do not limit it)."""
    if bound is None or not np.isfinite(bound):
        return math.inf
    return (bound - level) if above else (level - bound)


def neighbour_consistency(names, level_m, lower_m, upper_m, *, order: CoastOrder, lat, lon,
                          confidence: float = 0.95, period_years: float = 100.0) -> list[NeighbourCheck]:
    """Compare each station's level with its neighbours' (module docstring).

    Parameters
    ----------
    names : sequence of str
    level_m, lower_m, upper_m : sequence of float
        The level and its interval at ``period_years`` of each station (NaN where none). [m]
    order : CoastOrder
    lat, lon : sequence of float
        Positions [degrees], used by the distance neighbours.
    confidence : float
        Confidence level of the intervals (for the wording).
    period_years : float
        Return period compared (for the wording). [years]

    Returns
    -------
    list of NeighbourCheck
        One per station, in the order given.
    """
    level = np.asarray(level_m, dtype=float)
    lower = np.asarray(lower_m, dtype=float)
    upper = np.asarray(upper_m, dtype=float)
    lat, lon = np.asarray(lat, dtype=float), np.asarray(lon, dtype=float)
    usable = np.isfinite(level)
    if order.basis == "position":
        usable &= np.isfinite(lat) & np.isfinite(lon)
    rank = np.asarray(order.rank)
    ranked = np.flatnonzero(usable)[np.argsort(rank[usable], kind="stable")]
    nearest = _nearest_two(usable, lat, lon) if order.basis == "position" else None
    out = []
    for i in range(len(names)):
        if not np.isfinite(level[i]):
            out.append(NeighbourCheck("not assessed", ("no level to compare",)))
            continue
        if order.basis == "as given":
            out.append(NeighbourCheck("not assessed", ("no chainage or position: neighbours unknown",)))
            continue
        near, how = _neighbours(i, order, ranked, nearest)
        shown = tuple(str(names[j]) for j in near)
        if len(near) < 2:
            out.append(NeighbourCheck("not assessed", ("fewer than two neighbours with a level to compare",), shown))
            continue
        signs, gaps, allowed = [], [], []
        for j in near:
            diff = level[i] - level[j]
            above = diff > 0
            h_i = _half_width(level[i], lower[i] if above else upper[i], not above)
            h_j = _half_width(level[j], upper[j] if above else lower[j], above)
            limit = math.hypot(h_i, h_j) if math.isfinite(h_i) and math.isfinite(h_j) else math.inf
            signs.append(np.sign(diff) if abs(diff) > limit else 0.0)
            gaps.append(abs(diff))
            allowed.append(limit)
        if all(s > 0 for s in signs) or all(s < 0 for s in signs):
            word = "above" if signs[0] > 0 else "below"
            listed = ", ".join(f"{names[j]} {level[j]:.2f} m" for j in near)
            reason = (f"{period_years:g}-year level {level[i]:.2f} m is {word} every neighbour ({how}: {listed}) "
                      f"by {min(gaps):.2f} to {max(gaps):.2f} m, more than their {100 * confidence:g} % intervals "
                      f"allow (at most {max(allowed):.2f} m); check this station's record, datum and fit")
            out.append(NeighbourCheck("check", (reason,), shown))
        else:
            out.append(NeighbourCheck("ok", (), shown))
    return out
