"""Single cable cuts: which cuts there are, the routes left after each, and cuts.csv.

A *cut* removes one cable, or every cable of one ``risk_group`` at once (cables in one duct or on
one bridge fail together).  After a cut, each pair's demand tries the k shortest feasible routes
that avoid the cut cables (routes and physics found again once per cut, not per candidate:
:func:`cut_setup`); a pair left with none is *disconnected*: all its demand is blocked.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, replace

from ..inputs.model import Architecture, Scenario
from ..network.routing import Route
from ..network.traffic import pair_weights
from ..optics.pathtable import feasible_routes
from ..sim.engine import EngineSetup, RouteFinder, prepare
from .acceptance import Targets
from .candidates import Evaluation, Evaluator

__all__ = ["Cut", "single_cuts", "cut_setup", "disconnected_share", "CutOutcome", "CutJudge", "cut_judges",
           "cut_outcomes", "cut_rows"]


@dataclass(frozen=True)
class Cut:
    """One failure: the cables it removes (indices into the topology's cables).

    ``name`` is the cable key (``a-b``) for a single cable, ``group:NAME`` for a risk group.
    """

    name: str
    cables: tuple[int, ...]

    @property
    def kind(self) -> str:
        """``cable`` or ``risk group``."""
        return "risk group" if self.name.startswith("group:") else "cable"


def single_cuts(scenario: Scenario) -> list[Cut]:
    """Every cable on its own, then every risk group of two or more cables (in file order)."""
    cables = scenario.topology.cables
    cuts = [Cut(c.key, (i,)) for i, c in enumerate(cables)]
    groups: dict[str, list[int]] = {}
    for i, c in enumerate(cables):
        if c.risk_group:
            groups.setdefault(c.risk_group, []).append(i)
    cuts += [Cut(f"group:{name}", tuple(idx)) for name, idx in groups.items() if len(idx) > 1]
    return cuts


def _routes_avoiding(cut: Cut, finder: RouteFinder):
    """A route finder: ``finder``'s routes on the topology without the cut cables, with the
    cable indices of the whole topology (so the setup keeps one index per cable)."""

    def avoiding(scenario: Scenario, arch: Architecture) -> dict[tuple[str, str], list[Route]]:
        topo = scenario.topology
        kept = [i for i in range(len(topo.cables)) if i not in cut.cables]
        reduced = replace(scenario, topology=replace(topo, cables=tuple(topo.cables[i] for i in kept)))
        found = finder(reduced, arch)
        return {p: [_renumbered(r, kept) for r in rs] for p, rs in found.items()}

    return avoiding


def _renumbered(route: Route, kept: list[int]) -> Route:
    """``route`` with cable indices of the whole topology (its segments too, if regenerated)."""
    changes: dict = {"cables": tuple(kept[h] for h in route.cables)}
    if getattr(route, "segments", ()):
        changes["segments"] = tuple(tuple(kept[h] for h in seg) for seg in route.segments)  # type: ignore[attr-defined]
    return replace(route, **changes)


def cut_setup(scenario: Scenario, arch: Architecture, cut: Cut, finder: RouteFinder | None = None) -> EngineSetup:
    """The engine setup of ``arch`` with ``cut`` in place (its cables stay, unused by any route).

    ``finder`` gives the routes on the cut topology (default: the transparent feasible routes).
    """
    return prepare(scenario, arch, route_finder=_routes_avoiding(cut, finder or feasible_routes))


def disconnected_share(scenario: Scenario, arch: Architecture, setup: EngineSetup) -> float:
    """Share of the offered load on pairs with no feasible route in ``setup``."""
    weights = pair_weights(scenario.topology_for(arch), scenario.traffic)
    return sum(weights.get(p, 0.0) for p in setup.unrouted_pairs)


@dataclass(frozen=True)
class CutOutcome:
    """The plan under one cut: its simulation and the pairs it disconnects."""

    cut: Cut
    evaluation: Evaluation
    disconnected: tuple[tuple[str, str], ...]
    disconnected_share: float
    target: float


@dataclass(frozen=True)
class CutJudge:
    """One cut, prepared: its evaluator (candidates under the cut, judged against ``cut_target``),
    the pairs it disconnects and their share of the load."""

    cut: Cut
    evaluator: Evaluator
    disconnected: tuple[tuple[str, str], ...]
    disconnected_share: float

    @property
    def hopeless(self) -> bool:
        """The disconnected pairs alone carry more than the cut target: no fiber count can meet it."""
        return self.disconnected_share > self.evaluator.targets.blocking


def cut_judges(
    scenario: Scenario, arch: Architecture, intact: Evaluator, cut_target: float, finder: RouteFinder | None = None
) -> list[CutJudge]:
    """Every single cut of ``scenario`` prepared once, its evaluator set up like ``intact``."""
    judges = []
    for cut in single_cuts(scenario):
        setup = cut_setup(scenario, arch, cut, finder)
        judge = Evaluator(setup, intact.load_erlang, intact.seed, intact.run, Targets(cut_target),
                          confidence=intact.confidence, jobs=intact.jobs, budget=10**9, log=intact.log,
                          label=f"{arch.name} cut {cut.name}")  # fmt: skip
        judges.append(CutJudge(cut, judge, setup.unrouted_pairs, disconnected_share(scenario, arch, setup)))
    return judges


def cut_outcomes(judges: Sequence[CutJudge], fiber_pairs: Sequence[int]) -> list[CutOutcome]:
    """The candidate ``fiber_pairs`` simulated under every cut."""
    return [
        CutOutcome(j.cut, j.evaluator(fiber_pairs), j.disconnected, j.disconnected_share,
                   j.evaluator.targets.blocking)  # fmt: skip
        for j in judges
    ]


def cut_rows(architecture: str, cables: Sequence[str], outcomes: Sequence[CutOutcome]) -> list[dict]:
    """Rows of cuts.csv for one architecture, the worst cut (highest blocking) marked."""
    rows = []
    for o in outcomes:
        iv = o.evaluation.point.blocking
        rows.append(
            {
                "architecture": architecture,
                "cut": o.cut.name,
                "kind": o.cut.kind,
                "cable": o.cut.name,
                "cables": " ".join(cables[i] for i in o.cut.cables),
                "load_erlang": o.evaluation.point.load_erlang,
                "blocking": iv.mean,
                "blocking_ci_low": iv.low,
                "blocking_ci_high": iv.high,
                "bandwidth_blocking": o.evaluation.point.bandwidth_blocking.mean,
                "replications": o.evaluation.replications,
                "cut_target": o.target,
                "verdict": o.evaluation.verdict,
                "met": o.evaluation.meets,
                "pairs_without_route": len(o.disconnected),
                "disconnected_pairs": " ".join(f"{a}-{b}" for a, b in o.disconnected),
                "disconnected_share": o.disconnected_share,
            }
        )
    if rows:
        worst = max(range(len(rows)), key=lambda i: (rows[i]["blocking"], rows[i]["blocking_ci_high"], -i))
        for i, row in enumerate(rows):
            row["is_worst"] = i == worst
            row["worst"] = rows[worst]["cut"]
    return rows
