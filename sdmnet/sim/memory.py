"""How much memory a run will hold, estimated from the scenario before anything large is
allocated; and the refusal when the machine has less (docs/model.md, section 7).

The loaders bound every value on its own (no cable of more than 10,000 fiber pairs, and so on);
what they cannot see is a combination: many fiber pairs *and* many core groups *and* many
channels on thousands of cables, with a high load and many replications.  :func:`estimate_memory`
adds up the structures that grow with the scenario, each from a formula over the scenario's
counts, and :func:`require_memory` compares the sum with what the operating system says is
available now (:func:`available_memory`).

The formulas follow the data structures, with the bytes of CPython objects on 64-bit Linux
(an int of n bits takes 28 + 4 ceil(n / 30) bytes; a tuple 40 + 8 per item; a list slot 8):

- *occupancy* (per worker process): one Python int per cable and channel holding a bit per
  unit position (fiber pairs x core groups), :mod:`sdmnet.sim.allocation`;
- *demands in flight* (per worker): never more than an infinite-server system would hold
  (Poisson with mean the load: mean + 10 standard deviations), nor more than the run's requests;
  each holds an event, a booking and one grant entry per unit and hop; the entries are distinct
  units, so never more than the network's unit positions;
- *routes* (per worker): per datacenter pair, ``k_paths`` routes with their cables and one booking
  kind per size class;
- *site histograms* (per worker, and in every record): how often each count of lanes in use
  was seen at each datacenter site, a list as long as the site's peak count in the engine and
  three sorted sparse lists in the record (:func:`_site_lanes` bounds both);
- *records* (in the parent): one replication record per task, with figures per pair (ten
  batches of offered and blocked requests each), site, cable and size class;
- *analytic estimate* (in the parent, after the sweep): the Kaufman-Roberts recursion holds about
  six float arrays of (largest cable capacity in units + widest demand) per loaded cable and load
  point (:mod:`sdmnet.analysis.analytic`);
- *plan and forecast* search up to ``plan.max_fiber_pairs`` per cable, so their occupancy and
  analytic first guess are counted at that many pairs, and forecasts at the last year's load.

It is an estimate that errs high for large runs (every route is counted at the longest possible
hop count up to 32; every channel bit as if the highest channel), and it leaves out what does not grow with the
scenario (the interpreter and libraries, about 200 MB).  ``tests/test_memory.py`` compares it with
measured peaks.
"""

from __future__ import annotations

import math
import re
import resource
from dataclasses import dataclass
from pathlib import Path

from ..errors import InputError
from ..inputs.model import Architecture, Scenario
from ..network.architectures import UnitGeometry, unit_geometry, why_not_allowed
from .engine import STEADY_BATCHES
from .precision import replication_cap
from .warmup import AUTO, FIRST_LOOK, MAX_HOLDING_TIMES, SAMPLES_PER_HOLDING

__all__ = [
    "MemoryEstimate",
    "estimate_memory",
    "available_memory",
    "require_memory",
    "parse_size",
    "format_bytes",
    "VERBS",
]

#: Verbs whose memory is estimated (``check`` and ``report`` hold nothing that grows).
VERBS = ("simulate", "estimate", "paths", "plan", "forecast", "demo")

_INT = 28  # bytes of a small Python int
_TUPLE = 40  # bytes of an empty tuple; + 8 per item
_EVENT = 400  # a departure event on SimPy's queue with its booking and grant list (measured order)
_HOPS_COUNTED = 32  # the longest route counted (a route has at most sites - 1 hops)


def _int_bytes(bits: float) -> float:
    """Bytes of a Python int of ``bits`` bits."""
    return _INT + 4 * math.ceil(max(bits, 1) / 30)


@dataclass(frozen=True)
class Part:
    """One structure of a run: what it is, the key a user changes to shrink it, its bytes."""

    what: str
    where: str
    nbytes: float


