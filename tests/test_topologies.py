"""The bundled topology and scenario files: shape, provenance of lengths, and consistency.

These tests read the files with :mod:`tomllib` and networkx only, so they hold whatever the
loaders do; where :func:`sdmnet.inputs.loaders.load_topology` exists it is checked to accept every
bundled file too.
"""

from __future__ import annotations

import importlib.util
import itertools
import math
import re
from pathlib import Path
from typing import Any

import networkx as nx
import pytest
import tomllib

ROOT = Path(__file__).resolve().parents[1]
TOPOLOGIES = ROOT / "topologies"
SCENARIOS = ROOT / "scenarios"
TOPOLOGY_FILES = sorted(TOPOLOGIES.glob("*.toml"))
SCENARIO_FILES = sorted(SCENARIOS.glob("*.toml"))

EARTH_RADIUS_KM = 6371.0

# SNDlib instance "nobel-us" (Orlowski et al., Networks 55(3), 2010), as stored in the public
# copy piotrjurkiewicz/topohub, data/sndlib/nobel-us.gml (commit fcb0de74e8a2): node label and
# (lon, lat) exactly as printed there, written DDD.MM (degrees and minutes); node order is the
# file's node numbering.
SNDLIB_NOBEL_US_NODES: list[tuple[str, float, float]] = [
    ("Palo-Alto", -122.07, 37.25),
    ("San-Diego", -117.08, 32.42),
    ("Boulder", -105.16, 40.0),
    ("Washington", -77.02, 38.52),
    ("Atlanta", -84.23, 33.44),
    ("Urbana-Champaign", -88.14, 40.06),
    ("Ann-Arbor", -83.43, 42.16),
    ("Lincoln", -96.42, 40.47),
    ("Princeton", -74.39, 40.21),
    ("Ithaca", -76.3, 42.26),
    ("Pittsburgh", -79.58, 40.26),
    ("Houston", -95.21, 29.45),
    ("Salt-Lake-City", -111.55, 40.39),
    ("Seattle", -122.24, 47.33),
]
# Its 21 links by node number, from the same file; the same list appears in arekolek/MaxIST
# nobel-us.xml and in BokalaQuan/MOBSA_MRP problem/mrp/SNDlib_Topo/nobel-us/nobel-us.gml.
SNDLIB_NOBEL_US_LINKS: list[tuple[int, int]] = [
    (0, 1), (0, 12), (0, 13), (1, 11), (1, 13), (2, 7), (2, 11), (2, 12), (3, 8), (3, 9), (3, 11),
    (4, 10), (4, 11), (5, 7), (5, 10), (5, 13), (6, 8), (6, 9), (6, 12), (8, 10), (9, 10),
]  # fmt: skip


def site_id(sndlib_label: str) -> str:
    """Our site id for an SNDlib label: hyphens dropped (sdmnet joins ids with '-')."""
    return sndlib_label.replace("-", "")


def degrees_from_dm(value: float) -> float:
    """A DDD.MM value (degrees and minutes written as a decimal) in decimal degrees."""
    sign = -1.0 if value < 0 else 1.0
    whole = math.floor(abs(value) + 1e-9)
    minutes = round((abs(value) - whole) * 100.0, 6)
    assert minutes < 60.0, f"{value} is not DDD.MM"
    return sign * (whole + minutes / 60.0)


def haversine_km(lon1: float, lat1: float, lon2: float, lat2: float) -> float:
    """Great-circle distance on a sphere of radius 6371 km (haversine formula)."""
    phi1, phi2 = math.radians(lat1), math.radians(lat2)
    dphi, dlam = phi2 - phi1, math.radians(lon2 - lon1)
    h = math.sin(dphi / 2) ** 2 + math.cos(phi1) * math.cos(phi2) * math.sin(dlam / 2) ** 2
    return 2.0 * EARTH_RADIUS_KM * math.asin(math.sqrt(h))


def erlang_b(servers: int, load: float) -> float:
    """Erlang B by the recursion B(0) = 1, B(n) = A B(n-1) / (n + A B(n-1))."""
    b = 1.0
    for n in range(1, servers + 1):
        b = load * b / (n + load * b)
    return b


def read_toml(path: Path) -> dict[str, Any]:
    with path.open("rb") as handle:
        return tomllib.load(handle)


