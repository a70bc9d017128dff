"""The discrete-event engine: one replication of one architecture at one load.

Flow: :func:`prepare` turns a scenario and an architecture into an :class:`EngineSetup`
(routes, unit geometry, traffic tables: plain picklable data); :func:`simulate_replication`
runs a SimPy environment over it and returns a :class:`ReplicationRecord` (counts and
time averages only, so memory does not grow with the number of requests).

Events are objects: an arrival is a SimPy timeout whose callback books the demand and schedules
the next arrival; a departure is a timeout whose value is the booking and whose callback
releases it.  No process per request.

Random numbers come from four independent streams per replication (interarrival times, pair,
size, holding time), spawned from ``SeedSequence(scenario.seed, spawn_key=(replication,))``.
The streams do not depend on the architecture, so every architecture sees the very same
demands (common random numbers), and a task's result does not depend on which process or
machine runs it.
"""

from __future__ import annotations

import math
import time
from collections.abc import Callable
from dataclasses import asdict, dataclass, field
from operator import add

import numpy as np
import simpy

from .allocation import FiberState, Grant, UnitState
from .architectures import cable_geometries, units_needed
from .model import Architecture, Scenario
from .routing import Route, datacenter_pairs
from .traffic import pair_weights, size_classes

__all__ = ["EngineSetup", "ReplicationRecord", "prepare", "simulate_replication", "replication_seed"]

_BATCH = 4096


@dataclass(frozen=True)
class EngineSetup:
    """Everything a replication needs, resolved from a scenario and one architecture.

    Attributes
    ----------
    architecture : Architecture
        The architecture simulated.
    sites : tuple of str
        Site ids, indexing per-site figures.
    cables : tuple of str
        Cable keys (``a-b``), indexing per-cable figures.
    fiber_pairs, groups_per_fiber, channels : tuple of int
        Per cable: fiber pairs, unit positions across one fiber's cores, channels per core.
    pairs : tuple of (str, str)
        Datacenter pairs that offer traffic.
    pair_sites : tuple of (int, int)
        Site indices of each pair's ends.
    pair_cumulative : tuple of float
        Cumulative traffic share of the pairs (for inverse-CDF sampling).
    routes : tuple of tuple of tuple of int
        Per pair, the feasible routes in order, each as its cable indices.
    route_units : tuple of tuple of tuple of int
        Per pair and route, units needed by each size class.
    route_unit_gbps, route_lanes_per_unit : tuple of tuple
        Per pair and route: capacity and lanes of one unit (the unit is uniform along a route).
    sizes_gbps : tuple of float
        Size classes, ascending.
    size_cumulative : tuple of float
        Cumulative size probabilities.
    whole_fiber : bool
        Fiber switching (units are fibers; modules are counted per demand).
    lane_gbps : float
        Lane rate (fiber switching: modules per demand = ceil(size / lane)).
    mean_holding : float
        Mean holding time.
    """

    architecture: Architecture
    sites: tuple[str, ...]
    cables: tuple[str, ...]
    fiber_pairs: tuple[int, ...]
    groups_per_fiber: tuple[int, ...]
    channels: tuple[int, ...]
    pairs: tuple[tuple[str, str], ...]
    pair_sites: tuple[tuple[int, int], ...]
    pair_cumulative: tuple[float, ...]
    routes: tuple[tuple[tuple[int, ...], ...], ...]
    route_units: tuple[tuple[tuple[int, ...], ...], ...]
    route_unit_gbps: tuple[tuple[float, ...], ...]
    route_lanes_per_unit: tuple[tuple[int, ...], ...]
    sizes_gbps: tuple[float, ...]
    size_cumulative: tuple[float, ...]
    whole_fiber: bool
    lane_gbps: float
    mean_holding: float

    @property
    def unrouted_pairs(self) -> tuple[tuple[str, str], ...]:
        """Pairs that offer traffic but have no feasible route (all their demand is blocked)."""
        return tuple(p for p, r in zip(self.pairs, self.routes) if not r)


