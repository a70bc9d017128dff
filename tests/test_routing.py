"""k shortest routes: against a brute-force enumeration, and route for route against networkx's
own Yen's algorithm (:func:`networkx.shortest_simple_paths`, J. Y. Yen, Management Science
17(11), 1971), whose routes and order of ties the fast search must keep."""

from __future__ import annotations

import random
from dataclasses import replace
from itertools import islice

import networkx as nx
import pytest
from builders import fiber_type

from sdmnet.inputs.model import Cable, Site, Topology
from sdmnet.network import routing
from sdmnet.network.routing import clear_route_cache, datacenter_pairs, k_shortest_routes, route_table


def _mesh() -> Topology:
    f = fiber_type()
    sites = tuple(Site(s, "datacenter" if s in "AD" else "hub") for s in "ABCDE")
    edges = [
        ("A", "B", 10), ("B", "D", 10), ("A", "C", 15), ("C", "D", 12), ("B", "C", 3), ("C", "E", 1), ("E", "D", 30)
    ]
    return Topology("mesh", {f.name: f}, sites, tuple(Cable(a, b, km, f.name, 1) for a, b, km in edges))


def test_routes_are_the_k_shortest_simple_paths_by_length():
    topo = _mesh()
    g = topo.graph()
    # Reference: every simple path (networkx.all_simple_paths), sorted by length.
    every = sorted(nx.path_weight(g, p, "length_km") for p in nx.all_simple_paths(g, "A", "D"))
    routes = k_shortest_routes(topo, "A", "D", 4)
    assert [r.length_km for r in routes] == every[:4]
    for r in routes:
        assert r.sites[0] == "A" and r.sites[-1] == "D"
        assert len(r.cables) == len(r.sites) - 1
        assert r.label == "-".join(r.sites)
        for i, (u, v) in zip(r.cables, zip(r.sites, r.sites[1:])):
            assert {topo.cables[i].a, topo.cables[i].b} == {u, v}


def test_datacenter_pairs_skip_hubs():
    assert datacenter_pairs(_mesh()) == [("A", "D")]


# ---- route for route against networkx ----


def _networkx_routes(topology: Topology, a: str, b: str, k: int) -> list[tuple[tuple[str, ...], tuple[int, ...]]]:
    """networkx's Yen on the topology's graph without the sites closed to transit (ends kept)."""
    g = topology.graph()
    closed = {s.id for s in topology.sites if not s.transit} - {a, b}
    g = g.subgraph(n for n in g if n not in closed)
    if not nx.has_path(g, a, b):
        return []
    return [
        (tuple(p), tuple(g.edges[u, v]["cable"] for u, v in zip(p, p[1:])))
        for p in islice(nx.shortest_simple_paths(g, a, b, weight="length_km"), k)
    ]


def _random_topology(rng: random.Random) -> Topology:
    """A connected random graph; whole-km lengths in half the cases, so that many paths tie."""
    f = fiber_type()
    n = rng.randint(2, 12)
    ids = [f"n{i}" for i in range(n)]
    links = {(rng.randrange(i), i) for i in range(1, n)}
    for _ in range(rng.randint(0, 2 * n)):
        u, v = sorted(rng.sample(range(n), 2))
        links.add((u, v))
    links_in_order = sorted(links)
    rng.shuffle(links_in_order)
    whole_km = rng.random() < 0.5
    closed = rng.choice([0.0, 0.0, 0.2, 0.5])
    cables = tuple(
        Cable(ids[u], ids[v], float(rng.randint(1, 4)) if whole_km else round(rng.uniform(1, 50), 1), f.name, 1)
        for u, v in links_in_order
    )
    sites = tuple(Site(x, "datacenter", transit=rng.random() >= closed) for x in ids)
    return Topology("random", {f.name: f}, sites, cables)


