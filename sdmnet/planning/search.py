"""The least-cost search for one architecture's plan (docs/planning.md has the method and limits).

1. **Prepare once**: routes and physics of the architecture (and of each cut, with
   ``survive = "cable-cut"``) are resolved once; candidates only change fiber counts
   (:mod:`sdmnet.planning.candidates`).
2. **Start** from the analytic first guess (:mod:`sdmnet.planning.first_guess`).
3. **Grow** while the candidate is not accepted (:mod:`sdmnet.planning.acceptance`): add the pair
   that removes the most blocked demands per unit of cost, read analytically from the
   simulation (:mod:`sdmnet.planning.ranking`); far above the target, several at once.
4. **Trim** to a local minimum of cost: try one pair fewer on each cable, the most cost saved
   per blocking added first; keep a removal when the candidate is still accepted, then bisect
   down on that cable; repeat until no single-pair removal is accepted.
5. **Survive cuts** (``survive = "cable-cut"``): simulate the plan under every single cut; while
   a cut misses ``cut_target``, grow where that cut's detours need it (step 3 on the cut's
   routes), then check every cut again.

Every cable keeps at least one fiber pair: the plan dimensions the cables of the topology; it
does not remove routes from it.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass, field, replace

import numpy as np

from ..equipment.installed import InstalledTransceivers, installed_transceivers
from ..equipment.resources import InstalledResources, installed_resources
from ..inputs.model import Architecture, Scenario
from ..network.traffic import pair_weights
from ..sim.engine import EngineSetup, RouteFinder, prepare
from .acceptance import Targets, worst_pair
from .candidates import DEFAULT_MAX_CANDIDATES, Evaluation, Evaluator
from .costing import class_lanes, pair_prices
from .cuts import CutJudge, CutOutcome, cut_judges, cut_outcomes
from .first_guess import (
    analytic_first_guess,
    cable_offered_units,
    dimensioning_load,
    mean_units,
    plan_spec,
    units_per_pair,
)
from .ranking import grow_scores, trim_order
from .regeneration import regenerated_pairs, regenerator_lanes, routes_with_regeneration

__all__ = ["ArchitecturePlan", "plan_targets", "dimension", "plan_architecture"]

# Far above target (this many times): grow several cables at once.
_COARSE_RATIO = 4.0
# In a coarse step, cables with at least this share of the top score get a pair too.
_COARSE_SHARE = 0.5


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
        The simulation of the plan (its verdict and replications).
    met : bool
        The plan is accepted: every tested upper bound at or below its target, and with
        ``survive = "cable-cut"`` every cut too.
    locally_minimal : bool
        Every one-pair-fewer neighbour was simulated and not accepted.
    candidates : int
        Candidates simulated (cuts included).
    note : str
        Why the target was not met or minimality not shown, if so.
    resources : InstalledResources
        Line-side switch ports, fibers and amplifiers of the planned topology.
    installed : InstalledTransceivers
        Installed transceivers per site at the plan (:mod:`sdmnet.equipment.installed`).
    pairs : tuple of (str, str)
        Datacenter pairs with traffic, indexing the point's per-pair figures.
    confidence : float
        Level of the intervals the verdicts rest on.
    cuts : list of CutOutcome
        The plan under each single cut (simulated when ``survive = "cable-cut"`` or asked for).
    history : list of Evaluation
        Every simulated candidate of the intact network, in order.
    regenerated : tuple of str
        Pairs (``a-b``) served through regenerators.
    regenerators : dict of str to int
        Regenerator lanes to install per site (:func:`sdmnet.planning.regeneration.regenerator_lanes`).
    class_lanes : dict of str to int
        Installed lanes per transceiver class (:func:`sdmnet.planning.costing.class_lanes`).
    setup : EngineSetup or None
        The prepared routes the plan was simulated on (its own fiber pairs not applied).
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
    pairs: tuple[tuple[str, str], ...] = ()
    confidence: float = 0.95
    cuts: list[CutOutcome] = field(default_factory=list)
    history: list[Evaluation] = field(default_factory=list)
    regenerated: tuple[str, ...] = ()
    regenerators: dict[str, int] = field(default_factory=dict)
    class_lanes: dict[str, int] = field(default_factory=dict)
    setup: EngineSetup | None = None

    @property
    def pairs_by_cable(self) -> dict[str, int]:
        """Planned pairs keyed by cable."""
        return dict(zip(self.cables, self.fiber_pairs))

    @property
    def switch_ports(self) -> int:
        """Line-side ports plus one add/drop port per installed module."""
        return self.resources.line_port_count + self.installed.modules

    @property
    def worst_pair(self) -> tuple[str, float]:
        """The datacenter pair with the highest blocking (``a-b``) and that blocking."""
        return worst_pair(self.evaluation.point, self.pairs)

    @property
    def verdict(self) -> str:
        """``met``, ``missed``, ``unlikely`` (point estimate above the target) or ``undecided`` (at the
        replication cap) of the intact network."""
        return self.evaluation.verdict


def route_finder(scenario: Scenario) -> RouteFinder | None:
    """Routes a plan uses: transparent ones, and through regenerators for pairs beyond reach
    (``[plan] regeneration``, default true); None is the engine's transparent default."""
    return routes_with_regeneration if plan_spec(scenario).regeneration else None


