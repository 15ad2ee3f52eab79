"""Order along the coast and the neighbour consistency check (``extremes.batch.coast``)."""
from __future__ import annotations

import math

import numpy as np
import pytest

from extremes.batch.coast import coast_order, distance_km, neighbour_consistency

NAN = float("nan")


def test_haversine_distance_matches_a_degree_of_the_meridian():
    # one degree along a meridian on a sphere of the IUGG mean radius: 2 pi R / 360 (by hand)
    assert distance_km(10.0, 20.0, 11.0, 20.0) == pytest.approx(2 * math.pi * 6371.0088 / 360, rel=1e-12)
    # a quarter of the equator
    assert distance_km(0.0, 0.0, 0.0, 90.0) == pytest.approx(math.pi * 6371.0088 / 2, rel=1e-12)


def test_order_by_chainage_beats_positions_and_unplaced_stations_go_last():
    order = coast_order([1, 2, 3], [1, 2, 3], [30.0, 10.0, 20.0])
    assert order.basis == "chainage" and order.rank == (2, 0, 1)
    # a failed station without chainage does not stop the chainage order (placed = stations with a level)
    order = coast_order([NAN] * 3, [NAN] * 3, [5.0, NAN, 1.0], placed=[True, False, True])
    assert order.basis == "chainage" and order.rank == (1, 2, 0)


def test_order_by_position_follows_a_curved_coast():
    # an L-shaped coast: south along a meridian, then east along a parallel; listed shuffled
    lat = [-30.0, -30.3, -30.6, -30.9, -30.9, -30.9, -30.9]
    lon = [150.0, 150.0, 150.0, 150.0, 150.35, 150.7, 151.05]
    shuffle = [4, 0, 6, 2, 1, 5, 3]
    order = coast_order([lat[i] for i in shuffle], [lon[i] for i in shuffle], [NAN] * 7)
    assert order.basis == "position"
    walked = [shuffle[i] for i in np.argsort(order.rank)]
    assert walked in ([0, 1, 2, 3, 4, 5, 6], [6, 5, 4, 3, 2, 1, 0])
    # the coordinate along the chain adds the steps between stations
    along = np.array(order.along)[np.argsort(order.rank)]
    steps = np.diff(along)
    assert np.all(steps > 0) and along[0] == 0.0
    assert steps.sum() == pytest.approx(sum(distance_km(lat[a], lon[a], lat[b], lon[b])
                                            for a, b in zip(walked, walked[1:])))


def test_order_as_given_without_positions():
    order = coast_order([NAN, NAN], [NAN, NAN], [NAN, NAN])
    assert order.basis == "as given" and order.rank == (0, 1)


def _check(level, lower, upper, *, chainage=None, lat=None, lon=None):
    n = len(level)
    lat = [NAN] * n if lat is None else lat
    lon = [NAN] * n if lon is None else lon
    order = coast_order(lat, lon, chainage if chainage is not None else [NAN] * n)
    return neighbour_consistency([f"s{i}" for i in range(n)], level, lower, upper, order=order, lat=lat, lon=lon)


def test_a_station_far_above_both_neighbours_is_flagged_and_its_neighbours_are_not():
    level = [3.00, 3.05, 3.90, 3.10, 3.12]
    lower = [v - 0.15 for v in level]
    upper = [v + 0.20 for v in level]
    checks = _check(level, lower, upper, chainage=[0, 10, 20, 30, 40])
    assert [c.status for c in checks] == ["not assessed", "ok", "check", "ok", "not assessed"]
    reason = checks[2].reasons[0]
    assert "above every neighbour" in reason and "s1 3.05 m" in reason and "s3 3.10 m" in reason
    # the allowance is the root-sum-square of the facing half-widths: s2's lower 0.15 and s3's upper 0.20
    assert "at most 0.25 m" in reason
    assert checks[0].reasons == ("fewer than two neighbours with a level to compare",)


def test_the_limit_is_the_root_sum_square_of_the_facing_half_widths():
    # differences of 0.24 m pass, 0.26 m fail, against sqrt(0.15^2 + 0.20^2) = 0.25 m
    for step, expected in ((0.24, "ok"), (0.26, "check")):
        level = [3.0, 3.0 + step, 3.0]
        checks = _check(level, [v - 0.15 for v in level], [v + 0.20 for v in level], chainage=[0, 1, 2])
        assert checks[1].status == expected, step


def test_unbounded_intervals_and_mixed_directions_are_not_flagged():
    level = [3.0, 3.9, 3.0]
    checks = _check(level, [2.9, 3.8, 2.9], [3.1, None, 3.1], chainage=[0, 1, 2])
    assert checks[1].status == "check"  # s1 is above: its lower half and the neighbours' upper halves face
    checks = _check(level, [2.9, 3.8, 2.9], [None, 4.0, 3.1], chainage=[0, 1, 2])
    assert checks[1].status == "ok"  # s0's upper bound is not limited by its data: any difference is allowed
    checks = _check([3.0, 3.5, 4.0], [2.95, 3.45, 3.95], [3.05, 3.55, 4.05], chainage=[0, 1, 2])
    assert checks[1].status == "ok"  # above one neighbour, below the other: a trend, not an outlier


def test_failed_stations_are_skipped_as_neighbours_and_distance_neighbours_are_used():
    level = [3.0, NAN, 3.02, 3.8, 3.01]
    lat = [-30.0, -30.1, -30.2, -30.3, -30.4]
    lon = [150.0] * 5
    checks = _check(level, [v - 0.1 for v in level], [v + 0.1 for v in level], lat=lat, lon=lon)
    assert checks[1].status == "not assessed" and checks[1].reasons == ("no level to compare",)
    assert checks[3].status == "check" and checks[3].neighbours == ("s2", "s4")
    assert "nearest by distance" in checks[3].reasons[0]
    assert [c.status for c in checks if c is not checks[1] and c is not checks[3]] == ["ok"] * 3
    assert _check([3.0, 3.1, 3.0], [2.9] * 3, [3.2] * 3)[1].status == "not assessed"  # no order known
