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
from dataclasses import dataclass, field, fields, replace
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
from .warmup import AUTO, AutoWarmUp

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
    route_segments : tuple of tuple of tuple of tuple of int
        Per pair and route: the segments of a regenerated route (each a tuple of cable indices,
        booked with its own channel continuity), or ``()`` for a transparent route; empty when no
        route is regenerated (:mod:`sdmnet.planning.regeneration`).
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
    route_segments: tuple[tuple[tuple[tuple[int, ...], ...], ...], ...] = ()

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
    ``warmup`` is the number of arrivals the warm-up took; ``warmup_settled`` says whether a
    warm-up the run chose itself found the demands in flight settled (None for a fixed one).
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
    warmup: int = 0
    warmup_settled: bool | None = None

    def to_dict(self) -> dict:
        """A JSON-ready dict (for task files); its lists are the record's own, not copies
        (``dataclasses.asdict`` would copy every element: seconds on a 100-site network)."""
        return {f.name: getattr(self, f.name) for f in fields(self)}

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
    route_segments: list[tuple] = []
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
        route_segments.append(tuple(tuple(getattr(r, "segments", ())) for r in found_routes))
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
        route_segments=tuple(route_segments) if any(any(r) for r in route_segments) else (),
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


class _Arrivals:
    """Endless ``(time, pair, size class, site a, site b, holding time)`` arrival records.

    Record ``i`` comes from draw ``i`` of four independent generators (interarrival gaps, pairs,
    sizes, holding times), drawn in batches of :data:`_BATCH` with numpy.  The records of a batch
    come from a ``zip`` chained in C (:attr:`records`), so an arrival costs one tuple.  While
    drawing, the records whose index lies in the measured range are tallied into
    ``class_offered`` and ``pair_offered`` (offered counts need no work per arrival).  The end
    sites of the pair ride along, looked up per batch.  The measured range may be set once the
    warm-up has ended (:meth:`measure_from`, for a warm-up the run chooses itself).
    """

    def __init__(
        self,
        seq: np.random.SeedSequence,
        setup: EngineSetup,
        rate: float,
        measured: range | None,
        class_offered: np.ndarray,
        pair_offered: np.ndarray,
        pair_batch_offered: np.ndarray | None = None,
    ) -> None:
        self.setup, self.rate = setup, rate
        self.measured = measured if measured is not None else range(0)
        self.class_offered, self.pair_offered, self.pair_batch_offered = class_offered, pair_offered, pair_batch_offered
        self.rngs = [np.random.default_rng(s) for s in seq.spawn(4)]
        self._drawn: tuple[int, np.ndarray, np.ndarray] | None = None  # the last batch: first index, pairs, sizes
        self.records: Iterator[tuple[float, int, int, int, int, float]] = chain.from_iterable(self._batches())

    def measure_from(self, start: int, count: int) -> None:
        """Measure arrivals ``start .. start + count - 1`` (those of the batch drawn already too)."""
        self.measured = range(start, start + count)
        if self._drawn is not None:
            self._tally(*self._drawn)

    def _tally(self, first: int, pairs: np.ndarray, sizes: np.ndarray) -> None:
        measured = self.measured
        low, high = max(measured.start - first, 0), min(measured.stop - first, _BATCH)
        if low < high:
            self.class_offered[:] += np.bincount(sizes[low:high], minlength=len(self.class_offered))
            self.pair_offered[:] += np.bincount(pairs[low:high], minlength=len(self.pair_offered))
            if self.pair_batch_offered is not None:
                # Measured arrival i falls in batch i * batches // measured.
                index = np.arange(first + low, first + high) - measured.start
                batch = index * self.pair_batch_offered.shape[1] // len(measured)
                np.add.at(self.pair_batch_offered, (pairs[low:high], batch), 1)

    def _batches(self) -> Iterator[Iterator[tuple[float, int, int, int, int, float]]]:
        setup, rate = self.setup, self.rate
        gap_rng, pair_rng, size_rng, hold_rng = self.rngs
        pair_cum, size_cum = np.asarray(setup.pair_cumulative), np.asarray(setup.size_cumulative)
        ends = np.asarray(setup.pair_sites, dtype=np.int64).reshape(-1, 2)
        site_a, site_b = ends[:, 0], ends[:, 1]
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
            self._drawn = (first, pairs, sizes)
            self._tally(first, pairs, sizes)
            first += _BATCH
            yield zip(
                times.tolist(), pairs.tolist(), sizes.tolist(), site_a[pairs].tolist(), site_b[pairs].tolist(),
                holds.tolist(),
            )


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


