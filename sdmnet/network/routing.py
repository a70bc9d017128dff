"""Candidate paths between datacenter pairs: the k shortest by length.

Routes pass only through sites open to transit (``Site.transit``): a closed site is only ever an
end.  The routes of a topology are computed once per process and shared by every architecture,
load, plan candidate, estimate and equipment count: they depend only on the topology's *shape*
(site ids and transit flags, cable ends and lengths), never on fiber types or fiber counts
(:func:`route_table`).  A topology with cables cut reuses the routes of the whole one wherever
they avoid the cut cables.

The routes are those of Yen's algorithm as :func:`networkx.shortest_simple_paths` runs it
(J. Y. Yen, Management Science 17(11), 1971), including the order networkx gives to routes of
equal length.  A search of our own gives the same routes much faster: it runs the same Yen
iterations on plain lists, each spur search an A* guided by the exact distances to the target
(one reverse Dijkstra per target), and it notes every place where two paths come within a
rounding error of each other.  Where such a near-tie could change the answer (which path a
spur search returns, or which candidate comes out next), networkx's own spur search is replayed
step for step on the same lists (:meth:`_Network.bidirectional`), so ties keep networkx's order
and its float sums; networkx itself is not needed to find routes.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, field
from heapq import heapify, heappop, heappush
from itertools import combinations, count

from ..inputs.model import Topology

__all__ = ["Route", "k_shortest_routes", "datacenter_pairs", "route_table", "clear_route_cache"]

_INF = float("inf")
# Shapes kept per process (a plan's cut topologies each have their own); oldest dropped first.
_MAX_SHAPES = 64


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

    The routes and their order are those of :func:`networkx.shortest_simple_paths` (Yen's
    algorithm), ties in length included.  No route passes through a site with
    ``transit = false`` (such a site is only ever an end).  Computed once per topology shape
    and process (see :func:`route_table`).
    """
    net = _network(topology)
    if a not in net.index or b not in net.index or a == b:
        return []
    return list(net.routes(topology, net.index[a], net.index[b], k))


def route_table(
    topology: Topology, k: int, pairs: Iterable[tuple[str, str]] | None = None
) -> dict[tuple[str, str], tuple[Route, ...]]:
    """The ``k`` shortest routes of every pair (default: :func:`datacenter_pairs`), in pair order.

    Each pair's routes are :func:`k_shortest_routes`; the answer is kept per topology shape (site
    ids and transit flags, cable ends and lengths), so copies of a topology with other fiber
    types or fiber counts cost nothing more.
    """
    net = _network(topology)
    table = {}
    for a, b in datacenter_pairs(topology) if pairs is None else pairs:
        if a in net.index and b in net.index and a != b:
            table[(a, b)] = net.routes(topology, net.index[a], net.index[b], k)
        else:
            table[(a, b)] = ()
    return table


def clear_route_cache() -> None:
    """Forget every topology's routes (for benchmarks of a cold start)."""
    _NETWORKS.clear()


# --------------------------------------------------------------------------------------------
# The graph of one topology shape, in plain lists

_Shape = tuple[tuple[tuple[str, bool], ...], tuple[tuple[str, str, float], ...]]


def _shape(topology: Topology) -> _Shape:
    return (
        tuple((s.id, s.transit) for s in topology.sites),
        tuple((c.a, c.b, c.length_km) for c in topology.cables),
    )


@dataclass
class _Tree:
    """Shortest distances to one target from every site (over sites open to transit), with the
    next hop, and per site as bitmasks the sites and cables of its shortest path and whether
    that path is unique (no near-tie anywhere along it)."""

    dist: list[float]
    next_site: list[int]
    next_cable: list[int]
    unique: list[bool]
    sites_ahead: list[int]
    cables_ahead: list[int]


@dataclass
class _Found:
    """One pair's routes as site and cable indices; ``tie_free``: no other path comes within
    rounding of any of them, nor of the last (so they are the same in any graph with fewer
    cables that still holds them)."""

    paths: list[tuple[tuple[int, ...], tuple[int, ...]]]
    tie_free: bool
    routes: tuple[Route, ...] = ()


_Candidate = tuple[float, int, tuple[int, ...], tuple[int, ...]]


