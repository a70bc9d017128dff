"""The analytic estimate of a scenario against the single-link formulas it must reduce to.

Routes come from ``builders.shortest_routes`` (no physics) unless a test says otherwise, so
these checks do not depend on the physical layer.
"""

from __future__ import annotations

import numpy as np
import pytest
from builders import chain, fiber_type, scenario, shortest_routes, single_cable

from sdmnet.analysis.analytic import erlang_b, kaufman_roberts, reduced_load_fixed_point
from sdmnet.analysis.estimate import NETWORK_COLUMNS, PAIR_COLUMNS, ROUTED_WORK_LIMIT, estimate
from sdmnet.errors import ConfigurationError
from sdmnet.inputs.model import Architecture, Cable, Site, Topology

INDEPENDENT = Architecture("ind", "independent")


def test_single_cable_single_core_is_erlang_b():
    # docs/model.md, section 3: one cable, single-core fibers, sizes = lane rate, independent switching
    # -> Erlang B with C = fiber_pairs x channels servers (Erlang B checked against published
    # tables in test_analytic.py).
    loads = (5.0, 15.0, 25.0)
    sc = scenario(single_cable(fiber_type(cores=1, channels=10), fiber_pairs=2), [INDEPENDENT], loads=loads)
    net, pairs = estimate(sc, route_finder=shortest_routes)
    assert list(net.columns) == list(NETWORK_COLUMNS)
    assert list(pairs.columns) == list(PAIR_COLUMNS)
    assert net["blocking"].tolist() == pytest.approx([erlang_b(20, a) for a in loads], rel=1e-10)
    assert net["bandwidth_blocking"].tolist() == pytest.approx(net["blocking"].tolist(), rel=1e-12)
    assert pairs["blocking"].tolist() == pytest.approx(net["blocking"].tolist(), rel=1e-12)
    assert net["converged"].all()


def test_single_short_cable_with_default_routes_is_erlang_b():
    # Same check through the default route finder (a 10 km cable is feasible for any sensible
    # transceiver, so the physical layer keeps the route).
    sc = scenario(single_cable(fiber_type(cores=1, channels=8), fiber_pairs=1), [INDEPENDENT], loads=(4.0,))
    net, _ = estimate(sc)
    assert net["blocking"].iloc[0] == pytest.approx(erlang_b(8, 4.0), rel=1e-10)


def test_mixed_sizes_on_one_cable_are_kaufman_roberts():
    # docs/model.md, section 3: mixed sizes on one cable without contiguity -> Kaufman-Roberts per class.
    # Lane 100 Gb/s on single-core fiber: 100 Gb/s takes 1 unit, 300 Gb/s takes 3.
    sizes = ((100.0, 0.75), (300.0, 0.25))
    sc = scenario(single_cable(fiber_type(cores=1, channels=12), fiber_pairs=1), [INDEPENDENT],
                  loads=(6.0,), sizes=sizes)  # fmt: skip
    net, _ = estimate(sc, route_finder=shortest_routes)
    per_class = kaufman_roberts(12, [6.0 * 0.75, 6.0 * 0.25], [1, 3])
    request = 0.75 * per_class[0] + 0.25 * per_class[1]
    bandwidth = (0.75 * 100 * per_class[0] + 0.25 * 300 * per_class[1]) / (0.75 * 100 + 0.25 * 300)
    assert net["blocking"].iloc[0] == pytest.approx(request, rel=1e-10)
    assert net["bandwidth_blocking"].iloc[0] == pytest.approx(bandwidth, rel=1e-10)
    assert net["bandwidth_blocking"].iloc[0] > net["blocking"].iloc[0]