@dataclass(frozen=True)
class MemoryEstimate:
    """The memory a run will hold at its peak, and the parts it is made of.

    ``optional`` is the analytic estimate beside a simulation: the simulation runs without it
    when it alone does not fit (its columns are then left empty, and the run says so).
    """

    total: float
    parts: tuple[Part, ...]
    optional: Part | None = None

    @property
    def largest(self) -> Part:
        return max(self.parts, key=lambda p: p.nbytes)


def _loads(scenario: Scenario, verb: str) -> float:
    """Largest total load the verb simulates (forecasts grow it year by year)."""
    load = max(scenario.traffic.loads_erlang)
    if verb in ("forecast", "demo") and scenario.forecast is not None:
        load *= max(scenario.forecast.peak_factor(y) for y in range(scenario.forecast.years + 1))
    return load


def _slowest_lane(scenario: Scenario) -> float:
    """The lowest lane rate of any transceiver class or forecast year (the most units and lanes
    per demand)."""
    roadmap = list(scenario.forecast.lane_gbps_by_year) if scenario.forecast is not None else []
    return min([scenario.transceiver.lane_gbps, *roadmap] + [c.lane_gbps for c in scenario.transceivers])


def _cables(scenario: Scenario, arch: Architecture, verb: str) -> list[tuple[UnitGeometry, int]]:
    """The unit geometry and fiber pairs of every cable under ``arch``; plans and forecasts
    search up to ``plan.max_fiber_pairs``, so they count that many."""
    planning = verb in ("plan", "forecast", "demo") and scenario.plan is not None
    searched = scenario.plan.max_fiber_pairs if planning and scenario.plan is not None else 0
    view = scenario.topology_for(arch)
    out = []
    for cable in view.cables:
        fiber = view.fiber_types[cable.fiber_type]
        if why_not_allowed(arch, fiber) is None:  # the loader refused the others already
            geometry = unit_geometry(arch, fiber, _slowest_lane(scenario))
            out.append((geometry, max(cable.fiber_pairs, searched)))
    return out


def _largest_units(scenario: Scenario, geometry: UnitGeometry) -> int:
    """Units the largest demand takes on one hop."""
    return math.ceil(max(s for s, _ in scenario.traffic.sizes_gbps) / geometry.unit_gbps)


def _engine_parts(scenario: Scenario, verb: str, jobs: int) -> list[Part]:
    """Occupancy, demands in flight and routes of the largest architecture, times the workers."""
    topo, run = scenario.topology, scenario.run
    dcs = len(topo.datacenters)
    pairs = dcs * (dcs - 1) // 2
    hops = max(1, min(len(topo.sites) - 1, len(topo.cables), _HOPS_COUNTED))
    classes = len(scenario.traffic.sizes_gbps)
    load = _loads(scenario, verb)
    in_flight = _in_flight(scenario, verb)
    # A list histogram per site, grown by doubling, of counts (Python ints past 256).
    histograms = sum(2 * peak * (8 + _INT) for peak, _spread in _site_lanes(scenario, verb))
    tasks = len(scenario.architectures) * len(scenario.traffic.loads_erlang) * _replications(scenario)
    workers = max(1, min(jobs, tasks))
    each = f", in each of {workers} workers" if workers > 1 else ""
    routes = pairs * run.k_paths * (_TUPLE + 8 * hops + classes * (2 * _TUPLE + 9 * 8 + _INT))

    best: list[Part] = []
    for arch in scenario.architectures:
        occupancy = positions = 0.0
        widest, units = 1, 1
        for geometry, fibers in _cables(scenario, arch, verb):
            if geometry.whole_fiber:
                occupancy += 2 * _int_bytes(fibers)
                positions += fibers
            else:
                bits = fibers * geometry.groups_per_fiber
                occupancy += geometry.channels * (_int_bytes(bits) + 8)
                occupancy += geometry.groups_per_fiber * (_int_bytes(geometry.channels) + 8)
                positions += bits * geometry.channels
            widest = max(widest, geometry.channels)
            units = max(units, _largest_units(scenario, geometry))
        entries = min(positions, in_flight * units * hops)
        flight = in_flight * _EVENT + entries * (_TUPLE + 24 + 2 * _INT + widest / 8 + 8) + histograms
        parts = [
            Part(f"the occupancy under '{arch.name}', a bit per fiber pair, core group and channel of each cable{each}",
                 "topology", workers * occupancy),
            Part(f"the demands in flight at load {load:g} under '{arch.name}'{each}", "traffic.load_erlang",
                 workers * flight),
            Part(f"the {run.k_paths} routes of each of {pairs} datacenter pairs{each}", "run.k_paths",
                 workers * routes),
        ]
        if sum(p.nbytes for p in parts) > sum(p.nbytes for p in best):
            best = parts
    return best


