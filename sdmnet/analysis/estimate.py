"""Analytic blocking estimate of a scenario, without simulation.

For each architecture the network becomes a loss network of *units* (docs/model.md, section 2):

* a cable holds ``fiber_pairs x groups_per_fiber x channels`` units (``fiber`` switching: one
  unit per fiber pair);
* each datacenter pair and demand size is a Poisson stream of ``units_needed(size)`` units per
  hop that tries the pair's feasible routes in order, as the simulator does;
* a route of several hops needs common channel slots (continuity), with or without lane change;
* per-link blocking by Kaufman-Roberts, coupled across links by the routed reduced-load fixed
  point (:func:`sdmnet.analysis.reduced_load.routed_fixed_point`); under grooming (``share``,
  unit switching) each pair's lit units by :func:`sdmnet.analysis.grooming.groomed_fixed_point`.

Two methods (:data:`METHODS`): ``"routed"`` (the above, the default) and ``"fixed-point"``, the
plain Erlang fixed point: each stream on its first route only, no continuity rule.  The routed
method's work grows with the hops of every candidate route (under grooming with the lane states
of every route's hops, :func:`groomed_work`); ``"auto"`` takes it while that work times the load
points stays within :data:`ROUTED_WORK_LIMIT`, the fixed point above.

What each approximation assumes and where it fails: ``docs/estimate.md``.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field
from functools import cached_property

import numpy as np
import pandas as pd

from ..inputs.model import Architecture, Scenario
from ..network.architectures import UnitGeometry, cable_geometries, units_needed
from ..network.routing import Route, datacenter_pairs
from ..network.traffic import pair_weights, size_classes
from ..optics.pathtable import feasible_routes
from ..optics.physics import mimo_group
from ..sim.engine import modules_per_end
from ..sim.provisioning import provision_fiber_paths
from .grooming import GroomedGroup, groomed_fixed_point
from .reduced_load import RoutedStream, RouteOption, routed_fixed_point

__all__ = [
    "METHODS",
    "NETWORK_COLUMNS",
    "PAIR_COLUMNS",
    "ROUTED_WORK_LIMIT",
    "RouteFinder",
    "estimate",
    "estimate_architecture",
    "groomed_work",
    "routed_work",
]

NETWORK_COLUMNS = (
    "architecture",
    "switching",
    "load_erlang",
    "blocking",
    "bandwidth_blocking",
    "iterations",
    "converged",
    "method",
)
PAIR_COLUMNS = ("architecture", "load_erlang", "a", "b", "blocking", "bandwidth_blocking")

RouteFinder = Callable[[Scenario, Architecture], dict[tuple[str, str], list[Route]]]

#: What the estimate can run: the routed reduced-load fixed point (alternate routes in order,
#: channel continuity) or the plain Erlang fixed point (first route only, no continuity).
METHODS = ("routed", "fixed-point")

#: ``method="auto"`` runs the routed estimate up to this many route hops (summed over every
#: stream and every route it tries) times load points, and the Erlang fixed point above.  The
#: routed estimate took 20 s of CPU at 398,000 (the 100-site region of bench/bench_scale.py),
#: 4.6 s at 113,000 (60 sites) and 0.3 s at 19,000 (30 sites), one load point each; the bundled
#: scenarios stay under 12,000 (docs/estimate.md, "What it costs on large networks").
ROUTED_WORK_LIMIT = 100_000

#: The grooming estimate (:func:`groomed_work`) counts, per hop of every route of every pair and
#: per load point, ``C g + C^2 / GROOMED_UNITS_PER_LANE`` states (C units of g lanes on the hop's
#: cable: the lane law of the hop, and the convolutions of the cable's unit laws), and
#: ``GROOMED_STATES_PER_HOP`` of them cost about what one route hop of the routed estimate does:
#: measured about 50 us of CPU per route hop equivalent (32-52 us) on generated regions of 6 to
#: 20 sites with 64 to 256 units of 7 lanes per cable, 31 to 66 iterations (docs/estimate.md).
GROOMED_STATES_PER_HOP = 12
GROOMED_UNITS_PER_LANE = 14

# Settings of the fixed point used for every estimate.
_DAMPING = 0.5
_TOL = 1e-9
_MAX_ITER = 2_000


@dataclass(frozen=True)
class _Model:
    """One architecture's loss network: link capacities and the streams over them."""

    capacities: np.ndarray  # (L,) units per cable
    pairs: list[tuple[str, str]]  # pairs with traffic, in datacenter order
    pair_share: np.ndarray  # (N,) share of the total load per pair
    routed: np.ndarray  # (N,) bool: pair has a route
    stream_pair: np.ndarray  # (S,) pair index of each stream
    stream_rate: np.ndarray  # (S,) offered load per Erlang of total load
    stream_gbps: np.ndarray  # (S,) demand size of each stream
    stream_size: np.ndarray  # (S,) size class of each stream
    # Per pair and route: units a demand of each size class holds per hop, continuity slots, and
    # quanta of one unit (the routes' RouteOptions are made from these only when a method reads
    # them: the plain fixed point needs first routes only; see `streams` and `groups`).
    pair_units: list[tuple[tuple[int, ...], ...]]
    pair_slots: list[tuple[tuple[int, tuple[int, ...]], ...]]
    pair_quanta: list[tuple[int, ...]]
    # Fiber switching with grooming: fiber paths provisioned per pair (docs/model.md, section 3).
    provisioned: bool
    fiber_pairs: list[int]  # per cable
    pair_routes: list[tuple[tuple[int, ...], ...]]  # per pair, its routes as cable indices
    pair_route_lanes: list[tuple[int, ...]]  # per pair and route, lanes of one fiber
    size_probs: list[float]  # per size class
    size_lanes: list[list[list[int]]]  # per pair, route and size class: lanes one demand fills
    # Unit switching with grooming: each pair's routes as groups of lit units, and the quanta
    # (lanes, or fractions of a lane) of a demand of each size class (docs/estimate.md, grooming).
    groomed: bool = False
    # The plain fixed point keeps the old grooming heuristic (cheap on large networks): per
    # stream, the share of demands that light new units and the load scale of those.
    first_route_new: np.ndarray = field(default_factory=lambda: np.ones(0))
    first_route_scale: tuple[float, ...] = ()
    size_lane_counts: tuple[int, ...] = ()

    @cached_property
    def streams(self) -> list[RoutedStream]:
        """The routes each stream tries, in order, with the units of its size."""
        return [
            RoutedStream(tuple(_option(cables, units[k], slot) for cables, units, slot
                               in zip(self.pair_routes[n], self.pair_units[n], self.pair_slots[n])))
            for n, k in zip(self.stream_pair.tolist(), self.stream_size.tolist())
        ]  # fmt: skip

    def first_routes(self) -> list[RoutedStream]:
        """Each stream on its first route only, without continuity slots, its load scaled by the
        grooming heuristic (the plain fixed point)."""
        out = []
        for n, k, scale in zip(self.stream_pair.tolist(), self.stream_size.tolist(), self.first_route_scale):
            cables = self.pair_routes[n][0]
            out.append(RoutedStream((RouteOption(cables, (self.pair_units[n][0][k],) * len(cables)),), scale))
        return out

    @cached_property
    def groups(self) -> tuple[GroomedGroup, ...]:
        """Each pair's routes as groups of lit units (unit switching with grooming)."""
        return tuple(GroomedGroup(n, _option(cables, 1, slot), per_unit)
                     for n, routes in enumerate(self.pair_routes)
                     for cables, slot, per_unit in zip(routes, self.pair_slots[n], self.pair_quanta[n]))  # fmt: skip


