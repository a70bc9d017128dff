"""Candidate paths between datacenter pairs: the k shortest by length (networkx).

Routes pass only through sites open to transit (``Site.transit``).  Paths are computed once per
topology and architecture and then filtered by the physical layer
(:mod:`sdmnet.optics.physics`); the engine tries the feasible ones in order of length.
"""

from __future__ import annotations

from dataclasses import dataclass
from itertools import combinations, islice

from ..inputs.model import Topology

__all__ = ["Route", "k_shortest_routes", "datacenter_pairs"]


@dataclass(frozen=True)
class Route:
    """A loop-free path between two sites.

    Attributes
    ----------
    sites : tuple of str
        Site ids from one end to the other.
    cables : tuple of int
        Indices into ``Topology.cables``, one per hop, in path order.
    length_km : float
        Sum of cable lengths.
    """

    sites: tuple[str, ...]
    cables: tuple[int, ...]
    length_km: float

    @property
    def label(self) -> str:
        """Site ids joined by ``-`` (the ``path`` column of paths.csv)."""
        return "-".join(self.sites)


def datacenter_pairs(topology: Topology) -> list[tuple[str, str]]:
    """Unordered datacenter pairs ``(a, b)`` with a before b in file order."""
    ids = [s.id for s in topology.datacenters]
    return list(combinations(ids, 2))


def k_shortest_routes(topology: Topology, a: str, b: str, k: int) -> list[Route]:
    """The ``k`` shortest loop-free routes from ``a`` to ``b`` by length.

    Uses :func:`networkx.shortest_simple_paths` (Yen's algorithm); ties in length keep
    networkx's order, which is deterministic for a given topology file.  No route passes
    through a site with ``transit = false`` (such a site is only ever an end).
    """
    import networkx as nx  # here, not at the top: checking a file needs no networkx

    g = topology.graph()
    closed = [s.id for s in topology.sites if not s.transit and s.id not in (a, b)]
    if closed:
        g = g.subgraph(n for n in g if n not in closed)
    if a not in g or b not in g or not nx.has_path(g, a, b):
        return []
    routes = []
    for sites in islice(nx.shortest_simple_paths(g, a, b, weight="length_km"), k):
        cables = tuple(g.edges[u, v]["cable"] for u, v in zip(sites, sites[1:]))
        length = sum(topology.cables[i].length_km for i in cables)
        routes.append(Route(tuple(sites), cables, length))
    return routes
