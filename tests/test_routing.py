"""k shortest routes against a brute-force enumeration with networkx."""

from __future__ import annotations

from dataclasses import replace

import networkx as nx
from builders import fiber_type

from sdmnet.inputs.model import Cable, Site, Topology
from sdmnet.network.routing import datacenter_pairs, k_shortest_routes


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


def test_no_route_passes_through_a_site_closed_to_transit():
    # A site with transit = false is only ever an end (issue 14: campuses not built to carry
    # others' traffic).  With hub C closed, A to D has one route left: A-B-D (E hangs off C).
    topo = _mesh()
    closed = replace(topo, sites=tuple(replace(s, transit=s.id != "C") for s in topo.sites))
    routes = k_shortest_routes(closed, "A", "D", 10)
    assert [r.label for r in routes] == ["A-B-D"]
    # As an end a closed site is still reachable.
    assert k_shortest_routes(closed, "A", "C", 1)[0].label == "A-B-C"