def plan_targets(scenario: Scenario) -> Targets:
    """The targets of ``[plan]``: ``per_pair = true`` without ``pair_target`` means the network target."""
    spec = plan_spec(scenario)
    pair = spec.pair_target
    if pair is None and spec.per_pair:
        pair = spec.target_blocking
    return Targets(spec.target_blocking, pair)


def _failing_pairs(ev: Evaluation, targets: Targets) -> np.ndarray | None:
    """Per pair: its interval does not lie under the pair target (None when only the network
    misses, or no pair target is set)."""
    if targets.pair is None or not ev.point.blocking.high <= targets.blocking:
        return None
    return np.array([not iv.high <= targets.pair for iv in ev.point.pair_blocking], dtype=bool)


@dataclass(frozen=True)
class _Shape:
    """What the ranking needs per cable: units per fiber pair, mean units per demand, pair price."""

    units_per_pair: Sequence[int]
    mean_units: Sequence[float]
    pair_price: np.ndarray


def _grow(
    evaluator: Evaluator, setup: EngineSetup, x: np.ndarray, upper: int, shape: _Shape
) -> tuple[Evaluation, np.ndarray, str]:
    """Add pairs from ``x`` until the evaluator accepts; returns the last evaluation, its pairs and
    why it stopped short ('' when accepted)."""
    ev = evaluator(x)
    target = evaluator.targets.blocking
    while not ev.meets:
        addable = x < upper
        if not addable.any():
            return ev, x, f"target not met with every cable at max_fiber_pairs = {upper}"
        if evaluator.exhausted:
            return ev, x, f"target not met within {evaluator.budget} simulated candidates"
        scores = grow_scores(ev.point, x, setup.routes, shape.units_per_pair, shape.mean_units, shape.pair_price,
                             addable, _failing_pairs(ev, evaluator.targets))  # fmt: skip
        top = scores.max()
        x = x.copy()
        if ev.point.blocking.mean > _COARSE_RATIO * target and top > 0:
            x += addable & (scores >= _COARSE_SHARE * top) & (scores > 0)
        else:
            x[int(np.argmax(scores))] += 1
        ev = evaluator(x)
    return ev, x, ""


def dimension(
    evaluator: Evaluator,
    setup: EngineSetup,
    start: Sequence[int],
    lower: Sequence[int],
    upper: int,
    shape: _Shape,
) -> tuple[Evaluation, bool, str]:
    """Grow from ``start`` until accepted, then trim to a local minimum of cost.

    Returns
    -------
    evaluation : Evaluation
        The final candidate (the plan); ``evaluation.meets`` says if it was accepted.
    locally_minimal : bool
    note : str
        Why not met / not shown minimal, or ''.
    """
    lo = np.asarray(lower, dtype=int)
    x = np.clip(np.asarray(start, dtype=int), lo, upper)
    evaluator.set_phase("guess")
    first = evaluator(x)
    evaluator.set_phase("grow")
    ev, x, why = _grow(evaluator, setup, x, upper, shape) if not first.meets else (first, x, "")
    if why:
        return ev, False, why
    evaluator.set_phase("trim")
    changed = True
    while changed:
        changed = False
        order = trim_order(ev.point, x, shape.units_per_pair, shape.mean_units, shape.pair_price, x > lo)
        for c in order:
            fewer_pairs = _minus(x, c)
            if evaluator.exhausted and evaluator.known(fewer_pairs) is None:
                return ev, False, f"trim stopped after {evaluator.budget} simulated candidates"
            fewer = evaluator(fewer_pairs)
            if not fewer.meets:
                continue
            x, ev, changed = np.asarray(fewer.fiber_pairs), fewer, True
            # One pair less was accepted: bisect down to the fewest that still is.
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
            break  # rank the moves again from the new plan's simulation
    return ev, True, ""