class _Segments(tuple):
    """A regenerated route's cables in order, with ``parts``: its segments, each booked with its
    own channel continuity (:func:`_segmented_take`)."""

    parts: tuple[tuple[int, ...], ...]

    def __new__(cls, cables: tuple[int, ...], parts: tuple[tuple[int, ...], ...]) -> _Segments:
        self = super().__new__(cls, cables)
        self.parts = parts
        return self


def _segmented_take(
    take: Callable[[tuple[int, ...], int], Grant | None], give_back: Callable[[Grant], None]
) -> Callable[[tuple[int, ...], int], Grant | None]:
    """``take`` that books a regenerated route segment by segment (one grant for all of them);
    used only when some route is regenerated, so transparent runs keep the plain ``take``."""

    def take_route(cables: tuple[int, ...], n: int) -> Grant | None:
        parts = getattr(cables, "parts", None)
        if parts is None:
            return take(cables, n)
        grant: Grant = []
        for part in parts:
            got = take(part, n)
            if got is None:
                if grant:
                    give_back(grant)
                return None
            grant += got
        return grant

    return take_route


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
            segments = setup.route_segments[p][r] if setup.route_segments else ()
            rows.append((_Segments(cables, segments) if segments else tuple(cables), units, tuple(route_kinds)))
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
    warmup: int | str,
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
    warmup : int or "auto"
        Arrivals simulated first and not measured; ``"auto"``: until the demands in flight have
        settled (MSER-5, :mod:`sdmnet.sim.warmup`).
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
    if load_erlang <= 0:
        raise ValueError("load_erlang must be positive")
    arch = setup.architecture
    auto = AutoWarmUp(load_erlang) if warmup == AUTO else None
    fixed = 0 if auto is not None else int(warmup)
    run = _start_run(setup, load_erlang, seed, replication, requests, None if auto is not None else fixed)
    env, state, coding, sizes = run.env, run.state, run.coding, setup.sizes_gbps
    schedule = env.schedule
    take, give_back = run.take, state.give_back
    share = arch.share
    code = coding.code
    route_table, batches = run.route_table, run.batches
    nsite = len(setup.sites)
    # The counters: what the hot loop below changes at every arrival, as local names for speed.
    class_blocked, pair_blocked, pair_batch_blocked = run.class_blocked, run.pair_blocked, run.pair_batch_blocked
    site_state, site_peak, site_stamp = run.site_state, run.site_peak, run.site_stamp
    cable_stamp, kind_stamp = run.cable_stamp, run.kind_stamp
    hist = [coding.empty_histogram(s) for s in range(nsite)]
    # Measured arrivals so far: negative through the warm-up, 0 when measuring starts.
    m = -(auto.cap + auto.step) if auto is not None else -fixed
    modules = lanes = modules_peak = lanes_peak = modules_stamp = lanes_stamp = 0
    blocked_gbps = 0.0

    def measured() -> int:
        return m

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

    grooming = _Grooming(setup, run, load_erlang, change_modules, measured, observer) if share else None
    book_groomed = grooming.book if grooming is not None else None
    release = grooming.release if grooming is not None else release_own
    departure = _Departure.for_run(env, release)
    # Arrivals are a plain loop over the records; departures are events on SimPy's queue, and
    # the loop lets SimPy process every departure due before each arrival (env.peek / env.step).
    # An arrival then books at its own time t: the departure is scheduled `t + hold - now`
    # after SimPy's clock, which is exact whenever now >= (t + hold) / 2 (Sterbenz), i.e. in
    # all but the first instants of a run.
    peek, step = env.peek, env.step

    def stretches() -> Iterator[tuple[bool, int]]:
        # The warm-up: in one stretch, or in stretches until the demands in flight (the
        # departures waiting on SimPy's queue) have settled; then the measured arrivals.
        if auto is None:
            yield False, fixed
        else:
            while True:
                yield False, auto.step
                if auto.observe(len(env._queue)):
                    break
            run.arrivals.measure_from(auto.arrivals, requests)
        yield True, requests

    t = 0.0
    for measuring, count in stretches():
        records = islice(run.arrivals.records, count)
        if measuring:
            m = 0
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
        if grooming is not None:
            grooming.give_back_held()
    d_modules_stamp, d_lanes_stamp = _spread_kind_stamps(run)
    totals = _Totals(
        m, modules, lanes, modules_peak, lanes_peak, modules_stamp + d_modules_stamp, lanes_stamp + d_lanes_stamp,
        blocked_gbps, hist,
    )
    return _final_record(
        setup, run, totals, load_erlang=load_erlang, replication=replication, requests=requests,
        end_time=max(t, env.now), wall_time_s=time.perf_counter() - started, drain=drain,
        warmup=auto.arrivals if auto is not None else fixed, settled=auto.settled if auto is not None else None,
    )  # fmt: skip


