"""How offered load spreads over datacenter pairs, and the demand-size distribution."""

from __future__ import annotations

import numpy as np

from ..inputs.model import Topology, TrafficSpec
from .routing import datacenter_pairs

__all__ = ["pair_weights", "pair_loads", "size_classes"]


def pair_weights(topology: Topology, traffic: TrafficSpec) -> dict[tuple[str, str], float]:
    """Share of the total load per unordered datacenter pair (sums to 1).

    ``uniform``: equal shares.  ``gravity``: proportional to the product of the two sites'
    ``traffic_weight``.  ``matrix``: the weights of the CSV (rows for either orientation of a
    pair are added); pairs absent from the matrix get no traffic.
    """
    pairs = datacenter_pairs(topology)
    if traffic.pattern == "uniform":
        raw = {p: 1.0 for p in pairs}
    elif traffic.pattern == "gravity":
        w = {s.id: s.traffic_weight for s in topology.datacenters}
        raw = {(a, b): w[a] * w[b] for a, b in pairs}
    elif traffic.pattern == "matrix":
        raw = {p: 0.0 for p in pairs}
        for a, b, weight in traffic.matrix or ():
            key = (a, b) if (a, b) in raw else (b, a)
            raw[key] = raw.get(key, 0.0) + weight
    else:  # the loader refuses other patterns
        raise ValueError(f"unknown traffic pattern {traffic.pattern!r}")
    total = sum(raw.values())
    if total <= 0:
        raise ValueError("traffic weights sum to zero")
    return {p: v / total for p, v in raw.items() if v > 0}


def pair_loads(topology: Topology, traffic: TrafficSpec, load_erlang: float) -> dict[tuple[str, str], float]:
    """Offered load in Erlang per datacenter pair for a total of ``load_erlang``."""
    return {p: share * load_erlang for p, share in pair_weights(topology, traffic).items()}


def size_classes(traffic: TrafficSpec) -> tuple[np.ndarray, np.ndarray]:
    """Demand sizes (Gb/s) and their probabilities, as arrays in ascending size order."""
    sizes = np.array([s for s, _ in traffic.sizes_gbps], dtype=float)
    probs = np.array([p for _, p in traffic.sizes_gbps], dtype=float)
    order = np.argsort(sizes, kind="stable")
    return sizes[order], probs[order] / probs.sum()