@dataclass
class ReplicationRecord:
    """What one replication measured after its warm-up.

    Counts are over the measured arrivals; ``*_mean`` figures are time averages estimated
    from the state seen by arrivals (Poisson arrivals see time averages); ``*_peak`` figures
    are maxima over the measured period.
    """

    architecture: str
    load_erlang: float
    replication: int
    requests: int
    blocked: int
    offered_gbps: float
    blocked_gbps: float
    class_offered: list[int]
    class_blocked: list[int]
    pair_offered: list[int]
    pair_blocked: list[int]
    transceivers_peak: int
    transceivers_mean: float
    lanes_peak: int
    lanes_mean: float
    site_transceivers_peak: list[int]
    site_transceivers_mean: list[float]
    cable_utilisation: list[float]
    sim_time: float
    wall_time_s: float = field(default=0.0, compare=False)
    ended_empty: bool | None = None

    def to_dict(self) -> dict:
        """A JSON-ready dict (for task files)."""
        return asdict(self)

    @classmethod
    def from_dict(cls, data: dict) -> ReplicationRecord:
        """Inverse of :meth:`to_dict`."""
        return cls(**data)


RouteFinder = Callable[[Scenario, Architecture], dict[tuple[str, str], list[Route]]]


def _default_route_finder(scenario: Scenario, arch: Architecture) -> dict[tuple[str, str], list[Route]]:
    from .pathtable import feasible_routes

    return feasible_routes(scenario, arch)


def prepare(scenario: Scenario, arch: Architecture, route_finder: RouteFinder | None = None) -> EngineSetup:
    """Resolve ``arch`` on ``scenario`` into an :class:`EngineSetup`.

    Parameters
    ----------
    scenario : Scenario
        The scenario.
    arch : Architecture
        One of its architectures.
    route_finder : callable, optional
        ``(scenario, arch) -> {pair: [Route, ...]}`` giving the feasible routes in order;
        by default the physical layer's :func:`sdmnet.pathtable.feasible_routes`.

    Raises
    ------
    ConfigurationError
        If the architecture cannot run on a cable's fiber type.
    """
    topo = scenario.topology_for(arch)
    lane = scenario.transceiver.lane_gbps
    geometries = cable_geometries(scenario, arch)
    found = (route_finder or _default_route_finder)(scenario, arch)
    weights = pair_weights(topo, scenario.traffic)
    pairs = [p for p in datacenter_pairs(topo) if weights.get(p, 0.0) > 0]
    site_index = {s.id: i for i, s in enumerate(topo.sites)}
    sizes, probs = size_classes(scenario.traffic)
    routes, route_units, route_gbps, route_lanes = [], [], [], []
    for p in pairs:
        rs = [r.cables for r in found.get(p, [])]
        routes.append(tuple(rs))
        units, gbps, lanes = [], [], []
        for r in rs:
            geo = geometries[r[0]]
            units.append(tuple(units_needed(float(s), geo) for s in sizes))
            gbps.append(geo.unit_gbps)
            lanes.append(geo.lanes_per_unit)
        route_units.append(tuple(units))
        route_gbps.append(tuple(gbps))
        route_lanes.append(tuple(lanes))
    share = np.array([weights[p] for p in pairs])
    return EngineSetup(
        architecture=arch,
        sites=tuple(s.id for s in topo.sites),
        cables=tuple(c.key for c in topo.cables),
        fiber_pairs=tuple(c.fiber_pairs for c in topo.cables),
        groups_per_fiber=tuple(g.groups_per_fiber for g in geometries),
        channels=tuple(g.channels for g in geometries),
        pairs=tuple(pairs),
        pair_sites=tuple((site_index[a], site_index[b]) for a, b in pairs),
        pair_cumulative=tuple(np.cumsum(share / share.sum()).tolist()),
        routes=tuple(routes),
        route_units=tuple(route_units),
        route_unit_gbps=tuple(route_gbps),
        route_lanes_per_unit=tuple(route_lanes),
        sizes_gbps=tuple(float(s) for s in sizes),
        size_cumulative=tuple(np.cumsum(probs).tolist()),
        whole_fiber=geometries[0].whole_fiber if geometries else False,
        lane_gbps=lane,
        mean_holding=scenario.traffic.mean_holding,
    )