def _warmup(scenario: Scenario, load: float) -> float:
    """Warm-up arrivals of a replication: ``[run] warmup``, or at most the automatic warm-up's cap."""
    if scenario.run.warmup == AUTO:
        return max(FIRST_LOOK * max(1.0, load / SAMPLES_PER_HOLDING), MAX_HOLDING_TIMES * load)
    return float(scenario.run.warmup)


def _replications(scenario: Scenario) -> int:
    """Replications per point: with ``[run] precision``, as many as it may add."""
    return replication_cap(scenario.run) if scenario.run.precision is not None else scenario.run.replications


def _in_flight(scenario: Scenario, verb: str) -> float:
    """Most demands in flight: an infinite-server system's mean plus ten deviations, at most the
    run's arrivals."""
    load = _loads(scenario, verb)
    return min(load + 10 * math.sqrt(load) + 10, scenario.run.requests + _warmup(scenario, load))


def _site_lanes(scenario: Scenario, verb: str) -> list[tuple[float, float]]:
    """Per datacenter site, ``(peak, spread)``: the highest count of lanes in use it can see (the
    length of the engine's histogram) and how many distinct counts its measured arrivals see (the
    entries of a record's histogram).

    The lanes in use are a compound Poisson count (infinite-server bound): mean ``L E[n]``,
    variance ``L E[n^2]`` for ``n`` lanes per demand; counts seen lie within ten deviations, plus
    what the warm-up leaves unfilled (a system started empty holds ``L (1 - exp(-t))`` demands
    after ``t`` mean holding times, ``t = warmup / L``).  Neither exceeds the lanes of the
    cables ending at the site.
    """
    topo, run = scenario.topology, scenario.run
    load = _loads(scenario, verb)
    lane = _slowest_lane(scenario)
    group = max(f.coupled_group for f in topo.fiber_types.values())  # MIMO modules take whole groups
    lanes = [(math.ceil(size / lane / group) * group, p) for size, p in scenario.traffic.sizes_gbps]
    mean = sum(n * p for n, p in lanes)
    deviation = math.sqrt(load * sum(n * n * p for n, p in lanes))
    largest = max(n for n, _ in lanes)
    warmup = _warmup(scenario, load)
    peak = min(load * mean + 10 * deviation, (run.requests + warmup) * largest) + 10 * largest
    # With warmup = "auto" the measured arrivals start once the demands in flight have settled.
    unfilled = 0.0 if run.warmup == AUTO else load * math.exp(-warmup / load) * mean
    spread = min(peak, 10 * deviation + unfilled + 10 * largest)
    ending: dict[str, float] = {s.id: 0.0 for s in topo.datacenters}
    for cable in topo.cables:
        fiber = topo.fiber_types[cable.fiber_type]
        for end in (cable.a, cable.b):
            if end in ending:
                ending[end] += cable.fiber_pairs * fiber.cores * fiber.channels
    return [(min(peak, cap) + 16, min(spread, cap) + 1) for cap in ending.values()]


