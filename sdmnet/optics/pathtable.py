"""Candidate paths with their physics: the ``paths`` table and the routes the engine may use.

For every architecture and datacenter pair, the k shortest routes
(:func:`sdmnet.network.routing.route_table` on the architecture's view of the topology) are
evaluated with :func:`sdmnet.optics.physics.evaluate_path` for the architecture's unit on each cable's
fiber type, the scenario's amplified line and its transceiver classes.  A route whose cables give
different unit sizes, or whose fiber type does not allow the architecture, is infeasible with
that reason.  The feasible routes handed to the engine carry the class that closes each
(:class:`ClassedRoute`), so planning and costing can read it as plain data.
"""

from __future__ import annotations

import math
from collections.abc import Iterator, Sequence
from dataclasses import dataclass, replace

import pandas as pd

from ..inputs.model import Architecture, LineSpec, Scenario, Topology, TransceiverClass, TransceiverSpec
from ..network.architectures import unit_geometry, why_not_allowed
from ..network.routing import Route, route_table
from .classes import scenario_classes
from .physics import PathPhysics, evaluate_path, mimo_group

__all__ = [
    "PATH_COLUMNS",
    "NO_CLASS",
    "ClassedRoute",
    "evaluate_route",
    "evaluated_routes",
    "path_table",
    "feasible_routes",
    "clear_physics_cache",
]

#: The ``transceiver_class`` of a path no class closes, in tables.
NO_CLASS = "none"

PATH_COLUMNS: tuple[str, ...] = (
    "architecture",
    "a",
    "b",
    "rank",
    "path",
    "hops",
    "length_km",
    "loss_db",
    "gd_spread_ps",
    "mimo_taps",
    "crosstalk_db",
    "mdl_db",
    "spans",
    "osnr_db",
    "gsnr_db",
    "margin_db",
    "transceiver_class",
    "feasible",
    "reason",
)


@dataclass(frozen=True)
class ClassedRoute(Route):
    """A feasible route with the transceiver class that closes it (the cheapest that does).

    Attributes
    ----------
    transceiver_class : str
        Name of the class.
    lane_gbps : float
        Its lane rate: a route's unit capacity follows it.
    """

    transceiver_class: str = ""
    lane_gbps: float = 0.0


def _unit_cores(arch: Architecture, topology: Topology, route: Route, lane_gbps: float) -> tuple[int | None, str]:
    """Cores per unit along ``route``, or None with the reason it has no single unit size."""
    units: dict[str, tuple[str | None, int]] = {}  # per fiber type: why not allowed, cores per unit
    sizes: dict[int, list[int]] = {}
    for i in route.cables:
        cable = topology.cables[i]
        unit = units.get(cable.fiber_type)
        if unit is None:
            fiber = topology.fiber_types[cable.fiber_type]
            why = why_not_allowed(arch, fiber)
            unit = units[cable.fiber_type] = (why, 0 if why else unit_geometry(arch, fiber, lane_gbps).cores_per_unit)
        why, g = unit
        if why is not None:
            return None, f"cable {cable.key}: {why}"
        sizes.setdefault(g, []).append(i)
    if len(sizes) > 1:
        keys = {g: "/".join(topology.cables[i].key for i in members) for g, members in sizes.items()}
        parts = ", ".join(f"{g} cores on {keys[g]}" for g in sorted(sizes))
        return None, f"unit size differs along the path ({parts})"
    return next(iter(sizes)), ""


def evaluate_route(
    topology: Topology,
    route: Route,
    arch: Architecture,
    transceiver: TransceiverSpec,
    line: LineSpec | None = None,
    classes: Sequence[TransceiverClass] | None = None,
    memo: dict | None = None,
) -> PathPhysics:
    """Physics of ``route`` for ``arch``'s unit; infeasible if the unit size is not unique.

    When the unit size is undefined (mixed sizes, or a fiber type that forbids the
    architecture), the figures are still computed (for a unit spanning the mixed cores) so the
    table shows them, and the verdict is infeasible with that reason first.
    """
    hops = [(topology.cables[i], topology.fiber_types[topology.cables[i].fiber_type]) for i in route.cables]
    cores, why = _unit_cores(arch, topology, route, transceiver.lane_gbps)
    physics = {"line": line, "classes": classes, "switching": arch.switching, "memo": memo}
    if cores is not None:
        return evaluate_path(hops, transceiver, cores, **physics)
    # A stand-in unit as wide as the mixed cores, so no unit-width verdict is added to the reason.
    phys = evaluate_path(hops, transceiver, mimo_group([f for _, f in hops]), **physics)
    others = [phys.reason] if phys.reason else []
    return replace(phys, feasible=False, reason="; ".join([why, *others]))