def replication_seed(seed: int, replication: int) -> np.random.SeedSequence:
    """The seed sequence of one replication: the same for every architecture and load."""
    return np.random.SeedSequence(seed, spawn_key=(replication,))


class _Streams:
    """Batched draws from four independent generators (one per random quantity)."""

    def __init__(self, seq: np.random.SeedSequence, setup: EngineSetup, rate: float) -> None:
        self._gens = [np.random.default_rng(s) for s in seq.spawn(4)]
        self._rate = rate
        self._pair_cum = np.asarray(setup.pair_cumulative)
        self._size_cum = np.asarray(setup.size_cumulative)
        self._hold = setup.mean_holding
        self._i = _BATCH
        self._refill()

    def _refill(self) -> None:
        ga, gp, gs, gh = self._gens
        self.gaps = (ga.standard_exponential(_BATCH) / self._rate).tolist()
        # Inverse CDF; min() guards against a uniform at the very top of float rounding.
        npairs, nsizes = len(self._pair_cum), len(self._size_cum)
        self.pair = np.minimum(np.searchsorted(self._pair_cum, gp.random(_BATCH), side="right"), npairs - 1).tolist()
        self.size = np.minimum(np.searchsorted(self._size_cum, gs.random(_BATCH), side="right"), nsizes - 1).tolist()
        self.hold = (gh.standard_exponential(_BATCH) * self._hold).tolist()
        self._i = 0

    def next(self) -> tuple[float, int, int, float]:
        if self._i == _BATCH:
            self._refill()
        i = self._i
        self._i = i + 1
        return self.gaps[i], self.pair[i], self.size[i], self.hold[i]


class _Booking:
    """What one accepted demand holds, released exactly at its departure."""

    __slots__ = ("grant", "modules", "lanes", "a", "b", "parts")

    def __init__(self, grant: Grant, modules: int, lanes: int, a: int, b: int, parts: list) -> None:
        self.grant = grant
        self.modules = modules
        self.lanes = lanes
        self.a = a
        self.b = b
        self.parts = parts


class _LitUnit:
    """A unit lit between two sites on one route whose spare capacity later demands may use.

    Under unit switching the unit owns its transceiver modules (``modules``, ``lanes``): they
    stay lit until the last demand it carries departs.
    """

    __slots__ = ("grant", "spare", "used", "key", "modules", "lanes")

    def __init__(self, grant: Grant, spare: float, key: tuple[int, int], modules: int, lanes: int) -> None:
        self.grant = grant
        self.spare = spare
        self.used = 0.0
        self.key = key
        self.modules = modules
        self.lanes = lanes