def _pair_routes(found: dict[tuple[str, str], list[Route]], a: str, b: str) -> list[Route]:
    routes = found.get((a, b))
    return routes if routes is not None else found.get((b, a), [])


def _route_slots(
    route: Route, geos: list[UnitGeometry], fibers: list[int], lane_change: bool
) -> tuple[int, tuple[int, ...]]:
    """The route's continuity slots and unit positions per slot on each hop (docs/estimate.md);
    ``(0, ())`` under fiber switching, which takes any free fiber on each hop (no continuity)."""
    geo = geos[route.cables[0]]
    if geo.whole_fiber:
        return 0, ()
    if lane_change:
        return min(geos[c].channels for c in route.cables), tuple(fibers[c] * geos[c].groups_per_fiber
                                                                   for c in route.cables)  # fmt: skip
    return min(geos[c].channels for c in route.cables) * geo.groups_per_fiber, tuple(fibers[c] for c in route.cables)


def _option(cables: tuple[int, ...], units: int, slots: tuple[int, tuple[int, ...]]) -> RouteOption:
    """The route over ``cables`` with ``units`` per hop and its continuity ``slots``
    (:func:`_route_slots`, worked out once per route for all its sizes)."""
    return RouteOption(cables, (units,) * len(cables), *slots)


def _heuristic_grooming(size: float, unit_gbps: float, pair_load: float) -> tuple[float, float]:
    """For the plain fixed point only: share of a size's demands that need new units, and the
    unit load per such demand relative to ``units_needed`` (docs/estimate.md, grooming).

    A demand rides spare capacity when the pair has a lit unit with at least ``size`` spare:
    the spare of the pair's last unit is taken as uniform over the unit, and the pair has no lit
    unit with the probability that none of its demands is in progress (Poisson, exp(-load)).
    """
    n = max(1, math.ceil(size / unit_gbps - 1e-9))
    idle = math.exp(-pair_load)
    new = idle + (1.0 - idle) * min(1.0, size / unit_gbps)
    return new, min(1.0, size / unit_gbps / (new * n))