def toml_graph(data: dict[str, Any]) -> nx.Graph:
    """A topology file as a networkx graph under the GraphML attribute names."""
    graph = nx.Graph(name=data["name"])
    for type_name, figures in data["fiber_types"].items():
        for field, value in figures.items():
            graph.graph[f"fiber_types.{type_name}.{field}"] = value
    for site in data["sites"]:
        graph.add_node(site["id"], **{k: v for k, v in site.items() if k != "id"})
    for cable in data["cables"]:
        graph.add_edge(cable["a"], cable["b"], **{k: v for k, v in cable.items() if k not in ("a", "b")})
    return graph


def scenario_topology(path: Path) -> tuple[dict[str, Any], dict[str, Any]]:
    """A scenario file and the topology file it names (relative to the scenario)."""
    scenario = read_toml(path)
    return scenario, read_toml(path.parent / scenario["topology"])


@pytest.fixture(scope="module")
def nsfnet() -> dict[str, Any]:
    return read_toml(TOPOLOGIES / "nsfnet.toml")


@pytest.fixture(scope="module")
def demo() -> dict[str, Any]:
    return read_toml(TOPOLOGIES / "demo-metro.toml")


# ----------------------------------------------------------------------------------------------
# Every file


def test_the_bundled_files_are_there() -> None:
    names = {p.name for p in TOPOLOGY_FILES} | {p.name for p in SCENARIO_FILES}
    assert {"nsfnet.toml", "demo-metro.toml", "single-cable.toml"} <= names
    assert {"demo.toml", "nsfnet.toml", "single-cable-erlang.toml"} <= {p.name for p in SCENARIO_FILES}
    assert (TOPOLOGIES / "nsfnet.graphml").is_file()


@pytest.mark.parametrize("path", TOPOLOGY_FILES, ids=lambda p: p.name)
def test_topology_file_is_consistent(path: Path) -> None:
    data = read_toml(path)
    ids = [s["id"] for s in data["sites"]]
    assert len(ids) == len(set(ids))
    assert all("-" not in i for i in ids), "sdmnet joins site ids with '-'"
    pairs = [frozenset((c["a"], c["b"])) for c in data["cables"]]
    assert len(pairs) == len(set(pairs)), "at most one cable per site pair"
    for cable in data["cables"]:
        assert cable["a"] in ids and cable["b"] in ids
        assert cable["fiber_type"] in data["fiber_types"]
        assert cable["length_km"] > 0 and cable["fiber_pairs"] >= 1
    for figures in data["fiber_types"].values():
        assert figures["cores"] % figures["coupled_group"] == 0
        if figures["coupling"] == "weak":
            assert figures["coupled_group"] == 1
    assert nx.is_connected(toml_graph(data))


# ----------------------------------------------------------------------------------------------
# NSFNET against SNDlib nobel-us


def test_haversine_of_a_quarter_meridian() -> None:
    # Equator to pole along a meridian is a quarter of a great circle: pi R / 2 (geometry).
    assert haversine_km(10.0, 0.0, 10.0, 90.0) == pytest.approx(math.pi * EARTH_RADIUS_KM / 2, abs=1e-9)


def test_dm_reading_puts_houston_at_its_minutes() -> None:
    # SNDlib's "-95.21 29.45" for Houston is 95 deg 21' W, 29 deg 45' N.
    assert degrees_from_dm(-95.21) == pytest.approx(-95.35)
    assert degrees_from_dm(29.45) == pytest.approx(29.75)


def test_nsfnet_has_14_datacenters_and_21_cables(nsfnet: dict[str, Any]) -> None:
    assert len(nsfnet["sites"]) == 14
    assert len(nsfnet["cables"]) == 21
    assert all(s["role"] == "datacenter" and s["traffic_weight"] == 1.0 for s in nsfnet["sites"])
    graph = toml_graph(nsfnet)
    assert nx.is_connected(graph)
    # The topohub copy of nobel-us states min_degree 2 and max_degree 4 (mean 3 = 2 x 21 / 14).
    assert {d for _, d in graph.degree()} <= {2, 3, 4}


def test_nsfnet_cables_are_the_sndlib_links(nsfnet: dict[str, Any]) -> None:
    ids = [site_id(label) for label, _, _ in SNDLIB_NOBEL_US_NODES]
    assert [s["id"] for s in nsfnet["sites"]] == ids
    expected = [(ids[i], ids[j]) for i, j in SNDLIB_NOBEL_US_LINKS]
    assert [(c["a"], c["b"]) for c in nsfnet["cables"]] == expected