@dataclass
class _Network:
    shape: _Shape
    ids: list[str]
    index: dict[str, int]
    # adjacency[v]: (neighbour, length, cable index), in the order networkx holds neighbours
    # (the order cables are listed in)
    adjacency: list[list[tuple[int, float, int]]]
    open_to_transit: list[bool]
    lengths: list[float]
    cable_between: dict[tuple[int, int], int]
    eps: float
    trees: dict[int, _Tree] = field(default_factory=dict)
    found: dict[tuple[int, int, int], _Found] = field(default_factory=dict)
    parent: _Network | None = None
    # Cable index in ``parent`` of each cable here (for a topology with cables cut).
    parent_cable: list[int] = field(default_factory=list)

    @classmethod
    def build(cls, topology: Topology, shape: _Shape) -> _Network:
        ids = [s.id for s in topology.sites]
        index = {s: i for i, s in enumerate(ids)}
        adjacency: list[list[tuple[int, float, int]]] = [[] for _ in ids]
        lengths, between = [], {}
        for i, c in enumerate(topology.cables):
            u, v = index[c.a], index[c.b]
            adjacency[u].append((v, c.length_km, i))
            adjacency[v].append((u, c.length_km, i))
            lengths.append(c.length_km)
            between[u, v] = between[v, u] = i
        # Paths whose lengths differ by less than this may come out in either order through
        # rounding: they count as tied (far above float rounding, far below any real difference).
        eps = 1e-9 * max(1.0, sum(lengths))
        return cls(shape, ids, index, adjacency, [s.transit for s in topology.sites], lengths, between, eps)

    # ---- the answer for one pair ----

    def routes(self, topology: Topology, s: int, t: int, k: int) -> tuple[Route, ...]:
        found = self.found.get((s, t, k))
        if found is None:
            found = self._inherited(s, t, k) or _Search(self, s, t, k).run()
            # The lengths are the shape's own: every topology of this shape has these routes.
            cables = topology.cables
            found.routes = tuple(
                Route(tuple(self.ids[v] for v in nodes), hops, sum(cables[i].length_km for i in hops))
                for nodes, hops in found.paths
            )
            self.found[(s, t, k)] = found
        return found.routes

    def _inherited(self, s: int, t: int, k: int) -> _Found | None:
        """The pair's routes in the whole topology when this one has cables cut and none of
        those routes uses a cut cable: removing cables removes paths only, so the k shortest that
        remain are the same (when they were tie-free)."""
        parent = self.parent
        if parent is None:
            return None
        whole = parent.found.get((parent.index[self.ids[s]], parent.index[self.ids[t]], k))
        if whole is None or not whole.tie_free:
            return None
        here = {c: i for i, c in enumerate(self.parent_cable)}
        paths = []
        for nodes, hops in whole.paths:
            if any(h not in here for h in hops):
                return None
            paths.append((tuple(self.index[parent.ids[v]] for v in nodes), tuple(here[h] for h in hops)))
        return _Found(paths, True)

    def tree(self, t: int) -> _Tree:
        """Dijkstra from ``t`` over sites open to transit (closed sites are reached, not crossed)."""
        tree = self.trees.get(t)
        if tree is not None:
            return tree
        n, eps = len(self.ids), self.eps
        dist, nxt, via, tie = [_INF] * n, [-1] * n, [-1] * n, [False] * n
        unique, sites_ahead, cables_ahead = [False] * n, [0] * n, [0] * n
        done = [False] * n
        dist[t] = 0.0
        unique[t] = True
        heap = [(0.0, t)]
        adjacency, open_ = self.adjacency, self.open_to_transit
        while heap:
            d, v = heappop(heap)
            if done[v]:
                continue
            done[v] = True
            if v != t:
                # Settled in order of distance: what lies ahead of the next hop is final already.
                w = nxt[v]
                unique[v] = not tie[v] and unique[w]
                sites_ahead[v] = sites_ahead[w] | (1 << w)
                cables_ahead[v] = cables_ahead[w] | (1 << via[v])
                if not open_[v]:
                    continue
            for w, length, c in adjacency[v]:
                nd = d + length
                dw = dist[w]
                if nd < dw - eps:
                    dist[w], nxt[w], via[w], tie[w] = nd, v, c, False
                    heappush(heap, (nd, w))
                elif nd <= dw + eps:
                    tie[w] = True
        tree = _Tree(dist, nxt, via, unique, sites_ahead, cables_ahead)
        self.trees[t] = tree
        return tree

    def bidirectional(
        self, source: int, target: int, ignore_nodes: set[int], ignore_edges: set[int]
    ) -> tuple[float, list[int]] | None:
        """The spur search of networkx's Yen (its bidirectional Dijkstra), step for step: the
        same alternation, the same heap order (distance, then a shared counter), neighbours in
        the order the graph holds them, the same float sums; ``(length, sites)`` or None."""
        if source in ignore_nodes or target in ignore_nodes:
            return None
        adjacency = self.adjacency
        dists: tuple[dict[int, float], dict[int, float]] = ({}, {})
        seen: tuple[dict[int, float], dict[int, float]] = ({source: 0}, {target: 0})
        paths: tuple[dict[int, list[int]], dict[int, list[int]]] = ({source: [source]}, {target: [target]})
        c = count()
        fringe: tuple[list, list] = ([(0, next(c), source)], [(0, next(c), target)])
        finaldist: float = 0.0
        finalpath: list[int] = []
        direction = 1
        while fringe[0] and fringe[1]:
            direction = 1 - direction
            dist, _, v = heappop(fringe[direction])
            here = dists[direction]
            if v in here:
                continue
            here[v] = dist
            if v in dists[1 - direction]:
                return finaldist, finalpath
            seen_here, path_here = seen[direction], paths[direction]
            for w, length, cable in adjacency[v]:
                if w in ignore_nodes or cable in ignore_edges or w in here:
                    continue
                vw_length = dist + length
                if w not in seen_here or vw_length < seen_here[w]:
                    seen_here[w] = vw_length
                    heappush(fringe[direction], (vw_length, next(c), w))
                    path_here[w] = path_here[v] + [w]
                    if w in seen[0] and w in seen[1]:
                        total = seen[0][w] + seen[1][w]
                        if not finalpath or finaldist > total:
                            finaldist = total
                            back = paths[1][w][:]
                            back.reverse()
                            finalpath = paths[0][w] + back[1:]
        return None


