"""The engine against exact teletraffic results on one cable, and its qualitative behaviour.

Expected values are computed here, in the test, from the published recursions (not from
sdmnet's own analytic module), so the engine is checked against an independent source:
- Erlang B recursion B(0)=1, B(n) = A B(n-1) / (n + A B(n-1)) (any teletraffic text, e.g.
  Iversen, *Teletraffic Engineering and Network Planning*, ITU-D/DTU, ch. 4).
- Kaufman-Roberts recursion j q(j) = sum_k a_k b_k q(j - b_k) (J. S. Kaufman, IEEE Trans.
  Commun. 29(10), 1981; J. W. Roberts, 1981).
"""

from __future__ import annotations

import pytest
from builders import chain, fiber_type, scenario, shortest_routes, single_cable

from sdmnet.engine import prepare, simulate_replication
from sdmnet.errors import ConfigurationError
from sdmnet.model import Architecture
from sdmnet.stats import ratio_interval


def erlang_b(servers: int, load: float) -> float:
    b = 1.0
    for n in range(1, servers + 1):
        b = load * b / (n + load * b)
    return b


def kaufman_roberts(capacity: int, loads: list[float], sizes: list[int]) -> list[float]:
    q = [1.0] + [0.0] * capacity
    for j in range(1, capacity + 1):
        q[j] = sum(a * b * q[j - b] for a, b in zip(loads, sizes) if j >= b) / j
    total = sum(q)
    return [sum(q[capacity - b + 1 :]) / total for b in sizes]


def _simulate(sc, arch, load, replications, requests, warmup=2000):
    setup = prepare(sc, arch, shortest_routes)
    return [simulate_replication(setup, load, sc.seed, r, requests, warmup) for r in range(replications)]


def _class_interval(records, k, confidence):
    return ratio_interval([r.class_blocked[k] for r in records], [r.class_offered[k] for r in records], confidence)


# (servers, load): points spanning low to high blocking.
ERLANG_POINTS = [(5, 2.0), (10, 5.0), (10, 7.0), (20, 12.0)]


@pytest.mark.parametrize(("servers", "load"), ERLANG_POINTS)
def test_single_core_lane_demands_block_as_erlang_b(servers, load):
    # One cable, single-core fiber, every demand one lane, independent switching:
    # C = fiber_pairs x channels servers (docs/model.md, section 3).
    fiber = fiber_type(cores=1, channels=servers)
    arch = Architecture("ind", "independent")
    sc = scenario(single_cable(fiber), [arch], loads=(load,), sizes=((100.0, 1.0),), lane_gbps=100.0)
    records = _simulate(sc, arch, load, replications=10, requests=20_000)
    # 99.9 % interval: with several fixed-seed points a 95 % interval would miss one by chance
    # one time in twenty; the 99.9 % one still fails for any real bias at this sample size.
    iv = ratio_interval([r.blocked for r in records], [r.requests for r in records], 0.999)
    exact = erlang_b(servers, load)
    assert iv.low <= exact <= iv.high, (iv, exact)
    assert abs(iv.mean - exact) < 0.15 * exact + 0.002


def test_fiber_pairs_multiply_servers():
    # Two fiber pairs of a 5-channel single-core fiber are 10 servers.
    fiber = fiber_type(cores=1, channels=5)
    arch = Architecture("ind", "independent")
    sc = scenario(single_cable(fiber, fiber_pairs=2), [arch], loads=(5.0,))
    records = _simulate(sc, arch, 5.0, replications=8, requests=20_000)
    iv = ratio_interval([r.blocked for r in records], [r.requests for r in records], 0.999)
    assert iv.low <= erlang_b(10, 5.0) <= iv.high


