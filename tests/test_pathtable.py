"""Tests of sdmnet.optics.pathtable: the paths table and the feasible routes handed to the engine."""

from __future__ import annotations

import io
import math
import time
from dataclasses import replace

import pandas as pd
import pytest

from sdmnet.inputs.model import (
    Architecture,
    Cable,
    FiberType,
    RunSpec,
    Scenario,
    Site,
    Topology,
    TrafficSpec,
    TransceiverClass,
    TransceiverSpec,
)
from sdmnet.network.routing import datacenter_pairs
from sdmnet.optics.pathtable import PATH_COLUMNS, feasible_routes, path_table

WEAK7 = FiberType("weak7", 7, "weak", 1, 64, 0.2, crosstalk_db_per_km=-60.0)
CC4 = FiberType("cc4", 4, "random", 4, 64, 0.2, gd_spread_ps_per_sqrt_km=6.1, mdl_db_per_sqrt_km=0.05)

# Limits loose except the reach, so the reach alone decides (checked by hand below).
TRX = TransceiverSpec(reach_km=100.0, power_budget_db=1000.0, crosstalk_limit_db=0.0, mdl_limit_db=100.0)


def scenario(sites, cables, fiber_types, architectures, transceiver=TRX, k=3) -> Scenario:
    topo = Topology("t", fiber_types, tuple(sites), tuple(cables))
    return Scenario(
        name="s",
        topology=topo,
        seed=1,
        traffic=TrafficSpec("uniform", (1.0,)),
        transceiver=transceiver,
        run=RunSpec(k_paths=k),
        architectures=tuple(architectures),
    )


def triangle(fiber_direct: str = "weak7", fiber_via: str = "weak7") -> Scenario:
    """D1 - D2 direct (150 km, beyond reach) or via hub H (40 + 50 km)."""
    sites = [Site("D1", "datacenter"), Site("D2", "datacenter"), Site("H", "hub")]
    cables = [
        Cable("D1", "D2", 150.0, fiber_direct, 2),
        Cable("D1", "H", 40.0, fiber_via, 2),
        Cable("H", "D2", 50.0, fiber_via, 2),
    ]
    return scenario(sites, cables, {"weak7": WEAK7, "cc4": CC4}, [Architecture("ind", "independent")])


def test_columns_in_contract_order():
    # docs/model.md, section 5: paths.csv columns (architecture, hops, mdl_db and the line figures added).
    table = path_table(triangle())
    assert list(table.columns) == list(PATH_COLUMNS)
    assert list(PATH_COLUMNS) == [
        "architecture", "a", "b", "rank", "path", "hops", "length_km", "loss_db",
        "gd_spread_ps", "mimo_taps", "crosstalk_db", "mdl_db", "spans", "osnr_db", "gsnr_db",
        "margin_db", "transceiver_class", "feasible", "reason",
    ]  # fmt: skip


def test_ranks_paths_and_reach_verdict():
    # Two routes D1-D2: via H (90 km, within the 100 km reach) and direct (150 km, beyond).
    table = path_table(triangle())
    assert list(table["rank"]) == [1, 2]
    assert list(table["path"]) == ["D1-H-D2", "D1-D2"]
    assert list(table["hops"]) == [2, 1]
    assert list(table["length_km"]) == pytest.approx([90.0, 150.0])
    assert list(table["feasible"]) == [True, False]
    assert "reach" in table["reason"].iloc[1]
    assert table["reason"].iloc[0] == ""


def test_path_beyond_reach_absent_from_feasible_routes():
    # docs/model.md, section 3: the engine tries only physically feasible paths.
    scen = triangle()
    routes = feasible_routes(scen, scen.architectures[0])
    assert list(routes) == [("D1", "D2")]
    assert [r.label for r in routes[("D1", "D2")]] == ["D1-H-D2"]