def test_nsfnet_lengths_are_great_circle_from_sndlib_coordinates(nsfnet: dict[str, Any]) -> None:
    where = {site_id(label): (degrees_from_dm(lon), degrees_from_dm(lat)) for label, lon, lat in SNDLIB_NOBEL_US_NODES}
    for cable in nsfnet["cables"]:
        (lon1, lat1), (lon2, lat2) = where[cable["a"]], where[cable["b"]]
        great_circle = haversine_km(lon1, lat1, lon2, lat2)
        assert cable["length_km"] == pytest.approx(great_circle, abs=0.1), (cable["a"], cable["b"])


def test_nsfnet_drawing_positions_follow_the_stated_projection(nsfnet: dict[str, Any]) -> None:
    # Equirectangular about lat0 = 39 N, lon0 = 98 W, as the file's header states.
    lat0, lon0 = 39.0, -98.0
    for site, (_, lon, lat) in zip(nsfnet["sites"], SNDLIB_NOBEL_US_NODES):
        lon_deg, lat_deg = degrees_from_dm(lon), degrees_from_dm(lat)
        x = EARTH_RADIUS_KM * math.cos(math.radians(lat0)) * math.radians(lon_deg - lon0)
        y = EARTH_RADIUS_KM * math.radians(lat_deg - lat0)
        assert site["x_km"] == pytest.approx(x, abs=0.1)
        assert site["y_km"] == pytest.approx(y, abs=0.1)


def test_nsfnet_graphml_holds_the_same_graph(nsfnet: dict[str, Any]) -> None:
    from_graphml = nx.read_graphml(TOPOLOGIES / "nsfnet.graphml")
    # networkx adds empty defaults when reading; they are not in the file's data.
    assert from_graphml.graph.pop("node_default") == {} and from_graphml.graph.pop("edge_default") == {}
    from_toml = toml_graph(nsfnet)
    assert from_graphml.graph == from_toml.graph
    assert dict(from_graphml.nodes(data=True)) == dict(from_toml.nodes(data=True))
    assert nx.utils.edges_equal(from_graphml.edges(data=True), from_toml.edges(data=True))
    assert nx.utils.graphs_equal(from_graphml, from_toml)


def test_nsfnet_graphml_is_what_the_script_writes_now(nsfnet: dict[str, Any]) -> None:
    # A stale GraphML (TOML edited, script not rerun) fails here.
    spec = importlib.util.spec_from_file_location("make_graphml", ROOT / "tools" / "make_graphml.py")
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    assert (TOPOLOGIES / "nsfnet.graphml").read_text(encoding="utf-8") == module.graphml_text(nsfnet)


def test_nsfnet_shortest_paths_span_the_long_haul_range(nsfnet: dict[str, Any]) -> None:
    # The scenario's comment: shortest-path lengths run from 262.5 km to 4426.2 km (recomputed
    # here from the topology with networkx, independently of sdmnet's routing).
    _scenario, topology = scenario_topology(SCENARIOS / "nsfnet.toml")
    assert topology == nsfnet
    graph = toml_graph(nsfnet)
    dist = dict(nx.all_pairs_dijkstra_path_length(graph, weight="length_km"))
    shortest = {frozenset((a, b)): dist[a][b] for a, b in itertools.combinations(graph.nodes, 2)}
    assert len(shortest) == 91
    assert min(shortest.values()) == pytest.approx(262.5, abs=0.05)
    assert max(shortest.values()) == pytest.approx(4426.2, abs=0.05)


# ----------------------------------------------------------------------------------------------
# The invented demo region


def test_demo_has_five_campuses_and_three_hubs(demo: dict[str, Any]) -> None:
    roles = [s["role"] for s in demo["sites"]]
    assert roles.count("datacenter") == 5
    assert roles.count("hub") == 3
    weights = {s["traffic_weight"] for s in demo["sites"] if s["role"] == "datacenter"}
    assert len(weights) >= 3, "gravity weights should differ between campuses"


def test_demo_cables_are_metro_lengths_with_path_diversity(demo: dict[str, Any]) -> None:
    assert 11 <= len(demo["cables"]) <= 13
    assert all(5.0 <= c["length_km"] <= 80.0 for c in demo["cables"])
    assert all(c["fiber_pairs"] in (1, 2) for c in demo["cables"])
    graph = toml_graph(demo)
    campuses = [s["id"] for s in demo["sites"] if s["role"] == "datacenter"]
    for a, b in itertools.combinations(campuses, 2):
        assert nx.edge_connectivity(graph, a, b) >= 2, (a, b)


