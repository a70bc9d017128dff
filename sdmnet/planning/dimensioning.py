"""Dimensioning: the fewest fiber pairs per cable that keep blocking under the target.

Method (``docs/planning.md`` has the reasoning and the limits):

1. **Dimensioning load**: the scenario's highest load point.
2. **Analytic first guess** (:func:`analytic_first_guess`): every demand class is routed on its
   pair's first feasible route; per cable, the offered units of each class are summed and the
   fewest fiber pairs are found whose units keep the cable's Kaufman-Roberts blocking (Erlang B
   when every demand takes one unit) under ``target / hops``, where ``hops`` is the longest of
   the routes crossing the cable (so that a route's blocking, roughly the sum over its cables,
   stays under the target).
3. **Simulation** of candidates with common random numbers (the scenario seed for every
   candidate, so that two candidates differ by their fibers, not by their demands):
   *grow* while the candidate misses the target, adding a pair to the cable with the largest
   share of the blocked demands (blame spread along each blocked pair's first route in
   proportion to the cable's congestion, estimated from its simulated utilisation); when the
   blocking is far above target, every cable with at least half the top share gets a pair.
   Then *trim*: per cable, from the least utilised, try one pair fewer; if that still meets
   the target, bisect down to the fewest that does; repeat passes until no single-pair removal
   meets the target.  The result is locally minimal: every plan with one pair fewer on any one
   cable was simulated and missed the target (unless the candidate budget ran out, which is
   reported).
4. **Meets the target** means the point estimate (mean over replications of blocked / offered
   requests) is at most the target, for the network and, with ``[plan] per_pair``, for every
   datacenter pair.  The interval is reported beside it, not used to decide.

Every cable keeps at least one fiber pair: the plan dimensions the cables of the topology; it
does not remove routes from it.
"""

from __future__ import annotations

import math
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np
import pandas as pd
from scipy import special

from ..analysis.analytic import erlang_b_servers, kaufman_roberts
from ..equipment.costs import (
    Price,
    carried_tbps,
    cost_and_power,
    cost_rows,
    equipment_counts,
    site_switch_ports,
    unit_prices,
)
from ..equipment.installed import InstalledTransceivers, installed_transceivers
from ..equipment.resources import InstalledResources, installed_resources, module_figures
from ..inputs.model import Architecture, PlanSpec, Scenario, Topology
from ..network.architectures import UnitGeometry, cable_geometries, units_needed
from ..network.traffic import pair_loads, pair_weights, size_classes
from ..output.manifest import ensure_out_dir, run_manifest
from ..output.tables import write_json, write_table
from ..sim.engine import EngineSetup, prepare
from ..sim.progress import ProgressBar
from ..sim.stats import PointSummary, summarize_point
from ..sim.sweep import plan_tasks, run_sweep

__all__ = [
    "DEFAULT_MAX_CANDIDATES",
    "Evaluation",
    "ArchitecturePlan",
    "PlanResult",
    "dimensioning_load",
    "plan_spec",
    "cable_offered_units",
    "analytic_first_guess",
    "congestion_from_utilisation",
    "Evaluator",
    "dimension",
    "plan_architecture",
    "cable_cut_table",
    "plan_rows",
    "plan_prices",
    "totals_row",
    "plan_cost_rows",
    "site_rows",
    "candidate_rows",
    "start_run",
    "finish_run",
    "run_plan",
]

# Simulated candidates allowed per architecture (per year in a forecast): tens, not hundreds.
DEFAULT_MAX_CANDIDATES = 60
# Far above target (this many times): grow several cables at once.
_COARSE_RATIO = 4.0
# In a coarse step, cables with at least this share of the top blame get a pair too.
_COARSE_SHARE = 0.5


# --------------------------------------------------------------------------------------------
# Inputs of the plan


def dimensioning_load(scenario: Scenario) -> float:
    """The load the plan is made for: the scenario's highest load point (Erlang)."""
    return float(max(scenario.traffic.loads_erlang))


def plan_spec(scenario: Scenario) -> PlanSpec:
    """The scenario's ``[plan]``, or the documented defaults when it has none."""
    return scenario.plan if scenario.plan is not None else PlanSpec()


def _first_route_demands(
    scenario: Scenario,
    arch: Architecture,
    load_erlang: float,
    setup: EngineSetup,
    demand_units: Callable[[float, UnitGeometry], int],
) -> tuple[list[dict[int, float]], list[int], list[int]]:
    """Per cable, what each pair's first route brings to it.

    Returns ``offered`` (per cable: ``{demand_units(size, cable geometry): offered Erlang}``),
    ``hops`` (of the longest first route crossing the cable, 0 if none does) and ``crossing``
    (how many pairs' first routes cross it).
    """
    topo = scenario.topology_for(arch)
    geos = cable_geometries(scenario, arch)
    loads = pair_loads(topo, scenario.traffic, load_erlang)
    sizes, probs = size_classes(scenario.traffic)
    offered: list[dict[int, float]] = [{} for _ in topo.cables]
    hops = [0] * len(topo.cables)
    crossing = [0] * len(topo.cables)
    for pair, routes in zip(setup.pairs, setup.routes):
        if not routes:
            continue
        route = routes[0]
        for c in route:
            hops[c] = max(hops[c], len(route))
            crossing[c] += 1
            for size, prob in zip(sizes, probs):
                units = demand_units(float(size), geos[c])
                offered[c][units] = offered[c].get(units, 0.0) + loads[pair] * float(prob)
    return offered, hops, crossing