def evaluated_routes(
    scenario: Scenario, arch: Architecture
) -> Iterator[tuple[str, str, list[tuple[Route, PathPhysics]]]]:
    """Per datacenter pair of ``arch``'s topology, its k shortest routes with their physics.

    Routes come from :func:`~sdmnet.network.routing.route_table` (once per topology shape) and
    each route's physics is evaluated once per process for what decides it: the route's cables
    (ends, length, fiber type), the architecture's switching and group, the transceiver, the line
    and the classes.  So the engine, the estimate, the equipment counts, every plan candidate,
    cut and forecast year, and every architecture on the same fiber share the work.
    """
    topology = scenario.topology_for(arch)
    classes = scenario_classes(scenario)
    memo = _physics_memo((arch.switching, arch.group), scenario.transceiver, scenario.line, classes)
    cables = [(c.a, c.b, c.length_km, topology.fiber_types[c.fiber_type]) for c in topology.cables]
    per_cable: dict = {}  # what each cable adds to any route over it (evaluate_path's memo)
    for (a, b), routes in route_table(topology, scenario.run.k_paths).items():
        found = []
        for r in routes:
            key = tuple(cables[i] for i in r.cables)
            phys = memo.get(key)
            if phys is None:
                phys = memo[key] = evaluate_route(topology, r, arch, scenario.transceiver, scenario.line, classes,
                                                  per_cable)  # fmt: skip
            found.append((r, phys))
        yield a, b, found


# Physics per route, per (architecture's unit, transceiver, line, classes); the oldest context is
# dropped first, and a context is cleared when it grows past a bound (memory stays bounded).
_PHYSICS: dict[tuple, dict[tuple, PathPhysics]] = {}
_MAX_CONTEXTS = 16
_MAX_ROUTES = 200_000


def _physics_memo(*context: object) -> dict[tuple, PathPhysics]:
    memo = _PHYSICS.get(context)
    if memo is None:
        if len(_PHYSICS) >= _MAX_CONTEXTS:
            del _PHYSICS[next(iter(_PHYSICS))]
        memo = _PHYSICS[context] = {}
    elif len(memo) > _MAX_ROUTES:
        memo.clear()
    return memo


def clear_physics_cache() -> None:
    """Forget every route's physics (for benchmarks of a cold start)."""
    _PHYSICS.clear()


def _row(arch: Architecture, a: str, b: str, rank: int, route: Route, phys: PathPhysics) -> dict:
    return {
        "architecture": arch.name,
        "a": a,
        "b": b,
        "rank": rank,
        "path": route.label,
        "hops": len(route.cables),
        "length_km": phys.length_km,
        "loss_db": phys.loss_db,
        "gd_spread_ps": phys.gd_spread_ps,
        "mimo_taps": phys.mimo_taps,
        "crosstalk_db": phys.crosstalk_db,
        "mdl_db": phys.mdl_db,
        "spans": phys.spans,
        "osnr_db": phys.osnr_db,
        "gsnr_db": phys.gsnr_db,
        "margin_db": phys.margin_db,
        "transceiver_class": phys.transceiver_class or NO_CLASS,
        "feasible": phys.feasible,
        "reason": phys.reason,
    }


def path_table(scenario: Scenario) -> pd.DataFrame:
    """One row per (architecture, datacenter pair, rank) with the path's physics.

    Columns are :data:`PATH_COLUMNS`.  ``rank`` counts from 1 in order of length.  A pair with
    no route at all gets one row with rank 0, an empty path, NaN figures and the reason.
    ``crosstalk_db`` is NaN (an empty cell in CSV) on paths whose signals have no neighbours.
    OSNR, GSNR and margin are those of ``transceiver_class`` (the cheapest class that closes the
    path), or, where it is ``"none"``, of the class closest to closing it.
    """
    rows = []
    for arch in scenario.architectures:
        for a, b, evaluated in evaluated_routes(scenario, arch):
            if not evaluated:
                rows.append(
                    {
                        **dict.fromkeys(PATH_COLUMNS, math.nan),
                        "architecture": arch.name,
                        "a": a,
                        "b": b,
                        "rank": 0,
                        "path": "",
                        "hops": 0,
                        "mimo_taps": 0,
                        "spans": 0,
                        "transceiver_class": NO_CLASS,
                        "feasible": False,
                        "reason": f"no route between {a} and {b}",
                    }
                )
                continue
            for rank, (route, phys) in enumerate(evaluated, start=1):
                rows.append(_row(arch, a, b, rank, route, phys))
    return pd.DataFrame(rows, columns=list(PATH_COLUMNS))


def feasible_routes(scenario: Scenario, arch: Architecture) -> dict[tuple[str, str], list[Route]]:
    """Per datacenter pair (in :func:`~sdmnet.network.routing.datacenter_pairs` order), the feasible
    routes among the k shortest, in rank order, each a :class:`ClassedRoute` naming its class;
    an empty list when none is feasible."""
    pairs = evaluated_routes(scenario, arch)
    return {(a, b): [_classed(r, phys) for r, phys in found if phys.feasible] for a, b, found in pairs}


def _classed(route: Route, phys: PathPhysics) -> ClassedRoute:
    assert phys.transceiver_class is not None and phys.lane_gbps is not None  # feasible paths have a class
    return ClassedRoute(route.sites, route.cables, route.length_km, phys.transceiver_class, phys.lane_gbps)
