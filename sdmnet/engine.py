"""The discrete-event engine: one replication of one architecture at one load.

Flow: :func:`prepare` turns a scenario and an architecture into an :class:`EngineSetup`
(routes, unit geometry, traffic tables: plain picklable data); :func:`simulate_replication`
runs a SimPy environment over it and returns a :class:`ReplicationRecord` (counts and
time averages only, so memory does not grow with the number of requests).

Departures are events on SimPy's queue: each accepted demand is one event (its own booking,
see :class:`_Departure`) whose callback releases it; no process per request.  Arrivals are a
plain loop over batched random draws that lets SimPy process every departure due before each
arrival (``env.peek`` / ``env.step``): the arrival chain costs no SimPy event, which halves the
events per request.

Random numbers come from four independent streams per replication (interarrival times, pair,
size, holding time), spawned from ``SeedSequence(scenario.seed, spawn_key=(replication,))``.
The streams do not depend on the architecture, so every architecture sees the very same
demands (common random numbers), and a task's result does not depend on which process or
machine runs it.
"""

from __future__ import annotations

import math
import time
from collections.abc import Callable, Iterator
from dataclasses import asdict, dataclass, field

import numpy as np
import simpy
from simpy.events import NORMAL

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


def _draws(seq: np.random.SeedSequence, setup: EngineSetup, rate: float) -> Iterator[tuple[float, int, int, float]]:
    """Endless ``(gap, pair, size class, holding time)`` records from four independent generators.

    Drawn in batches of :data:`_BATCH` per generator (numpy per batch, plain Python floats and
    ints per record), so the per-arrival cost is one tuple from a ``zip``.
    """
    ga, gp, gs, gh = (np.random.default_rng(s) for s in seq.spawn(4))
    pair_cum, size_cum = np.asarray(setup.pair_cumulative), np.asarray(setup.size_cumulative)
    last_pair, last_size = len(pair_cum) - 1, len(size_cum) - 1
    while True:
        gaps = (ga.standard_exponential(_BATCH) / rate).tolist()
        # Inverse CDF; min() guards against a uniform at the very top of float rounding.
        pairs = np.minimum(np.searchsorted(pair_cum, gp.random(_BATCH), side="right"), last_pair).tolist()
        sizes = np.minimum(np.searchsorted(size_cum, gs.random(_BATCH), side="right"), last_size).tolist()
        holds = (gh.standard_exponential(_BATCH) * setup.mean_holding).tolist()
        yield from zip(gaps, pairs, sizes, holds)


class _Departure(simpy.events.Event):
    """The end of one accepted demand: a SimPy event, already triggered, scheduled at the
    demand's departure time; its callback releases exactly what the demand holds.

    Built without :class:`simpy.Timeout`'s checks, since the holding time is a non-negative draw.

    Attributes
    ----------
    booking : tuple
        ``(grant, cables, units, modules, lanes, a, b, parts)``: the units taken for the demand
        alone (empty when it rides on shared units), the route's cables, units of ``grant`` on
        each cable, transceiver modules and lanes the demand holds (both ends together), the
        site indices of its ends, and the shared units it rides on with the capacity it uses
        in each.
    """

    # Triggered successfully from birth, with no value (class attributes: one less store each).
    _ok = True
    _value = None

    def __init__(self, env: simpy.Environment, callbacks: list, booking: tuple) -> None:
        # Three stores only (the booking stays one tuple): this runs once per accepted demand.
        self.env = env
        self.callbacks = callbacks
        self.booking = booking

    @property
    def grant(self) -> Grant:
        """Units taken for the demand alone (what observers check)."""
        return self.booking[0]


class _LitUnit:
    """A unit lit between two sites on one route whose spare capacity later demands may use.

    Under unit switching the unit owns its transceiver modules (``modules``, ``lanes``): they
    stay lit until the last demand it carries departs.
    """

    __slots__ = ("grant", "spare", "used", "key", "modules", "lanes", "cables")

    def __init__(
        self, grant: Grant, spare: float, key: tuple[int, int], modules: int, lanes: int, cables: tuple[int, ...]
    ) -> None:
        self.grant = grant
        self.spare = spare
        self.used = 0.0
        self.key = key
        self.modules = modules
        self.lanes = lanes
        self.cables = cables