def cable_offered_units(
    scenario: Scenario, arch: Architecture, load_erlang: float, setup: EngineSetup
) -> tuple[list[dict[int, float]], list[int]]:
    """Offered demands per cable and per units-per-demand, on each pair's first route.

    Parameters
    ----------
    scenario, arch : Scenario, Architecture
        What is planned.
    load_erlang : float
        Total offered load.
    setup : EngineSetup
        The architecture's routes (:func:`sdmnet.sim.engine.prepare`).

    Returns
    -------
    offered : list of dict
        Per cable: ``{units per demand: offered load in Erlang of such demands}``.
    hops : list of int
        Per cable: hops of the longest first route crossing it (0 if none does).
    """
    offered, hops, _crossing = _first_route_demands(scenario, arch, load_erlang, setup, units_needed)
    return offered, hops


def _units_per_pair(scenario: Scenario, arch: Architecture) -> list[int]:
    return [g.units_per_fiber for g in cable_geometries(scenario, arch)]


def _pairs_for_link_target(offered: dict[int, float], units_per_pair: int, target: float, upper: int) -> int:
    """Fewest fiber pairs (1..upper) whose units keep the cable's demand blocking <= target."""
    if not offered:
        return 1
    total = sum(offered.values())
    if set(offered) == {1}:
        # Single-unit demands: Erlang B on the units (exact for one cable).
        return max(1, min(upper, math.ceil(erlang_b_servers(total, target) / units_per_pair)))
    sizes = sorted(offered)
    loads = [offered[b] for b in sizes]
    for n in range(1, upper + 1):
        blocking = kaufman_roberts(n * units_per_pair, loads, sizes)
        if float(np.dot(blocking, loads)) / total <= target:
            return n
    return upper


def _groomed_pairs(
    scenario: Scenario, arch: Architecture, load: float, setup: EngineSetup, target: float, upper: int
) -> list[int]:
    """First guess under grooming (``share``): perfect sharing of lanes plus half a unit per pair.

    Lit units carry later demands of the same pair and route, so a cable is sized on lanes
    (Kaufman-Roberts with demands of ceil(size / lane) lanes) as if all its traffic were groomed
    together, then each pair routed over it is given half a unit more (its last unit is, on
    average, half full; units are never shared between pairs).
    """
    lane = scenario.transceiver.lane_gbps
    slots, hops, pairs_over = _first_route_demands(
        scenario, arch, load, setup, lambda size, _geo: max(1, math.ceil(size / lane - 1e-9))
    )
    out = []
    for i, geo in enumerate(cable_geometries(scenario, arch)):
        lanes_per_pair = geo.units_per_fiber * geo.lanes_per_unit
        groomed = _pairs_for_link_target(slots[i], lanes_per_pair, target / max(hops[i], 1), upper)
        # Pairs worth of lanes, then half a unit per pair over the cable, in fiber pairs.
        units = groomed * geo.units_per_fiber + math.ceil(pairs_over[i] / 2)
        out.append(max(1, min(upper, math.ceil(units / geo.units_per_fiber))))
    return out


def analytic_first_guess(
    scenario: Scenario,
    arch: Architecture,
    *,
    load_erlang: float | None = None,
    setup: EngineSetup | None = None,
) -> dict[str, int]:
    """Fiber pairs per cable (by cable key) from the per-cable loss formulas.

    Each cable gets the fewest pairs (at least 1, at most ``plan.max_fiber_pairs``) whose units
    keep its blocking of the demands routed over it under ``target / hops``.  Ignores channel
    continuity (adds blocking) and alternate routes (remove some): a first guess for the
    simulation to correct.  With grooming (``share``) see :func:`_groomed_pairs`.
    """
    spec = plan_spec(scenario)
    load = dimensioning_load(scenario) if load_erlang is None else load_erlang
    setup = setup if setup is not None else prepare(scenario, arch)
    topo = scenario.topology_for(arch)
    if arch.share:
        pairs = _groomed_pairs(scenario, arch, load, setup, spec.target_blocking, spec.max_fiber_pairs)
        return {cable.key: n for cable, n in zip(topo.cables, pairs)}
    offered, hops = cable_offered_units(scenario, arch, load, setup)
    per_pair = _units_per_pair(scenario, arch)
    return {
        cable.key: _pairs_for_link_target(offered[i], per_pair[i], spec.target_blocking / max(hops[i], 1),
                                          spec.max_fiber_pairs)
        for i, cable in enumerate(topo.cables)
    }


