"""The analytic first guess of a plan: per cable, the fewest fiber pairs by Erlang B / Kaufman-Roberts.

Every pair's demand is routed on its first feasible route; per cable, the offered demands are
grouped by the units they take, and the fewest fiber pairs are found whose units keep the
cable's blocking under ``target / hops`` (``hops`` of the longest first route over the cable, so
that a route's blocking, roughly the sum over its cables, stays under the target).  Erlang B when
every demand takes one unit (exact on one cable), else Kaufman-Roberts weighted by demand load.
Ignores channel continuity (adds blocking) and alternate routes (remove some): a start for the
simulation to correct (docs/planning.md).
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np

from ..analysis.analytic import erlang_b_servers, kaufman_roberts
from ..inputs.model import Architecture, PlanSpec, Scenario
from ..network.architectures import UnitGeometry, cable_geometries, units_needed
from ..network.traffic import pair_loads, size_classes
from ..sim.engine import EngineSetup, prepare

__all__ = ["dimensioning_load", "plan_spec", "cable_offered_units", "units_per_pair", "mean_units",
           "analytic_first_guess"]


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


def units_per_pair(scenario: Scenario, arch: Architecture) -> list[int]:
    """Per cable: units in one fiber pair under ``arch``."""
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
    per_pair = units_per_pair(scenario, arch)
    return {
        cable.key: _pairs_for_link_target(offered[i], per_pair[i], spec.target_blocking / max(hops[i], 1),
                                          spec.max_fiber_pairs)
        for i, cable in enumerate(topo.cables)
    }


def mean_units(offered: list[dict[int, float]]) -> list[float]:
    """Per cable: mean units per demand, weighted by offered load (1 where nothing is offered)."""
    out = []
    for classes in offered:
        total = sum(classes.values())
        out.append(sum(b * a for b, a in classes.items()) / total if total > 0 else 1.0)
    return out