@dataclass
class _Run:
    """One replication's set-up: its random arrivals, SimPy environment, occupancy, route table,
    and the per-class, per-pair, per-site and per-cable counters the run fills in."""

    env: simpy.Environment
    state: UnitState | FiberState
    coding: _SiteCoding
    route_table: list
    kinds: list[tuple[tuple[int, ...], int, _BookingKind]]
    arrivals: _Arrivals
    batches: int
    class_offered: np.ndarray
    pair_offered: np.ndarray
    pair_batch_offered: np.ndarray
    class_blocked: list[int]
    pair_blocked: list[int]
    pair_batch_blocked: list[list[int]]
    site_state: list[int]  # each site's figure (_SiteCoding): lanes, or packed counts
    site_peak: list[int]
    site_stamp: list[int]
    cable_stamp: list[int]
    kind_stamp: list[int]
    take: Callable[[tuple[int, ...], int], Grant | None]  # state.take, segment by segment where regenerated


def _start_run(
    setup: EngineSetup, load_erlang: float, seed: int, replication: int, requests: int, warmup: int | None
) -> _Run:
    """Everything one replication needs before its first arrival (see :func:`simulate_replication`)."""
    nclass, npair, nsite, ncable = len(setup.sizes_gbps), len(setup.pairs), len(setup.sites), len(setup.cables)
    class_offered = np.zeros(nclass, dtype=np.int64)
    pair_offered = np.zeros(npair, dtype=np.int64)
    batches = STEADY_BATCHES if requests >= STEADY_BATCHES else 0
    pair_batch_offered = np.zeros((npair, batches), dtype=np.int64)
    # A warm-up the run chooses itself (None) sets the measured range once it has ended.
    arrivals = _Arrivals(
        replication_seed(seed, replication), setup, load_erlang / setup.mean_holding,
        None if warmup is None else range(warmup, warmup + requests), class_offered, pair_offered,
        pair_batch_offered if batches else None,
    )  # fmt: skip
    state: UnitState | FiberState
    if setup.whole_fiber:
        state = FiberState(setup.fiber_pairs)
    else:
        state = UnitState(setup.fiber_pairs, setup.groups_per_fiber, setup.channels, setup.architecture.lane_change)
    coding = _SiteCoding.for_setup(setup)
    route_table, kinds = _route_table(setup, coding)
    return _Run(
        env=simpy.Environment(), state=state, coding=coding, route_table=route_table, kinds=kinds,
        arrivals=arrivals, batches=batches, class_offered=class_offered, pair_offered=pair_offered,
        pair_batch_offered=pair_batch_offered, class_blocked=[0] * nclass, pair_blocked=[0] * npair,
        pair_batch_blocked=[[0] * batches for _ in range(npair)], site_state=[0] * nsite,
        site_peak=[0] * nsite, site_stamp=[0] * nsite, cable_stamp=[0] * ncable, kind_stamp=[0] * len(kinds),
        take=_segmented_take(state.take, state.give_back) if setup.route_segments else state.take,
    )  # fmt: skip