def _erlang_b_continuous(servers: np.ndarray, load: np.ndarray) -> np.ndarray:
    """Erlang B extended to real server counts: Poisson pmf(s) / cdf(s) via the gamma function."""
    with np.errstate(divide="ignore", invalid="ignore", over="ignore", under="ignore"):
        log_pmf = servers * np.log(load) - load - special.gammaln(servers + 1.0)
        cdf = special.gammaincc(servers + 1.0, load)
        b = np.exp(log_pmf) / cdf
    # Where the cdf underflows the system is hopelessly overloaded: B ~ 1 - s / A.
    fallback = np.clip(1.0 - servers / np.maximum(load, 1e-300), 0.0, 1.0)
    return np.where(np.isfinite(b) & (cdf > 0), np.clip(b, 0.0, 1.0), fallback)


def congestion_from_utilisation(
    utilisation: Sequence[float], capacity_units: Sequence[float], mean_units: Sequence[float]
) -> np.ndarray:
    """Per-cable blocking implied by a measured utilisation (an Erlang B reading of it).

    A cable of ``C`` units carrying demands of ``b`` units on average is read as ``C / b``
    servers carrying ``u C / b`` Erlang; the offered load ``A`` with ``A (1 - B(C/b, A))`` equal
    to that carried load is found by bisection and ``B(C/b, A)`` returned.  Used to rank cables,
    not as a result: a cable at 90 % busy blocks far more than one at 60 %, which utilisation
    alone understates.
    """
    u = np.clip(np.asarray(utilisation, dtype=float), 0.0, 1.0)
    servers = np.asarray(capacity_units, dtype=float) / np.maximum(np.asarray(mean_units, dtype=float), 1e-9)
    carried = u * servers
    out = np.zeros_like(u)
    live = (carried > 0) & (servers > 0)
    if not live.any():
        return out
    s = servers[live]
    m = np.minimum(carried[live], s * (1.0 - 1e-9))
    lo, hi = np.log(m), np.log(m) + 40.0
    for _ in range(80):
        mid = 0.5 * (lo + hi)
        a = np.exp(mid)
        too_low = a * (1.0 - _erlang_b_continuous(s, a)) < m
        lo = np.where(too_low, mid, lo)
        hi = np.where(too_low, hi, mid)
    out[live] = _erlang_b_continuous(s, np.exp(0.5 * (lo + hi)))
    return out


# --------------------------------------------------------------------------------------------
# Simulating candidates


@dataclass(frozen=True)
class Evaluation:
    """One simulated candidate: fiber pairs per cable (topology order) and what they gave."""

    fiber_pairs: tuple[int, ...]
    point: PointSummary
    meets: bool
    index: int
    phase: str


def _meets(point: PointSummary, target: float, per_pair: bool) -> bool:
    if not point.blocking.mean <= target:
        return False
    if per_pair:
        return all(iv.mean <= target for iv, n in zip(point.pair_blocking, point.pair_offered) if n > 0)
    return True


class Evaluator:
    """Simulates candidate fiber counts of one architecture at one load, with a cache.

    Every candidate uses the scenario's seed and replications (common random numbers) and its
    ``[run]`` lengths.

    Parameters
    ----------
    scenario : Scenario
        The scenario; its traffic is used as given (scale it first for a forecast year).
    arch : Architecture
        The architecture planned.
    load_erlang : float
        The dimensioning load.
    jobs : int
        Worker processes for the replications of one candidate.
    budget : int
        Most candidates simulated (cache hits are free).
    log : callable, optional
        Called with one line per simulated candidate.
    """

    def __init__(
        self,
        scenario: Scenario,
        arch: Architecture,
        load_erlang: float,
        *,
        jobs: int = 1,
        budget: int = DEFAULT_MAX_CANDIDATES,
        log: Callable[[str], None] | None = None,
    ) -> None:
        spec = plan_spec(scenario)
        self.arch = arch
        self.load_erlang = float(load_erlang)
        self.target = spec.target_blocking
        self.per_pair = spec.per_pair
        self.jobs = jobs
        self.budget = budget
        self.log = log
        self.base = replace(
            scenario,
            architectures=(arch,),
            traffic=replace(scenario.traffic, loads_erlang=(self.load_erlang,)),
        )
        self.cables = tuple(c.key for c in scenario.topology.cables)
        self.history: list[Evaluation] = []
        self._cache: dict[tuple[int, ...], Evaluation] = {}
        self._phase = "start"

    @property
    def spent(self) -> int:
        """Candidates simulated so far."""
        return len(self.history)

    @property
    def exhausted(self) -> bool:
        """The candidate budget is used up."""
        return self.spent >= self.budget

    def set_phase(self, phase: str) -> None:
        """Label the candidates simulated from now on (``grow``, ``trim``...)."""
        self._phase = phase

    def scenario_for(self, pairs: Sequence[int]) -> Scenario:
        """The single-architecture, single-load scenario with these fiber pairs."""
        topo = self.base.topology.with_fiber_pairs(dict(zip(self.cables, pairs)))
        return replace(self.base, topology=topo)

    def known(self, pairs: Sequence[int]) -> Evaluation | None:
        """The evaluation of ``pairs`` if already simulated."""
        return self._cache.get(tuple(int(x) for x in pairs))

    def __call__(self, pairs: Sequence[int]) -> Evaluation:
        key = tuple(int(x) for x in pairs)
        hit = self._cache.get(key)
        if hit is not None:
            return hit
        sc = self.scenario_for(key)
        records = run_sweep(sc, None, tasks=plan_tasks(sc), jobs=self.jobs)
        point = summarize_point(list(records.values()), sc.run.confidence)
        ev = Evaluation(key, point, _meets(point, self.target, self.per_pair), len(self.history) + 1, self._phase)
        self._cache[key] = ev
        self.history.append(ev)
        if self.log is not None:
            iv = point.blocking
            self.log(
                f"{self.arch.name} #{ev.index} {ev.phase}: pairs {list(key)} blocking {iv.mean:.4g} "
                f"[{iv.low:.4g}, {iv.high:.4g}] {'meets' if ev.meets else 'misses'} {self.target:g}"
            )
        return ev


