"""Fiber paths provisioned between datacenter pairs, for fiber switching with grooming.

A fiber cross-connect is set up by planning, not per demand: each datacenter pair gets whole
fiber paths (a fiber on every cable of one of its routes) dimensioned from its offered traffic,
and demands are then groomed dynamically into the lanes of the pair's lit fibers
(docs/model.md, section 3, "Fiber switching").  The paths are fixed for a run, so which pair
holds fibers does not depend on the order of arrivals.

Dimensioning is greedy marginal allocation (common practice for trunk groups, no source):
fiber paths go one at a time to the pair whose carried traffic (in Gb/s) grows most with one more
fiber, on its first route with a free fiber on every cable, until no pair gains or no path
fits.  The carried traffic of a pair with ``c`` lanes is exact for a single pool: the
Kaufman-Roberts recursion over lanes (Kaufman, IEEE Trans. Commun. 29(10), 1981).
"""

from __future__ import annotations

import heapq
from collections.abc import Sequence

import numpy as np

from ..analysis.analytic import kaufman_roberts

__all__ = ["provision_fiber_paths"]

# A pair stops receiving fibers once one more would carry less than this share of its traffic.
_MIN_GAIN = 1e-9


def _blocked_gbps(lanes: int, loads: np.ndarray, sizes: list[int], gbps: np.ndarray) -> float:
    if lanes <= 0:
        return float(np.dot(loads, gbps))
    return float(np.dot(loads * gbps, kaufman_roberts(lanes, loads, sizes)))


def provision_fiber_paths(
    fiber_pairs: Sequence[int],
    routes: Sequence[Sequence[tuple[int, ...]]],
    pair_loads: Sequence[float],
    size_probs: Sequence[float],
    size_lanes: Sequence[Sequence[Sequence[int]]],
    lanes_per_fiber: Sequence[Sequence[int]],
) -> tuple[tuple[int, ...], ...]:
    """Fiber paths per pair and route, dimensioned from the offered traffic.

    Parameters
    ----------
    fiber_pairs : sequence of int
        Fibers (pairs) per cable.
    routes : sequence of sequence of tuple of int
        Per pair, its feasible routes in order, each as cable indices.
    pair_loads : sequence of float
        Offered load of each pair in Erlang.
    size_probs : sequence of float
        Probability of each demand size.
    size_lanes : sequence of sequence of sequence of int
        Per pair and route, the lanes a demand of each size fills (whole MIMO groups on randomly
        coupled fiber).
    lanes_per_fiber : sequence of sequence of int
        Per pair and route, the lanes one fiber carries (cores x channels).

    Returns
    -------
    tuple of tuple of int
        Per pair and route, the fiber paths given to it.
    """
    free = list(fiber_pairs)
    probs = np.asarray(size_probs, dtype=float)
    counts = [[0] * len(rs) for rs in routes]
    lanes_held = [0] * len(routes)

    def gain(p: int) -> tuple[float, int] | None:
        """Carried Gb/s one more fiber path adds to pair p, and the route it would take."""
        # The route with a free fiber on every cable that takes the fewest cables (fiber is
        # the scarce resource); the earlier route on a tie.
        open_routes = [(len(cables), r) for r, cables in enumerate(routes[p]) if all(free[c] > 0 for c in cables)]
        if not open_routes:
            return None
        r = min(open_routes)[1]
        loads = pair_loads[p] * probs
        sizes = [int(n) for n in size_lanes[p][r]]
        gbps = np.asarray(sizes, dtype=float)  # lanes filled stand for Gb/s: the gain ranks pairs only
        now = _blocked_gbps(lanes_held[p], loads, sizes, gbps)
        after = _blocked_gbps(lanes_held[p] + lanes_per_fiber[p][r], loads, sizes, gbps)
        offered = float(np.dot(loads, gbps))
        if offered <= 0 or now - after <= _MIN_GAIN * offered:
            return None
        # Rounded so that pairs with equal traffic tie exactly and go in pair order.
        return float(f"{now - after:.10g}"), r

    heap = []
    for p in range(len(routes)):
        found = gain(p)
        if found is not None:
            heapq.heappush(heap, (-found[0], p, found[1]))
    while heap:
        _neg, p, r = heapq.heappop(heap)
        cables = routes[p][r]
        if not all(free[c] > 0 for c in cables):
            # A cable of the route filled since this gain was computed: look again.
            found = gain(p)
            if found is not None:
                heapq.heappush(heap, (-found[0], p, found[1]))
            continue
        for c in cables:
            free[c] -= 1
        counts[p][r] += 1
        lanes_held[p] += lanes_per_fiber[p][r]
        found = gain(p)
        if found is not None:
            heapq.heappush(heap, (-found[0], p, found[1]))
    return tuple(tuple(c) for c in counts)