def test_demo_lengths_follow_the_stated_map_and_route_factor(demo: dict[str, Any]) -> None:
    # Header: straight-line distance on the map x 1.25, rounded to 0.1 km.
    where = {s["id"]: (s["x_km"], s["y_km"]) for s in demo["sites"]}
    for cable in demo["cables"]:
        assert cable["length_km"] == pytest.approx(1.25 * math.dist(where[cable["a"]], where[cable["b"]]), abs=0.05)


def test_demo_fiber_types_allow_the_compared_granularities(demo: dict[str, Any]) -> None:
    types = demo["fiber_types"]
    assert (types["mcf7-weak"]["cores"], types["mcf7-weak"]["coupling"], types["mcf7-weak"]["coupled_group"]) == (
        7, "weak", 1,
    )  # fmt: skip
    assert (types["mcf4-rc"]["cores"], types["mcf4-rc"]["coupling"], types["mcf4-rc"]["coupled_group"]) == (
        4, "random", 4,
    )  # fmt: skip
    rc8 = types["mcf8-rc4"]
    assert (rc8["cores"], rc8["coupling"], rc8["coupled_group"]) == (8, "random", 4)
    assert rc8["cores"] // rc8["coupled_group"] == 2, "two coupled groups, so group-4 switching is a real choice"


@pytest.mark.parametrize("name", ["nsfnet.toml", "demo-metro.toml"])
def test_fiber_figures_are_the_sourced_defaults(name: str) -> None:
    defaults = pytest.importorskip("sdmnet.optics.defaults")
    types = read_toml(TOPOLOGIES / name)["fiber_types"]
    weak = types["mcf7-weak"]
    assert weak["attenuation_db_per_km"] == defaults.ATTENUATION_G652D_DB_PER_KM
    assert weak["crosstalk_db_per_km"] == pytest.approx(defaults.CROSSTALK_WEAK_DB_PER_KM, abs=0.05)
    for random_type in ("mcf4-rc", "mcf8-rc4"):
        figures = types[random_type]
        assert figures["attenuation_db_per_km"] == defaults.ATTENUATION_COUPLED_CORE_MCF_DB_PER_KM
        assert figures["gd_spread_ps_per_sqrt_km"] == defaults.GD_SPREAD_RANDOM_PS_PER_SQRT_KM
        assert figures["mdl_db_per_sqrt_km"] == defaults.MDL_RANDOM_DB_PER_SQRT_KM


# ----------------------------------------------------------------------------------------------
# Scenarios


@pytest.mark.parametrize("path", SCENARIO_FILES, ids=lambda p: p.name)
def test_scenario_names_a_topology_and_fitting_architectures(path: Path) -> None:
    scenario, topology = scenario_topology(path)
    sizes = scenario["traffic"]["sizes_gbps"]
    assert math.fsum(sizes.values()) == pytest.approx(1.0, abs=1e-9)
    lane = scenario["transceiver"]["lane_gbps"]
    # Every bundled size is a whole number of lanes.
    assert all(float(size) / lane == int(float(size) / lane) for size in sizes)
    used = {c["fiber_type"] for c in topology["cables"]}
    for arch in scenario["architectures"]:
        fiber_names = [arch["fiber_type"]] if "fiber_type" in arch else sorted(used)
        for fiber_name in fiber_names:
            fiber = topology["fiber_types"][fiber_name]
            if arch["switching"] == "independent":
                assert fiber["coupling"] == "weak", arch["name"]
            if arch["switching"] == "fractional-joint":
                assert fiber["cores"] % arch["group"] == 0 and arch["group"] % fiber["coupled_group"] == 0