def _grooming_quantum(sizes: np.ndarray, lane_gbps: float) -> float:
    """Gb/s step in which grooming counts capacity: the lane, or the largest fraction
    lane / m (m <= 8) of which every size is a whole multiple (spare is then counted exactly)."""
    for m in range(1, 9):
        step = lane_gbps / m
        if all(abs(s / step - round(s / step)) < 1e-9 for s in sizes):
            return step
    return lane_gbps


def _build(scenario: Scenario, arch: Architecture, route_finder: RouteFinder) -> _Model:
    topo = scenario.topology_for(arch)
    geos = cable_geometries(scenario, arch)
    fibers = [c.fiber_pairs for c in topo.cables]
    capacities = np.array([f * g.units_per_fiber for f, g in zip(fibers, geos)], dtype=np.int64)
    weights = pair_weights(topo, scenario.traffic)
    pairs = [p for p in datacenter_pairs(topo) if weights.get(p, 0.0) > 0]
    sizes, probs = size_classes(scenario.traffic)
    found = route_finder(scenario, arch)
    provisioned = bool(geos) and geos[0].whole_fiber and arch.share
    routed, stream_pair, stream_rate, stream_gbps, stream_size = [], [], [], [], []
    pair_routes, pair_route_lanes, size_lanes, pair_units, pair_slots, pair_quanta = [], [], [], [], [], []
    first_route_new: list[float] = []
    first_route_scale: list[float] = []
    mean_load = float(np.mean(scenario.traffic.loads_erlang))
    lane = scenario.transceiver.lane_gbps
    quantum = _grooming_quantum(np.asarray(sizes, dtype=float), lane)
    for n, (a, b) in enumerate(pairs):
        routes = _pair_routes(found, a, b)
        routed.append(bool(routes))
        pair_routes.append(tuple(tuple(r.cables) for r in routes))
        pair_route_lanes.append(tuple(geos[r.cables[0]].lanes_per_unit for r in routes))
        # A demand fills whole transceiver modules: MIMO groups on randomly coupled fiber.
        groups = [mimo_group([topo.fiber_types[topo.cables[h].fiber_type] for h in r.cables]) for r in routes]
        size_lanes.append([[modules_per_end(float(s), lane, c) * c for s in sizes] for c in groups])
        pair_units.append(tuple(tuple(units_needed(float(size), geos[r.cables[0]]) for size in sizes)
                                for r in routes))  # fmt: skip
        pair_slots.append(tuple(_route_slots(r, geos, fibers, arch.lane_change) for r in routes))
        pair_quanta.append(tuple(max(1, round(geos[r.cables[0]].unit_gbps / quantum)) for r in routes))
        if not routes:
            continue
        first = geos[routes[0].cables[0]]
        for k, (size, prob) in enumerate(zip(sizes, probs)):
            if prob <= 0:
                continue
            new, scale = (1.0, 1.0)
            if arch.share and not provisioned:
                new, scale = _heuristic_grooming(float(size), first.unit_gbps, mean_load * weights[(a, b)])
            first_route_new.append(new)
            first_route_scale.append(scale)
            stream_pair.append(n)
            stream_rate.append(weights[(a, b)] * prob)
            stream_gbps.append(float(size))
            stream_size.append(k)
    return _Model(
        capacities=capacities,
        pairs=pairs,
        pair_share=np.array([weights[p] for p in pairs], dtype=float),
        routed=np.array(routed, dtype=bool),
        stream_pair=np.array(stream_pair, dtype=np.int64),
        stream_rate=np.array(stream_rate, dtype=float),
        stream_gbps=np.array(stream_gbps, dtype=float),
        stream_size=np.array(stream_size, dtype=np.int64),
        pair_units=pair_units,
        pair_slots=pair_slots,
        pair_quanta=pair_quanta,
        provisioned=provisioned,
        fiber_pairs=fibers,
        pair_routes=pair_routes,
        pair_route_lanes=pair_route_lanes,
        size_probs=[float(x) for x in probs],
        size_lanes=size_lanes,
        # Grooming changes nothing when every demand fills whole units (units of one quantum):
        # the routed estimate then holds as it is.
        groomed=bool(arch.share and not provisioned and any(q > 1 for per_route in pair_quanta for q in per_route)),
        first_route_new=np.array(first_route_new, dtype=float),
        first_route_scale=tuple(first_route_scale),
        size_lane_counts=tuple(max(1, math.ceil(float(s) / quantum - 1e-9)) for s in sizes),
    )