def _minus(x: np.ndarray, c: int) -> np.ndarray:
    y = x.copy()
    y[c] -= 1
    return y


def _unreachable_reason(scenario: Scenario, setup: EngineSetup, targets: Targets) -> str:
    """Why no fiber count can meet the target (pairs without a feasible route), or ''."""
    if not setup.unrouted_pairs:
        return ""
    names = ", ".join("-".join(p) for p in setup.unrouted_pairs)
    weights = pair_weights(scenario.topology_for(setup.architecture), scenario.traffic)
    lost = sum(weights.get(p, 0.0) for p in setup.unrouted_pairs)
    if targets.pair is not None:
        return f"pairs without a feasible route ({names}) block every demand: the pair target cannot be met"
    if lost > targets.blocking:
        return f"pairs without a feasible route ({names}) carry {lost:.3g} of the load, above the target"
    return ""


def survive_cuts(
    judges: Sequence[CutJudge], start: Evaluation, evaluator: Evaluator, upper: int, shape: _Shape
) -> tuple[Evaluation, list[CutOutcome], str]:
    """Grow the plan until every single cut keeps blocking at or below its cut target.

    Cuts whose disconnected pairs alone carry more than the cut target cannot be met by any
    fiber count: they are simulated and reported, not planned for.
    """
    ev, x = start, np.asarray(start.fiber_pairs, dtype=int)
    notes = [f"cut {j.cut.name} disconnects pairs carrying {j.disconnected_share:.3g} of the load, above cut_target"
             for j in judges if j.hopeless]  # fmt: skip
    # Cuts met once are not simulated again while the plan grows (more fibers rarely hurt);
    # every cut is checked again at the end, and any that fails there is grown for again.
    settled = {i for i, j in enumerate(judges) if j.hopeless}
    while True:
        pending = [i for i in range(len(judges)) if i not in settled]
        seen = {i: judges[i].evaluator(x) for i in pending}
        failing = [i for i in pending if not seen[i].meets]
        settled |= {i for i in pending if seen[i].meets}
        if not failing:
            outcomes = cut_outcomes(judges, x)
            failing = [i for i, o in enumerate(outcomes) if not o.evaluation.meets and not judges[i].hopeless]
            if not failing:
                break
            settled -= set(failing)
            seen = {i: outcomes[i].evaluation for i in failing}
        addable = x < upper
        if not addable.any():
            notes.append(f"cut_target not met with every cable at max_fiber_pairs = {upper}")
            break
        if evaluator.exhausted:
            notes.append(f"cut_target not met within {evaluator.budget} simulated candidates")
            break
        worst = max(failing, key=lambda i: seen[i].point.blocking.mean)
        scores = grow_scores(seen[worst].point, x, judges[worst].evaluator.setup.routes,
                             shape.units_per_pair, shape.mean_units, shape.pair_price, addable)  # fmt: skip
        x = x.copy()
        x[int(np.argmax(scores))] += 1
        evaluator.set_phase(f"cut {judges[worst].cut.name}")
        ev = evaluator(x)
    outcomes = cut_outcomes(judges, x)
    if not ev.meets:
        notes.append("the intact network is not accepted at the plan grown for the cuts")
    return ev, outcomes, "; ".join(notes)


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
    setup: EngineSetup | None = None,
    with_cuts: bool = False,
) -> ArchitecturePlan:
    """Dimension one architecture (see the module text for the method).

    Parameters
    ----------
    scenario : Scenario
        The scenario (traffic as given; its ``[plan]`` or the defaults).
    arch : Architecture
        One of its architectures.
    load_erlang : float, optional
        Dimensioning load; default :func:`sdmnet.planning.first_guess.dimensioning_load`.
    start : dict, optional
        First candidate per cable key; default the analytic first guess.
    lower : dict, optional
        Fewest pairs per cable key (default 1 everywhere); a forecast passes last year's plan.
    jobs : int
        Worker processes per candidate.
    max_candidates : int
        Simulation budget.
    log : callable, optional
        Receives one line per simulated candidate.
    setup : EngineSetup, optional
        The architecture already prepared on this scenario's topology and traffic pattern (a
        forecast passes it on from year to year); prepared here otherwise.
    with_cuts : bool
        Simulate the plan under every single cut even without ``survive = "cable-cut"``.
    """
    spec = plan_spec(scenario)
    targets = plan_targets(scenario)
    load = dimensioning_load(scenario) if load_erlang is None else float(load_erlang)
    setup = setup if setup is not None else prepare(scenario, arch, route_finder=route_finder(scenario))
    cables = tuple(c.key for c in scenario.topology.cables)
    offered, _hops = cable_offered_units(scenario, arch, load, setup)
    if start is None:
        start = analytic_first_guess(scenario, arch, load_erlang=load, setup=setup)
    low = tuple(max(1, (lower or {}).get(k, 1)) for k in cables)
    first = tuple(max(start.get(k, 1), lo) for k, lo in zip(cables, low))
    evaluator = Evaluator(setup, load, scenario.seed, scenario.run, targets, confidence=spec.confidence, jobs=jobs,
                          budget=max_candidates, log=log)  # fmt: skip
    upper = max(spec.max_fiber_pairs, max(low))
    shape = _Shape(units_per_pair(scenario, arch), mean_units(offered), pair_prices(scenario, arch))
    reason = _unreachable_reason(scenario, setup, targets)
    if reason:
        evaluator.set_phase("guess")
        ev, minimal, note = evaluator(first), False, reason
    else:
        ev, minimal, note = dimension(evaluator, setup, first, low, upper, shape)
    outcomes: list[CutOutcome] = []
    met = ev.meets
    if not ev.meets and not note:
        note = (f"undecided at the replication cap ({ev.replications} replications)"
                if ev.verdict == "undecided" else "target missed")  # fmt: skip
    if spec.survive == "cable-cut" or with_cuts:
        cut_target = spec.cut_target if spec.cut_target is not None else spec.target_blocking
        judges = cut_judges(scenario, arch, evaluator, cut_target, route_finder(scenario))
        if spec.survive == "cable-cut" and not reason:
            grown, outcomes, cut_note = survive_cuts(judges, ev, evaluator, upper, shape)
            minimal = minimal and grown.fiber_pairs == ev.fiber_pairs
            ev = grown
            met = ev.meets and all(o.evaluation.meets for o in outcomes)
            note = "; ".join(n for n in (note, cut_note) if n)
        else:
            outcomes = cut_outcomes(judges, ev.fiber_pairs)
    planned = replace(scenario, topology=scenario.topology.with_fiber_pairs(dict(zip(cables, ev.fiber_pairs))))
    installed = installed_transceivers(ev.point, scenario.transceiver.overflow)
    return ArchitecturePlan(
        architecture=arch,
        load_erlang=load,
        target=spec.target_blocking,
        cables=cables,
        fiber_pairs=ev.fiber_pairs,
        first_guess=first,
        lower=low,
        evaluation=ev,
        met=met,
        locally_minimal=minimal,
        candidates=evaluator.spent,
        note=note,
        resources=installed_resources(planned, arch),
        installed=installed,
        pairs=setup.pairs,
        confidence=spec.confidence,
        cuts=outcomes,
        history=list(evaluator.history),
        regenerated=tuple("-".join(setup.pairs[p]) for p in regenerated_pairs(setup, scenario.topology_for(arch))),
        regenerators=regenerator_lanes(scenario, setup, ev.point, load),
        class_lanes=class_lanes(scenario, setup, ev.point, installed.lanes, load),
        setup=setup,
    )