def test_path_short_of_gsnr_absent_from_feasible_routes():
    # A class needing more OSNR than either path offers (plus the margin) closes neither: the
    # pair has no feasible route, and the table names the class and its shortfall.
    trx = TransceiverSpec(reach_km=1000.0, required_osnr_db=45.0)
    base = triangle()
    scen = scenario(base.topology.sites, base.topology.cables, base.topology.fiber_types, base.architectures, trx)
    table = path_table(scen)
    assert not table["feasible"].any()
    assert set(table["transceiver_class"]) == {"none"}
    assert all("GSNR" in r and "45 dB required + 2 dB margin" in r for r in table["reason"])
    assert (table["margin_db"] < 2.0).all()
    assert feasible_routes(scen, scen.architectures[0]) == {("D1", "D2"): []}


def test_cheapest_class_per_gbps_that_closes_the_path_is_chosen():
    # The direct 150 km cable: a cheap short-reach class (100 km) cannot take it, an expensive
    # one can; via the hub (90 km) the cheap one can.  Cost per Gb/s decides the order: the
    # 400G class at 1.5 (0.00375 per Gb/s) beats the 200G class at 1.0 (0.005 per Gb/s).
    base = triangle()
    classes = (
        TransceiverClass("short-200", 200.0, 32.0, required_osnr_db=10.0, reach_km=100.0, cost=1.0),
        TransceiverClass("short-400", 400.0, 60.0, required_osnr_db=10.0, reach_km=100.0, cost=1.5),
        TransceiverClass("long-400", 400.0, 60.0, required_osnr_db=10.0, cost=3.0),
    )
    scen = replace(base, transceivers=classes)
    table = path_table(scen).set_index("path")
    assert table.loc["D1-D2", "transceiver_class"] == "long-400"
    assert table.loc["D1-H-D2", "transceiver_class"] == "short-400"
    routes = feasible_routes(scen, scen.architectures[0])[("D1", "D2")]
    assert [(r.label, r.transceiver_class, r.lane_gbps) for r in routes] == [
        ("D1-H-D2", "short-400", 400.0),
        ("D1-D2", "long-400", 400.0),
    ]


def test_path_mixing_unit_sizes_is_infeasible():
    # Joint switching: a unit is all cores of the fiber (docs/model.md, section 2), 4 on cc4 and 7 on
    # weak7, so a path over both has no single unit size.
    base = triangle(fiber_direct="weak7")
    cables = (base.topology.cables[0], Cable("D1", "H", 40.0, "cc4", 2), Cable("H", "D2", 50.0, "weak7", 2))
    scen = scenario(base.topology.sites, cables, base.topology.fiber_types, [Architecture("joint", "joint")])
    table = path_table(scen)
    via = table[table["path"] == "D1-H-D2"].iloc[0]
    assert not via["feasible"]
    assert "unit size differs" in via["reason"]
    assert via["length_km"] == pytest.approx(90.0)
    assert [r.label for r in feasible_routes(scen, scen.architectures[0])[("D1", "D2")]] == []


def test_independent_switching_on_random_fiber_is_infeasible_with_reason():
    # docs/model.md, section 2: independent switching needs weak coupling.
    scen = triangle(fiber_direct="cc4", fiber_via="cc4")
    table = path_table(scen)
    assert not table["feasible"].any()
    assert all("independent switching needs weakly coupled fiber" in r for r in table["reason"])


def test_random_fiber_joint_path_has_mimo_and_no_crosstalk():
    # docs/model.md, section 1: random coupling needs MIMO; crosstalk is not applicable there
    # (documented as NaN, an empty cell in paths.csv).
    base = triangle(fiber_direct="cc4", fiber_via="cc4")
    scen = scenario(base.topology.sites, base.topology.cables, base.topology.fiber_types, [Architecture("j", "joint")])
    table = path_table(scen)
    via = table.iloc[0]
    assert via["feasible"]
    assert via["mimo_taps"] > 0
    assert math.isnan(via["crosstalk_db"])
    # Variances add: 6.1 * sqrt(90) ps (Ho & Kahn, JLT 2011).
    assert via["gd_spread_ps"] == pytest.approx(6.1 * math.sqrt(90.0))
    buf = io.StringIO()
    table.to_csv(buf, index=False)
    first = pd.read_csv(io.StringIO(buf.getvalue())).iloc[0]
    assert math.isnan(first["crosstalk_db"])