def _blame(
    ev: Evaluation, setup: EngineSetup, units_per_pair: Sequence[int], mean_units: Sequence[float],
    addable: np.ndarray, target: float, per_pair: bool,
) -> np.ndarray:
    """Share of the blocked demands each cable is held responsible for (0 where not addable)."""
    point = ev.point
    util = np.asarray(point.cable_utilisation, dtype=float)
    capacity = np.asarray(ev.fiber_pairs, dtype=float) * np.asarray(units_per_pair, dtype=float)
    congestion = congestion_from_utilisation(util, capacity, mean_units)
    scores = np.zeros(len(util))
    # When only some pairs miss (per-pair planning), only their blocked demands count.
    only_failing = per_pair and point.blocking.mean <= target
    for p, routes in enumerate(setup.routes):
        blocked = point.pair_blocked[p]
        if not blocked or not routes:
            continue
        if only_failing and point.pair_blocking[p].mean <= target:
            continue
        route = next((r for r in routes if addable[list(r)].any()), None)
        if route is None:
            continue
        cables = [c for c in route if addable[c]]
        w = congestion[cables]
        if w.sum() <= 0:
            w = util[cables]
        if w.sum() <= 0:
            w = np.ones(len(cables))
        scores[cables] += blocked * w / w.sum()
    if scores.sum() <= 0:
        # Nothing to attribute (e.g. blocked pairs have no route): the most congested cable.
        scores = np.where(addable, congestion + 1e-12 * util + 1e-15, 0.0)
    return np.where(addable, scores, 0.0)


@dataclass
class ArchitecturePlan:
    """The plan of one architecture.

    Attributes
    ----------
    architecture : Architecture
        What was planned.
    load_erlang : float
        Dimensioning load.
    target : float
        Target blocking.
    cables : tuple of str
        Cable keys in topology order.
    fiber_pairs : tuple of int
        Planned pairs per cable.
    first_guess : tuple of int
        Analytic first guess (or the start given, in a forecast year).
    lower : tuple of int
        Least pairs allowed per cable (1, or the previous year's plan).
    evaluation : Evaluation
        The simulation of the plan.
    met : bool
        The plan meets the target.
    locally_minimal : bool
        Every one-pair-fewer neighbour was simulated and missed.
    candidates : int
        Candidates simulated.
    note : str
        Why the target was not met or minimality not shown, if so.
    resources : InstalledResources
        Line-side switch ports, fibers and amplifiers of the planned topology.
    installed : InstalledTransceivers
        Installed transceivers per site at the plan (:mod:`sdmnet.equipment.installed`).
    history : list of Evaluation
        Every simulated candidate, in order.
    """

    architecture: Architecture
    load_erlang: float
    target: float
    cables: tuple[str, ...]
    fiber_pairs: tuple[int, ...]
    first_guess: tuple[int, ...]
    lower: tuple[int, ...]
    evaluation: Evaluation
    met: bool
    locally_minimal: bool
    candidates: int
    note: str
    resources: InstalledResources
    installed: InstalledTransceivers
    history: list[Evaluation] = field(default_factory=list)

    @property
    def pairs_by_cable(self) -> dict[str, int]:
        """Planned pairs keyed by cable."""
        return dict(zip(self.cables, self.fiber_pairs))

    @property
    def switch_ports(self) -> int:
        """Line-side ports plus one add/drop port per installed module."""
        return self.resources.line_port_count + self.installed.modules