def simulate_replication(
    setup: EngineSetup,
    load_erlang: float,
    seed: int,
    replication: int,
    requests: int,
    warmup: int,
    *,
    drain: bool = False,
    observer: Callable[[str, object], None] | None = None,
) -> ReplicationRecord:
    """Simulate one replication and return what it measured.

    Parameters
    ----------
    setup : EngineSetup
        From :func:`prepare`.
    load_erlang : float
        Total offered load (arrival rate x mean holding time).
    seed : int
        The scenario's seed.
    replication : int
        Replication index (selects independent random streams).
    requests : int
        Arrivals measured after the warm-up.
    warmup : int
        Arrivals simulated first and not measured.
    drain : bool
        Keep running after the last arrival until every demand has departed (for checks that
        the network ends empty); by default the run stops at the last arrival.
    observer : callable, optional
        Called as ``observer(kind, payload)`` on ``"book"``/``"release"`` (the booking) and
        ``"block"``; for invariant tests, not for production runs.

    Returns
    -------
    ReplicationRecord
    """
    started = time.perf_counter()
    arch = setup.architecture
    if load_erlang <= 0:
        raise ValueError("load_erlang must be positive")
    rate = load_erlang / setup.mean_holding
    streams = _Streams(replication_seed(seed, replication), setup, rate)
    env = simpy.Environment()
    state: UnitState | FiberState
    if setup.whole_fiber:
        state = FiberState(setup.fiber_pairs)
    else:
        state = UnitState(setup.fiber_pairs, setup.groups_per_fiber, setup.channels, arch.lane_change)
    take, give_back = state.take, state.give_back
    busy = state.busy_units
    share = arch.share
    whole_fiber = setup.whole_fiber
    lane = setup.lane_gbps
    sizes = setup.sizes_gbps
    routes, route_units = setup.routes, setup.route_units
    route_gbps, route_lanes = setup.route_unit_gbps, setup.route_lanes_per_unit
    pair_sites = setup.pair_sites
    nclass, npair, nsite, ncable = len(sizes), len(setup.pairs), len(setup.sites), len(setup.cables)
    total = warmup + requests

    class_offered = [0] * nclass
    class_blocked = [0] * nclass
    pair_offered = [0] * npair
    pair_blocked = [0] * npair
    site_modules = [0] * nsite
    site_peak = [0] * nsite
    site_acc = [0] * nsite
    cable_acc = [0] * ncable
    # Scalars that callbacks update live in a list to avoid `nonlocal` lookups.
    # [arrivals, modules, lanes, modules_peak, lanes_peak, modules_acc, lanes_acc, offered_gbps, blocked_gbps]
    c = [0, 0, 0, 0, 0, 0, 0, 0.0, 0.0]
    lit: dict[tuple[int, int], list[_LitUnit]] = {}
    done = env.event()

    def depart(event: simpy.events.Event) -> None:
        booking: _Booking = event._value
        if booking.grant:
            give_back(booking.grant)
        for unit, amount in booking.parts:
            unit.used -= amount
            unit.spare += amount
            if unit.used <= 1e-9:
                give_back(unit.grant)
                lit[unit.key].remove(unit)
                _count_modules(booking.a, booking.b, -unit.modules, -unit.lanes)
        _count_modules(booking.a, booking.b, -booking.modules, -booking.lanes)
        if observer is not None:
            observer("release", booking)

    def _count_modules(a: int, b: int, modules: int, lanes: int) -> None:
        c[1] += modules
        c[2] += lanes
        site_modules[a] += modules // 2
        site_modules[b] += modules // 2

    def book(p: int, k: int, size: float) -> _Booking | None:
        for r, cables in enumerate(routes[p]):
            if share:
                booking = _book_shared(p, r, cables, size)
                if booking is not None:
                    return booking
                continue
            n = route_units[p][r][k]
            grant = take(cables, n)
            if grant is None:
                continue
            if whole_fiber:
                per_end = max(1, math.ceil(size / lane - 1e-9))
                return _Booking(grant, 2 * per_end, 2 * per_end, *pair_sites[p], [])
            return _Booking(grant, 2 * n, 2 * n * route_lanes[p][r], *pair_sites[p], [])
        return None

    def _book_shared(p: int, r: int, cables: tuple[int, ...], size: float) -> _Booking | None:
        # Spare capacity of units already lit on this route first, then new units.
        units = lit.setdefault((p, r), [])
        plan, need = [], size
        for unit in units:
            if need <= 1e-9:
                break
            if unit.spare > 1e-9:
                amount = min(unit.spare, need)
                plan.append((unit, amount))
                need -= amount
        gbps = route_gbps[p][r]
        new = max(0, math.ceil(need / gbps - 1e-9)) if need > 1e-9 else 0
        grants: list[Grant] = []
        if new:
            # Each new unit is booked separately so that it can be released on its own.
            for _ in range(new):
                g = take(cables, 1)
                if g is None:
                    for g_back in grants:
                        give_back(g_back)
                    return None
                grants.append(g)
        for unit, amount in plan:
            unit.spare -= amount
            unit.used += amount
        a, b = pair_sites[p]
        unit_lanes = 0 if whole_fiber else 2 * route_lanes[p][r]
        unit_modules = 0 if whole_fiber else 2
        for g in grants:
            unit = _LitUnit(g, gbps, (p, r), unit_modules, unit_lanes)
            _count_modules(a, b, unit_modules, unit_lanes)
            amount = min(gbps, need)
            unit.spare -= amount
            unit.used += amount
            need -= amount
            units.append(unit)
            plan.append((unit, amount))
        if whole_fiber:
            per_end = max(1, math.ceil(size / lane - 1e-9))
            return _Booking([], 2 * per_end, 2 * per_end, a, b, plan)
        # Under unit switching the modules belong to the lit units (counted above).
        return _Booking([], 0, 0, a, b, plan)

    def arrive(_event: simpy.events.Event | None) -> None:
        gap, p, k, hold = streams.next()
        n = c[0]
        c[0] = n + 1
        measured = n >= warmup
        if n == warmup:
            c[3], c[4] = c[1], c[2]
            site_peak[:] = site_modules
        size = sizes[k]
        if measured:
            # Poisson arrivals see time averages: sample the state just before this arrival.
            c[5] += c[1]
            c[6] += c[2]
            site_acc[:] = map(add, site_acc, site_modules)
            cable_acc[:] = map(add, cable_acc, busy)
            class_offered[k] += 1
            pair_offered[p] += 1
            c[7] += size
        booking = book(p, k, size)
        if booking is None:
            if measured:
                class_blocked[k] += 1
                pair_blocked[p] += 1
                c[8] += size
            if observer is not None:
                observer("block", (p, k))
        else:
            _count_modules(booking.a, booking.b, booking.modules, booking.lanes)
            if c[1] > c[3]:
                c[3] = c[1]
            if c[2] > c[4]:
                c[4] = c[2]
            if site_modules[booking.a] > site_peak[booking.a]:
                site_peak[booking.a] = site_modules[booking.a]
            if site_modules[booking.b] > site_peak[booking.b]:
                site_peak[booking.b] = site_modules[booking.b]
            leave = env.timeout(hold, booking)
            leave.callbacks.append(depart)
            if observer is not None:
                observer("book", booking)
        if n + 1 < total:
            nxt = env.timeout(gap)
            nxt.callbacks.append(arrive)
        elif not drain:
            done.succeed()

    first = env.timeout(streams.next()[0])
    first.callbacks.append(arrive)
    if drain:
        env.run()
    else:
        env.run(until=done)

    measured = max(requests, 1)
    capacity = [state.capacity_units(i) for i in range(ncable)]
    return ReplicationRecord(
        architecture=arch.name,
        load_erlang=float(load_erlang),
        replication=replication,
        requests=sum(class_offered),
        blocked=sum(class_blocked),
        offered_gbps=c[7],
        blocked_gbps=c[8],
        class_offered=class_offered,
        class_blocked=class_blocked,
        pair_offered=pair_offered,
        pair_blocked=pair_blocked,
        transceivers_peak=c[3],
        transceivers_mean=c[5] / measured,
        lanes_peak=c[4],
        lanes_mean=c[6] / measured,
        site_transceivers_peak=list(site_peak),
        site_transceivers_mean=[x / measured for x in site_acc],
        cable_utilisation=[a / measured / cap if cap else 0.0 for a, cap in zip(cable_acc, capacity)],
        sim_time=float(env.now),
        wall_time_s=time.perf_counter() - started,
        ended_empty=(state.is_empty() and c[1] == 0 and c[2] == 0 and not any(site_modules)) if drain else None,
    )