@pytest.mark.parametrize(
    ("arch", "servers"),
    [
        (Architecture("ind", "independent"), 4 * 8 * 2),  # a unit per core and channel
        (Architecture("fj", "fractional-joint", group=2), 2 * 8 * 2),  # per core pair and channel
        (Architecture("joint", "joint"), 8 * 2),  # per channel
        (Architecture("fib", "fiber"), 2),  # per fiber pair
    ],
)
def test_unit_count_per_architecture_on_one_cable(arch, servers):
    # 4-core weakly coupled fiber, 8 channels, 2 fiber pairs, lane 100 Gb/s, demands of 100 Gb/s:
    # every architecture's unit carries one demand, so blocking is Erlang B on its unit count
    # (docs/model.md, section 2 table).
    sc = scenario(single_cable(fiber_type(cores=4, channels=8), fiber_pairs=2), [arch], loads=(1.5, 12.0))
    net, _ = estimate(sc, route_finder=shortest_routes)
    assert net["switching"].iloc[0] == arch.switching
    assert net["blocking"].tolist() == pytest.approx([erlang_b(servers, a) for a in (1.5, 12.0)], rel=1e-10)


def test_demand_wider_than_a_unit_takes_several_units():
    # Independent switching, 400 Gb/s demands on 100 Gb/s lanes: 4 units each on 16 units.
    sc = scenario(single_cable(fiber_type(cores=2, channels=8), fiber_pairs=1), [INDEPENDENT],
                  loads=(2.0,), sizes=((400.0, 1.0),))  # fmt: skip
    net, _ = estimate(sc, route_finder=shortest_routes)
    assert net["blocking"].iloc[0] == pytest.approx(kaufman_roberts(16, [2.0], [4])[0], rel=1e-10)


def test_chain_gives_the_fixed_point_and_overestimates_erlang_b():
    # One pair over 3 cables in series: the estimate is the Erlang fixed point, which exceeds
    # the exact Erlang B of the chain (Kelly, Ann. Appl. Probab. 1(3), 1991; test_analytic.py
    # checks the fixed point value itself).
    sc = scenario(chain(fiber_type(cores=1, channels=10), hops=3), [INDEPENDENT], loads=(7.0,))
    net, pairs = estimate(sc, route_finder=shortest_routes)
    fp = reduced_load_fixed_point([10, 10, 10], [(7.0, (0, 1, 2), 1)])
    assert net["blocking"].iloc[0] == pytest.approx(fp.stream_blocking[0], abs=1e-9)
    assert net["blocking"].iloc[0] > erlang_b(10, 7.0)
    assert len(pairs) == 1 and tuple(pairs[["a", "b"]].iloc[0]) == ("S0", "S3")


def _star() -> Topology:
    """Three datacenters around one hub; cable capacities differ."""
    f = fiber_type(cores=1, channels=6)
    sites = (Site("H", "hub"), Site("A", "datacenter"), Site("B", "datacenter"), Site("C", "datacenter"))
    cables = (Cable("H", "A", 5.0, f.name, 1), Cable("H", "B", 5.0, f.name, 2), Cable("H", "C", 5.0, f.name, 3))
    return Topology("star", {f.name: f}, sites, cables)


def test_network_blocking_is_the_load_weighted_pair_blocking():
    sc = scenario(_star(), [INDEPENDENT], loads=(4.0, 9.0))
    net, pairs = estimate(sc, route_finder=shortest_routes)
    assert len(pairs) == 2 * 3
    for load, group in pairs.groupby("load_erlang"):
        # Uniform pattern: each of the three pairs offers a third of the load.
        expected = group["blocking"].mean()
        assert net.loc[net["load_erlang"] == load, "blocking"].iloc[0] == pytest.approx(expected, rel=1e-12)
    # The pair whose cables are smallest blocks most (A-B uses 6 + 12 units, B-C 12 + 18).
    first = pairs[pairs["load_erlang"] == 9.0].set_index(["a", "b"])["blocking"]
    assert first[("A", "B")] > first[("B", "C")]


def test_pair_without_route_is_fully_blocked():
    sc = scenario(_star(), [INDEPENDENT], loads=(3.0,))

    def no_route_for_a_b(scn, arch):
        found = shortest_routes(scn, arch)
        found[("A", "B")] = []
        return found

    net, pairs = estimate(sc, route_finder=no_route_for_a_b)
    by_pair = pairs.set_index(["a", "b"])["blocking"]
    assert by_pair[("A", "B")] == 1.0
    assert by_pair[("B", "C")] < 1.0
    assert net["blocking"].iloc[0] == pytest.approx(by_pair.mean(), rel=1e-12)


