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
from numpy.lib.stride_tricks import sliding_window_view

from .analytic import _occupancy_log
from .reduced_load import RouteOption, _continuity, _option_hops

__all__ = ["GroomedGroup", "GroomedResult", "groomed_fixed_point"]

# Load points solved together hold arrays of about this many values (32 MB of floats): enough
# to share each step's work among a few points, small beside the machine's memory.
_BATCH_VALUES = 4_000_000


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


def _toeplitz(b: np.ndarray) -> np.ndarray:
    """(..., n, n) matrices T with T[c, j] = b[c - j] (0 above the diagonal): ``T @ a`` is the
    convolution of ``a`` and ``b`` cut to n columns, by direct sums.  A strided view of ``b``
    reversed after n zeros (row c is the window that ends at b[c])."""
    n = b.shape[-1]
    backwards = np.concatenate([b[..., ::-1], np.zeros((*b.shape[:-1], n))], axis=-1)  # b[n-1] .. b[0], 0 ..
    return sliding_window_view(backwards, n, axis=-1)[..., n - 1 :: -1, :][..., :n, :]


@dataclass(frozen=True)
class _Layout:
    """Where each (group, hop) cell sits: its link, and its row among that link's cells, so that
    every link is solved at once with the links' cells padded to the same count."""

    group: np.ndarray  # (R,) group of each cell
    hop: np.ndarray  # (R,) hop of the cell on its group's route
    link: np.ndarray  # (R,) link of the cell
    slot: np.ndarray  # (R,) index among the links' cells
    links: np.ndarray  # (M,) links that carry cells
    row: np.ndarray  # (R,) row of the cell's link in ``links``
    capacity: np.ndarray  # (R,) units of the cell's link
    link_capacity: np.ndarray  # (M,) units of each carrying link
    lanes: np.ndarray  # (R,) lanes per unit of the cell's group
    width: int  # most rows on one link


def _layout(groups: Sequence[GroomedGroup], caps: np.ndarray) -> _Layout:
    cells = [(i, h, ell) for i, grp in enumerate(groups) for h, ell in enumerate(grp.option.links)]
    cells.sort(key=lambda c: c[2])
    group = np.array([c[0] for c in cells], dtype=np.int64)
    link = np.array([c[2] for c in cells], dtype=np.int64)
    links, row, count = np.unique(link, return_inverse=True, return_counts=True)
    first = np.r_[0, np.cumsum(count)[:-1]].astype(np.int64)
    g = np.array([groups[i].lanes_per_unit for i in group], dtype=np.int64)
    return _Layout(group, np.array([c[1] for c in cells], dtype=np.int64), link,
                   np.arange(link.size) - first[row.ravel()], links, row.ravel(), caps[link], caps[links], g,
                   int(count.max()) if count.size else 0)  # fmt: skip


@dataclass(frozen=True)
class _Lookup:
    """Index arrays that depend only on the cells' capacities, lanes per unit and the sizes, so
    they are built once per fixed point (:func:`_lookup`)."""

    unit_bin: np.ndarray  # flat (cell, ceil(u / g)) bin of each lane state inside ``unit_mask``
    unit_mask: np.ndarray  # (R, U): the state's units do not pass the largest capacity
    room: np.ndarray  # (1 + K) R U: flat index of C - ceil((u + extra) / g) into the cells'
    # distribution functions laid end to end with a 0 after each (where that count is negative)
    top: int  # largest capacity


