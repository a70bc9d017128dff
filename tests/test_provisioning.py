"""Fiber paths provisioned per datacenter pair (fiber switching with grooming)."""

from __future__ import annotations

from sdmnet.sim.provisioning import provision_fiber_paths


def test_one_pair_on_one_cable_takes_every_useful_fiber():
    # 5 fibers of 8 lanes, 10 Erlang of one-lane demands: each fiber carries more traffic.
    plan = provision_fiber_paths([5], [[(0,)]], [10.0], [1.0], [[[1]]], [[8]])
    assert plan == ((5,),)


def test_a_pair_without_traffic_gets_nothing_and_fibers_stay_dark():
    plan = provision_fiber_paths([3], [[(0,)], [(0,)]], [0.0, 1e-6], [1.0], [[[1]], [[1]]], [[8], [8]])
    assert plan[0] == (0,)
    assert plan[1][0] >= 1


def test_cable_fibers_are_never_overbooked_and_alternates_are_used():
    # Star: pairs A-B, A-C, B-C over cables 0 (A-H), 1 (B-H), 2 (C-H), one fiber each; pair A-B
    # also has a direct cable 3 as second route.  Equal loads: the first three fiber paths
    # cannot all fit on the star (each needs two of its three fibers).
    routes = [[(0, 1), (3,)], [(0, 2)], [(1, 2)]]
    one_lane = [[[1], [1]], [[1]], [[1]]]
    plan = provision_fiber_paths([1, 1, 1, 1], routes, [5.0] * 3, [1.0], one_lane, [[16, 16], [16], [16]])
    use = [0, 0, 0, 0]
    for pair_routes, counts in zip(routes, plan):
        for cables, n in zip(pair_routes, counts):
            for c in cables:
                use[c] += n
    assert all(u <= 1 for u in use)
    # A-B takes its direct cable (fewest cables), A-C the star path; B-C finds cable 2 taken.
    assert plan == ((0, 1), (1,), (0,))


def test_more_load_gets_more_fibers():
    plan = provision_fiber_paths([6], [[(0,)], [(0,)]], [20.0, 2.0], [1.0], [[[1]], [[1]]], [[8], [8]])
    assert plan[0][0] > plan[1][0] >= 1
    assert plan[0][0] + plan[1][0] == 6