def _solve_routed(model: _Model, stream_loads: np.ndarray) -> tuple[np.ndarray, int, bool]:
    """Stream blocking (P, S) on the cables, with the fixed point's iterations and convergence."""
    solved = routed_fixed_point(model.capacities, model.streams, stream_loads, damping=_DAMPING, tol=_TOL,
                                max_iter=_MAX_ITER)  # fmt: skip
    return solved.stream_blocking, solved.iterations, solved.converged


def _solve_first_route(model: _Model, stream_loads: np.ndarray) -> tuple[np.ndarray, int, bool]:
    """Stream blocking (P, S) by the plain Erlang fixed point: each stream on its first route, no
    continuity rule (the routed fixed point with one option and no slots is exactly that).  Under
    grooming only the demands that light new units are offered, by the uniform-spare heuristic
    (docs/estimate.md)."""
    first = model.first_routes()
    new = model.first_route_new[None, :]
    # Without alternate routes there is no overflow and no shared-call correction: both switched
    # off, the same numbers without building what they would need (pairs of links over every route).
    solved = routed_fixed_point(model.capacities, first, stream_loads * new, damping=_DAMPING, tol=_TOL,
                                max_iter=_MAX_ITER, peakedness=False, shared_calls=False)  # fmt: skip
    return solved.stream_blocking * new, solved.iterations, solved.converged


def routed_work(model: _Model, points: int) -> int:
    """Route hops over every stream and every route it tries, times ``points``: what the routed
    estimate's cost grows with (compared with :data:`ROUTED_WORK_LIMIT`)."""
    return points * sum(len(cables) for n in model.stream_pair.tolist() for cables in model.pair_routes[n])


def groomed_work(model: _Model, points: int) -> int:
    """What the grooming estimate costs, in route hops of the routed estimate times ``points``
    (:data:`GROOMED_STATES_PER_HOP`): each hop of each pair's route holds a lane law of ``C g``
    states and takes part in convolutions of ``C`` units."""
    states = 0.0
    for grp in model.groups:
        for link in grp.option.links:
            units = int(model.capacities[link])
            states += units * (grp.lanes_per_unit + units / GROOMED_UNITS_PER_LANE)
    return math.ceil(points * states / GROOMED_STATES_PER_HOP)