def _records_part(scenario: Scenario, verb: str) -> Part:
    topo = scenario.topology
    dcs = len(topo.datacenters)
    pairs = dcs * (dcs - 1) // 2
    figures = pairs * (2 + 2 * STEADY_BATCHES) + 3 * len(topo.sites) + len(topo.cables)
    figures += 2 * len(scenario.traffic.sizes_gbps)
    # Three sparse histograms per datacenter site, each entry a list of two numbers.
    entries = 3 * sum(spread for _peak, spread in _site_lanes(scenario, verb))
    tasks = len(scenario.architectures) * len(scenario.traffic.loads_erlang) * _replications(scenario)
    # Each figure once as a Python number in the record and once in the summaries built from it.
    each = figures * 2 * (_INT + 8) + entries * (56 + 16 + 2 * _INT + 8) + 2048
    return Part(f"the records of {tasks} replications", "run.replications", tasks * each)


def _analytic_part(scenario: Scenario, verb: str) -> Part:
    """The Kaufman-Roberts arrays of the estimate (all cables and load points at once) or of a
    plan's first guess (one cable at a time, up to ``plan.max_fiber_pairs``)."""
    worst = 0.0
    for arch in scenario.architectures:
        cables = _cables(scenario, arch, verb)
        top = max((fibers * g.units_per_fiber for g, fibers in cables), default=0)
        width = max((_largest_units(scenario, g) for g, _ in cables), default=1)
        rows = 1 if verb in ("plan", "forecast") else len(cables) * len(scenario.traffic.loads_erlang)
        worst = max(worst, 8 * rows * (6 * (top + 1) + width))
    return Part("the analytic Kaufman-Roberts recursion over each cable's units", "topology", worst)


def estimate_memory(scenario: Scenario, verb: str = "simulate", *, jobs: int = 1) -> MemoryEstimate:
    """Peak memory ``verb`` will hold for ``scenario`` beyond the interpreter's own, in bytes.

    Parameters
    ----------
    scenario : Scenario
        A loaded (validated) scenario.
    verb : str
        One of :data:`VERBS`.
    jobs : int
        Local worker processes (each holds its own engine state).

    Returns
    -------
    MemoryEstimate
        ``paths`` holds the routes; ``estimate`` the routes and the analytic recursion;
        ``simulate`` the sweep (workers' engine state and the records), with the analytic
        estimate beside it as ``optional``; ``plan`` and ``forecast`` the larger of their sweep
        and their analytic first guess; ``demo`` all of these.
    """
    engine = _engine_parts(scenario, verb, jobs)
    routes = [p for p in engine if p.where == "run.k_paths"]
    if verb == "paths":
        return MemoryEstimate(sum(p.nbytes for p in routes), tuple(routes))
    analytic = _analytic_part(scenario, verb)
    if verb == "estimate":
        parts = (*routes, analytic)
        return MemoryEstimate(sum(p.nbytes for p in parts), parts)
    records = _records_part(scenario, verb)
    sweep = sum(p.nbytes for p in engine) + records.nbytes
    if verb == "simulate":
        beside = Part(analytic.what, analytic.where, analytic.nbytes + records.nbytes + routes[0].nbytes)
        return MemoryEstimate(sweep, (*engine, records), optional=beside)
    parts = (*engine, records, analytic)
    return MemoryEstimate(max(sweep, analytic.nbytes + records.nbytes), parts)


def _read_number(path: str) -> int | None:
    try:
        text = Path(path).read_text().split()[0]
    except (OSError, IndexError):
        return None
    return int(text) if text.isdigit() else None


def _meminfo(key: str, path: str = "/proc/meminfo") -> int | None:
    try:
        match = re.search(rf"^{key}:\s+(\d+) kB", Path(path).read_text(), re.MULTILINE)
    except OSError:
        return None
    return int(match.group(1)) * 1024 if match else None


