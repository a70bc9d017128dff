"""Small in-memory scenarios for tests (no files involved)."""

from __future__ import annotations

import math
from typing import Any

from sdmnet.inputs.model import (
    Architecture,
    Cable,
    FiberType,
    RunSpec,
    Scenario,
    Site,
    Topology,
    TrafficSpec,
    TransceiverSpec,
)
from sdmnet.network.routing import Route, datacenter_pairs, k_shortest_routes


def fiber_type(name="f", cores=1, coupling="weak", coupled_group=None, channels=10) -> FiberType:
    group = coupled_group if coupled_group is not None else (1 if coupling == "weak" else cores)
    return FiberType(name, cores, coupling, group, channels, 0.2)


def single_cable(fiber: FiberType, fiber_pairs=1, length_km=10.0) -> Topology:
    return Topology(
        "one-cable",
        {fiber.name: fiber},
        (Site("A", "datacenter"), Site("B", "datacenter")),
        (Cable("A", "B", length_km, fiber.name, fiber_pairs),),
    )


def chain(fiber: FiberType, hops: int, fiber_pairs=1, length_km=10.0) -> Topology:
    """Datacenters at both ends of ``hops`` cables in series, hubs in between."""
    ids = [f"S{i}" for i in range(hops + 1)]
    sites = tuple(Site(s, "datacenter" if i in (0, hops) else "hub") for i, s in enumerate(ids))
    cables = tuple(Cable(a, b, length_km, fiber.name, fiber_pairs) for a, b in zip(ids, ids[1:]))
    return Topology("chain", {fiber.name: fiber}, sites, cables)


def weighted_datacenter_chain(fiber: FiberType) -> Topology:
    """Datacenters A - B - C in a line (10 and 12 km, one pair each), site weights 3 : 1 : 2."""
    return Topology(
        "abc",
        {fiber.name: fiber},
        (Site("A", "datacenter", 3.0), Site("B", "datacenter", 1.0), Site("C", "datacenter", 2.0)),
        (Cable("A", "B", 10.0, fiber.name, 1), Cable("B", "C", 12.0, fiber.name, 1)),
    )


def scenario(
    topology: Topology,
    architectures,
    loads=(5.0,),
    sizes=((100.0, 1.0),),
    lane_gbps=100.0,
    requests=2000,
    warmup=200,
    replications=3,
    k_paths=1,
    seed=7,
    pattern="uniform",
) -> Scenario:
    return Scenario(
        name="test",
        topology=topology,
        seed=seed,
        traffic=TrafficSpec(pattern, tuple(loads), 1.0, tuple(sizes)),
        transceiver=TransceiverSpec(lane_gbps=lane_gbps),
        run=RunSpec(requests, warmup, replications, k_paths),
        architectures=tuple(architectures),
    )


def shortest_routes(sc: Scenario, arch: Architecture) -> dict[tuple[str, str], list[Route]]:
    """Route finder without physics: the k shortest routes of every pair."""
    topo = sc.topology_for(arch)
    return {p: k_shortest_routes(topo, *p, sc.run.k_paths) for p in datacenter_pairs(topo)}


# TOML text for tests that write files (the tiny writer the fuzz tests need)


def toml_value(value: Any) -> str:
    """A TOML literal for ``value`` (the tiny writer the fuzz test needs)."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if math.isnan(value):
            return "nan"
        if math.isinf(value):
            return "inf" if value > 0 else "-inf"
        return repr(value)
    if isinstance(value, str):
        return '"' + "".join(c if c.isprintable() and c not in '"\\' else toml_escape(c) for c in value) + '"'
    if isinstance(value, list):
        return "[" + ", ".join(toml_value(v) for v in value) + "]"
    if isinstance(value, dict):
        return "{" + ", ".join(f"{toml_key(k)} = {toml_value(v)}" for k, v in value.items()) + "}"
    raise TypeError(type(value))


def toml_escape(char: str) -> str:
    code = ord(char)
    return f"\\u{code:04x}" if code <= 0xFFFF else f"\\U{code:08x}"


def toml_key(key: str) -> str:
    return toml_value(key)


def toml_document(data: dict[str, Any]) -> str:
    """``data`` as TOML: scalars and inline tables at the top, then tables and arrays of tables."""
    lines = []
    for key, value in data.items():
        if not isinstance(value, dict) and not (
            isinstance(value, list) and value and all(isinstance(v, dict) for v in value)
        ):
            lines.append(f"{toml_key(key)} = {toml_value(value)}")
    for key, value in data.items():
        if isinstance(value, dict):
            lines.append(f"[{toml_key(key)}]")
            lines += [f"{toml_key(k)} = {toml_value(v)}" for k, v in value.items()]
        elif isinstance(value, list) and value and all(isinstance(v, dict) for v in value):
            for item in value:
                lines.append(f"[[{toml_key(key)}]]")
                lines += [f"{toml_key(k)} = {toml_value(v)}" for k, v in item.items()]
    return "\n".join(lines) + "\n"
