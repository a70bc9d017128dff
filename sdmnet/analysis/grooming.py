"""Reduced-load estimate of unit switching with grooming (``share = true``).

Under grooming the engine keeps, per datacenter pair and route, the units lit between the two
sites.  A demand of ``s`` lanes fills spare lanes of those units first and lights new units,
``g`` lanes each, only for the rest; a unit goes dark when its last demand leaves.  What a pair
holds on a cable is therefore its *lit units*, not its demands' units, and whether a demand is
blocked depends on the pair's own lanes in use as much as on the cable.

Model (docs/estimate.md, "Grooming"):

* **Tight packing.** A group (a pair on one of its routes) holding ``U`` lanes keeps
  ``ceil(U / g)`` units lit (the engine keeps a unit lit until it is empty, so it may hold a
  little more: see the known failures).  A demand of ``s`` lanes is accepted on a cable when
  ``ceil((U + s) / g)`` units of the group fit beside the other groups' units.
* **One cable, exactly.**  Every group's demands of each size, held on infinite lanes, are
  independent M/M/infinity queues, a reversible process whose stationary law is the product of
  Poisson laws.  Blocking a demand exactly when the lit units would exceed the cable's ``C`` is
  a truncation of that process to ``{sum over groups of ceil(U_grp / g) <= C}``, so the
  stationary law is the same product restricted to that set (Kelly, *Reversibility and
  Stochastic Networks*, 1979, truncation of reversible processes; from memory).  Blocking of a
  demand of group ``i`` and size ``s`` is then::

      sum_u pi_i(u) [F_i(C - ceil(u/g)) - F_i(C - ceil((u+s)/g))] / sum_u pi_i(u) F_i(C - ceil(u/g))

  with ``pi_i`` the group's lane law (Kaufman-Roberts product form without a limit) and ``F_i``
  the distribution function of the other groups' lit units (their laws convolved).  With one
  group it is Kaufman-Roberts over the cable's ``C g`` lanes.
* **A network.**  Cables block independently (the reduced-load assumption); each group's
  demands reach a cable thinned by the other cables of its route and by the refusal of the
  pair's earlier routes (taken as independent of each other); channel continuity by the
  factor of :mod:`sdmnet.analysis.reduced_load` on the cables' lit-unit occupancy.  Solved by
  damped iteration from empty cables.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from itertools import combinations

import numpy as np

from .analytic import _occupancy_log
from .reduced_load import RouteOption, _continuity, _option_hops

__all__ = ["GroomedGroup", "GroomedResult", "groomed_fixed_point"]


@dataclass(frozen=True)
class GroomedGroup:
    """A pair on one of its routes: the units it lights are its own.

    Attributes
    ----------
    pair : int
        Index of the pair; a pair's groups are its routes, tried in the order given.
    option : RouteOption
        The route: its links and continuity slots (``units`` is ignored).
    lanes_per_unit : int
        Lanes g of one unit on this route.
    """

    pair: int
    option: RouteOption
    lanes_per_unit: int


@dataclass(frozen=True)
class GroomedResult:
    """Outcome of :func:`groomed_fixed_point` (a leading axis P over load points).

    Attributes
    ----------
    pair_blocking : ndarray (P, N, K)
        Blocking of a demand of pair n and size k (1 for a pair without routes).
    lit_units : ndarray (P, L)
        Mean lit units per link at the fixed point.
    iterations : int
    converged : bool
    """

    pair_blocking: np.ndarray
    lit_units: np.ndarray
    iterations: int
    converged: bool


def _unit_laws(lane_law: np.ndarray, lanes_per_unit: np.ndarray, capacity: int) -> np.ndarray:
    """(R, C + 1): law of ceil(U / g) per row from the lane laws (R, capacity * gmax + 1)."""
    rows = lane_law.shape[0]
    u = np.arange(lane_law.shape[1])
    units = -(-u[None, :] // lanes_per_unit[:, None])  # (R, U)
    out = np.zeros((rows, capacity + 1))
    inside = units <= capacity
    r_idx = np.broadcast_to(np.arange(rows)[:, None], units.shape)
    np.add.at(out, (r_idx[inside], units[inside]), lane_law[inside])
    return out


def _convolve_rows(a: np.ndarray, b: np.ndarray, size: int) -> np.ndarray:
    """Convolution of two (1, n) laws, cut to ``size`` columns (direct sums: exact in sign)."""
    return np.convolve(a[0], b[0])[:size][None, :]


def _link_blocking(lane_law: np.ndarray, g: np.ndarray, lanes: np.ndarray, capacity: int
                   ) -> tuple[np.ndarray, np.ndarray]:  # fmt: skip
    """Blocking (R, K) of each group's sizes on one link, and the link's lit-unit law (C + 1,).

    ``lane_law`` (R, capacity * gmax + 1) is each group's lane law cut where its units exceed
    the capacity (those states are outside the truncated set).
    """
    rows = lane_law.shape[0]
    unit_law = _unit_laws(lane_law, g, capacity)  # (R, C + 1)
    # Law of the other groups' units: prefix and suffix convolutions, cut at C.
    ones = np.zeros((1, capacity + 1))
    ones[0, 0] = 1.0
    prefix = [ones]
    for r in range(rows):
        prefix.append(_convolve_rows(prefix[-1], unit_law[r : r + 1], capacity + 1))
    suffix = [ones]
    for r in range(rows - 1, -1, -1):
        suffix.append(_convolve_rows(suffix[-1], unit_law[r : r + 1], capacity + 1))
    suffix = suffix[::-1]  # suffix[r]: groups r.. ; suffix[rows]: none
    others = np.concatenate([_convolve_rows(prefix[r], suffix[r + 1], capacity + 1) for r in range(rows)])
    cdf = np.cumsum(others, axis=1)  # (R, C + 1): P(others' units <= c)
    u = np.arange(lane_law.shape[1])

    def room(extra: int) -> np.ndarray:
        """P(others' units <= C - ceil((u + extra) / g)) per row and u (0 when negative)."""
        left = capacity - (-(-(u[None, :] + extra) // g[:, None]))
        return np.where(left >= 0, np.take_along_axis(cdf, np.clip(left, 0, capacity), axis=1), 0.0)

    fits = room(0)
    mass = (fits * lane_law).sum(axis=1)
    blocking = np.empty((rows, lanes.size))
    for k, s in enumerate(lanes):
        refused = ((fits - room(int(s))) * lane_law).sum(axis=1)
        blocking[:, k] = np.divide(refused, mass, out=np.ones(rows), where=mass > 0)
    total = prefix[-1][0]
    return np.clip(blocking, 0.0, 1.0), total / total.sum() if total.sum() > 0 else total


@dataclass(frozen=True)
class _Term:
    """One inclusion-exclusion term of a pair's route r: r accepts and every route of a subset
    of the earlier ones accepts too, with sign (-1)^|subset|.  ``cells`` are the (group, hop)
    survivals it multiplies (a link shared by several of its routes counted once, on the first
    route that crosses it), ``groups`` the routes whose continuity factor it multiplies, and
    ``loaded`` the cells of route r, which the term's traffic loads."""

    sign: float
    route: int  # group of route r
    cells: tuple[tuple[int, int], ...]
    groups: tuple[int, ...]
    loaded: tuple[int, ...]  # indices into cells


def _terms(groups: Sequence[GroomedGroup], by_pair: list[list[int]]) -> list[list[_Term]]:
    """Per pair, the inclusion-exclusion terms of all its routes (docs/estimate.md, step 2)."""
    out = []
    for members in by_pair:
        terms = []
        for r, i in enumerate(members):
            for n_t in range(r + 1):
                for subset in combinations(members[:r], n_t):
                    seen, cells, loaded = set(), [], []
                    for q in (i, *subset):
                        for h, ell in enumerate(groups[q].option.links):
                            if ell not in seen:
                                seen.add(ell)
                                if q == i:
                                    loaded.append(len(cells))
                                cells.append((q, h))
                    terms.append(_Term(-1.0 if n_t % 2 else 1.0, i, tuple(cells), (i, *subset), tuple(loaded)))
        out.append(terms)
    return out


def groomed_fixed_point(
    capacities: Sequence[int],
    groups: Sequence[GroomedGroup],
    lanes: Sequence[int],
    loads: np.ndarray,
    *,
    damping: float = 0.5,
    tol: float = 1e-7,
    max_iter: int = 500,
) -> GroomedResult:
    """Reduced-load fixed point of grooming pairs (module docstring).

    Parameters
    ----------
    capacities : sequence of int
        Units per link.
    groups : sequence of GroomedGroup
        Each pair's routes in the order they are tried.
    lanes : sequence of int
        Lanes of a demand of each size class.
    loads : array_like, shape (P, N, K)
        Offered load (Erlang) of each pair and size at each of P points.
    damping : float
        Weight kept from the previous link blocking at each step, in [0, 1); raised towards 1
        each time a step does not shrink the change by a tenth.
    tol, max_iter
        Stop when the largest change of a link blocking falls below ``tol``, or after
        ``max_iter`` iterations (``converged = False``).

    Returns
    -------
    GroomedResult
    """
    caps = np.asarray(capacities, dtype=np.int64)
    sizes = np.asarray(lanes, dtype=np.int64)
    offered = np.asarray(loads, dtype=float)
    if not 0 <= damping < 1:
        raise ValueError(f"damping must be in [0, 1), got {damping!r}")
    n_points, n_pairs, n_sizes = offered.shape
    n_groups, n_links = len(groups), caps.size
    g_lanes = np.array([grp.lanes_per_unit for grp in groups], dtype=np.int64)
    units = np.array([[-(-int(s) // int(g)) for s in sizes] for g in g_lanes], dtype=np.int64).reshape(n_groups, -1)
    # Continuity: one option per group and unit count, as the routed estimate builds them.
    needs = sorted({int(n) for n in units.ravel()})
    options = [(i, n, RouteOption(grp.option.links, (n,) * len(grp.option.links), grp.option.slots,
                                  grp.option.positions))
               for i, grp in enumerate(groups) for n in needs]  # fmt: skip
    option_of = np.array([[needs.index(int(n)) + i * len(needs) for n in units[i]] for i in range(n_groups)],
                         dtype=np.int64).reshape(n_groups, n_sizes)  # fmt: skip
    hops = _option_hops(options)
    cover = np.array([[set(grp.option.links) <= set(other.option.links) for other in groups] for grp in groups],
                     dtype=float).reshape(n_groups, n_groups)  # fmt: skip
    cells = [(i, h, ell) for i, grp in enumerate(groups) for h, ell in enumerate(grp.option.links)]
    cells.sort(key=lambda c: c[2])
    cell_group = np.array([c[0] for c in cells], dtype=np.int64)
    cell_hop = np.array([c[1] for c in cells], dtype=np.int64)
    cell_link = np.array([c[2] for c in cells], dtype=np.int64)
    by_pair = [[i for i, grp in enumerate(groups) if grp.pair == n] for n in range(n_pairs)]
    pair_terms = _terms(groups, by_pair)
    max_hops = max((len(grp.option.links) for grp in groups), default=0)
    top = int(caps.max()) if n_links else 0
    pair_blocking = np.ones((n_points, n_pairs, n_sizes))
    lit_units = np.zeros((n_points, n_links))
    iterations, converged = 0, True
    def link_state(cell_load: np.ndarray, p: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Blocking per (group, hop, size), lit-unit law per link and mean units per group."""
        widths = caps[cell_link] * g_lanes[cell_group]
        # Every (link, group) row's lane law at once, cut where the group's units pass C.
        log_q = _occupancy_log(widths, sizes, cell_load[cell_group, cell_hop])  # (max width + 1, R)
        u = np.arange(log_q.shape[0])
        inside = -(-u[:, None] // g_lanes[cell_group][None, :]) <= caps[cell_link][None, :]
        masked = np.where(inside, log_q, -np.inf)
        law = np.exp(masked - masked.max(axis=0)[None, :]).T
        law /= law.sum(axis=1, keepdims=True)
        blocking = np.zeros((n_groups, max_hops, n_sizes))
        occupancy = np.zeros((1, n_links, top + 1))
        occupancy[0, :, 0] = 1.0
        mean_units = np.zeros(n_groups)
        starts = np.flatnonzero(np.r_[True, cell_link[1:] != cell_link[:-1]])
        for a, b in zip(starts, np.r_[starts[1:], cell_link.size]):
            link, rows = int(cell_link[a]), slice(a, b)
            width, g = int(widths[rows].max()), g_lanes[cell_group[rows]]
            blocked, total = _link_blocking(law[rows, : width + 1], g, sizes, int(caps[link]))
            blocking[cell_group[rows], cell_hop[rows]] = blocked
            occupancy[0, link] = 0.0
            occupancy[0, link, : total.size] = total
            mean_units[cell_group[rows]] = _unit_laws(law[rows, : width + 1], g, int(caps[link])) @ np.arange(
                caps[link] + 1)
            lit_units[p, link] = float(total @ np.arange(total.size))
        return blocking, occupancy, mean_units

    def step(blocking: np.ndarray, occupancy: np.ndarray, mean_units: np.ndarray, p: int) -> np.ndarray:
        """Thinned lane loads per (group, hop, size); sets the pairs' blocking."""
        aligned = np.repeat(cover @ mean_units, len(needs))[None, :]
        cont = _continuity(hops, len(options), occupancy, caps, aligned)[0][option_of]  # (G, K)
        survive = 1.0 - blocking
        cell_load = np.zeros((n_groups, max_hops, n_sizes))
        for n, terms in enumerate(pair_terms):
            carried = np.zeros(n_sizes)
            for term in terms:
                values = np.array([survive[q, h] for q, h in term.cells])  # (cells, K)
                scale = term.sign * offered[p, n] * np.prod(cont[list(term.groups)], axis=0)
                carried += scale * values.prod(axis=0)
                for c in term.loaded:
                    q, h = term.cells[c]
                    # Given room on this link: the term's other links only.
                    cell_load[q, h] += scale * np.prod(np.delete(values, c, axis=0), axis=0)
            accepted = np.divide(carried, offered[p, n], out=np.zeros(n_sizes), where=offered[p, n] > 0)
            pair_blocking[p, n] = np.clip(1.0 - accepted, 0.0, 1.0)
        return np.maximum(cell_load, 0.0)

    for p in range(n_points):
        # Every point starts from empty links, so that its result does not depend on the others.
        blocking, occupancy, mean_units = link_state(np.zeros((n_groups, max_hops, n_sizes)), p)
        cell_load = step(blocking, occupancy, mean_units, p)
        weight, previous, done = damping, np.inf, False
        for it in range(1, max_iter + 1):
            new_blocking, occupancy, mean_units = link_state(cell_load, p)
            change = float(np.abs(new_blocking - blocking).max()) if blocking.size else 0.0
            blocking = new_blocking
            new_load = step(blocking, occupancy, mean_units, p)
            iterations = max(iterations, it)
            if change < tol:
                done = True
                break
            # Damp harder each time a step fails to shrink the change by a tenth (alternate
            # routing makes the plain map oscillate at high load, as in the routed estimate).
            if it > 1 and change > 0.9 * previous:
                weight = 1.0 - 0.5 * (1.0 - weight)
            previous = change
            cell_load = weight * cell_load + (1.0 - weight) * new_load
        converged = converged and done
    return GroomedResult(pair_blocking, lit_units, iterations, converged)