class _Grooming:
    """Booking kinds of grooming (``share``): demands fill the spare capacity of lit units.

    Unit switching and fiber switching without provisioning light units on demand and put them
    dark when their last demand departs; fiber switching with provisioned fiber paths holds its
    pair's paths for the whole run and hands out their lanes (docs/model.md, section 3).
    ``change_modules`` moves the run's transceiver counters and ``measured`` tells the count of
    measured arrivals, for the cables' stamps (see :func:`simulate_replication`).
    """

    def __init__(
        self,
        setup: EngineSetup,
        run: _Run,
        load_erlang: float,
        change_modules: Callable[[int, int, int, int], None],
        measured: Callable[[], int],
        observer: Callable[[str, object], None] | None,
    ) -> None:
        self.setup, self.run = setup, run
        self.change_modules, self.measured, self.observer = change_modules, measured, observer
        self.lit: dict[tuple[int, int], list[_LitUnit]] = {}
        self.held: list[Grant] = []
        self.spare_lanes: list[list[int]] = []
        self.provisioned = setup.whole_fiber and bool(setup.provisioned_fibers)
        if self.provisioned:
            self.book, self.release = self.book_provisioned, self.release_provisioned
            per_fiber, self.demand_lanes = _fiber_lanes(setup)
            for p, per_route in enumerate(fiber_plan(setup, load_erlang)):
                for r, n in enumerate(per_route):
                    for _ in range(n):
                        g = run.take(run.route_table[p][r][0], 1)
                        assert g is not None, "provisioned fiber paths exceed the cables"
                        self.held.append(g)
                self.spare_lanes.append([n * per_fiber[p][r] for r, n in enumerate(per_route)])
        else:
            self.book, self.release = self.book_shared, self.release_shared

    def give_back_held(self) -> None:
        """Return the provisioned fibers (at the end of a drained run)."""
        for g in self.held:
            self.run.state.give_back(g)

    def refill(self, unit: _LitUnit, a: int, b: int) -> None:
        """A lit unit's modules follow the capacity it carries (unit switching only)."""
        c = unit.lanes_per_module
        if c:
            per_end = modules_per_end(unit.used, self.setup.lane_gbps, c)
            if per_end != unit.modules:
                self.change_modules(a, b, per_end - unit.modules, c)
                unit.modules = per_end

    def book_shared(self, p: int, k: int) -> tuple | None:
        take, give_back = self.run.take, self.run.state.give_back
        size = self.setup.sizes_gbps[k]
        for r, (cables, _units, route_kinds) in enumerate(self.run.route_table[p]):
            # Spare capacity of units already lit on this route first, then new units.
            units = self.lit.setdefault((p, r), [])
            plan, need = [], size
            for unit in units:
                if need <= 1e-9:
                    break
                if unit.spare > 1e-9:
                    amount = min(unit.spare, need)
                    plan.append((unit, amount))
                    need -= amount
            gbps = self.setup.route_unit_gbps[p][r]
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
                return self.light_units(p, r, cables, route_kinds[k][1] // 2, plan, need, grants)
        return None

    def light_units(
        self, p: int, r: int, cables: tuple[int, ...], per_end: int, plan: list, need: float, grants: list
    ) -> tuple:
        setup, cable_stamp, m = self.setup, self.run.cable_stamp, self.measured()
        a, b = setup.pair_sites[p]
        gbps = setup.route_unit_gbps[p][r]
        c = setup.route_lanes_per_module[p][r]
        units = self.lit[(p, r)]
        for g in grants:
            unit = _LitUnit(g, gbps, (p, r), 0 if setup.whole_fiber else c, cables)
            for h in cables:
                cable_stamp[h] -= m
            amount = min(gbps, need)
            need -= amount
            units.append(unit)
            plan.append((unit, amount))
        for unit, amount in plan:
            unit.spare -= amount
            unit.used += amount
            self.refill(unit, a, b)
        # Fiber switching: the demand's own modules, whatever fiber carries it; unit switching:
        # the modules belong to the lit units (refilled above).
        per_end = per_end if setup.whole_fiber else 0
        if per_end:
            self.change_modules(a, b, per_end, c)
        return ([], (per_end, c, a, b, plan))

    def release_shared(self, event: _Departure) -> None:
        _grant, (per_end, c, a, b, parts) = event.booking
        cable_stamp, m = self.run.cable_stamp, self.measured()
        for unit, amount in parts:
            unit.used -= amount
            unit.spare += amount
            if unit.used <= 1e-9:
                unit.used = 0.0
                self.run.state.give_back(unit.grant)
                for h in unit.cables:
                    cable_stamp[h] += m
                self.lit[unit.key].remove(unit)
            self.refill(unit, a, b)
        if per_end:
            self.change_modules(a, b, -per_end, c)
        if self.observer is not None:
            self.observer("release", event)

    def book_provisioned(self, p: int, k: int) -> tuple | None:
        row = self.spare_lanes[p]
        for r, free in enumerate(row):
            need = self.demand_lanes[p][r][k]
            if free >= need:
                row[r] = free - need
                per_end, c = self.run.route_table[p][r][2][k][1] // 2, self.setup.route_lanes_per_module[p][r]
                a, b = self.setup.pair_sites[p]
                self.change_modules(a, b, per_end, c)
                return ([], (per_end, c, a, b, p, r, need))
        return None

    def release_provisioned(self, event: _Departure) -> None:
        _grant, (per_end, c, a, b, p, r, need) = event.booking
        self.spare_lanes[p][r] += need
        self.change_modules(a, b, -per_end, c)
        if self.observer is not None:
            self.observer("release", event)


def _spread_kind_stamps(run: _Run) -> tuple[int, int]:
    """Spread each booking kind's stamp over the cables and sites it stands for.

    Returns what the kinds add to the modules' and the lanes' stamps.
    """
    d_modules = d_lanes = 0
    for (cables, units, (_j, kind_modules, kind_lanes, a, b, code_a, code_b)), stamp in zip(run.kinds, run.kind_stamp):
        if stamp:
            for h in cables:
                run.cable_stamp[h] += units * stamp
            d_modules += kind_modules * stamp
            d_lanes += kind_lanes * stamp
            run.site_stamp[a] += code_a * stamp
            run.site_stamp[b] += code_b * stamp
    return d_modules, d_lanes


@dataclass(frozen=True)
class _Totals:
    """The run's scalar counters at its end (see :func:`simulate_replication`)."""

    m: int  # measured arrivals
    modules: int
    lanes: int
    modules_peak: int
    lanes_peak: int
    modules_stamp: int
    lanes_stamp: int
    blocked_gbps: float
    histograms: list


def _final_record(
    setup: EngineSetup,
    run: _Run,
    totals: _Totals,
    *,
    load_erlang: float,
    replication: int,
    requests: int,
    end_time: float,
    wall_time_s: float,
    drain: bool,
    warmup: int,
    settled: bool | None,
) -> ReplicationRecord:
    """The record of a finished run: counts, time averages from the stamps, peaks, histograms."""
    m, state, coding, sizes = totals.m, run.state, run.coding, setup.sizes_gbps
    nsite, ncable = len(setup.sites), len(setup.cables)
    measured = max(requests, 1)
    capacity = [state.capacity_units(i) for i in range(ncable)]
    busy = state.busy_units
    cable_sum = [busy[h] * m + run.cable_stamp[h] for h in range(ncable)]
    site_sums = [coding.decode(s, run.site_state[s] * m + run.site_stamp[s]) for s in range(nsite)]
    site_histograms = [coding.histograms(s, totals.histograms[s]) for s in range(nsite)]
    offered = run.class_offered.tolist()
    ended_empty = None
    if drain:
        ended_empty = state.is_empty() and totals.modules == 0 and totals.lanes == 0 and not any(run.site_state)
    return ReplicationRecord(
        architecture=setup.architecture.name,
        load_erlang=float(load_erlang),
        replication=replication,
        requests=sum(offered),
        blocked=sum(run.class_blocked),
        offered_gbps=float(sum(n * s for n, s in zip(offered, sizes))),
        blocked_gbps=totals.blocked_gbps,
        class_offered=offered,
        class_blocked=run.class_blocked,
        pair_offered=run.pair_offered.tolist(),
        pair_blocked=run.pair_blocked,
        pair_batch_offered=run.pair_batch_offered.tolist(),
        pair_batch_blocked=run.pair_batch_blocked,
        transceivers_peak=totals.modules_peak,
        transceivers_mean=(totals.modules * m + totals.modules_stamp) / measured,
        lanes_peak=totals.lanes_peak,
        lanes_mean=(totals.lanes * m + totals.lanes_stamp) / measured,
        site_transceivers_peak=[coding.decode(s, run.site_peak[s])[0] for s in range(nsite)],
        site_transceivers_mean=[x[0] / measured for x in site_sums],
        site_lanes_mean=[x[1] / measured for x in site_sums],
        site_transceivers_histogram=[h[0] for h in site_histograms],
        site_lanes_histogram=[h[1] for h in site_histograms],
        site_mimo_lanes_histogram=[h[2] for h in site_histograms],
        cable_utilisation=[a / measured / cap if cap else 0.0 for a, cap in zip(cable_sum, capacity)],
        sim_time=float(end_time),
        wall_time_s=wall_time_s,
        ended_empty=ended_empty,
        warmup=warmup,
        warmup_settled=settled,
    )