def _lookup(cells: _Layout, sizes: np.ndarray, n_lanes: int, top: int) -> _Lookup:
    """Where a cell holding u lanes counts its units, and where it finds room for ``extra`` more
    (extra = 0, then each size): the other cells' unit count ``C - ceil((u + extra) / g)`` may
    reach, as indices into the cell's distribution function, and whether it is not negative."""
    u = np.arange(n_lanes)
    units = -(-u[None, :] // cells.lanes[:, None])  # (R, U)
    mask = units <= top
    flat = (np.arange(cells.lanes.size)[:, None] * (top + 1) + units)[mask]
    extra = np.r_[0, sizes]
    left = cells.capacity[None, :, None] - (-(-(u[None, None, :] + extra[:, None, None]) // cells.lanes[None, :, None]))
    start = np.arange(cells.lanes.size)[None, :, None] * (top + 2)
    return _Lookup(flat, mask, np.where(left >= 0, start + left, start + top + 1).ravel(), top)


def _links_blocking(law: np.ndarray, cells: _Layout, lookup: _Lookup) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Every link at once, at A points: blocking (A, R, K) of each cell's sizes, the cell's
    lit-unit law (A, R, top + 1) and each carrying link's lit-unit law (A, M, top + 1), normalised.

    ``law`` (A, R, U) is each cell's lane law cut where its units exceed the link's capacity
    (those states are outside the truncated set).
    """
    n_points, n_cells, n_cols = law.shape[0], law.shape[1], lookup.top + 1
    # Law of ceil(U / g) per cell (zero beyond each capacity, as the lane law is).
    bins = (np.arange(n_points)[:, None] * (n_cells * n_cols) + lookup.unit_bin[None, :]).ravel()
    unit_law = np.bincount(bins, weights=law[:, lookup.unit_mask].ravel(), minlength=n_points * n_cells * n_cols)
    unit_law = unit_law.reshape(n_points, n_cells, n_cols)
    # The links' cells side by side, missing ones as "no unit" (a law at 0, neutral in a product).
    padded = np.zeros((n_points, cells.links.size, cells.width, n_cols))
    padded[..., 0] = 1.0
    padded[:, cells.row, cells.slot] = unit_law
    step = _toeplitz(padded)  # (A, M, width, n, n)
    # Law of the other cells' units on the link: prefix and suffix convolutions.
    prefix = np.zeros((n_points, cells.links.size, cells.width + 1, n_cols, 1))
    suffix = np.zeros_like(prefix)
    prefix[:, :, 0, 0] = suffix[:, :, cells.width, 0] = 1.0
    for r in range(cells.width):
        prefix[:, :, r + 1] = step[:, :, r] @ prefix[:, :, r]
        back = cells.width - 1 - r
        suffix[:, :, back] = step[:, :, back] @ suffix[:, :, back + 1]
    others = (_toeplitz(suffix[:, cells.row, cells.slot + 1][..., 0]) @ prefix[:, cells.row, cells.slot])[..., 0]
    cdf = np.zeros((n_points, n_cells, n_cols + 1))  # P(others' units <= c), then a 0 for c < 0
    np.cumsum(others, axis=2, out=cdf[..., :n_cols])
    room = np.take(cdf.reshape(n_points, -1), lookup.room, axis=1).reshape(n_points, -1, *law.shape[1:])
    mass = (room[:, 0] * law).sum(axis=2)  # (A, R)
    refused = ((room[:, :1] - room[:, 1:]) * law[:, None]).sum(axis=3).transpose(0, 2, 1)  # (A, R, K)
    blocking = np.divide(refused, mass[..., None], out=np.ones_like(refused), where=mass[..., None] > 0)
    total = prefix[:, :, cells.width, :, 0] * (np.arange(n_cols)[None, :] <= cells.link_capacity[:, None])
    sums = total.sum(axis=2, keepdims=True)
    total = np.divide(total, sums, out=total.copy(), where=sums > 0)
    return np.clip(blocking, 0.0, 1.0), unit_law, total


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


@dataclass(frozen=True)
class _FlatTerms:
    """All pairs' inclusion-exclusion terms as index arrays, so that one step multiplies and
    sums them with a few array operations, in the same order as term by term."""

    pair: np.ndarray  # (T,) pair of each term
    sign: np.ndarray  # (T,)
    cells: np.ndarray  # flat (group * max_hops + hop) survivals of every term, term after term
    cell_start: np.ndarray  # (T,) first entry of each term in ``cells``
    groups: np.ndarray  # continuity factors of every term, term after term
    group_start: np.ndarray  # (T,)
    load_term: np.ndarray  # (D,) term of each loaded cell
    load_cell: np.ndarray  # (D,) flat cell it loads
    others: np.ndarray  # per loaded cell: a neutral "1" entry, then the term's other cells
    other_start: np.ndarray  # (D,)

    @classmethod
    def of(cls, pair_terms: list[list[_Term]], max_hops: int, n_groups: int) -> _FlatTerms:
        one = n_groups * max_hops  # index of a row of ones after the survivals
        pair, sign, cells, cell_start, grp, grp_start = [], [], [], [], [], []
        load_term, load_cell, others, other_start = [], [], [], []
        for n, terms in enumerate(pair_terms):
            for term in terms:
                t = len(pair)
                flat = [q * max_hops + h for q, h in term.cells]
                pair.append(n)
                sign.append(term.sign)
                cell_start.append(len(cells))
                cells.extend(flat)
                grp_start.append(len(grp))
                grp.extend(term.groups)
                for c in term.loaded:
                    load_term.append(t)
                    load_cell.append(flat[c])
                    other_start.append(len(others))
                    others.extend([one, *flat[:c], *flat[c + 1 :]])
        ints = lambda x: np.array(x, dtype=np.int64)  # noqa: E731
        return cls(ints(pair), np.array(sign, dtype=float), ints(cells), ints(cell_start), ints(grp),
                   ints(grp_start), ints(load_term), ints(load_cell), ints(others), ints(other_start))  # fmt: skip

    def carried(self, survive: np.ndarray, cont: np.ndarray, offered: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Carried load per point, pair and size (A, N, K), and the load each (group, hop) cell is
        offered given room on its own link (A, G, H, K), from the survivals (A, G, H, K), the
        continuity factors (A, G, K) and the offered loads (A, N, K)."""
        n_points, n_groups, max_hops, n_sizes = survive.shape
        carried = np.zeros_like(offered)
        cell_load = np.zeros((n_points, n_groups * max_hops, n_sizes))
        if self.pair.size == 0:
            return carried, cell_load.reshape(survive.shape)
        every = slice(None)
        values = np.concatenate([survive.reshape(n_points, -1, n_sizes), np.ones((n_points, 1, n_sizes))], axis=1)
        scale = (self.sign[None, :, None] * offered[:, self.pair]) * np.multiply.reduceat(
            cont[:, self.groups], self.group_start, axis=1)  # fmt: skip
        product = np.multiply.reduceat(values[:, self.cells], self.cell_start, axis=1)
        np.add.at(carried, (every, self.pair), scale * product)
        if self.load_term.size:
            given = np.multiply.reduceat(values[:, self.others], self.other_start, axis=1)
            np.add.at(cell_load, (every, self.load_cell), scale[:, self.load_term] * given)
        return carried, cell_load.reshape(survive.shape)


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
    cells = _layout(groups, caps)
    by_pair = [[i for i, grp in enumerate(groups) if grp.pair == n] for n in range(n_pairs)]
    max_hops = max((len(grp.option.links) for grp in groups), default=0)
    flat = _FlatTerms.of(_terms(groups, by_pair), max_hops, n_groups)
    top = int(caps.max()) if n_links else 0
    widths = cells.capacity * cells.lanes
    u = np.arange(int(widths.max()) + 1 if widths.size else 1)
    inside = -(-u[:, None] // cells.lanes[None, :]) <= cells.capacity[None, :]  # a cell's units fit its link
    lookup = _lookup(cells, sizes, u.size, top)
    pair_blocking = np.ones((n_points, n_pairs, n_sizes))
    lit_units = np.zeros((n_points, n_links))
    iterations = 0

    def link_state(cell_load: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        """At A points: blocking per (group, hop, size), lit-unit law per link, mean units per group
        and mean lit units per link."""
        n_at = cell_load.shape[0]
        # Every cell's lane law at once, cut where the group's units pass the link's capacity.
        rows = cell_load[:, cells.group, cells.hop].reshape(-1, n_sizes)  # (A R, K)
        log_q = _occupancy_log(np.tile(widths, n_at), sizes, rows)  # (max width + 1, A R)
        masked = np.where(np.tile(inside, (1, n_at)), log_q, -np.inf)
        law = np.exp(masked - masked.max(axis=0)[None, :]).T
        law /= law.sum(axis=1, keepdims=True)
        blocked, unit_law, total = _links_blocking(law.reshape(n_at, cells.group.size, -1), cells, lookup)
        blocking = np.zeros((n_at, n_groups, max_hops, n_sizes))
        blocking[:, cells.group, cells.hop] = blocked
        occupancy = np.zeros((n_at, n_links, top + 1))
        occupancy[:, :, 0] = 1.0
        occupancy[:, cells.links] = total
        mean_units = np.zeros((n_at, n_groups))
        mean_units[:, cells.group] = unit_law @ np.arange(top + 1)
        lit = np.zeros((n_at, n_links))
        lit[:, cells.links] = total @ np.arange(top + 1)
        return blocking, occupancy, mean_units, lit

    def step(blocking: np.ndarray, occupancy: np.ndarray, mean_units: np.ndarray, at: np.ndarray) -> np.ndarray:
        """Thinned lane loads per point ``at``, (group, hop, size); sets those points' pair blocking."""
        aligned = np.repeat(mean_units @ cover.T, len(needs), axis=1)
        cont = _continuity(hops, len(options), occupancy, caps, aligned)[:, option_of]  # (A, G, K)
        carried, cell_load = flat.carried(1.0 - blocking, cont, offered[at])
        accepted = np.divide(carried, offered[at], out=np.zeros_like(carried), where=offered[at] > 0)
        pair_blocking[at] = np.clip(1.0 - accepted, 0.0, 1.0)
        return np.maximum(cell_load, 0.0)

    def solve(points: np.ndarray) -> tuple[int, bool]:
        """Iterate ``points`` together, each with its own damping, until each converges."""
        blocking = np.repeat(empty[0], points.size, axis=0)
        cell_load = step(blocking, *(np.repeat(x, points.size, axis=0) for x in empty[1:3]), points)
        weight, previous = np.full(points.size, damping), np.full(points.size, np.inf)
        active = np.arange(points.size)  # positions in ``points`` still iterating
        for it in range(1, max_iter + 1):
            at = points[active]
            new_blocking, occupancy, mean_units, lit_units[at] = link_state(cell_load[active])
            change = np.abs(new_blocking - blocking[active]).reshape(active.size, -1).max(axis=1, initial=0.0)
            blocking[active] = new_blocking
            new_load = step(new_blocking, occupancy, mean_units, at)
            going = ~(change < tol)  # a NaN change keeps iterating, as a failed test of convergence
            # Damp harder each time a step fails to shrink the change by a tenth (alternate
            # routing makes the plain map oscillate at high load, as in the routed estimate).
            harder = going & (change > 0.9 * previous[active]) if it > 1 else np.zeros_like(going)
            weight[active] = np.where(harder, 1.0 - 0.5 * (1.0 - weight[active]), weight[active])
            previous[active] = change
            w = weight[active][:, None, None, None]
            cell_load[active] = w * cell_load[active] + (1.0 - w) * new_load
            active = active[going]
            if active.size == 0:
                return it, True
        return max_iter, False

    # Every point starts from the same empty links, so that its result does not depend on the
    # others.  Points are solved together, as many at once as keep the largest arrays (the room
    # of every lane state for each size) near _BATCH_VALUES values.
    empty = link_state(np.zeros((1, n_groups, max_hops, n_sizes)))
    per_point = max(1, lookup.room.size)
    batch = max(1, _BATCH_VALUES // per_point)
    converged = True
    for first in range(0, n_points, batch):
        ran, done = solve(np.arange(first, min(n_points, first + batch)))
        iterations, converged = max(iterations, ran), converged and done
    return GroomedResult(pair_blocking, lit_units, iterations, converged)