def test_demo_scenario_compares_the_five_architectures() -> None:
    scenario, _ = scenario_topology(SCENARIOS / "demo.toml")
    by_name = {a["name"]: a for a in scenario["architectures"]}
    assert by_name["core-wise"]["switching"] == "independent" and by_name["core-wise"]["lane_change"]
    assert (by_name["joint-7"]["switching"], by_name["joint-7"]["fiber_type"]) == ("joint", "mcf7-weak")
    fj = by_name["fj4-rc8"]
    assert (fj["switching"], fj["group"], fj["fiber_type"]) == ("fractional-joint", 4, "mcf8-rc4")
    assert (by_name["joint-rc4"]["switching"], by_name["joint-rc4"]["fiber_type"]) == ("joint", "mcf4-rc")
    assert by_name["fiber-xc"]["switching"] == "fiber" and by_name["fiber-xc"]["share"]
    assert len(scenario["traffic"]["load_erlang"]) == 4
    run = scenario["run"]
    requests = len(by_name) * 4 * run["replications"] * (run["requests"] + run["warmup"])
    # Runs in well under two minutes at about 50,000 requests/s.
    assert requests / 50_000 < 60


def test_erlang_b_recursion_matches_a_published_worked_example() -> None:
    # erlang.com calculator manual, "How much traffic can a trunk group handle": 15 lines at
    # 1 % blocking carry 8.108 Erlang (https://erlang.com/calculatormanual/
    # howmuchtrafficcanatrunkgrouphandle.htm).
    assert erlang_b(15, 8.108) == pytest.approx(0.01, abs=5e-6)


def test_single_cable_comment_states_erlang_b_for_its_loads() -> None:
    path = SCENARIOS / "single-cable-erlang.toml"
    scenario, topology = scenario_topology(path)
    (cable,) = topology["cables"]
    fiber = topology["fiber_types"][cable["fiber_type"]]
    servers = cable["fiber_pairs"] * fiber["cores"] * fiber["channels"]
    assert servers == 10
    assert scenario["traffic"]["sizes_gbps"] == {str(int(scenario["transceiver"]["lane_gbps"])): 1.0}
    assert [a["switching"] for a in scenario["architectures"]] == ["independent"]
    stated = [
        (float(load), float(blocking))
        for load, blocking in re.findall(r"C = 10: A = ([\d.]+) -> ([\d.]+)", path.read_text(encoding="utf-8"))
    ]
    assert [load for load, _ in stated] == scenario["traffic"]["load_erlang"]
    for load, blocking in stated:
        assert blocking == pytest.approx(erlang_b(servers, load), abs=5e-7)


# ----------------------------------------------------------------------------------------------
# The sdmnet loaders accept every bundled file


@pytest.mark.parametrize("path", [*TOPOLOGY_FILES, TOPOLOGIES / "nsfnet.graphml"], ids=lambda p: p.name)
def test_loader_reads_every_topology(path: Path) -> None:
    loaders = pytest.importorskip("sdmnet.inputs.loaders")
    if not hasattr(loaders, "load_topology"):
        pytest.skip("sdmnet.inputs.loaders.load_topology is not written yet")
    topology = loaders.load_topology(path)
    data = read_toml(path.with_suffix(".toml"))
    assert [s.id for s in topology.sites] == [s["id"] for s in data["sites"]]
    assert [(c.a, c.b, c.length_km, c.fiber_type, c.fiber_pairs) for c in topology.cables] == [
        (c["a"], c["b"], c["length_km"], c["fiber_type"], c["fiber_pairs"]) for c in data["cables"]
    ]
    assert set(topology.fiber_types) == set(data["fiber_types"])


def test_loader_reads_nsfnet_graphml_as_the_toml() -> None:
    loaders = pytest.importorskip("sdmnet.inputs.loaders")
    if not hasattr(loaders, "load_topology"):
        pytest.skip("sdmnet.inputs.loaders.load_topology is not written yet")
    from_toml = loaders.load_topology(TOPOLOGIES / "nsfnet.toml")
    from_graphml = loaders.load_topology(TOPOLOGIES / "nsfnet.graphml")
    assert (from_graphml.name, from_graphml.fiber_types) == (from_toml.name, from_toml.fiber_types)
    assert (from_graphml.sites, from_graphml.cables) == (from_toml.sites, from_toml.cables)


@pytest.mark.parametrize("path", SCENARIO_FILES, ids=lambda p: p.name)
def test_loader_reads_every_scenario(path: Path) -> None:
    loaders = pytest.importorskip("sdmnet.inputs.loaders")
    if not hasattr(loaders, "load_scenario"):
        pytest.skip("sdmnet.inputs.loaders.load_scenario is not written yet")
    scenario = loaders.load_scenario(path)
    data = read_toml(path)
    assert [a.name for a in scenario.architectures] == [a["name"] for a in data["architectures"]]
    assert list(scenario.traffic.loads_erlang) == data["traffic"]["load_erlang"]
