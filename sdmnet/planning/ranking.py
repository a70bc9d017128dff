"""Ranking candidate moves (one fiber pair more or less on a cable) by an analytic reading.

The simulation of the current candidate gives each cable's utilisation; each cable is read as an
Erlang loss system (:func:`erlang_reading`: ``C / b`` servers, ``b`` the mean units per demand,
carrying the measured ``u C / b`` Erlang, whose offered load is found by inverting Erlang B).
That reading prices each move:

* adding a pair to cable ``c`` removes, of the blocked demands blamed on ``c``
  (:func:`blame`), the share ``1 - B(s + d) / B(s)`` (``d`` the servers of one pair);
* removing a pair from ``c`` adds ``A (B(s - d) - B(s))`` blocked Erlang.

Moves are ranked per unit of cost: blocking removed per cost of the pair added, cost saved per
blocking added.  The simulation then confirms the chosen move (:mod:`sdmnet.planning.search`).
The full routed reduced-load estimate (:mod:`sdmnet.analysis.estimate`) was too slow to solve
once per move on a 30-site region (over a minute per solution at high load), so the ranking uses
this per-cable reading, fed by the simulation itself.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from scipy import special

from ..sim.stats import PointSummary

__all__ = ["erlang_b_continuous", "erlang_reading", "congestion_from_utilisation", "blame", "grow_scores",
           "trim_order"]


def erlang_b_continuous(servers: np.ndarray, load: np.ndarray) -> np.ndarray:
    """Erlang B extended to real server counts: Poisson pmf(s) / cdf(s) via the gamma function."""
    servers, load = np.asarray(servers, dtype=float), np.asarray(load, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore", under="ignore"):
        log_pmf = servers * np.log(load) - load - special.gammaln(servers + 1.0)
        cdf = special.gammaincc(servers + 1.0, load)
        b = np.exp(log_pmf) / cdf
    # Where the cdf underflows the system is hopelessly overloaded: B ~ 1 - s / A.
    fallback = np.clip(1.0 - servers / np.maximum(load, 1e-300), 0.0, 1.0)
    out = np.where(np.isfinite(b) & (cdf > 0), np.clip(b, 0.0, 1.0), fallback)
    return np.where(load > 0, out, 0.0)


def erlang_reading(
    utilisation: Sequence[float], capacity_units: Sequence[float], mean_units: Sequence[float]
) -> tuple[np.ndarray, np.ndarray]:
    """Per cable: servers ``C / b`` and the offered Erlang ``A`` whose carried load
    ``A (1 - B(C / b, A))`` equals the measured ``u C / b`` (bisection on log A)."""
    u = np.clip(np.asarray(utilisation, dtype=float), 0.0, 1.0)
    servers = np.asarray(capacity_units, dtype=float) / np.maximum(np.asarray(mean_units, dtype=float), 1e-9)
    carried = u * servers
    offered = np.zeros_like(u)
    live = (carried > 0) & (servers > 0)
    if not live.any():
        return servers, offered
    s = servers[live]
    m = np.minimum(carried[live], s * (1.0 - 1e-9))
    lo, hi = np.log(m), np.log(m) + 40.0
    for _ in range(80):
        mid = 0.5 * (lo + hi)
        a = np.exp(mid)
        too_low = a * (1.0 - erlang_b_continuous(s, a)) < m
        lo = np.where(too_low, mid, lo)
        hi = np.where(too_low, hi, mid)
    offered[live] = np.exp(0.5 * (lo + hi))
    return servers, offered


def congestion_from_utilisation(
    utilisation: Sequence[float], capacity_units: Sequence[float], mean_units: Sequence[float]
) -> np.ndarray:
    """Per-cable blocking implied by a measured utilisation: ``B(C / b, A)`` of :func:`erlang_reading`.

    Used to rank cables, not as a result: a cable at 90 % busy blocks far more than one at 60 %,
    which utilisation alone understates.
    """
    servers, offered = erlang_reading(utilisation, capacity_units, mean_units)
    return erlang_b_continuous(servers, offered)


def blame(
    point: PointSummary,
    routes: Sequence[Sequence[Sequence[int]]],
    congestion: np.ndarray,
    addable: np.ndarray,
    pair_mask: np.ndarray | None = None,
) -> np.ndarray:
    """Blocked demands per cable: each blocked pair's count spread over the cables of its first
    route that can still grow, in proportion to their congestion.

    ``pair_mask`` (per pair, bool) limits the count to the pairs that miss their own target.
    Where nothing can be attributed (the blocked pairs have no route), the most congested
    addable cable gets a token share, so a search still has somewhere to go.
    """
    util_free = np.asarray(congestion, dtype=float)
    scores = np.zeros(len(util_free))
    for p, pair_routes in enumerate(routes):
        blocked = point.pair_blocked[p]
        if not blocked or not pair_routes or (pair_mask is not None and not pair_mask[p]):
            continue
        route = next((r for r in pair_routes if addable[list(r)].any()), None)
        if route is None:
            continue
        cables = [c for c in route if addable[c]]
        w = util_free[cables]
        if w.sum() <= 0:
            w = np.ones(len(cables))
        scores[cables] += blocked * w / w.sum()
    if scores.sum() <= 0:
        scores = np.where(addable, util_free + 1e-15, 0.0)
    return np.where(addable, scores, 0.0)


def grow_scores(
    point: PointSummary,
    fiber_pairs: Sequence[int],
    routes: Sequence[Sequence[Sequence[int]]],
    units_per_pair: Sequence[int],
    mean_units: Sequence[float],
    pair_price: Sequence[float],
    addable: np.ndarray,
    pair_mask: np.ndarray | None = None,
) -> np.ndarray:
    """Per cable: blocked demands one more pair is read to remove, per unit of its cost (0 where
    not addable)."""
    capacity = np.asarray(fiber_pairs, dtype=float) * np.asarray(units_per_pair, dtype=float)
    servers, offered = erlang_reading(point.cable_utilisation, capacity, mean_units)
    now = erlang_b_continuous(servers, offered)
    step = np.asarray(units_per_pair, dtype=float) / np.maximum(np.asarray(mean_units, dtype=float), 1e-9)
    after = erlang_b_continuous(servers + step, offered)
    relief = np.where(now > 0, 1.0 - after / np.where(now > 0, now, 1.0), 1.0)
    blamed = blame(point, routes, now, addable, pair_mask)
    price = np.maximum(np.asarray(pair_price, dtype=float), 1e-12)
    return np.where(addable, blamed * np.clip(relief, 1e-6, 1.0) / price, 0.0)


def trim_order(
    point: PointSummary,
    fiber_pairs: Sequence[int],
    units_per_pair: Sequence[int],
    mean_units: Sequence[float],
    pair_price: Sequence[float],
    removable: np.ndarray,
) -> list[int]:
    """Removable cables, best first: most cost saved per blocked Erlang one pair fewer is read to add."""
    capacity = np.asarray(fiber_pairs, dtype=float) * np.asarray(units_per_pair, dtype=float)
    servers, offered = erlang_reading(point.cable_utilisation, capacity, mean_units)
    step = np.asarray(units_per_pair, dtype=float) / np.maximum(np.asarray(mean_units, dtype=float), 1e-9)
    added = offered * (erlang_b_continuous(np.maximum(servers - step, 0.0), offered)
                       - erlang_b_continuous(servers, offered))  # fmt: skip
    value = np.asarray(pair_price, dtype=float) / (np.maximum(added, 0.0) + 1e-9)
    order = np.argsort(-value, kind="stable")
    return [int(c) for c in order if removable[c]]