class _Search:
    """Yen's algorithm for one pair, iteration for iteration as networkx runs it.

    The spur searches are A* searches guided by the exact distances to the target (a lower
    bound once sites and cables are ignored); where one finds a rival path within rounding, or
    where candidates come within rounding of each other at a pop, networkx's own spur search
    (:meth:`_Network.bidirectional`) is replayed to learn the path it returns and the float length
    it orders candidates by.  Candidates are ordered by (length, push count) as networkx orders
    them; our pushes are its pushes, so the counts agree.
    """

    def __init__(self, net: _Network, s: int, t: int, k: int) -> None:
        self.net, self.s, self.t, self.k = net, s, t, k
        self.tree = net.tree(t)
        self.closed = {v for v, ok in enumerate(net.open_to_transit) if not ok and v not in (s, t)}
        self.chosen: list[tuple[tuple[int, ...], tuple[int, ...]]] = []
        self.candidates: list[_Candidate] = []
        self.waiting: set[tuple[int, ...]] = set()
        self.order = count()
        # Per push count: how to replay its spur search (chosen paths then, spur index), and
        # the float length networkx gives it once known.
        self.recipe: dict[int, tuple[int, int]] = {}
        self.exact: dict[int, float] = {}
        self.tie_free = True

    def run(self) -> _Found:
        net, s, t, tree = self.net, self.s, self.t, self.tree
        if tree.dist[s] == _INF:
            return _Found([], True)
        if tree.unique[s]:
            nodes, hops = [s], []
            while nodes[-1] != t:
                hops.append(tree.next_cable[nodes[-1]])
                nodes.append(tree.next_site[nodes[-1]])
            self._push(tree.dist[s], tuple(nodes), tuple(hops), (0, 0), None)
        else:
            self.tie_free = False
            length, path = net.bidirectional(s, t, self.closed, set())  # type: ignore[misc]
            self._push(length, tuple(path), self._hops(path), (0, 0), length)
        eps = net.eps
        doubtful: list[float] = []
        while True:
            if self.chosen:
                self._spurs(doubtful)
            if not self.candidates:
                break
            cost, nodes, hops = self._pop()
            self.chosen.append((nodes, hops))
            if len(self.chosen) == self.k:
                if any(c <= cost + eps for c in doubtful):
                    self.tie_free = False
                break
        else:  # pragma: no cover
            pass
        if len(self.chosen) < self.k and doubtful:
            self.tie_free = False
        return _Found(list(self.chosen), self.tie_free)

    def _hops(self, path: list[int] | tuple[int, ...]) -> tuple[int, ...]:
        between = self.net.cable_between
        return tuple(between[u, v] for u, v in zip(path, path[1:]))

    def _push(
        self, cost: float, nodes: tuple[int, ...], hops: tuple[int, ...], recipe: tuple[int, int], exact: float | None
    ) -> None:
        if nodes in self.waiting:
            return
        n = next(self.order)
        heappush(self.candidates, (cost, n, nodes, hops))
        self.waiting.add(nodes)
        self.recipe[n] = recipe
        if exact is not None:
            self.exact[n] = exact

    def _pop(self) -> tuple[float, tuple[int, ...], tuple[int, ...]]:
        candidates, eps = self.candidates, self.net.eps
        best = candidates[0]
        if len(candidates) > 1 and min(candidates[1:3])[0] <= best[0] + eps:
            # Candidates within rounding of the best: order them by networkx's own floats.
            self.tie_free = False
            close = [c for c in candidates if c[0] <= best[0] + eps]
            best = min(close, key=lambda c: (self._exact_length(c[1]), c[1]))
            candidates.remove(best)
            heapify(candidates)
        else:
            heappop(candidates)
        self.waiting.discard(best[2])
        return best[0], best[2], best[3]

    def _ignored(self, chosen: int, i: int) -> tuple[set[int], set[int]]:
        """The sites and cables networkx's Yen ignores at spur index ``i`` of path ``chosen - 1``
        when ``chosen`` paths are chosen."""
        prev_nodes, _ = self.chosen[chosen - 1]
        ignore_nodes = set(self.closed) | set(prev_nodes[: i - 1])
        ignore_edges = set()
        for j in range(1, i + 1):
            for nodes, hops in self.chosen[:chosen]:
                if nodes[:j] == prev_nodes[:j]:
                    ignore_edges.add(hops[j - 1])
        return ignore_nodes, ignore_edges

    def _exact_length(self, n: int) -> float:
        """networkx's float length of candidate ``n``: its root's sum plus its spur's length."""
        exact = self.exact.get(n)
        if exact is None:
            chosen, i = self.recipe[n]
            if chosen == 0:
                found = self.net.bidirectional(self.s, self.t, self.closed, set())
            else:
                prev_nodes, prev_hops = self.chosen[chosen - 1]
                found = self.net.bidirectional(prev_nodes[i - 1], self.t, *self._ignored(chosen, i))
            assert found is not None
            root = self.chosen[chosen - 1][1][: i - 1] if chosen else ()
            lengths = self.net.lengths
            exact = sum(lengths[c] for c in root) + found[0]
            self.exact[n] = exact
        return exact

    def _spurs(self, doubtful: list[float]) -> None:
        """The spur searches of the last chosen path, pushing what they find."""
        net, t, lengths = self.net, self.t, self.net.lengths
        prev_nodes, prev_hops = self.chosen[-1]
        m = len(self.chosen)
        ignore_nodes: set[int] = set()
        ignore_cables: set[int] = set()
        node_mask = cable_mask = 0
        root_length = 0.0
        for i in range(1, len(prev_nodes)):
            root = prev_nodes[:i]
            for nodes, hops in self.chosen:
                if nodes[:i] == root:
                    c = hops[i - 1]
                    ignore_cables.add(c)
                    cable_mask |= 1 << c
            spur = self._spur(root[-1], ignore_nodes, ignore_cables, node_mask, cable_mask)
            if spur is not None:
                spur_nodes, spur_hops, spur_length, clear = spur
                if clear:
                    self._push(root_length + spur_length, root[:-1] + spur_nodes, prev_hops[: i - 1] + spur_hops,
                               (m, i), None)
                else:
                    # A rival within rounding: the path networkx's own search returns.
                    found = net.bidirectional(root[-1], t, ignore_nodes | self.closed, ignore_cables)
                    assert found is not None
                    exact = sum(lengths[c] for c in prev_hops[: i - 1]) + found[0]
                    nodes = root[:-1] + tuple(found[1])
                    self._push(exact, nodes, self._hops(nodes), (m, i), exact)
                    doubtful.append(exact)
            ignore_nodes.add(root[-1])
            node_mask |= 1 << root[-1]
            root_length += lengths[prev_hops[i - 1]]

    def _spur(
        self, u: int, ignore_nodes: set[int], ignore_cables: set[int], node_mask: int, cable_mask: int
    ) -> tuple[tuple[int, ...], tuple[int, ...], float, bool] | None:
        """Shortest path from ``u`` to the target avoiding the ignored sites and cables:
        ``(sites, cables, length, clear)``, or None without one; ``clear`` is False when another
        path comes within rounding of it (then which one networkx returns is not known here).

        A* with the exact distances to the target in the whole graph as its estimate (consistent,
        and a lower bound once things are ignored); it stops at the first settled site whose own
        shortest path in the whole graph is unique and avoids everything ignored, which is then
        the best continuation.
        """
        tree, t, eps = self.tree, self.t, self.net.eps
        h = tree.dist
        if h[u] == _INF:
            return None
        adjacency, open_ = self.net.adjacency, self.net.open_to_transit
        unique, sites_ahead, cables_ahead = tree.unique, tree.sites_ahead, tree.cables_ahead
        g = {u: 0.0}
        pred: dict[int, tuple[int, int]] = {}
        tie: set[int] = set()
        done: set[int] = set()
        heap = [(h[u], u)]
        while heap:
            f, v = heappop(heap)
            if v in done:
                continue
            done.add(v)
            if unique[v] and not (sites_ahead[v] & node_mask) and not (cables_ahead[v] & cable_mask):
                nodes, hops = [v], []
                x = v
                while x != u:
                    x, c = pred[x]
                    nodes.append(x)
                    hops.append(c)
                # A rival within rounding shows as a tie on the way here, or waits in the heap.
                clear = tie.isdisjoint(nodes) and not any(f2 <= f + eps and w not in done for f2, w in heap)
                nodes.reverse()
                hops.reverse()
                nxt, via = tree.next_site, tree.next_cable
                x = v
                while x != t:
                    hops.append(via[x])
                    x = nxt[x]
                    nodes.append(x)
                return tuple(nodes), tuple(hops), g[v] + h[v], clear
            gv = g[v]
            for w, length, c in adjacency[v]:
                if w in ignore_nodes or c in ignore_cables or (w != t and not open_[w]) or h[w] == _INF:
                    continue
                nd = gv + length
                gw = g.get(w, _INF)
                if nd < gw - eps:
                    if w in done:  # through rounding only: keep what was settled
                        tie.add(w)
                        continue
                    g[w] = nd
                    pred[w] = (v, c)
                    tie.discard(w)
                    heappush(heap, (nd + h[w], w))
                elif nd <= gw + eps and w != u:
                    tie.add(w)
        return None


_NETWORKS: dict[_Shape, _Network] = {}


def _network(topology: Topology) -> _Network:
    """The graph of ``topology``'s shape, built once per process (and linked to a cached
    topology it was cut from, whose routes it can reuse)."""
    shape = _shape(topology)
    net = _NETWORKS.get(shape)
    if net is None:
        net = _Network.build(topology, shape)
        _link_to_whole(net)
        if len(_NETWORKS) >= _MAX_SHAPES:
            del _NETWORKS[next(iter(_NETWORKS))]
        _NETWORKS[shape] = net
    return net


def _link_to_whole(net: _Network) -> None:
    """Find a cached shape with the same sites and every cable of ``net`` (and more)."""
    sites, cables = net.shape
    for other in _NETWORKS.values():
        if other.parent is not None or other.shape[0] != sites or len(other.shape[1]) <= len(cables):
            continue
        where = {c: i for i, c in enumerate(other.shape[1])}
        if all(c in where for c in cables):
            net.parent = other
            net.parent_cable = [where[c] for c in cables]
            # Kept longest: every cut of a plan comes back to it.
            _NETWORKS[other.shape] = _NETWORKS.pop(other.shape)
            return