def available_memory() -> int | None:
    """Bytes this process may still allocate, as the operating system tells; None if unknown.

    The smallest of: the memory Linux reports available (``MemAvailable``, /proc/meminfo), the room
    left under the control group's limit (cgroup v2 ``memory.max`` less ``memory.current``, or v1
    ``limit_in_bytes`` less ``usage_in_bytes``), and the room left under the address-space limit
    (``ulimit -v``) beyond the address space already mapped.
    """
    found = []
    free = _meminfo("MemAvailable")
    if free is not None:
        found.append(free)
    for limit_file, usage_file in (
        ("/sys/fs/cgroup/memory.max", "/sys/fs/cgroup/memory.current"),
        ("/sys/fs/cgroup/memory/memory.limit_in_bytes", "/sys/fs/cgroup/memory/memory.usage_in_bytes"),
    ):
        limit, usage = _read_number(limit_file), _read_number(usage_file)
        if limit is not None and usage is not None and limit < 2**60:
            found.append(max(0, limit - usage))
    soft, _hard = resource.getrlimit(resource.RLIMIT_AS)
    if soft != resource.RLIM_INFINITY:
        mapped = _meminfo("VmSize", "/proc/self/status") or 0
        found.append(max(0, soft - mapped))
    return min(found) if found else None


_SIZE = re.compile(r"^\s*([0-9]+(?:\.[0-9]*)?)\s*([kmgt]?)i?b?\s*$", re.IGNORECASE)


def parse_size(text: str) -> float:
    """``"16G"``, ``"500M"``, ``"2.5g"``, ``"1000000"`` (bytes) -> bytes; ``"none"`` -> infinity.

    Raises ValueError on anything else.  Suffixes are binary (K = 1024).
    """
    if text.strip().lower() in ("none", "off"):
        return math.inf
    match = _SIZE.match(text)
    if not match:
        raise ValueError(f"not a size: {text!r} (write it as 8G, 500M or none)")
    return float(match.group(1)) * 1024 ** " kmgt".index(match.group(2).lower() or " ")


def format_bytes(nbytes: float) -> str:
    """``nbytes`` in kB, MB, GB or TB, three figures."""
    for unit, size in (("TB", 1e12), ("GB", 1e9), ("MB", 1e6)):
        if nbytes >= size / 10:
            return f"{nbytes / size:.3g} {unit}"
    return f"{nbytes / 1e3:.3g} kB"


def require_memory(
    scenario: Scenario, verb: str, *, jobs: int = 1, limit: float | None = None
) -> tuple[MemoryEstimate, float]:
    """Refuse a run that would need more memory than ``limit`` (default: what is available now).

    Parameters
    ----------
    scenario : Scenario
        The scenario about to run.
    verb : str
        One of :data:`VERBS`.
    jobs : int
        Local worker processes.
    limit : float, optional
        Bytes the run may use; None: :func:`available_memory` (no check when the system does
        not tell); ``math.inf``: no check.

    Returns
    -------
    (MemoryEstimate, float)
        The estimate and the bytes the run may use (infinite when unknown), when the run fits;
        compare ``estimate.optional`` with the latter before building it.

    Raises
    ------
    InputError
        Naming the largest part and the key that shrinks it, when the run does not fit.
    """
    estimate = estimate_memory(scenario, verb, jobs=jobs)
    known = available_memory() if limit is None else limit
    room = math.inf if known is None else known
    if estimate.total <= room:
        return estimate, room
    part = estimate.largest
    which = "the --memory-limit given" if limit is not None else "what this machine has available now"
    raise InputError(
        scenario.source or "<scenario>",
        part.where,
        f"this {verb} would need about {format_bytes(estimate.total)} of memory, more than {which} "
        f"({format_bytes(room)}); the largest part, {format_bytes(part.nbytes)}, is {part.what}. "
        "Make it smaller, or give --memory-limit SIZE (or none) to go ahead",
    )