def _unreachable_reason(setup: EngineSetup, scenario: Scenario, target: float, per_pair: bool) -> str:
    """Why no fiber count can meet the target (pairs without a feasible route), or ''."""
    if not setup.unrouted_pairs:
        return ""
    names = ", ".join("-".join(p) for p in setup.unrouted_pairs)
    topo = scenario.topology_for(setup.architecture)
    weights = pair_weights(topo, scenario.traffic)
    lost = sum(weights.get(p, 0.0) for p in setup.unrouted_pairs)
    if per_pair:
        return f"pairs without a feasible route ({names}) block every demand: the per-pair target cannot be met"
    if lost > target:
        return f"pairs without a feasible route ({names}) carry {lost:.3g} of the load, above the target"
    return ""


def dimension(
    evaluator: Evaluator,
    setup: EngineSetup,
    start: Sequence[int],
    lower: Sequence[int],
    upper: int,
    units_per_pair: Sequence[int],
    mean_units: Sequence[float],
) -> tuple[Evaluation, bool, bool, str]:
    """Grow from ``start`` until the target holds, then trim to a local minimum.

    Parameters
    ----------
    evaluator : Evaluator
        Simulates candidates.
    setup : EngineSetup
        Routes of the architecture (for attributing blocked demands to cables).
    start : sequence of int
        First candidate (clipped to ``[lower, upper]``).
    lower : sequence of int
        Fewest pairs per cable (trim never goes below).
    upper : int
        Most pairs per cable.
    units_per_pair, mean_units : sequence
        Per cable: units in one fiber pair; mean units per demand (for the congestion reading).

    Returns
    -------
    evaluation : Evaluation
        The final candidate (the plan).
    met, locally_minimal : bool
    note : str
        Why not met / not shown minimal, or ''.
    """
    lo = np.asarray(lower, dtype=int)
    x = np.clip(np.asarray(start, dtype=int), lo, upper)
    target, per_pair = evaluator.target, evaluator.per_pair
    evaluator.set_phase("guess")
    ev = evaluator(x)
    evaluator.set_phase("grow")
    while not ev.meets:
        addable = x < upper
        if not addable.any():
            return ev, False, False, f"target not met with every cable at max_fiber_pairs = {upper}"
        if evaluator.exhausted:
            return ev, False, False, f"target not met within {evaluator.budget} simulated candidates"
        scores = _blame(ev, setup, units_per_pair, mean_units, addable, target, per_pair)
        top = scores.max()
        if ev.point.blocking.mean > _COARSE_RATIO * target:
            x = x + (addable & (scores >= _COARSE_SHARE * top) & (scores > 0))
        else:
            x = x.copy()
            x[int(np.argmax(scores))] += 1
        ev = evaluator(x)
    # Trim: least utilised cables first (most likely to have spare pairs).
    evaluator.set_phase("trim")
    order = np.argsort(np.asarray(ev.point.cable_utilisation), kind="stable")
    changed = True
    while changed:
        changed = False
        for c in order:
            if x[c] <= lo[c]:
                continue
            if evaluator.exhausted and evaluator.known(_minus(x, c)) is None:
                return ev, True, False, f"trim stopped after {evaluator.budget} simulated candidates"
            fewer = evaluator(_minus(x, c))
            if not fewer.meets:
                continue
            x, ev, changed = np.asarray(fewer.fiber_pairs), fewer, True
            # One pair less met the target: bisect down to the fewest that still does.
            low, high = int(lo[c]), int(x[c])
            while low < high and not evaluator.exhausted:
                mid = (low + high) // 2
                y = x.copy()
                y[c] = mid
                trial = evaluator(y)
                if trial.meets:
                    high, x, ev = mid, np.asarray(trial.fiber_pairs), trial
                else:
                    low = mid + 1
    return ev, True, True, ""


def _minus(x: np.ndarray, c: int) -> np.ndarray:
    y = x.copy()
    y[c] -= 1
    return y


def _mean_units(offered: list[dict[int, float]]) -> list[float]:
    out = []
    for classes in offered:
        total = sum(classes.values())
        out.append(sum(b * a for b, a in classes.items()) / total if total > 0 else 1.0)
    return out


