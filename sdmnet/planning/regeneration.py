"""Pairs beyond reach: routes through regenerators, and the regenerator lanes they need.

A pair for which no transceiver class closes any of its k shortest routes (the physical layer
already prefers a longer-reach class where one closes the whole path) is served through
regenerators: each of its k shortest routes is cut into the fewest segments that each close
with some class, by greedy farthest reach from the start of each segment (along a fixed route
this gives the fewest regeneration points, since a sub-path of a closing segment closes too).
The segment ends inside the route are where back-to-back transceivers receive the signal and
send it again; each segment keeps its own channel continuity in the engine
(:attr:`sdmnet.sim.engine.EngineSetup.route_segments`).  Every segment must carry the lane rate
of the route's first segment, so that a demand fills the same lanes all along.

Regenerator lanes installed per site: the engine does not tally regeneration sites, so they are
read from the simulation's carried load of the regenerated pairs: a Poisson number of demands
in progress through the site, at the ``[transceiver] overflow`` quantile, times the lanes of a
mean demand (docs/planning.md).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from scipy import special

from ..inputs.model import Architecture, Scenario, Topology
from ..network.routing import Route, k_shortest_routes
from ..network.traffic import pair_loads, size_classes
from ..optics.classes import scenario_classes
from ..optics.pathtable import ClassedRoute, evaluate_route, feasible_routes
from ..sim.engine import EngineSetup
from ..sim.stats import PointSummary

__all__ = ["RegeneratedRoute", "segment_route", "routes_with_regeneration", "regenerated_pairs", "regenerator_lanes"]


@dataclass(frozen=True)
class RegeneratedRoute(ClassedRoute):
    """A route served through regenerators.

    Attributes
    ----------
    segments : tuple of tuple of int
        Cable indices of each segment, in order (they add up to ``cables``).
    regenerators : tuple of str
        Sites where the signal is regenerated (the inner segment ends).
    """

    segments: tuple[tuple[int, ...], ...] = ()
    regenerators: tuple[str, ...] = ()


def _sub_route(route: Route, start: int, stop: int, lengths: list[float]) -> Route:
    return Route(route.sites[start : stop + 1], route.cables[start:stop], sum(lengths[start:stop]))


def segment_route(scenario: Scenario, arch: Architecture, route: Route) -> RegeneratedRoute | None:
    """``route`` cut into the fewest segments that each close, or None if some hop alone does not."""
    topo = scenario.topology_for(arch)
    classes = scenario_classes(scenario)
    lengths = [topo.cables[c].length_km for c in route.cables]
    hops = len(route.cables)
    segments, regenerators, lane, first_class = [], [], None, ""
    start = 0
    while start < hops:
        best = None
        for stop in range(start + 1, hops + 1):
            phys = evaluate_route(topo, _sub_route(route, start, stop, lengths), arch, scenario.transceiver,
                                  scenario.line, classes)  # fmt: skip
            if not phys.feasible or (lane is not None and phys.lane_gbps != lane):
                break
            best = (stop, phys)
        if best is None:
            return None
        stop, phys = best
        if lane is None:
            lane, first_class = phys.lane_gbps, phys.transceiver_class or ""
        segments.append(tuple(route.cables[start:stop]))
        if stop < hops:
            regenerators.append(route.sites[stop])
        start = stop
    return RegeneratedRoute(route.sites, route.cables, route.length_km, first_class, float(lane or 0.0),
                            tuple(segments), tuple(regenerators))  # fmt: skip


def routes_with_regeneration(scenario: Scenario, arch: Architecture) -> dict[tuple[str, str], list[Route]]:
    """The feasible transparent routes of every pair; for a pair with none, its k shortest routes
    that close through regenerators (in order of length).  A route finder for
    :func:`sdmnet.sim.engine.prepare`."""
    found = feasible_routes(scenario, arch)
    topo = scenario.topology_for(arch)
    for pair, routes in found.items():
        if routes:
            continue
        candidates = k_shortest_routes(topo, pair[0], pair[1], scenario.run.k_paths)
        found[pair] = [r for r in (segment_route(scenario, arch, c) for c in candidates) if r is not None]
    return found


def regenerated_pairs(setup: EngineSetup, topology: Topology) -> dict[int, tuple[str, ...]]:
    """Pair index -> regeneration sites of its first regenerated route (pairs that need any)."""
    out: dict[int, tuple[str, ...]] = {}
    for p, per_route in enumerate(setup.route_segments):
        for segments in per_route:
            if len(segments) > 1:
                out[p] = _inner_sites(topology, setup.pairs[p][0], segments)
                break
    return out


def _inner_sites(topology: Topology, start: str, segments: tuple[tuple[int, ...], ...]) -> tuple[str, ...]:
    """Sites between consecutive segments, walking the cables from ``start``."""
    here, sites = start, []
    for segment in segments[:-1]:
        for c in segment:
            cable = topology.cables[c]
            here = cable.b if here == cable.a else cable.a
        sites.append(here)
    return tuple(sites)


def regenerator_lanes(
    scenario: Scenario, setup: EngineSetup, point: PointSummary, load_erlang: float
) -> dict[str, int]:
    """Regenerator lanes to install per site (``regenerator_lane`` items: back-to-back lane pairs).

    For each regeneration site: the carried Erlang of the regenerated pairs through it (offered
    load x (1 - simulated pair blocking)), read as a Poisson number of demands in progress; the
    count at the ``[transceiver] overflow`` quantile, times the mean lanes per demand (lanes at
    the route's lane rate), rounded up.  Carried demand is taken to use the pair's first
    regenerated route.
    """
    topology = scenario.topology_for(setup.architecture)
    pairs = regenerated_pairs(setup, topology)
    if not pairs:
        return {}
    loads = pair_loads(topology, scenario.traffic, load_erlang)
    sizes, probs = size_classes(scenario.traffic)
    carried: dict[str, float] = {}
    lanes_per: dict[str, float] = {}
    for p, sites in pairs.items():
        lane = setup.route_lane_gbps[p][0] if setup.route_lane_gbps else setup.lane_gbps
        mean_lanes = float(sum(prob * max(1, math.ceil(s / lane - 1e-9)) for s, prob in zip(sizes, probs)))
        iv = point.pair_blocking[p]
        load = loads.get(setup.pairs[p], 0.0) * (1.0 - (iv.mean if not math.isnan(iv.mean) else 0.0))
        for site in sites:
            carried[site] = carried.get(site, 0.0) + load
            lanes_per[site] = lanes_per.get(site, 0.0) + load * mean_lanes
    overflow = scenario.transceiver.overflow
    out = {}
    for site, erlang in carried.items():
        demands = _poisson_quantile(erlang, overflow)
        out[site] = math.ceil(demands * lanes_per[site] / erlang - 1e-9) if erlang > 0 else 0
    return out


def _poisson_quantile(mean: float, overflow: float) -> int:
    """Smallest n with P(N > n) <= overflow for N ~ Poisson(mean)."""
    if mean <= 0:
        return 0
    n = max(0, int(mean))
    while special.pdtrc(n, mean) > overflow:  # pdtrc(n, m) = P(N > n)
        n += 1
    while n > 0 and special.pdtrc(n - 1, mean) <= overflow:
        n -= 1
    return n
