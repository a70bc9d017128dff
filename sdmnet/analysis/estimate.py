"""Analytic blocking estimate of a scenario, without simulation.

For each architecture the network becomes a loss network of *units* (docs/model.md, section 2):

* a cable holds ``fiber_pairs x groups_per_fiber x channels`` units (``fiber`` switching: one
  unit per fiber pair), all fully shared (complete sharing, no channel continuity);
* each datacenter pair and demand size is a Poisson stream of ``units_needed(size)`` units per
  hop over the pair's first feasible route;
* per-link blocking by Kaufman-Roberts, coupled across links by the Erlang fixed point
  (:func:`sdmnet.analysis.analytic.reduced_load_fixed_point`).

Ignored by the estimate: alternate routes (only the first is used), grooming (``share``) and
``lane_change`` (a unit may take any free position on every hop).  What this means for the gap
to simulation: ``docs/estimate.md``.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..inputs.model import Architecture, Scenario
from ..network.architectures import cable_geometries, units_needed
from ..network.routing import Route, datacenter_pairs
from ..network.traffic import pair_weights, size_classes
from ..optics.pathtable import feasible_routes
from .analytic import Stream, reduced_load_fixed_point_batch

__all__ = [
    "NETWORK_COLUMNS",
    "PAIR_COLUMNS",
    "RouteFinder",
    "estimate",
    "estimate_architecture",
]

NETWORK_COLUMNS = (
    "architecture",
    "switching",
    "load_erlang",
    "blocking",
    "bandwidth_blocking",
    "iterations",
    "converged",
)
PAIR_COLUMNS = ("architecture", "load_erlang", "a", "b", "blocking", "bandwidth_blocking")

RouteFinder = Callable[[Scenario, Architecture], dict[tuple[str, str], list[Route]]]

# Settings of the fixed point used for every estimate.
_DAMPING = 0.5
_TOL = 1e-10
_MAX_ITER = 10_000


@dataclass(frozen=True)
class _Model:
    """One architecture's loss network: link capacities and the streams over them."""

    capacities: np.ndarray  # (L,) units per cable
    pairs: list[tuple[str, str]]  # pairs with traffic, in datacenter order
    pair_share: np.ndarray  # (N,) share of the total load per pair
    routed: np.ndarray  # (N,) bool: pair has a route
    stream_pair: np.ndarray  # (S,) pair index of each stream
    stream_rate: np.ndarray  # (S,) offered load per Erlang of total load
    stream_gbps: np.ndarray  # (S,) demand size of each stream
    routes: list[tuple[tuple[int, ...], tuple[int, ...]]]  # (links, units per link) per stream


def _first_route(found: dict[tuple[str, str], list[Route]], a: str, b: str) -> Route | None:
    routes = found.get((a, b))
    if routes is None:
        routes = found.get((b, a), [])
    return routes[0] if routes else None


def _build(scenario: Scenario, arch: Architecture, route_finder: RouteFinder) -> _Model:
    topo = scenario.topology_for(arch)
    geos = cable_geometries(scenario, arch)
    capacities = np.array([c.fiber_pairs * g.units_per_fiber for c, g in zip(topo.cables, geos)], dtype=np.int64)
    weights = pair_weights(topo, scenario.traffic)
    pairs = [p for p in datacenter_pairs(topo) if weights.get(p, 0.0) > 0]
    sizes, probs = size_classes(scenario.traffic)
    found = route_finder(scenario, arch)
    routed, stream_pair, stream_rate, stream_gbps, routes = [], [], [], [], []
    for n, (a, b) in enumerate(pairs):
        route = _first_route(found, a, b)
        routed.append(route is not None)
        if route is None:
            continue
        for size, prob in zip(sizes, probs):
            if prob <= 0:
                continue
            units = tuple(units_needed(float(size), geos[c]) for c in route.cables)
            stream_pair.append(n)
            stream_rate.append(weights[(a, b)] * prob)
            stream_gbps.append(float(size))
            routes.append((tuple(route.cables), units))
    return _Model(
        capacities=capacities,
        pairs=pairs,
        pair_share=np.array([weights[p] for p in pairs], dtype=float),
        routed=np.array(routed, dtype=bool),
        stream_pair=np.array(stream_pair, dtype=np.int64),
        stream_rate=np.array(stream_rate, dtype=float),
        stream_gbps=np.array(stream_gbps, dtype=float),
        routes=routes,
    )


def _ratio(num: np.ndarray, den: np.ndarray) -> np.ndarray:
    """num / den, 0 where nothing was offered."""
    return np.divide(num, den, out=np.zeros_like(num, dtype=float), where=den > 0)