def plan_architecture(
    scenario: Scenario,
    arch: Architecture,
    *,
    load_erlang: float | None = None,
    start: dict[str, int] | None = None,
    lower: dict[str, int] | None = None,
    jobs: int = 1,
    max_candidates: int = DEFAULT_MAX_CANDIDATES,
    log: Callable[[str], None] | None = None,
) -> ArchitecturePlan:
    """Dimension one architecture (see the module text for the method).

    Parameters
    ----------
    scenario : Scenario
        The scenario (traffic as given; its ``[plan]`` or the defaults).
    arch : Architecture
        One of its architectures.
    load_erlang : float, optional
        Dimensioning load; default :func:`dimensioning_load`.
    start : dict, optional
        First candidate per cable key; default :func:`analytic_first_guess`.
    lower : dict, optional
        Fewest pairs per cable key (default 1 everywhere); a forecast passes last year's plan.
    jobs : int
        Worker processes per candidate.
    max_candidates : int
        Simulation budget.
    log : callable, optional
        Receives one line per simulated candidate.

    Returns
    -------
    ArchitecturePlan
    """
    spec = plan_spec(scenario)
    load = dimensioning_load(scenario) if load_erlang is None else float(load_erlang)
    setup = prepare(scenario, arch)
    cables = tuple(c.key for c in scenario.topology.cables)
    offered, _hops = cable_offered_units(scenario, arch, load, setup)
    if start is None:
        start = analytic_first_guess(scenario, arch, load_erlang=load, setup=setup)
    low = tuple(max(1, (lower or {}).get(k, 1)) for k in cables)
    first = tuple(max(start.get(k, 1), lo) for k, lo in zip(cables, low))
    evaluator = Evaluator(scenario, arch, load, jobs=jobs, budget=max_candidates, log=log)
    reason = _unreachable_reason(setup, scenario, spec.target_blocking, spec.per_pair)
    if reason:
        ev = evaluator(first)
        ev_met, minimal, note = ev.meets, False, reason
    else:
        ev, ev_met, minimal, note = dimension(
            evaluator, setup, first, low, max(spec.max_fiber_pairs, max(low)),
            _units_per_pair(scenario, arch), _mean_units(offered),
        )
    planned = replace(scenario, topology=scenario.topology.with_fiber_pairs(dict(zip(cables, ev.fiber_pairs))))
    return ArchitecturePlan(
        architecture=arch,
        load_erlang=load,
        target=spec.target_blocking,
        cables=cables,
        fiber_pairs=ev.fiber_pairs,
        first_guess=first,
        lower=low,
        evaluation=ev,
        met=ev_met,
        locally_minimal=minimal,
        candidates=evaluator.spent,
        note=note,
        resources=installed_resources(planned, arch),
        installed=installed_transceivers(ev.point, scenario.transceiver.overflow),
        history=list(evaluator.history),
    )


# --------------------------------------------------------------------------------------------
# Cable cuts


def _without_cable(topology: Topology, key: str) -> Topology:
    return replace(topology, cables=tuple(c for c in topology.cables if c.key != key))


def cable_cut_table(
    scenario: Scenario, plan: ArchitecturePlan, *, jobs: int = 1, log: Callable[[str], None] | None = None
) -> pd.DataFrame:
    """Blocking of the plan with each cable cut in turn (the cable removed, routes recomputed).

    Columns: ``architecture, cable, load_erlang, blocking, blocking_ci_low, blocking_ci_high,
    bandwidth_blocking, pairs_without_route, is_worst, worst`` (``worst``: the cut cable with the
    highest blocking, repeated on every row of the architecture).
    """
    arch = plan.architecture
    topo = scenario.topology.with_fiber_pairs(plan.pairs_by_cable)
    rows = []
    for key in plan.cables:
        sc = replace(
            scenario,
            topology=_without_cable(topo, key),
            architectures=(arch,),
            traffic=replace(scenario.traffic, loads_erlang=(plan.load_erlang,)),
        )
        setup = prepare(sc, arch)
        records = run_sweep(sc, None, tasks=plan_tasks(sc), jobs=jobs)
        point = summarize_point(list(records.values()), sc.run.confidence)
        if log is not None:
            log(f"{arch.name} cut {key}: blocking {point.blocking.mean:.4g}")
        rows.append(
            {
                "architecture": arch.name,
                "cable": key,
                "load_erlang": plan.load_erlang,
                "blocking": point.blocking.mean,
                "blocking_ci_low": point.blocking.low,
                "blocking_ci_high": point.blocking.high,
                "bandwidth_blocking": point.bandwidth_blocking.mean,
                "pairs_without_route": len(setup.unrouted_pairs),
            }
        )
    frame = pd.DataFrame(rows)
    if len(frame):
        # Highest point estimate; ties go to the higher upper bound, then to file order.
        ranked = frame.assign(_hi=frame["blocking_ci_high"].fillna(frame["blocking"]))
        worst = ranked.sort_values(["blocking", "_hi"], ascending=False, kind="stable").index[0]
        frame["is_worst"] = frame.index == worst
        frame["worst"] = frame.loc[worst, "cable"]
    return frame


# --------------------------------------------------------------------------------------------
# Tables


def plan_rows(scenario: Scenario, plan: ArchitecturePlan) -> list[dict]:
    """Rows of plan.csv for one architecture: one per cable."""
    topo = scenario.topology_for(plan.architecture)
    point = plan.evaluation.point
    rows = []
    for i, cable in enumerate(topo.cables):
        rows.append(
            {
                "architecture": plan.architecture.name,
                "cable": cable.key,
                "fiber_pairs": plan.fiber_pairs[i],
                "blocking": point.blocking.mean,
                "blocking_ci_low": point.blocking.low,
                "blocking_ci_high": point.blocking.high,
                "length_km": cable.length_km,
                "fiber_type": cable.fiber_type,
                "installed_pairs": cable.fiber_pairs,
                "added_pairs": plan.fiber_pairs[i] - cable.fiber_pairs,
                "first_guess": plan.first_guess[i],
                "utilisation": point.cable_utilisation[i],
                "load_erlang": plan.load_erlang,
                "target_blocking": plan.target,
                "met": plan.met,
            }
        )
    return rows