def _route_table(setup: EngineSetup) -> list[tuple[tuple[tuple[int, ...], tuple[int, ...], tuple[int, ...],
                                                        tuple[int, ...]], ...]]:
    """Per pair, per route in order: ``(cables, units, modules, lanes)``, the last three per size class.

    Modules and lanes count both ends of the demand.  Under fiber switching they follow from the
    size alone: ceil(size / lane) single-lane modules per end (docs/model.md, section 2).
    """
    table = []
    for p, routes in enumerate(setup.routes):
        rows = []
        for r, cables in enumerate(routes):
            units = setup.route_units[p][r]
            if setup.whole_fiber:
                ends = tuple(2 * max(1, math.ceil(s / setup.lane_gbps - 1e-9)) for s in setup.sizes_gbps)
                modules, lanes = ends, ends
            else:
                modules = tuple(2 * n for n in units)
                lanes = tuple(2 * n * setup.route_lanes_per_unit[p][r] for n in units)
            rows.append((tuple(cables), tuple(units), modules, lanes))
        table.append(tuple(rows))
    return table


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

    Notes
    -----
    Memory holds counters and the demands in flight, whatever ``requests`` is.

    Time averages ("Poisson arrivals see time averages": the mean of the state seen by the
    measured arrivals) are kept without touching every cable and site at each arrival: with
    ``m`` the number of measured arrivals so far, a change ``d`` of a figure adds ``-d * m`` to
    its stamp, and at the end ``sum over arrivals = final value * m_final + stamp``.  This is
    exact integer arithmetic, the same sum as sampling every figure at every arrival.
    """
    started = time.perf_counter()
    arch = setup.architecture
    if load_erlang <= 0:
        raise ValueError("load_erlang must be positive")
    rate = load_erlang / setup.mean_holding
    next_draw = _draws(replication_seed(seed, replication), setup, rate).__next__
    env = simpy.Environment()
    schedule = env.schedule
    state: UnitState | FiberState
    if setup.whole_fiber:
        state = FiberState(setup.fiber_pairs)
    else:
        state = UnitState(setup.fiber_pairs, setup.groups_per_fiber, setup.channels, arch.lane_change)
    take, give_back = state.take, state.give_back
    busy = state.busy_units
    share = arch.share
    whole_fiber = setup.whole_fiber
    sizes = setup.sizes_gbps
    route_table = _route_table(setup)
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
    site_stamp = [0] * nsite
    cable_stamp = [0] * ncable
    m = 0  # measured so far
    modules = lanes = modules_peak = lanes_peak = modules_stamp = lanes_stamp = 0
    offered_gbps = blocked_gbps = 0.0
    lit: dict[tuple[int, int], list[_LitUnit]] = {}
    no_parts: tuple = ()

    def change_modules(a: int, b: int, d_modules: int, d_lanes: int) -> None:
        nonlocal modules, lanes, modules_stamp, lanes_stamp
        modules += d_modules
        lanes += d_lanes
        modules_stamp -= d_modules * m
        lanes_stamp -= d_lanes * m
        half = d_modules // 2
        site_modules[a] += half
        site_modules[b] += half
        site_stamp[a] -= half * m
        site_stamp[b] -= half * m

    def depart(event: _Departure) -> None:
        grant, cables, units, d_modules, d_lanes, a, b, parts = event.booking
        if grant:
            give_back(grant)
            held = units * m
            for h in cables:
                cable_stamp[h] += held
        for unit, amount in parts:
            unit.used -= amount
            unit.spare += amount
            if unit.used <= 1e-9:
                give_back(unit.grant)
                for h in unit.cables:
                    cable_stamp[h] += m
                lit[unit.key].remove(unit)
                change_modules(a, b, -unit.modules, -unit.lanes)
        change_modules(a, b, -d_modules, -d_lanes)
        if observer is not None:
            observer("release", event)

    def book_shared(p: int, k: int, size: float) -> tuple | None:
        for r, (cables, _units, route_modules, _lanes) in enumerate(route_table[p]):
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
            # Each new unit is booked separately so that it can be released on its own.
            for _ in range(new):
                g = take(cables, 1)
                if g is None:
                    for g_back in grants:
                        give_back(g_back)
                    break
                grants.append(g)
            else:
                return light_units(p, r, cables, route_modules[k], plan, need, grants)
        return None

    def light_units(
        p: int, r: int, cables: tuple[int, ...], fiber_modules: int, plan: list, need: float, grants: list
    ) -> tuple:
        for unit, amount in plan:
            unit.spare -= amount
            unit.used += amount
        a, b = pair_sites[p]
        gbps = route_gbps[p][r]
        unit_lanes = 0 if whole_fiber else 2 * route_lanes[p][r]
        unit_modules = 0 if whole_fiber else 2
        units = lit[(p, r)]
        for g in grants:
            unit = _LitUnit(g, gbps, (p, r), unit_modules, unit_lanes, cables)
            for h in cables:
                cable_stamp[h] -= m
            change_modules(a, b, unit_modules, unit_lanes)
            amount = min(gbps, need)
            unit.spare -= amount
            unit.used += amount
            need -= amount
            units.append(unit)
            plan.append((unit, amount))
        if whole_fiber:  # single-lane modules per demand, whatever fiber carries it
            return ([], cables, 0, fiber_modules, fiber_modules, a, b, plan)
        # Under unit switching the modules belong to the lit units (counted above).
        return ([], cables, 0, 0, 0, a, b, plan)

    # Arrivals are a plain loop over the draws; departures are events on SimPy's queue, and the
    # loop lets SimPy process every departure due before each arrival (env.peek / env.step).
    # An arrival then books at its own time t: the departure is scheduled `t + hold - now`
    # after SimPy's clock, which is exact whenever now >= (t + hold) / 2 (Sterbenz), i.e. in
    # all but the first instants of a run.
    peek, step = env.peek, env.step
    t = next_draw()[0] if total > 0 else 0.0
    for n in range(total):
        while peek() <= t:
            step()
        gap, p, k, hold = next_draw()
        size = sizes[k]
        measured = n >= warmup
        if measured:
            if n == warmup:
                modules_peak, lanes_peak = modules, lanes
                site_peak[:] = site_modules
            m += 1
            class_offered[k] += 1
            pair_offered[p] += 1
            offered_gbps += size
        booking = None
        if share:
            booking = book_shared(p, k, size)
        else:
            for cables, units, route_modules, route_lanes_k in route_table[p]:
                grant = take(cables, units[k])
                if grant is not None:
                    a, b = pair_sites[p]
                    booking = (grant, cables, units[k], route_modules[k], route_lanes_k[k], a, b, no_parts)
                    break
        if booking is None:
            if measured:
                class_blocked[k] += 1
                pair_blocked[p] += 1
                blocked_gbps += size
            if observer is not None:
                observer("block", (p, k))
        else:
            grant, cables, units_k, d_modules, d_lanes, a, b, _parts = booking
            if grant:
                held = units_k * m
                for h in cables:
                    cable_stamp[h] -= held
            change_modules(a, b, d_modules, d_lanes)
            if modules > modules_peak:
                modules_peak = modules
            if lanes > lanes_peak:
                lanes_peak = lanes
            if site_modules[a] > site_peak[a]:
                site_peak[a] = site_modules[a]
            if site_modules[b] > site_peak[b]:
                site_peak[b] = site_modules[b]
            leave = _Departure(env, [depart], booking)
            schedule(leave, NORMAL, t + hold - env.now)
            if observer is not None:
                observer("book", leave)
        if n + 1 < total:
            t += gap
    if drain:
        env.run()
    end_time = max(t, env.now)

    measured = max(requests, 1)
    capacity = [state.capacity_units(i) for i in range(ncable)]
    cable_sum = [busy[h] * m + cable_stamp[h] for h in range(ncable)]
    site_sum = [site_modules[s] * m + site_stamp[s] for s in range(nsite)]
    return ReplicationRecord(
        architecture=arch.name,
        load_erlang=float(load_erlang),
        replication=replication,
        requests=sum(class_offered),
        blocked=sum(class_blocked),
        offered_gbps=offered_gbps,
        blocked_gbps=blocked_gbps,
        class_offered=class_offered,
        class_blocked=class_blocked,
        pair_offered=pair_offered,
        pair_blocked=pair_blocked,
        transceivers_peak=modules_peak,
        transceivers_mean=(modules * m + modules_stamp) / measured,
        lanes_peak=lanes_peak,
        lanes_mean=(lanes * m + lanes_stamp) / measured,
        site_transceivers_peak=list(site_peak),
        site_transceivers_mean=[x / measured for x in site_sum],
        cable_utilisation=[a / measured / cap if cap else 0.0 for a, cap in zip(cable_sum, capacity)],
        sim_time=float(end_time),
        wall_time_s=time.perf_counter() - started,
        ended_empty=(state.is_empty() and modules == 0 and lanes == 0 and not any(site_modules)) if drain else None,
    )