def test_one_row_per_architecture_and_load():
    archs = [Architecture("ind", "independent"), Architecture("joint", "joint"), Architecture("fib", "fiber")]
    sc = scenario(single_cable(fiber_type(cores=4, channels=8), fiber_pairs=2), archs, loads=(20.0, 40.0, 60.0))
    net, pairs = estimate(sc, route_finder=shortest_routes)
    assert len(net) == 9 and len(pairs) == 9
    assert net.groupby("architecture").size().to_dict() == {"ind": 3, "joint": 3, "fib": 3}
    # More load never lowers blocking (common practice, no source).
    for _, group in net.groupby("architecture"):
        assert np.all(np.diff(group["blocking"].to_numpy()) > 0)


def test_independent_switching_on_random_coupling_is_a_configuration_error():
    f = fiber_type(cores=4, coupling="random", coupled_group=2)
    sc = scenario(single_cable(f), [INDEPENDENT])
    with pytest.raises(ConfigurationError, match="architectures\\[0\\]"):
        estimate(sc, route_finder=shortest_routes)


def test_fiber_switching_with_grooming_is_kaufman_roberts_over_the_provisioned_lanes():
    # One pair on one cable: the pair is provisioned every fiber (3 x 2 cores x 4 channels = 24
    # lanes) and its demands of 1 and 3 lanes share them completely (docs/model.md, section 3).
    arch = Architecture("fxc", "fiber", share=True)
    sizes = ((100.0, 0.6), (300.0, 0.4))
    sc = scenario(single_cable(fiber_type(cores=2, channels=4), fiber_pairs=3), [arch], loads=(10.0,), sizes=sizes)
    net, _ = estimate(sc, route_finder=shortest_routes)
    per_class = kaufman_roberts(24, [6.0, 4.0], [1, 3])
    assert net["blocking"].iloc[0] == pytest.approx(0.6 * per_class[0] + 0.4 * per_class[1], rel=1e-9)


# ---- which method runs: routed while cheap, the plain Erlang fixed point on large networks ----


def _datacenter_line(sites: int, cores: int = 1) -> Topology:
    """``sites`` datacenters in a line of ``cores``-core fiber of 10 channels: pair (i, j) has one
    route of |i - j| hops."""
    f = fiber_type(cores=cores, channels=10)
    ids = [f"D{i:02d}" for i in range(sites)]
    cables = tuple(Cable(a, b, 5.0, f.name, 1) for a, b in zip(ids, ids[1:]))
    return Topology("line", {f.name: f}, tuple(Site(s, "datacenter") for s in ids), cables)


def test_the_fixed_point_method_on_one_cable_is_erlang_b():
    loads = (5.0, 15.0)
    sc = scenario(single_cable(fiber_type(cores=1, channels=10), fiber_pairs=2), [INDEPENDENT], loads=loads)
    net, _ = estimate(sc, route_finder=shortest_routes, method="fixed-point")
    assert net["blocking"].tolist() == pytest.approx([erlang_b(20, a) for a in loads], rel=1e-10)
    assert set(net["method"]) == {"fixed-point"}


def test_the_fixed_point_method_puts_each_pair_on_its_first_route():
    # A ring of four datacenters with k = 2: every pair has a second route, which the plain fixed
    # point leaves out; it must equal the Erlang fixed point of analysis.analytic (an independent
    # implementation) on the first routes, and block more than the routed estimate.
    f = fiber_type(cores=1, channels=6)
    ids = ["A", "B", "C", "D"]
    cables = tuple(Cable(a, b, 5.0 + i, f.name, 1) for i, (a, b) in enumerate(zip(ids, ids[1:] + ids[:1])))
    ring = Topology("ring", {f.name: f}, tuple(Site(s, "datacenter") for s in ids), cables)
    sc = scenario(ring, [INDEPENDENT], loads=(12.0,), k_paths=2)
    plain, pairs = estimate(sc, route_finder=shortest_routes, method="fixed-point")
    routed, _ = estimate(sc, route_finder=shortest_routes, method="routed")
    found = shortest_routes(sc, INDEPENDENT)
    streams = [(12.0 / 6, tuple(found[p][0].cables), 1) for p in sorted(found)]
    fp = reduced_load_fixed_point([6, 6, 6, 6], streams)
    assert plain["blocking"].iloc[0] == pytest.approx(float(np.mean(fp.stream_blocking)), abs=1e-9)
    assert plain["blocking"].iloc[0] > routed["blocking"].iloc[0]
    assert plain["method"].tolist() == ["fixed-point"] and routed["method"].tolist() == ["routed"]