def plan_prices(scenario: Scenario, arch: Architecture) -> dict[str, Price]:
    """Unit prices and watts of the items of ``arch`` (:func:`sdmnet.equipment.costs.unit_prices`)."""
    return unit_prices(scenario, module_figures(scenario, arch))


def totals_row(scenario: Scenario, plan: ArchitecturePlan, prices: dict[str, Price] | None = None) -> dict:
    """One row of plan_totals.csv: network totals of one architecture's plan, with its cost and watts.

    ``prices`` default to :func:`plan_prices`.
    """
    point = plan.evaluation.point
    res = plan.resources
    installed = plan.installed
    worst_pair = max((iv.mean for iv, n in zip(point.pair_blocking, point.pair_offered) if n > 0), default=math.nan)
    cost, power = cost_and_power(
        equipment_counts(res, installed), prices if prices is not None else plan_prices(scenario, plan.architecture)
    )
    carried = carried_tbps(scenario, point)
    return {
        "architecture": plan.architecture.name,
        "switching": plan.architecture.switching,
        "load_erlang": plan.load_erlang,
        "target_blocking": plan.target,
        "fiber_pairs": res.fiber_pairs,
        "fiber_strands": res.fiber_strands,
        "fiber_km": res.fiber_km,
        "fiber_pair_km": res.fiber_pair_km,
        "transceiver_lanes_installed": installed.lanes,
        "transceivers_installed": installed.modules,
        "transceiver_mimo_lanes_installed": installed.mimo_lanes,
        "transceivers_peak": point.transceivers_peak,
        "transceiver_lanes_peak": point.lanes_peak,
        "switch_ports": plan.switch_ports,
        "switch_ports_line": res.line_port_count,
        "switch_ports_add_drop": installed.modules,
        "cost": cost,
        "power_w": power,
        "carried_tbps": carried,
        "cost_per_carried_tbps": cost / carried if carried > 0 else math.nan,
        "blocking": point.blocking.mean,
        "blocking_ci_low": point.blocking.low,
        "blocking_ci_high": point.blocking.high,
        "bandwidth_blocking": point.bandwidth_blocking.mean,
        "worst_pair_blocking": worst_pair,
        "met": plan.met,
        "locally_minimal": plan.locally_minimal,
        "candidates": plan.candidates,
        "note": plan.note,
    }


def plan_cost_rows(scenario: Scenario, plan: ArchitecturePlan, prices: dict[str, Price] | None = None) -> list[dict]:
    """Rows of cost.csv for one architecture's plan (:func:`sdmnet.equipment.costs.cost_rows`)."""
    counts = equipment_counts(plan.resources, plan.installed)
    prices = prices if prices is not None else plan_prices(scenario, plan.architecture)
    return cost_rows(plan.architecture.name, counts, prices, carried_tbps(scenario, plan.evaluation.point))


def site_rows(scenario: Scenario, plan: ArchitecturePlan) -> list[dict]:
    """Rows of plan_sites.csv: installed transceivers and switch ports per site."""
    point = plan.evaluation.point
    sites = scenario.topology_for(plan.architecture).sites
    ports = site_switch_ports(plan.resources, plan.installed, tuple(s.id for s in sites))
    return [
        {
            "architecture": plan.architecture.name,
            "site": s.id,
            "role": s.role,
            "transceiver_lanes_installed": plan.installed.site_lanes[i],
            "transceivers_installed": plan.installed.site_modules[i],
            "transceivers_peak": point.site_transceivers_peak[i],
            "switch_ports": sum(ports[i]),
            "switch_ports_line": ports[i][0],
            "switch_ports_add_drop": ports[i][1],
        }
        for i, s in enumerate(sites)
    ]


def candidate_rows(plan: ArchitecturePlan, **extra: object) -> list[dict]:
    """Every simulated candidate of a plan (plan_candidates.csv), for inspection."""
    return [
        {
            **extra,
            "architecture": plan.architecture.name,
            "candidate": ev.index,
            "phase": ev.phase,
            "fiber_pairs": " ".join(f"{k}:{n}" for k, n in zip(plan.cables, ev.fiber_pairs)),
            "total_pairs": sum(ev.fiber_pairs),
            "blocking": ev.point.blocking.mean,
            "blocking_ci_low": ev.point.blocking.low,
            "blocking_ci_high": ev.point.blocking.high,
            "meets": ev.meets,
        }
        for ev in plan.history
    ]


# --------------------------------------------------------------------------------------------
# The verb