@pytest.mark.parametrize(
    ("switching", "cores", "lane_sizes"),
    [
        # independent: units of one lane; demands of 1 and 3 lanes on 4 cores x 8 channels.
        ("independent", 4, (1, 3)),
        # joint: units of 4 lanes (all cores); demands of 1 and 3 units on 2 pairs x 16 channels.
        ("joint", 4, (4, 12)),
    ],
)
def test_mixed_sizes_block_per_class_as_kaufman_roberts(switching, cores, lane_sizes):
    lane = 100.0
    channels, pairs = (8, 1) if switching == "independent" else (16, 2)
    fiber = fiber_type(cores=cores, channels=channels)
    arch = Architecture(switching, switching)
    sizes = tuple((n * lane, p) for n, p in zip(lane_sizes, (0.7, 0.3)))
    load = 9.0 if switching == "independent" else 10.0
    sc = scenario(single_cable(fiber, fiber_pairs=pairs), [arch], loads=(load,), sizes=sizes, lane_gbps=lane)
    records = _simulate(sc, arch, load, replications=10, requests=20_000)
    g = 1 if switching == "independent" else cores
    capacity = pairs * channels * cores // g
    units = [n // g for n in lane_sizes]
    expected = kaufman_roberts(capacity, [load * 0.7, load * 0.3], units)
    for k in range(2):
        iv = _class_interval(records, k, 0.999)
        assert iv.low <= expected[k] <= iv.high, (k, iv, expected[k])
    # The larger class blocks more: a check that the per-class split is meaningful.
    assert expected[1] > 2 * expected[0]


def _point_blocking(sc, arch, load):
    records = _simulate(sc, arch, load, replications=6, requests=10_000)
    return ratio_interval([r.blocked for r in records], [r.requests for r in records], 0.95)


def test_small_demands_block_more_under_joint_switching_and_full_superchannels_close_the_gap():
    # Published SDM switching comparisons (Siracusa et al., JLT 2016; Shariati et al., JLT 2017)
    # report that joint switching loses with connections small against the superchannel and
    # approaches independent switching as connections fill it.
    lane = 100.0
    fiber = fiber_type(cores=7, channels=10)
    ind, joint = Architecture("ind", "independent"), Architecture("joint", "joint")
    topo = chain(fiber, 2, fiber_pairs=1)

    small = scenario(topo, [ind, joint], loads=(6.0,), sizes=((lane, 1.0),), lane_gbps=lane)
    b_ind, b_joint = _point_blocking(small, ind, 6.0), _point_blocking(small, joint, 6.0)
    assert b_joint.low > b_ind.high  # disjoint intervals: a real gap
    assert b_joint.mean > 10 * max(b_ind.mean, 1e-4)

    full = scenario(topo, [ind, joint], loads=(6.0,), sizes=((7 * lane, 1.0),), lane_gbps=lane)
    f_ind, f_joint = _point_blocking(full, ind, 6.0), _point_blocking(full, joint, 6.0)
    # Same demands (common random numbers): overlapping intervals, and close in value.
    assert f_joint.low <= f_ind.high and f_ind.low <= f_joint.high
    assert abs(f_joint.mean - f_ind.mean) < 0.2 * f_joint.mean


def test_lane_change_never_blocks_more_than_core_continuity_on_a_path():
    fiber = fiber_type(cores=7, channels=6)
    with_change = Architecture("lc", "independent", lane_change=True)
    without = Architecture("nolc", "independent", lane_change=False)
    sc = scenario(chain(fiber, 3), [with_change, without], loads=(25.0,), sizes=((100.0, 0.5), (300.0, 0.5)))
    b_with = _point_blocking(sc, with_change, 25.0)
    b_without = _point_blocking(sc, without, 25.0)
    assert b_with.mean <= b_without.mean


def test_independent_switching_on_randomly_coupled_fiber_is_refused():
    fiber = fiber_type(name="rc4", cores=4, coupling="random", coupled_group=4)
    arch = Architecture("ind", "independent")
    sc = scenario(single_cable(fiber), [arch])
    with pytest.raises(ConfigurationError, match="independent switching needs weakly coupled fiber"):
        prepare(sc, arch, shortest_routes)


def test_drained_replication_ends_empty_and_counts_add_up():
    fiber = fiber_type(cores=4, channels=4)
    for arch in (
        Architecture("ind", "independent", lane_change=False),
        Architecture("fj", "fractional-joint", group=2, share=True),
        Architecture("fib", "fiber", share=True),
    ):
        sc = scenario(chain(fiber, 2, fiber_pairs=2), [arch], loads=(12.0,), sizes=((100.0, 0.5), (250.0, 0.5)))
        setup = prepare(sc, arch, shortest_routes)
        events = {"book": 0, "release": 0, "block": 0}

        def count(kind, _payload, events=events):
            events[kind] += 1

        rec = simulate_replication(setup, 12.0, 3, 0, 3000, 0, drain=True, observer=count)
        assert rec.ended_empty is True
        assert events["book"] == events["release"]
        assert events["book"] + events["block"] == 3000 == rec.requests
        assert rec.blocked == events["block"]


def test_same_seed_same_record_and_architectures_share_demands():
    fiber = fiber_type(cores=7, channels=4)
    ind, joint = Architecture("ind", "independent"), Architecture("joint", "joint")
    sc = scenario(chain(fiber, 2), [ind, joint], loads=(4.0,), sizes=((100.0, 0.5), (700.0, 0.5)))
    a = simulate_replication(prepare(sc, ind, shortest_routes), 4.0, 11, 2, 2000, 100)
    b = simulate_replication(prepare(sc, ind, shortest_routes), 4.0, 11, 2, 2000, 100)
    c = simulate_replication(prepare(sc, joint, shortest_routes), 4.0, 11, 2, 2000, 100)
    assert a == b
    # Common random numbers: the offered demands are identical across architectures.
    assert a.class_offered == c.class_offered and a.pair_offered == c.pair_offered
    assert a.sim_time == c.sim_time
