"""Regeneration: pairs beyond reach served through regenerators, segment by segment."""

from __future__ import annotations

from dataclasses import replace

import pandas as pd
import pytest
from builders import chain, fiber_type, scenario

from sdmnet.inputs.model import Architecture, PlanSpec
from sdmnet.network.routing import k_shortest_routes
from sdmnet.optics.pathtable import feasible_routes
from sdmnet.planning.candidates import run_replications
from sdmnet.planning.regeneration import regenerated_pairs, routes_with_regeneration, segment_route
from sdmnet.planning.run import run_plan
from sdmnet.planning.search import plan_architecture
from sdmnet.sim.engine import prepare
from sdmnet.sim.stats import summarize_point


def _long_chain(load=2.0, channels=4):
    # Three 50 km hops between two datacenters with a 120 km reach: the 150 km path does not
    # close, the first two hops (100 km) and the last (50 km) do.
    arch = Architecture("ind", "independent")
    sc = scenario(chain(fiber_type(cores=1, channels=channels), 3, length_km=50.0), [arch], loads=(load,),
                  requests=4000, warmup=400, replications=4, k_paths=1)  # fmt: skip
    return replace(sc, transceiver=replace(sc.transceiver, reach_km=120.0)), arch


def erlang_b(servers: int, load: float) -> float:
    # B(0) = 1, B(n) = A B(n-1) / (n + A B(n-1)) (Iversen, Teletraffic Engineering and Network
    # Planning, ch. 4).
    b = 1.0
    for n in range(1, servers + 1):
        b = load * b / (n + load * b)
    return b


def test_a_route_beyond_reach_is_cut_into_the_fewest_closing_segments():
    sc, arch = _long_chain()
    assert feasible_routes(sc, arch) == {("S0", "S3"): []}
    route = routes_with_regeneration(sc, arch)[("S0", "S3")][0]
    assert route.segments == ((0, 1), (2,)) and route.regenerators == ("S2",)
    # A hop longer than the reach cannot be regenerated around.
    cables = tuple(replace(c, length_km=130.0) if i == 1 else c for i, c in enumerate(sc.topology.cables))
    too_long = replace(sc, topology=replace(sc.topology, cables=cables))
    only = k_shortest_routes(too_long.topology, "S0", "S3", 1)[0]
    assert segment_route(too_long, arch, only) is None


def test_one_regenerated_pair_blocks_as_erlang_b_on_its_channels():
    # One pair on a chain: every segment carries the same demands, so the route is one loss
    # system of `channels` servers: Erlang B (exact) within the simulation's interval.
    sc, arch = _long_chain(load=2.0, channels=4)
    setup = prepare(sc, arch, route_finder=routes_with_regeneration)
    assert regenerated_pairs(setup, sc.topology) == {0: ("S2",)}
    records = run_replications(setup, 2.0, sc.seed, range(8), replace(sc.run, requests=20_000))
    iv = summarize_point(records).blocking
    assert iv.low <= erlang_b(4, 2.0) <= iv.high, iv


def test_plan_serves_pairs_beyond_reach_through_regenerators_and_prices_them(tmp_path):
    sc, arch = _long_chain(load=6.0)
    sc = replace(sc, plan=PlanSpec(0.01))
    result = run_plan(sc, tmp_path, progress=False)
    plan = result.plans[0]
    assert plan.met, plan.note
    assert plan.regenerated == ("S0-S3",)
    assert set(plan.regenerators) == {"S2"} and plan.regenerators["S2"] >= 1
    cost = pd.read_csv(tmp_path / "cost.csv").set_index("item")
    assert cost.loc["regenerator_lane", "count"] == plan.regenerators["S2"]
    totals = pd.read_csv(tmp_path / "plan_totals.csv").iloc[0]
    assert totals["regenerator_lanes"] == plan.regenerators["S2"]
    # Without regeneration the pair has no route: the target cannot be met.
    bare = plan_architecture(replace(sc, plan=PlanSpec(0.01, regeneration=False)), arch)
    assert not bare.met and "without a feasible route" in bare.note


@pytest.mark.parametrize("regeneration", [True, False])
def test_regeneration_key_is_read(tmp_path, regeneration):
    from sdmnet.inputs.loaders import load_scenario

    (tmp_path / "t.toml").write_text(
        'name = "t"\n[fiber_types.f]\ncores = 1\ncoupling = "weak"\nchannels = 4\nattenuation_db_per_km = 0.2\n'
        '[[sites]]\nid = "A"\nrole = "datacenter"\n[[sites]]\nid = "B"\nrole = "datacenter"\n'
        '[[cables]]\na = "A"\nb = "B"\nlength_km = 10.0\nfiber_type = "f"\nfiber_pairs = 1\n'
    )
    (tmp_path / "s.toml").write_text(
        'topology = "t.toml"\nseed = 1\n[traffic]\npattern = "uniform"\nload_erlang = 1.0\n'
        '[[architectures]]\nname = "a"\nswitching = "independent"\n'
        f'[plan]\ntarget_blocking = 0.01\nregeneration = {"true" if regeneration else "false"}\n'
    )
    assert load_scenario(tmp_path / "s.toml").plan.regeneration is regeneration