def _agree_with_networkx(seed: int, graphs: int) -> int:
    rng = random.Random(seed)
    pairs = 0
    for _ in range(graphs):
        topo = _random_topology(rng)
        k = rng.randint(1, 6)
        clear_route_cache()
        for a, b in datacenter_pairs(topo):
            got = [(r.sites, r.cables) for r in k_shortest_routes(topo, a, b, k)]
            assert got == _networkx_routes(topo, a, b, k), (seed, a, b, k)
            pairs += 1
    return pairs


def test_routes_and_their_order_of_ties_are_networkx_s():
    # Float lengths (few ties) and whole-km lengths (ties everywhere), sites closed to transit.
    assert _agree_with_networkx(seed=1, graphs=50) > 700


@pytest.mark.slow
def test_routes_agree_with_networkx_on_many_more_graphs():
    assert _agree_with_networkx(seed=3, graphs=300) > 4000


def test_networkx_s_own_steps_where_ties_decide(monkeypatch):
    # Where the fast search sees a rival within rounding it replays networkx's own spur search.
    # Trust none of its results, so that every spur search and first path is replayed.
    spur, tree = routing._Search._spur, routing._Network.tree

    def doubtful_spur(self, *args):
        found = spur(self, *args)
        return None if found is None else (*found[:3], False)

    def no_unique_paths(self, t):
        return replace(tree(self, t), unique=[v == t for v in range(len(self.ids))])

    monkeypatch.setattr(routing._Search, "_spur", doubtful_spur)
    monkeypatch.setattr(routing._Network, "tree", no_unique_paths)
    assert _agree_with_networkx(seed=2, graphs=40) > 500


def test_no_route_passes_through_a_site_closed_to_transit():
    # With hub C closed, A to D has one route left: A-B-D (E hangs off C); as an end C is reachable.
    topo = _mesh()
    closed = replace(topo, sites=tuple(replace(s, transit=s.id != "C") for s in topo.sites))
    assert [r.label for r in k_shortest_routes(closed, "A", "D", 10)] == ["A-B-D"]
    assert k_shortest_routes(closed, "A", "C", 1)[0].label == "A-B-C"


# ---- computed once per topology shape ----


def _region() -> Topology:
    rng = random.Random(5)
    f = fiber_type()
    ids = [f"s{i}" for i in range(9)]
    cables = [Cable(ids[i], ids[(i + 1) % 9], round(rng.uniform(5, 30), 1), f.name, 1) for i in range(9)]
    cables += [Cable(ids[i], ids[(i + 4) % 9], round(rng.uniform(20, 60), 1), f.name, 1) for i in range(0, 9, 2)]
    return Topology("ring", {f.name: f}, tuple(Site(x, "datacenter") for x in ids), tuple(cables))


def test_copies_with_other_fiber_counts_or_types_share_the_routes():
    clear_route_cache()
    topo = _region()
    first = route_table(topo, 3)
    more = topo.with_fiber_pairs({c.key: 4 for c in topo.cables})
    other = replace(more, fiber_types={**more.fiber_types, "g": fiber_type("g", cores=7)}).with_fiber_type("g")
    assert routing._network(more) is routing._network(topo) is routing._network(other)
    assert route_table(other, 3) == first


@pytest.mark.parametrize("cut", [0, 3, 9, 12])
def test_a_cut_topology_reuses_what_avoids_the_cut_and_recomputes_the_rest(cut):
    topo = _region()
    without = replace(topo, cables=tuple(c for i, c in enumerate(topo.cables) if i != cut))
    clear_route_cache()
    fresh = route_table(without, 3)
    clear_route_cache()
    route_table(topo, 3)
    reused = route_table(without, 3)
    assert routing._network(without).parent is routing._network(topo)
    assert reused == fresh
    assert reused == {p: tuple(k_shortest_routes(without, *p, 3)) for p in fresh}
    assert any(fresh[p] != route_table(topo, 3)[p] for p in fresh)  # the cut changed some pairs