def _method_for(model: _Model, points: int, method: str) -> str:
    """The method that runs: ``method``, or for ``"auto"`` the routed one while it is cheap.
    Fiber paths provisioned per pair are always solved over their pools (no continuity, cheap)."""
    if method not in (*METHODS, "auto"):
        raise ValueError(f"method must be one of {', '.join((*METHODS, 'auto'))}, got {method!r}")
    if model.provisioned:
        return "routed"
    if method == "auto":
        # Under grooming the routed method runs the grooming estimate, not the routed fixed point.
        work = groomed_work(model, points) if model.groomed else routed_work(model, points)
        return "routed" if work <= ROUTED_WORK_LIMIT else "fixed-point"
    return method


def _solve_provisioned(model: _Model, loads: np.ndarray, stream_loads: np.ndarray) -> tuple[np.ndarray, int, bool]:
    """Stream blocking (P, S) in fiber paths provisioned at each load point.

    Each pair's fiber paths on one route form a pool of lanes that only its demands use; a
    demand tries the pools of its routes in order.  One pool per pair: Kaufman-Roberts over
    lanes, exactly what the engine simulates; several: the routed fixed point over the pools.
    """
    blocking = np.ones_like(stream_loads)
    iterations, converged = 0, True
    for p, load in enumerate(loads):
        plan = provision_fiber_paths(model.fiber_pairs, model.pair_routes, list(load * model.pair_share),
                                     model.size_probs, model.size_lanes, model.pair_route_lanes)  # fmt: skip
        pool_of, capacities = {}, []
        for n, per_route in enumerate(plan):
            for r, count in enumerate(per_route):
                if count:
                    pool_of[(n, r)] = len(capacities)
                    capacities.append(count * model.pair_route_lanes[n][r])
        streams, members = [], []
        for s, (n, k) in enumerate(zip(model.stream_pair, model.stream_size)):
            options = tuple(RouteOption((pool_of[(n, r)],), (model.size_lanes[n][r][k],))
                            for r in range(len(plan[n])) if (n, r) in pool_of)  # fmt: skip
            if options:
                streams.append(RoutedStream(options))
                members.append(s)
        if streams:
            solved = routed_fixed_point(capacities, streams, stream_loads[p : p + 1, members], damping=_DAMPING,
                                        tol=_TOL, max_iter=_MAX_ITER)  # fmt: skip
            blocking[p, members] = solved.stream_blocking[0]
            iterations = max(iterations, solved.iterations)
            converged = converged and solved.converged
    return blocking, iterations, converged


def _solve_groomed(model: _Model, loads: np.ndarray) -> tuple[np.ndarray, int, bool]:
    """Stream blocking (P, S) of unit switching with grooming: the pairs' lit units
    (:func:`~sdmnet.analysis.grooming.groomed_fixed_point`)."""
    probs = np.array(model.size_probs)
    offered = loads[:, None, None] * model.pair_share[None, :, None] * probs[None, None, :]
    solved = groomed_fixed_point(model.capacities, model.groups, model.size_lane_counts, offered,
                                 damping=_DAMPING)  # fmt: skip
    return solved.pair_blocking[:, model.stream_pair, model.stream_size], solved.iterations, solved.converged


def _ratio(num: np.ndarray, den: np.ndarray) -> np.ndarray:
    """num / den, 0 where nothing was offered."""
    return np.divide(num, den, out=np.zeros_like(num, dtype=float), where=den > 0)