def test_auto_falls_back_to_the_fixed_point_on_a_large_network():
    # 40 datacenters in a line, one route per pair: sum over pairs of hops = n (n^2 - 1) / 6 =
    # 10,660 route hops, times 10 load points = 106,600, over the limit of 100,000.
    sites, loads = 40, tuple(float(a) for a in range(1, 11))
    assert sites * (sites**2 - 1) // 6 * len(loads) > ROUTED_WORK_LIMIT
    sc = scenario(_datacenter_line(sites), [INDEPENDENT], loads=loads)
    auto, _ = estimate(sc, route_finder=shortest_routes, method="auto")
    plain, _ = estimate(sc, route_finder=shortest_routes, method="fixed-point")
    assert set(auto["method"]) == {"fixed-point"}
    assert auto["blocking"].tolist() == plain["blocking"].tolist()
    # The same line at 9 load points (95,940 route hops x points) stays within the limit.
    assert sites * (sites**2 - 1) // 6 * 9 <= ROUTED_WORK_LIMIT


# On weakly coupled 7-core fiber of 10 channels: joint units of 7 lanes, 10 units per cable.
GROOMED_JOINT = Architecture("joint-groomed", "joint", share=True)


def _groomed_work(sites: int, points: int) -> float:
    # docs/estimate.md: C g + C^2 / 14 states per route hop (C = 10 units of g = 7 lanes), 12 of
    # them per route hop of the routed estimate; one route of |i - j| hops per pair on a line.
    return points * sites * (sites**2 - 1) / 6 * (10 * 7 + 10**2 / 14) / 12


@pytest.mark.parametrize("cores, arch", [(1, INDEPENDENT), (7, GROOMED_JOINT)])
def test_auto_takes_the_routed_estimate_on_a_small_network(cores, arch):
    # 5 sites, 2 points: 20 route hops x 2 points, 257 as the grooming estimate's work.
    assert _groomed_work(5, 2) <= ROUTED_WORK_LIMIT
    sc = scenario(_datacenter_line(5, cores), [arch], loads=(4.0, 8.0))
    auto, _ = estimate(sc, route_finder=shortest_routes, method="auto")
    routed, _ = estimate(sc, route_finder=shortest_routes)
    assert auto["method"].tolist() == ["routed", "routed"]
    assert auto["blocking"].tolist() == routed["blocking"].tolist()


def test_auto_counts_the_grooming_work_and_falls_back():
    # 20 datacenters in a line, 12 load points: 1,330 route hops x 12 = 15,960, far within the
    # limit as route hops, but 102,600 as the grooming estimate's work, over it.
    sites, loads = 20, tuple(float(a) for a in range(1, 13))
    assert sites * (sites**2 - 1) // 6 * len(loads) <= ROUTED_WORK_LIMIT < _groomed_work(sites, len(loads))
    sc = scenario(_datacenter_line(sites, cores=7), [GROOMED_JOINT], loads=loads)
    auto, _ = estimate(sc, route_finder=shortest_routes, method="auto")
    plain, _ = estimate(sc, route_finder=shortest_routes, method="fixed-point")
    assert set(auto["method"]) == {"fixed-point"}
    assert auto["blocking"].tolist() == plain["blocking"].tolist()
    # The same line at 11 load points (94,050) stays within the limit.
    assert _groomed_work(sites, 11) <= ROUTED_WORK_LIMIT


def test_an_unknown_method_is_refused():
    sc = scenario(single_cable(fiber_type()), [INDEPENDENT])
    with pytest.raises(ValueError, match="method must be one of"):
        estimate(sc, route_finder=shortest_routes, method="fast")