def estimate_architecture(
    scenario: Scenario, arch: Architecture, route_finder: RouteFinder | None = None
) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Estimate of one architecture at every load point of the scenario.

    Parameters
    ----------
    scenario : Scenario
        The scenario (its load points, sizes, pattern and transceiver lane rate are used).
    arch : Architecture
        The architecture to estimate.
    route_finder : callable, optional
        ``(scenario, arch) -> {pair: [Route, ...]}``; the first route of each pair is used.
        Default: :func:`sdmnet.optics.pathtable.feasible_routes` (physically feasible routes).

    Returns
    -------
    network, pairs : pandas.DataFrame
        Columns :data:`NETWORK_COLUMNS` (one row per load point) and :data:`PAIR_COLUMNS`
        (one row per load point and datacenter pair with traffic).

    Raises
    ------
    ConfigurationError
        If the architecture cannot run on a cable's fiber type.
    """
    model = _build(scenario, arch, route_finder or feasible_routes)
    loads = np.array(scenario.traffic.loads_erlang, dtype=float)
    n_points, n_pairs = loads.size, len(model.pairs)
    # Offered load and blocked load per pair, in requests and in Gb/s, for every load point.
    offered = loads[:, None] * model.pair_share[None, :]
    mean_gbps = float(np.dot(*size_classes(scenario.traffic)))
    offered_gbps = offered * mean_gbps
    # Pairs without a route lose everything they are offered.
    blocked = np.where(model.routed[None, :], 0.0, offered)
    blocked_gbps = np.where(model.routed[None, :], 0.0, offered_gbps)
    iterations, converged = 0, True
    if model.routes:
        streams = [Stream(0.0, links, units) for links, units in model.routes]
        stream_loads = loads[:, None] * model.stream_rate[None, :]
        solved = reduced_load_fixed_point_batch(
            model.capacities, streams, stream_loads, damping=_DAMPING, tol=_TOL, max_iter=_MAX_ITER
        )
        stream_b, iterations, converged = solved.stream_blocking, solved.iterations, solved.converged
        lost = stream_loads * stream_b
        for p in range(n_points):
            blocked[p] += np.bincount(model.stream_pair, weights=lost[p], minlength=n_pairs)
            blocked_gbps[p] += np.bincount(
                model.stream_pair, weights=lost[p] * model.stream_gbps, minlength=n_pairs
            )
    network = pd.DataFrame(
        {
            "architecture": arch.name,
            "switching": arch.switching,
            "load_erlang": loads,
            "blocking": _ratio(blocked.sum(axis=1), offered.sum(axis=1)),
            "bandwidth_blocking": _ratio(blocked_gbps.sum(axis=1), offered_gbps.sum(axis=1)),
            "iterations": iterations,
            "converged": converged,
        },
        columns=list(NETWORK_COLUMNS),
    )
    pairs = pd.DataFrame(
        {
            "architecture": arch.name,
            "load_erlang": np.repeat(loads, n_pairs),
            "a": [a for _ in range(n_points) for a, _b in model.pairs],
            "b": [b for _ in range(n_points) for _a, b in model.pairs],
            "blocking": _ratio(blocked, offered).ravel(),
            "bandwidth_blocking": _ratio(blocked_gbps, offered_gbps).ravel(),
        },
        columns=list(PAIR_COLUMNS),
    )
    return network, pairs


def estimate(scenario: Scenario, *, route_finder: RouteFinder | None = None) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Analytic estimate of every architecture of ``scenario`` at every load point.

    Parameters
    ----------
    scenario : Scenario
        The scenario.
    route_finder : callable, optional
        See :func:`estimate_architecture`.

    Returns
    -------
    network : pandas.DataFrame
        Columns ``architecture, switching, load_erlang, blocking, bandwidth_blocking`` (the keys
        of the simulator's summary.csv) plus ``iterations`` and ``converged`` of the fixed point
        (the load points of one architecture are solved together and share these two); one row
        per architecture and load point.
    pairs : pandas.DataFrame
        Columns ``architecture, load_erlang, a, b, blocking, bandwidth_blocking``; one row per
        architecture, load point and datacenter pair with traffic.
    """
    nets, pairs = [], []
    for arch in scenario.architectures:
        net, pair = estimate_architecture(scenario, arch, route_finder)
        nets.append(net)
        pairs.append(pair)
    if not nets:
        return pd.DataFrame(columns=list(NETWORK_COLUMNS)), pd.DataFrame(columns=list(PAIR_COLUMNS))
    return pd.concat(nets, ignore_index=True), pd.concat(pairs, ignore_index=True)