@dataclass
class PlanResult:
    """What :func:`run_plan` produced (the same tables it wrote)."""

    out_dir: Path
    plans: list[ArchitecturePlan]
    plan: pd.DataFrame
    totals: pd.DataFrame
    sites: pd.DataFrame
    candidates: pd.DataFrame
    cuts: pd.DataFrame | None
    wall_time_s: float


def start_run(scenario: Scenario, out_dir: Path | str) -> Path:
    """The start shared by ``plan`` and ``forecast``: the output folder.

    Every architecture is checked against every cable first, so an impossible one is refused
    (ConfigurationError) before any simulation; an unwritable folder raises InputError.
    """
    out = ensure_out_dir(out_dir)
    for arch in scenario.architectures:
        cable_geometries(scenario, arch)
    return out


def finish_run(scenario: Scenario, out: Path, verb: str, started: float, **options: object) -> float:
    """Write ``run.json`` of a ``plan`` or ``forecast`` run (with the plan settings used).

    Returns the wall time since ``started`` (a :func:`time.perf_counter` reading).
    """
    wall = time.perf_counter() - started
    manifest = run_manifest(
        scenario, verb, wall, **options,
        target_blocking=plan_spec(scenario).target_blocking,
        plan_section="scenario" if scenario.plan is not None else "defaults",
    )
    write_json(manifest, out / "run.json")
    return wall


def run_plan(
    scenario: Scenario, out_dir: Path | str, *, jobs: int = 1, progress: bool = True, cable_cuts: bool = False
) -> PlanResult:
    """Dimension every architecture of ``scenario`` and write the plan.

    Files written into ``out_dir``: ``plan.csv`` (architecture x cable: planned pairs and the
    network request blocking of the plan at the dimensioning load, with its interval),
    ``plan_totals.csv`` (per architecture: fibers, fiber-km, installed transceiver lanes and
    modules, switch ports, cost and watts, blocking), ``cost.csv`` (per architecture and item:
    count, unit cost, cost, watts, and a total row), ``plan_sites.csv`` (per architecture x
    site), ``plan_candidates.csv`` (every simulated candidate), ``cuts.csv``
    (with ``cable_cuts``) and ``run.json``.  Tables are rewritten after each architecture, so an
    interrupted run leaves the finished architectures on disk.

    Parameters
    ----------
    scenario : Scenario
        From :func:`sdmnet.inputs.loaders.load_scenario`; ``[plan]`` defaults apply when absent.
    out_dir : path
        Output folder (created).
    jobs : int
        Worker processes for the replications of each candidate.
    progress : bool
        A progress bar of simulated candidates on stderr (on a terminal; elsewhere one summary
        line at the end).
    cable_cuts : bool
        Also simulate the plan with each cable cut in turn.

    Raises
    ------
    InputError
        Bad input, an architecture that cannot run, or an unwritable folder.
    RunInterrupted
        SIGINT/SIGTERM; finished architectures are on disk.
    """
    started = time.perf_counter()
    out = start_run(scenario, out_dir)
    bar = ProgressBar("plan", "candidates", enabled=progress)  # one step per simulated candidate
    plans: list[ArchitecturePlan] = []
    plan_part, totals_part, site_part, cand_part, cost_part, cut_parts = [], [], [], [], [], []
    cuts: pd.DataFrame | None = None
    for arch in scenario.architectures:
        ap = plan_architecture(scenario, arch, jobs=jobs, log=bar.step)
        plans.append(ap)
        plan_part += plan_rows(scenario, ap)
        prices = plan_prices(scenario, arch)
        totals_part.append(totals_row(scenario, ap, prices))
        cost_part += plan_cost_rows(scenario, ap, prices)
        site_part += site_rows(scenario, ap)
        cand_part += candidate_rows(ap)
        write_table(pd.DataFrame(plan_part), out / "plan.csv")
        write_table(pd.DataFrame(totals_part), out / "plan_totals.csv")
        write_table(pd.DataFrame(site_part), out / "plan_sites.csv")
        write_table(pd.DataFrame(cand_part), out / "plan_candidates.csv")
        write_table(pd.DataFrame(cost_part), out / "cost.csv")
        if cable_cuts:
            cut_parts.append(cable_cut_table(scenario, ap, jobs=jobs, log=bar.step))
            cuts = pd.concat(cut_parts, ignore_index=True)
            write_table(cuts, out / "cuts.csv")
    bar.close()
    wall = finish_run(
        scenario, out, "plan", started, jobs=jobs, cable_cuts=cable_cuts,
        dimensioning_load_erlang=dimensioning_load(scenario), per_pair=plan_spec(scenario).per_pair,
        max_candidates=DEFAULT_MAX_CANDIDATES,
    )
    return PlanResult(
        out, plans, pd.DataFrame(plan_part), pd.DataFrame(totals_part), pd.DataFrame(site_part),
        pd.DataFrame(cand_part), cuts, wall,
    )
