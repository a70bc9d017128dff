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
size, holding time), spawned from ``SeedSequence(scenario.seed, spawn_key=(replication,))``;
arrival ``i`` takes draw ``i`` of each stream.
The streams do not depend on the architecture, so every architecture sees the very same
demands (common random numbers), and a task's result does not depend on which process or
machine runs it.
"""

from __future__ import annotations

import gc
import math
import time
from collections import Counter, defaultdict
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from dataclasses import asdict, dataclass, field, replace
from itertools import chain, islice

import numpy as np
import simpy
from simpy.events import NORMAL

from ..inputs.model import Architecture, Scenario
from ..network.architectures import cable_geometries, units_needed
from ..network.routing import Route, datacenter_pairs
from ..network.traffic import pair_weights, size_classes
from .allocation import FiberState, Grant, UnitState
from .provisioning import provision_fiber_paths

__all__ = ["EngineSetup", "ReplicationRecord", "prepare", "simulate_replication", "replication_seed", "fiber_plan"]

_BATCH = 4096
# Batches the measured arrivals of a replication are split into for the steady-state test.
STEADY_BATCHES = 10


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
    route_unit_gbps : tuple of tuple
        Per pair and route: capacity of one unit (the unit is uniform along a route; its
        capacity follows the lane rate of the route's transceiver class).
    route_lanes_per_module : tuple of tuple
        Per pair and route: lanes of one transceiver module, the cores the route's randomly
        coupled fiber mixes together (1 on weakly coupled fiber: single-lane modules;
        :func:`sdmnet.optics.physics.mimo_group`).
    sizes_gbps : tuple of float
        Size classes, ascending.
    size_cumulative : tuple of float
        Cumulative size probabilities.
    whole_fiber : bool
        Fiber switching (units are fibers; modules are counted per demand).
    lane_gbps : float
        Lane rate of ``[transceiver]`` (routes found without a class, and grooming of shared
        units).
    mean_holding : float
        Mean holding time.
    provisioned_fibers : bool
        Fiber switching with grooming: fiber paths are provisioned per pair from the offered
        load before the run and demands are groomed into their lanes
        (:mod:`sdmnet.sim.provisioning`).  False lights a fiber for the first demand that needs
        it and frees it when the last demand in it leaves (which locks in at a few Erlang
        per pair: kept for checks of the steady-state test).
    route_lane_gbps : tuple of tuple of float
        Per pair and route: lane rate of its transceiver class (a demand of s Gb/s on the route
        fills ceil(s / lane) lanes).
    route_classes : tuple of tuple of str
        Per pair and route: name of its transceiver class ("" for routes found without one).
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
    route_lanes_per_module: tuple[tuple[int, ...], ...]
    sizes_gbps: tuple[float, ...]
    size_cumulative: tuple[float, ...]
    whole_fiber: bool
    lane_gbps: float
    mean_holding: float
    provisioned_fibers: bool = False
    route_lane_gbps: tuple[tuple[float, ...], ...] = ()
    route_classes: tuple[tuple[str, ...], ...] = ()

    @property
    def unrouted_pairs(self) -> tuple[tuple[str, str], ...]:
        """Pairs that offer traffic but have no feasible route (all their demand is blocked)."""
        return tuple(p for p, r in zip(self.pairs, self.routes) if not r)


@dataclass
class ReplicationRecord:
    """What one replication measured after its warm-up.

    Counts are over the measured arrivals; ``*_mean`` figures are time averages estimated
    from the state seen by arrivals (Poisson arrivals see time averages); ``*_peak`` figures
    are maxima over the measured period.  ``site_*_histogram`` give, per site, how often each
    count of transceiver modules, lanes, and lanes of MIMO modules in use was seen by the
    measured arrivals of the pairs that end at the site, as sorted ``[count, arrivals]`` pairs
    (those arrivals are a Poisson stream too, so they see the site's time-average distribution).
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
    site_lanes_mean: list[float]
    site_transceivers_histogram: list[list[list[int]]]
    site_lanes_histogram: list[list[list[int]]]
    site_mimo_lanes_histogram: list[list[list[int]]]
    cable_utilisation: list[float]
    sim_time: float
    wall_time_s: float = field(default=0.0, compare=False)
    # Offered and blocked requests per pair in each of STEADY_BATCHES equal batches of the
    # measured arrivals (for the steady-state test of sdmnet.sim.stats).
    pair_batch_offered: list[list[int]] = field(default_factory=list)
    pair_batch_blocked: list[list[int]] = field(default_factory=list)
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
    from ..optics.pathtable import feasible_routes

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
        by default the physical layer's :func:`sdmnet.optics.pathtable.feasible_routes`.

    Raises
    ------
    ConfigurationError
        If the architecture cannot run on a cable's fiber type.
    """
    from ..optics.physics import mimo_group

    topo = scenario.topology_for(arch)
    lane = scenario.transceiver.lane_gbps
    geometries = cable_geometries(scenario, arch)
    found = (route_finder or _default_route_finder)(scenario, arch)
    weights = pair_weights(topo, scenario.traffic)
    pairs = [p for p in datacenter_pairs(topo) if weights.get(p, 0.0) > 0]
    site_index = {s.id: i for i, s in enumerate(topo.sites)}
    sizes, probs = size_classes(scenario.traffic)
    routes, route_units, route_gbps, route_lanes, route_lane_gbps, route_classes = [], [], [], [], [], []
    for p in pairs:
        found_routes = found.get(p, [])
        routes.append(tuple(r.cables for r in found_routes))
        units, gbps, lanes, lane_rates, names = [], [], [], [], []
        for r in found_routes:
            # A classed route's unit carries its class's lane rate (docs/physics.md).
            route_lane = getattr(r, "lane_gbps", lane)
            geo = geometries[r.cables[0]]
            geo = replace(geo, unit_gbps=geo.unit_gbps * route_lane / lane)
            units.append(tuple(units_needed(float(s), geo) for s in sizes))
            gbps.append(geo.unit_gbps)
            lanes.append(mimo_group([topo.fiber_types[topo.cables[h].fiber_type] for h in r.cables]))
            lane_rates.append(route_lane)
            names.append(getattr(r, "transceiver_class", ""))
        route_units.append(tuple(units))
        route_gbps.append(tuple(gbps))
        route_lanes.append(tuple(lanes))
        route_lane_gbps.append(tuple(lane_rates))
        route_classes.append(tuple(names))
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
        route_lanes_per_module=tuple(route_lanes),
        sizes_gbps=tuple(float(s) for s in sizes),
        size_cumulative=tuple(np.cumsum(probs).tolist()),
        whole_fiber=geometries[0].whole_fiber if geometries else False,
        lane_gbps=lane,
        mean_holding=scenario.traffic.mean_holding,
        provisioned_fibers=bool(geometries and geometries[0].whole_fiber and arch.share),
        route_lane_gbps=tuple(route_lane_gbps),
        route_classes=tuple(route_classes),
    )


def _fiber_lanes(setup: EngineSetup) -> tuple[list[list[int]], list[list[list[int]]]]:
    """Per pair and route: lanes of one fiber, and lanes a demand of each size fills (whole
    MIMO modules on randomly coupled fiber: :func:`modules_per_end`)."""
    per_fiber, per_demand = [], []
    rows = zip(setup.route_unit_gbps, setup.route_lanes_per_module, setup.route_lane_gbps)
    for gbps_row, module_row, lane_row in rows:
        per_fiber.append([round(g / lane) for g, lane in zip(gbps_row, lane_row)])
        per_demand.append(
            [[modules_per_end(s, lane, c) * c for s in setup.sizes_gbps] for c, lane in zip(module_row, lane_row)]
        )
    return per_fiber, per_demand


def fiber_plan(setup: EngineSetup, load_erlang: float) -> tuple[tuple[int, ...], ...]:
    """Fiber paths per pair and route provisioned at ``load_erlang`` (docs/model.md, section 3)."""
    shares = np.diff(np.concatenate(([0.0], setup.pair_cumulative)))
    probs = np.diff(np.concatenate(([0.0], setup.size_cumulative)))
    per_fiber, per_demand = _fiber_lanes(setup)
    return provision_fiber_paths(
        setup.fiber_pairs, setup.routes, [load_erlang * w for w in shares], probs.tolist(), per_demand, per_fiber
    )


def replication_seed(seed: int, replication: int) -> np.random.SeedSequence:
    """The seed sequence of one replication: the same for every architecture and load."""
    return np.random.SeedSequence(seed, spawn_key=(replication,))


def _arrivals(
    seq: np.random.SeedSequence,
    setup: EngineSetup,
    rate: float,
    measured: range,
    class_offered: np.ndarray,
    pair_offered: np.ndarray,
    pair_batch_offered: np.ndarray | None = None,
) -> Iterator[tuple[float, int, int, int, int, float]]:
    """Endless ``(time, pair, size class, site a, site b, holding time)`` arrival records.

    Record ``i`` comes from draw ``i`` of four independent generators (interarrival gaps, pairs,
    sizes, holding times), drawn in batches of :data:`_BATCH` with numpy.  The records of a batch
    come from a ``zip`` chained in C, so an arrival costs one tuple.  While drawing, the records
    whose index lies in ``measured`` are tallied into ``class_offered`` and ``pair_offered``
    (offered counts need no work per arrival).  The end sites of the pair ride along, looked up
    per batch.
    """
    gap_rng, pair_rng, size_rng, hold_rng = (np.random.default_rng(s) for s in seq.spawn(4))
    pair_cum, size_cum = np.asarray(setup.pair_cumulative), np.asarray(setup.size_cumulative)
    ends = np.asarray(setup.pair_sites, dtype=np.int64).reshape(-1, 2)
    site_a, site_b = ends[:, 0], ends[:, 1]

    def batches() -> Iterator[Iterator[tuple[float, int, int, int, int, float]]]:
        clock, first = 0.0, 0
        while True:
            gaps = gap_rng.standard_exponential(_BATCH) / rate
            gaps[0] += clock
            # add.accumulate sums left to right: the very floats of adding the gaps one by one.
            times = np.add.accumulate(gaps)
            clock = float(times[-1])
            pairs = _inverse_cdf(pair_rng, pair_cum)
            sizes = _inverse_cdf(size_rng, size_cum)
            holds = hold_rng.standard_exponential(_BATCH) * setup.mean_holding
            low, high = max(measured.start - first, 0), min(measured.stop - first, _BATCH)
            if low < high:
                class_offered[:] += np.bincount(sizes[low:high], minlength=len(class_offered))
                pair_offered[:] += np.bincount(pairs[low:high], minlength=len(pair_offered))
                if pair_batch_offered is not None:
                    # Measured arrival i falls in batch i * batches // measured.
                    index = np.arange(first + low, first + high) - measured.start
                    batch = index * pair_batch_offered.shape[1] // len(measured)
                    np.add.at(pair_batch_offered, (pairs[low:high], batch), 1)
            first += _BATCH
            yield zip(
                times.tolist(), pairs.tolist(), sizes.tolist(), site_a[pairs].tolist(), site_b[pairs].tolist(),
                holds.tolist(),
            )

    return chain.from_iterable(batches())


def _inverse_cdf(rng: np.random.Generator, cumulative: np.ndarray) -> np.ndarray:
    """A batch of indices drawn with the given cumulative probabilities.

    A single outcome draws nothing (the generators are independent, so this changes no other
    draw).  ``minimum`` guards against a uniform at the very top of float rounding.
    """
    if len(cumulative) == 1:
        return np.zeros(_BATCH, dtype=np.int64)
    return np.minimum(np.searchsorted(cumulative, rng.random(_BATCH), side="right"), len(cumulative) - 1)


class _Departure(simpy.events.Event):
    """The end of one accepted demand: a SimPy event, already triggered, scheduled at the
    demand's departure time; its callback releases exactly what the demand holds.

    Built without :class:`simpy.Timeout`'s checks, since the holding time is a non-negative draw.
    A run uses a subclass made by :meth:`for_run` that holds the environment and the release
    callback as class attributes, so creating an event stores its booking only.

    Attributes
    ----------
    booking : tuple
        ``(grant, kind)`` for a demand on its own units: the units taken and its booking kind
        (see :func:`_route_table`).  ``([], (modules, lanes, a, b, parts))`` for a demand on
        shared units: the transceiver modules and lanes it holds itself (both ends together),
        the site indices of its ends, and the shared units it rides on with the capacity it
        uses in each.
    """

    # Triggered successfully from birth, with no value (class attributes: one less store each).
    _ok = True
    _value = None

    def __init__(self, booking: tuple) -> None:
        # One store only: this runs once per accepted demand.
        self.booking = booking

    @classmethod
    def for_run(cls, env: simpy.Environment, release: Callable[[_Departure], None]) -> type[_Departure]:
        """A subclass whose events belong to ``env`` and call ``release`` when processed.

        SimPy replaces an event's ``callbacks`` on the instance when it processes it, so a
        shared tuple on the class is safe.
        """
        return type("Departure", (cls,), {"env": env, "callbacks": (release,)})

    @property
    def grant(self) -> Grant:
        """Units taken for the demand alone (what observers check)."""
        return self.booking[0]


class _LitUnit:
    """A unit lit between two sites on one route whose spare capacity later demands may use.

    Under unit switching the unit owns its transceiver modules: ``modules`` at each end, of
    ``lanes_per_module`` lanes, as many as the capacity it carries fills (see
    :func:`modules_per_end`); they follow its fill and go dark when the last demand departs.
    Under fiber switching ``lanes_per_module`` is 0: the modules belong to the demands.
    """

    __slots__ = ("grant", "spare", "used", "key", "modules", "lanes_per_module", "cables")

    def __init__(
        self, grant: Grant, spare: float, key: tuple[int, int], lanes_per_module: int, cables: tuple[int, ...]
    ) -> None:
        self.grant = grant
        self.spare = spare
        self.used = 0.0
        self.key = key
        self.modules = 0
        self.lanes_per_module = lanes_per_module
        self.cables = cables


def modules_per_end(gbps: float, lane_gbps: float, lanes_per_module: int) -> int:
    """Transceiver modules lit at each end to carry ``gbps``: the lanes it fills,
    ceil(gbps / lane), in modules of ``lanes_per_module`` lanes (docs/model.md, section 2).

    On weakly coupled fiber (``lanes_per_module = 1``) only the filled lanes are lit, whatever
    the switching unit; the rest of a joint unit is stranded capacity.  A randomly coupled group
    of c cores is received whole by one c-lane MIMO module, so a demand lights whole groups.
    """
    if gbps <= 1e-9:
        return 0
    lanes = max(1, math.ceil(gbps / lane_gbps - 1e-9))
    return -(-lanes // lanes_per_module)


# A site's figure in the engine is one integer per site.  Where every route ending at the site
# uses modules of the same c lanes (the usual case) it is the lanes in use, and modules are
# lanes / c.  Elsewhere it packs modules, lanes and lanes of MIMO modules into fields of
# _FIELD: linear, so bookings add and subtract it, and ordered by modules first, so its peak is
# the peak of modules.  Sums over arrivals stay far below _FIELD.
_FIELD = 1 << 64


class _SiteCoding:
    """How the engine's per-site integer stands for modules, lanes and MIMO lanes (see above).

    Parameters
    ----------
    lanes_per_module : list of int
        Per site: the lanes of every module used there, or 0 where routes ending there differ.
    """

    def __init__(self, lanes_per_module: list[int]) -> None:
        self.lanes_per_module = lanes_per_module

    @classmethod
    def for_setup(cls, setup: EngineSetup) -> _SiteCoding:
        seen: list[set[int]] = [set() for _ in setup.sites]
        for (a, b), per_route in zip(setup.pair_sites, setup.route_lanes_per_module):
            seen[a].update(per_route)
            seen[b].update(per_route)
        return cls([next(iter(s)) if len(s) == 1 else (1 if not s else 0) for s in seen])

    def code(self, site: int, modules: int, lanes_per_module: int) -> int:
        """The site's figure for ``modules`` modules of ``lanes_per_module`` lanes (may be < 0)."""
        lanes = modules * lanes_per_module
        if self.lanes_per_module[site]:
            return lanes
        return (modules * _FIELD + lanes) * _FIELD + (lanes if lanes_per_module > 1 else 0)

    def decode(self, site: int, value: int) -> tuple[int, int, int]:
        """``(modules, lanes, MIMO lanes)`` of a non-negative figure (or sum of figures)."""
        c = self.lanes_per_module[site]
        if c:
            return value // c, value, value if c > 1 else 0
        modules, rest = divmod(value, _FIELD * _FIELD)
        lanes, mimo = divmod(rest, _FIELD)
        return modules, lanes, mimo

    def empty_histogram(self, site: int) -> list[int] | defaultdict[int, int]:
        """A histogram indexed by the site's figure: a list, or a dict for packed figures."""
        return [0] * 16 if self.lanes_per_module[site] else defaultdict(int)

    def histograms(self, site: int, counts: list[int] | defaultdict[int, int]) -> tuple[list, list, list]:
        """Sparse ``[[count, arrivals], ...]`` histograms of modules, lanes and MIMO lanes."""
        items = enumerate(counts) if isinstance(counts, list) else counts.items()
        out: tuple[Counter, Counter, Counter] = (Counter(), Counter(), Counter())
        for value, n in items:
            if n:
                for part, x in zip(out, self.decode(site, value)):
                    part[x] += n
        return tuple([[x, part[x]] for x in sorted(part)] for part in out)  # type: ignore[return-value]


def _tally_grown(histogram: list[int], value: int) -> None:
    """Count ``value`` in a list histogram too short for it (grown by doubling)."""
    histogram.extend([0] * (max(value + 1, 2 * len(histogram)) - len(histogram)))
    histogram[value] += 1


_BookingKind = tuple[int, int, int, int, int, int, int]


def _route_table(
    setup: EngineSetup, coding: _SiteCoding
) -> tuple[list, list[tuple[tuple[int, ...], int, _BookingKind]]]:
    """Per pair, per route in order, ``(cables, units, kinds)``; and every kind with its cables and units.

    ``units`` and ``kinds`` are per size class.  A booking *kind* is one (pair, route, size class):
    ``(index, modules, lanes, a, b, code_a, code_b)`` with the transceiver modules and lanes a
    demand of that kind holds (both ends together), the site indices of its ends and what it adds
    to each end's figure (:class:`_SiteCoding`).  Modules follow the lanes the demand fills, not
    the unit (:func:`modules_per_end`).  The second list, indexed by kind, gives
    ``(cables, units, kind)`` for turning per-kind stamps into per-cable figures.
    """
    table, kinds = [], []
    for p, routes in enumerate(setup.routes):
        a, b = setup.pair_sites[p]
        rows = []
        for r, cables in enumerate(routes):
            units = tuple(setup.route_units[p][r])
            c = setup.route_lanes_per_module[p][r]
            route_kinds = []
            for size, n in zip(setup.sizes_gbps, units):
                per_end = modules_per_end(size, setup.route_lane_gbps[p][r], c)
                kind = (len(kinds), 2 * per_end, 2 * per_end * c, a, b, coding.code(a, per_end, c),
                        coding.code(b, per_end, c))
                kinds.append((tuple(cables), n, kind))
                route_kinds.append(kind)
            rows.append((tuple(cables), units, tuple(route_kinds)))
        table.append(tuple(rows))
    return table, kinds


@contextmanager
def _older_objects_frozen() -> Iterator[None]:
    """Freeze the collector's tracked objects for the block, unless someone froze them already."""
    if gc.get_freeze_count():
        yield
        return
    gc.freeze()
    try:
        yield
    finally:
        gc.unfreeze()


@_older_objects_frozen()
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
    exact integer arithmetic, the same sum as sampling every figure at every arrival.  Through
    the warm-up ``m`` counts up from ``-warmup`` to 0 and the stamps are zeroed when measuring
    starts, so warm-up changes count as the starting state.  Demands
    on their own units stamp their booking kind only (one figure instead of every cable and
    site they touch); the kinds' stamps are spread over cables and sites at the end.

    The objects alive before the run (imported modules, the caller's data) are frozen out of
    the garbage collector's way for its duration (:func:`gc.freeze`): the run's own garbage
    dies young, and full collections would otherwise scan every one of them again (and, in a
    forked worker, copy the pages they sit on).
    """
    started = time.perf_counter()
    arch = setup.architecture
    if load_erlang <= 0:
        raise ValueError("load_erlang must be positive")
    rate = load_erlang / setup.mean_holding
    sizes = setup.sizes_gbps
    nclass, npair, nsite, ncable = len(sizes), len(setup.pairs), len(setup.sites), len(setup.cables)
    class_offered = np.zeros(nclass, dtype=np.int64)
    pair_offered = np.zeros(npair, dtype=np.int64)
    batches = STEADY_BATCHES if requests >= STEADY_BATCHES else 0
    pair_batch_offered = np.zeros((npair, batches), dtype=np.int64)
    pair_batch_blocked = [[0] * batches for _ in range(npair)]
    arrivals = _arrivals(
        replication_seed(seed, replication), setup, rate, range(warmup, warmup + requests), class_offered,
        pair_offered, pair_batch_offered if batches else None,
    )  # fmt: skip
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
    coding = _SiteCoding.for_setup(setup)
    code = coding.code
    route_table, kinds = _route_table(setup, coding)
    route_gbps, route_lanes = setup.route_unit_gbps, setup.route_lanes_per_module
    lane_gbps = setup.lane_gbps

    class_blocked = [0] * nclass
    pair_blocked = [0] * npair
    site_state = [0] * nsite  # each site's figure (_SiteCoding): lanes, or packed counts
    site_peak = [0] * nsite
    site_stamp = [0] * nsite
    cable_stamp = [0] * ncable
    kind_stamp = [0] * len(kinds)
    hist = [coding.empty_histogram(s) for s in range(nsite)]
    m = -warmup  # measured arrivals so far; counts up to 0 through the warm-up
    modules = lanes = modules_peak = lanes_peak = modules_stamp = lanes_stamp = 0
    blocked_gbps = 0.0
    lit: dict[tuple[int, int], list[_LitUnit]] = {}

    def release_own(event: _Departure) -> None:
        nonlocal modules, lanes
        grant, (j, d_modules, d_lanes, a, b, code_a, code_b) = event.booking
        give_back(grant)
        kind_stamp[j] += m
        modules -= d_modules
        lanes -= d_lanes
        site_state[a] -= code_a
        site_state[b] -= code_b
        if observer is not None:
            observer("release", event)

    def change_modules(a: int, b: int, per_end: int, lanes_per_module: int) -> None:
        # Demands on shared units only: their modules change with the lit units, not per kind.
        nonlocal modules, lanes, modules_stamp, lanes_stamp, modules_peak, lanes_peak
        d_modules = 2 * per_end
        d_lanes = d_modules * lanes_per_module
        modules += d_modules
        lanes += d_lanes
        modules_stamp -= d_modules * m
        lanes_stamp -= d_lanes * m
        code_a, code_b = code(a, per_end, lanes_per_module), code(b, per_end, lanes_per_module)
        site_state[a] += code_a
        site_state[b] += code_b
        site_stamp[a] -= code_a * m
        site_stamp[b] -= code_b * m
        modules_peak = max(modules_peak, modules)
        lanes_peak = max(lanes_peak, lanes)
        site_peak[a] = max(site_peak[a], site_state[a])
        site_peak[b] = max(site_peak[b], site_state[b])

    def refill(unit: _LitUnit, a: int, b: int) -> None:
        # A lit unit's modules follow the capacity it carries (unit switching only).
        c = unit.lanes_per_module
        if c:
            per_end = modules_per_end(unit.used, lane_gbps, c)
            if per_end != unit.modules:
                change_modules(a, b, per_end - unit.modules, c)
                unit.modules = per_end

    def release_shared(event: _Departure) -> None:
        _grant, (per_end, c, a, b, parts) = event.booking
        for unit, amount in parts:
            unit.used -= amount
            unit.spare += amount
            if unit.used <= 1e-9:
                unit.used = 0.0
                give_back(unit.grant)
                for h in unit.cables:
                    cable_stamp[h] += m
                lit[unit.key].remove(unit)
            refill(unit, a, b)
        if per_end:
            change_modules(a, b, -per_end, c)
        if observer is not None:
            observer("release", event)

    def book_shared(p: int, k: int) -> tuple | None:
        size = sizes[k]
        for r, (cables, _units, route_kinds) in enumerate(route_table[p]):
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
                return light_units(p, r, cables, route_kinds[k][1] // 2, plan, need, grants)
        return None

    def light_units(
        p: int, r: int, cables: tuple[int, ...], per_end: int, plan: list, need: float, grants: list
    ) -> tuple:
        a, b = setup.pair_sites[p]
        gbps = route_gbps[p][r]
        c = route_lanes[p][r]
        units = lit[(p, r)]
        for g in grants:
            unit = _LitUnit(g, gbps, (p, r), 0 if whole_fiber else c, cables)
            for h in cables:
                cable_stamp[h] -= m
            amount = min(gbps, need)
            need -= amount
            units.append(unit)
            plan.append((unit, amount))
        for unit, amount in plan:
            unit.spare -= amount
            unit.used += amount
            refill(unit, a, b)
        # Fiber switching: the demand's own modules, whatever fiber carries it; unit switching:
        # the modules belong to the lit units (refilled above).
        per_end = per_end if whole_fiber else 0
        if per_end:
            change_modules(a, b, per_end, c)
        return ([], (per_end, c, a, b, plan))

    # Fiber switching with provisioned fiber paths: the paths hold their fibers for the whole
    # run; a demand takes lanes of its pair's paths, in route order (docs/model.md, section 3).
    provisioned = share and whole_fiber and setup.provisioned_fibers
    held: list[Grant] = []
    spare_lanes: list[list[int]] = []
    if provisioned:
        per_fiber, demand_lanes = _fiber_lanes(setup)
        for p, per_route in enumerate(fiber_plan(setup, load_erlang)):
            for r, n in enumerate(per_route):
                for _ in range(n):
                    g = take(route_table[p][r][0], 1)
                    assert g is not None, "provisioned fiber paths exceed the cables"
                    held.append(g)
            spare_lanes.append([n * per_fiber[p][r] for r, n in enumerate(per_route)])

    def book_provisioned(p: int, k: int) -> tuple | None:
        row = spare_lanes[p]
        for r, free in enumerate(row):
            need = demand_lanes[p][r][k]
            if free >= need:
                row[r] = free - need
                per_end, c = route_table[p][r][2][k][1] // 2, route_lanes[p][r]
                a, b = setup.pair_sites[p]
                change_modules(a, b, per_end, c)
                return ([], (per_end, c, a, b, p, r, need))
        return None

    def release_provisioned(event: _Departure) -> None:
        _grant, (per_end, c, a, b, p, r, need) = event.booking
        spare_lanes[p][r] += need
        change_modules(a, b, -per_end, c)
        if observer is not None:
            observer("release", event)

    book_groomed = book_provisioned if provisioned else book_shared
    release = release_provisioned if provisioned else release_shared if share else release_own
    departure = _Departure.for_run(env, release)
    # Arrivals are a plain loop over the records; departures are events on SimPy's queue, and
    # the loop lets SimPy process every departure due before each arrival (env.peek / env.step).
    # An arrival then books at its own time t: the departure is scheduled `t + hold - now`
    # after SimPy's clock, which is exact whenever now >= (t + hold) / 2 (Sterbenz), i.e. in
    # all but the first instants of a run.
    peek, step = env.peek, env.step
    t = 0.0
    for measuring, count in ((False, warmup), (True, requests)):
        records = islice(arrivals, count)
        if measuring:
            # The measured period starts at its first arrival: what departs before it still
            # belongs to the warm-up, and every change until then is part of the starting state.
            first = next(records, None)
            if first is not None:
                while peek() <= first[0]:
                    step()
                records = chain((first,), records)
            modules_peak, lanes_peak = modules, lanes
            site_peak[:] = site_state
            modules_stamp = lanes_stamp = 0
            for stamps in (site_stamp, cable_stamp, kind_stamp):
                stamps[:] = [0] * len(stamps)
            hist = [coding.empty_histogram(s) for s in range(nsite)]
        for t, p, k, a, b, hold in records:
            while peek() <= t:
                step()
            m += 1
            # What this arrival finds at its two end sites (Poisson arrivals see time averages).
            try:
                hist[a][site_state[a]] += 1
            except IndexError:
                _tally_grown(hist[a], site_state[a])
            try:
                hist[b][site_state[b]] += 1
            except IndexError:
                _tally_grown(hist[b], site_state[b])
            if share:
                booking = book_groomed(p, k)
            else:
                for cables, units, route_kinds in route_table[p]:
                    grant = take(cables, units[k])
                    if grant is not None:
                        kind = route_kinds[k]
                        j, d_modules, d_lanes, _a, _b, code_a, code_b = kind
                        kind_stamp[j] -= m
                        modules += d_modules
                        lanes += d_lanes
                        site_state[a] += code_a
                        site_state[b] += code_b
                        if modules > modules_peak:
                            modules_peak = modules
                        if lanes > lanes_peak:
                            lanes_peak = lanes
                        if site_state[a] > site_peak[a]:
                            site_peak[a] = site_state[a]
                        if site_state[b] > site_peak[b]:
                            site_peak[b] = site_state[b]
                        booking = (grant, kind)
                        break
                else:
                    booking = None
            if booking is None:
                if m > 0:
                    class_blocked[k] += 1
                    pair_blocked[p] += 1
                    blocked_gbps += sizes[k]
                    if batches:
                        pair_batch_blocked[p][(m - 1) * batches // requests] += 1
                if observer is not None:
                    observer("block", (p, k))
            else:
                leave = departure(booking)
                schedule(leave, NORMAL, t + hold - env.now)
                if observer is not None:
                    observer("book", leave)
    if drain:
        env.run()
        for g in held:
            give_back(g)
    end_time = max(t, env.now)

    # Spread the kinds' stamps over the cables, sites and totals they stand for.
    for (cables, units, (_j, d_modules, d_lanes, a, b, code_a, code_b)), stamp in zip(kinds, kind_stamp):
        if stamp:
            for h in cables:
                cable_stamp[h] += units * stamp
            modules_stamp += d_modules * stamp
            lanes_stamp += d_lanes * stamp
            site_stamp[a] += code_a * stamp
            site_stamp[b] += code_b * stamp
    measured = max(requests, 1)
    capacity = [state.capacity_units(i) for i in range(ncable)]
    cable_sum = [busy[h] * m + cable_stamp[h] for h in range(ncable)]
    site_sums = [coding.decode(s, site_state[s] * m + site_stamp[s]) for s in range(nsite)]
    site_histograms = [coding.histograms(s, hist[s]) for s in range(nsite)]
    offered = class_offered.tolist()
    return ReplicationRecord(
        architecture=arch.name,
        load_erlang=float(load_erlang),
        replication=replication,
        requests=sum(offered),
        blocked=sum(class_blocked),
        offered_gbps=float(sum(n * s for n, s in zip(offered, sizes))),
        blocked_gbps=blocked_gbps,
        class_offered=offered,
        class_blocked=class_blocked,
        pair_offered=pair_offered.tolist(),
        pair_blocked=pair_blocked,
        pair_batch_offered=pair_batch_offered.tolist(),
        pair_batch_blocked=pair_batch_blocked,
        transceivers_peak=modules_peak,
        transceivers_mean=(modules * m + modules_stamp) / measured,
        lanes_peak=lanes_peak,
        lanes_mean=(lanes * m + lanes_stamp) / measured,
        site_transceivers_peak=[coding.decode(s, site_peak[s])[0] for s in range(nsite)],
        site_transceivers_mean=[x[0] / measured for x in site_sums],
        site_lanes_mean=[x[1] / measured for x in site_sums],
        site_transceivers_histogram=[h[0] for h in site_histograms],
        site_lanes_histogram=[h[1] for h in site_histograms],
        site_mimo_lanes_histogram=[h[2] for h in site_histograms],
        cable_utilisation=[a / measured / cap if cap else 0.0 for a, cap in zip(cable_sum, capacity)],
        sim_time=float(end_time),
        wall_time_s=time.perf_counter() - started,
        ended_empty=(state.is_empty() and modules == 0 and lanes == 0 and not any(site_state)) if drain else None,
    )