def estimate_architecture(
    scenario: Scenario, arch: Architecture, route_finder: RouteFinder | None = None, *, method: str = "routed"
) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Estimate of one architecture at every load point of the scenario.

    Parameters
    ----------
    scenario : Scenario
        The scenario (its load points, sizes, pattern and transceiver lane rate are used).
    arch : Architecture
        The architecture to estimate.
    route_finder : callable, optional
        ``(scenario, arch) -> {pair: [Route, ...]}``; each pair tries its routes in order.
        Default: :func:`sdmnet.optics.pathtable.feasible_routes` (physically feasible routes).
    method : {"routed", "fixed-point", "auto"}
        See :data:`METHODS`; ``"auto"``: routed up to :data:`ROUTED_WORK_LIMIT`.

    Returns
    -------
    network, pairs : pandas.DataFrame
        Columns :data:`NETWORK_COLUMNS` (one row per load point; ``method`` the one that ran) and
        :data:`PAIR_COLUMNS` (one row per load point and datacenter pair with traffic).

    Raises
    ------
    ConfigurationError
        If the architecture cannot run on a cable's fiber type.
    """
    model = _build(scenario, arch, route_finder or feasible_routes)
    loads = np.array(scenario.traffic.loads_erlang, dtype=float)
    ran = _method_for(model, loads.size, method)
    n_points, n_pairs = loads.size, len(model.pairs)
    # Offered load and blocked load per pair, in requests and in Gb/s, for every load point.
    offered = loads[:, None] * model.pair_share[None, :]
    mean_gbps = float(np.dot(*size_classes(scenario.traffic)))
    offered_gbps = offered * mean_gbps
    # Pairs without a route lose everything they are offered.
    blocked = np.where(model.routed[None, :], 0.0, offered)
    blocked_gbps = np.where(model.routed[None, :], 0.0, offered_gbps)
    iterations, converged = 0, True
    if model.stream_pair.size:
        stream_loads = loads[:, None] * model.stream_rate[None, :]
        if model.provisioned:
            stream_b, iterations, converged = _solve_provisioned(model, loads, stream_loads)
        elif ran == "fixed-point":
            stream_b, iterations, converged = _solve_first_route(model, stream_loads)
        elif model.groomed:
            stream_b, iterations, converged = _solve_groomed(model, loads)
        else:
            stream_b, iterations, converged = _solve_routed(model, stream_loads)
        lost = stream_loads * stream_b
        for p in range(n_points):
            blocked[p] += np.bincount(model.stream_pair, weights=lost[p], minlength=n_pairs)
            blocked_gbps[p] += np.bincount(
                model.stream_pair, weights=lost[p] * model.stream_gbps, minlength=n_pairs
            )
    network = pd.DataFrame(
        {
            "architecture": arch.name,
            "switching": arch.switching,
            "load_erlang": loads,
            "blocking": _ratio(blocked.sum(axis=1), offered.sum(axis=1)),
            "bandwidth_blocking": _ratio(blocked_gbps.sum(axis=1), offered_gbps.sum(axis=1)),
            "iterations": iterations,
            "converged": converged,
            "method": ran,
        },
        columns=list(NETWORK_COLUMNS),
    )
    pairs = pd.DataFrame(
        {
            "architecture": arch.name,
            "load_erlang": np.repeat(loads, n_pairs),
            "a": [a for _ in range(n_points) for a, _b in model.pairs],
            "b": [b for _ in range(n_points) for _a, b in model.pairs],
            "blocking": _ratio(blocked, offered).ravel(),
            "bandwidth_blocking": _ratio(blocked_gbps, offered_gbps).ravel(),
        },
        columns=list(PAIR_COLUMNS),
    )
    return network, pairs


def estimate(
    scenario: Scenario, *, route_finder: RouteFinder | None = None, method: str = "routed"
) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Analytic estimate of every architecture of ``scenario`` at every load point.

    Parameters
    ----------
    scenario : Scenario
        The scenario.
    route_finder : callable, optional
        See :func:`estimate_architecture`.
    method : {"routed", "fixed-point", "auto"}
        See :func:`estimate_architecture` (chosen per architecture with ``"auto"``).

    Returns
    -------
    network : pandas.DataFrame
        Columns ``architecture, switching, load_erlang, blocking, bandwidth_blocking`` (the keys
        of the simulator's summary.csv) plus ``iterations`` and ``converged`` of the fixed point
        (the load points of one architecture are solved together and share these two) and the
        ``method`` that ran; one row per architecture and load point.
    pairs : pandas.DataFrame
        Columns ``architecture, load_erlang, a, b, blocking, bandwidth_blocking``; one row per
        architecture, load point and datacenter pair with traffic.
    """
    nets, pairs = [], []
    for arch in scenario.architectures:
        net, pair = estimate_architecture(scenario, arch, route_finder, method=method)
        nets.append(net)
        pairs.append(pair)
    if not nets:
        return pd.DataFrame(columns=list(NETWORK_COLUMNS)), pd.DataFrame(columns=list(PAIR_COLUMNS))
    return pd.concat(nets, ignore_index=True), pd.concat(pairs, ignore_index=True)