def test_disconnected_pair_gets_rank_zero_row_and_empty_routes():
    sites = [Site("D1", "datacenter"), Site("D2", "datacenter"), Site("D3", "datacenter")]
    cables = [Cable("D1", "D2", 10.0, "weak7", 1)]
    scen = scenario(sites, cables, {"weak7": WEAK7}, [Architecture("ind", "independent")])
    table = path_table(scen)
    d13 = table[(table["a"] == "D1") & (table["b"] == "D3")].iloc[0]
    assert d13["rank"] == 0 and not d13["feasible"] and "no route" in d13["reason"]
    routes = feasible_routes(scen, scen.architectures[0])
    # Keys follow routing.datacenter_pairs order (file order, a before b).
    assert list(routes) == datacenter_pairs(scen.topology)
    assert routes[("D1", "D3")] == [] and routes[("D2", "D3")] == []
    assert [r.label for r in routes[("D1", "D2")]] == ["D1-D2"]


def test_architecture_fiber_override_is_applied():
    # Scenario.topology_for: an architecture's fiber_type replaces every cable's type.
    base = triangle()
    archs = [Architecture("ind", "independent"), Architecture("cc-joint", "joint", fiber_type="cc4")]
    scen = scenario(base.topology.sites, base.topology.cables, base.topology.fiber_types, archs)
    table = path_table(scen)
    assert set(table["architecture"]) == {"ind", "cc-joint"}
    cc = table[table["architecture"] == "cc-joint"]
    assert (cc["mimo_taps"] > 0).all()
    ind = table[table["architecture"] == "ind"]
    assert (ind["mimo_taps"] == 0).all()


def test_path_table_is_fast_on_a_ring():
    # 12 datacenters on a ring, 66 pairs x 3 routes: must stay well under a second.
    n = 12
    sites = [Site(f"D{i}", "datacenter") for i in range(n)]
    cables = [Cable(f"D{i}", f"D{(i + 1) % n}", 20.0, "weak7", 1) for i in range(n)]
    scen = scenario(sites, cables, {"weak7": WEAK7}, [Architecture("ind", "independent")], k=3)
    start = time.perf_counter()
    table = path_table(scen)
    elapsed = time.perf_counter() - start
    assert len(table) == 66 * 2  # a ring has exactly two loop-free routes per pair
    assert elapsed < 2.0


def test_each_route_s_physics_is_evaluated_once_and_is_what_a_fresh_evaluation_gives():
    from sdmnet.optics.classes import scenario_classes
    from sdmnet.optics.pathtable import clear_physics_cache, evaluate_route, evaluated_routes

    base = triangle()
    arch = base.architectures[0]
    clear_physics_cache()
    first = {(a, b): found for a, b, found in evaluated_routes(base, arch)}
    for found in first.values():
        for route, phys in found:
            fresh = evaluate_route(base.topology, route, arch, base.transceiver, base.line, scenario_classes(base))
            assert phys == fresh
    # Other fiber counts leave the physics as it was: the very same results come back.
    more = replace(base, topology=base.topology.with_fiber_pairs({c.key: 5 for c in base.topology.cables}))
    again = {(a, b): found for a, b, found in evaluated_routes(more, arch)}
    assert all(p is q for pair in first for (_r, p), (_s, q) in zip(first[pair], again[pair]))
    # A longer cable is another route for the physics.
    longer = replace(base, topology=replace(base.topology, cables=(
        replace(base.topology.cables[0], length_km=151.0), *base.topology.cables[1:])))  # fmt: skip
    changed = {(a, b): found for a, b, found in evaluated_routes(longer, arch)}
    lengths = [phys.length_km for _r, phys in changed[("D1", "D2")]]
    assert 151.0 in lengths and 150.0 not in lengths
