"""Joint occupancy of two links under ordered routing: a two-dimensional Markov chain.

Where the same calls load two links and a pair's alternate routes keep loading each of them
while the other is full (the access cables of a site without transit: the pair's first route
crosses both, its second the one, its third the other), the links are full together far more
often than independent links say, and more often than the product form of fixed routing says
too: under fixed routing the shared calls stop arriving while either link is full, under
alternate routing they keep coming to the link that has room.  Measured on the bundled demo's
core-wise network (the estimate's own loss network simulated, 400,000 calls): both access
cables of the busiest pair full together 6.0 % of the time against 2.0 % for independent
cables, 2.9 % for the two-link product form and 5.5 % for this chain.

The chain's state is the units busy on each link, ``(x, y)``.  Arrivals are exact given the
two links' rooms: a call of a stream takes option ``r`` with the probability that ``r`` accepts
and every earlier option refuses, the other links of the options independent (their room from
the reduced-load fixed point, inclusion-exclusion over the earlier options as in
:mod:`sdmnet.analysis.reduced_load`) and the two links' rooms read from the state.  Departures
are the approximation: on each link, calls of ``b`` units leave at the conditional mean number
of such calls at that occupancy on a Kaufman-Roberts link with the link's fixed-point loads
(``a_b q(x - b) / q(x)``, which gives each link alone its Kaufman-Roberts law exactly), and the
share of them that also hold the other link (the calls' share of the link's carried traffic)
leaves both links at once.  With one stream on one route over both links the chain stays on
the diagonal and is Erlang's (Kaufman-Roberts') system exactly; with no calls over both it is
two links coupled only through the routing.  The stationary law is found by sparse LU for
small chains and by uniformised power iteration from a start (the product of the two links'
laws, or the previous law) for larger ones.

This is the two-link decomposition of a loss network: the chain is solved for a pair of links
only, the rest of the network entering through the fixed point's link rooms (the reduced-load
idea of F. Kelly, "Loss networks", Ann. Appl. Probab. 1(3), 1991, applied to a pair instead of
a link; the departure rule is ours).  Checked against enumerated chains in
``tests/test_link_pair.py``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .analytic import _occupancy_log

__all__ = ["PairArrival", "pair_law", "calls_given_occupancy"]

#: Chains up to this many states are solved by sparse LU (exact, a few milliseconds at this size,
#: and immune to the slow mixing of a heavily overloaded chain); larger ones iteratively.
DIRECT_STATES = 2_500


@dataclass(frozen=True)
class PairArrival:
    """Calls that, arriving in a state with the given rooms on the two links, add ``units``.

    Attributes
    ----------
    units : tuple of int
        Units the call adds to the first and the second link (0: the route misses that link).
    need : tuple of int
        Units the stream needs free on each link for that link to "have room" (0: never looked at).
    rates : ndarray, shape (2, 2)
        Arrival rate of such calls given (first link has room, second link has room), each 0 or 1.
    """

    units: tuple[int, int]
    need: tuple[int, int]
    rates: np.ndarray


def calls_given_occupancy(capacity: int, sizes: np.ndarray, loads: np.ndarray) -> np.ndarray:
    """(K, capacity + 1): mean number of calls of each size in progress on a Kaufman-Roberts link
    at each occupancy, ``a_k q(j - b_k) / q(j)`` (0 below ``b_k`` units)."""
    log_q = _occupancy_log(np.array([capacity], dtype=np.int64), sizes, loads[None, :])[: capacity + 1, 0]
    calls = np.zeros((sizes.size, capacity + 1))
    for k, b in enumerate(sizes.tolist()):
        if b <= capacity and loads[k] > 0:
            here, below = log_q[b:], log_q[:-b]
            ok = np.isfinite(here) & np.isfinite(below)
            calls[k, b:] = np.where(ok, loads[k] * np.exp(np.where(ok, below - here, 0.0)), 0.0)
    return calls


def pair_law(capacities: tuple[int, int], sizes: np.ndarray, arrivals: list[PairArrival],
             calls: tuple[np.ndarray, np.ndarray], shared: np.ndarray, start: np.ndarray | None = None, *,
             tol: float = 1e-9, max_steps: int = 20_000) -> np.ndarray | None:  # fmt: skip
    """Stationary law of the two links' busy units, shape (C_l + 1, C_m + 1), or None when the
    iteration does not settle within ``max_steps``.

    Chains of at most ``DIRECT_STATES`` states are solved directly (sparse LU); larger ones by
    uniformised power iteration from ``start``, which settles in a few hundred steps at the
    loads a plan is made for.  Under extreme overload (arrival rates many orders above the
    departure rates) the uniformised chain moves too slowly to settle, so it gives up and the
    caller keeps the product form.

    Parameters
    ----------
    capacities : (int, int)
        Units of the two links.
    sizes : ndarray of int, shape (K,)
        Units per call of each departure class.
    arrivals : list of PairArrival
        Every way a call can join the links.
    calls : (ndarray (K, C_l + 1), ndarray (K, C_m + 1))
        Mean calls of each size in progress on each link at each of its occupancies
        (:func:`calls_given_occupancy`).
    shared : ndarray, shape (2, K)
        Per link and size, the share of its calls that hold the other link too.
    start : ndarray, optional
        Starting law (default uniform); the product of the two links' own laws, or the previous
        solution, makes it quick.
    tol : float
        Stop when one step of 25 changes the law by less than this (sum of absolute changes).
    max_steps : int
        Uniformised steps at most (larger chains only).
    """
    cap_l, cap_m = capacities
    nx, ny = cap_l + 1, cap_m + 1
    x, y = np.meshgrid(np.arange(nx), np.arange(ny), indexing="ij")
    x, y = x.ravel(), y.ravel()
    src, dst, rate = [], [], []

    def move(ok: np.ndarray, dx: int, dy: int, r: np.ndarray) -> None:
        at = np.flatnonzero(ok & (r > 0))
        src.append(at)
        dst.append((x[at] + dx) * ny + y[at] + dy)
        rate.append(r[at])

    for arrival in arrivals:
        (dx, dy), (need_l, need_m) = arrival.units, arrival.need
        room_l = (x + need_l <= cap_l).astype(np.int64) if need_l else np.ones_like(x)
        room_m = (y + need_m <= cap_m).astype(np.int64) if need_m else np.ones_like(y)
        move((x + dx <= cap_l) & (y + dy <= cap_m), dx, dy, arrival.rates[room_l, room_m])
    calls_l, calls_m = calls
    for k, b in enumerate(sizes.tolist()):
        both = (x >= b) & (y >= b)
        out_l, out_m = calls_l[k][x], calls_m[k][y]
        joint = np.where(both, np.minimum(shared[0, k] * out_l, shared[1, k] * out_m), 0.0)
        move(x >= b, -b, 0, out_l - joint)
        move(y >= b, 0, -b, out_m - joint)
        move(both, -b, -b, joint)
    n = nx * ny
    s, d, r = np.concatenate(src), np.concatenate(dst), np.concatenate(rate)
    out = np.bincount(s, weights=r, minlength=n)
    if n <= DIRECT_STATES:
        return _solved_directly(n, s, d, r, out).reshape(nx, ny)
    from scipy import sparse  # here, not at the top: a run without large chains skips its import (about 50 ms)

    into = sparse.csr_matrix((r, (d, s)), shape=(n, n))
    uniform = float(out.max()) * 1.01 if out.size and out.max() > 0 else 1.0
    into = into / uniform
    keep = 1.0 - out / uniform
    law = np.full(n, 1.0 / n) if start is None else np.asarray(start, dtype=float).ravel().copy()
    for step in range(max_steps):
        new = keep * law + into @ law
        if step % 25 == 0 and np.abs(new - law).sum() < tol:
            law = np.maximum(new, 0.0)
            return (law / law.sum()).reshape(nx, ny)
        law = new
    return None


def _solved_directly(n: int, src: np.ndarray, dst: np.ndarray, rate: np.ndarray, out: np.ndarray) -> np.ndarray:
    """pi Q = 0 with the last balance equation replaced by sum(pi) = 1, by sparse LU."""
    from scipy import sparse
    from scipy.sparse.linalg import spsolve

    keep = dst != n - 1
    rows = np.concatenate([dst[keep], np.arange(n - 1), np.full(n, n - 1)])
    cols = np.concatenate([src[keep], np.arange(n - 1), np.arange(n)])
    values = np.concatenate([rate[keep], -out[: n - 1], np.ones(n)])
    balance = sparse.csc_matrix((values, (rows, cols)), shape=(n, n))
    rhs = np.zeros(n)
    rhs[-1] = 1.0
    law = np.maximum(spsolve(balance, rhs, permc_spec="MMD_AT_PLUS_A"), 0.0)
    return law / law.sum()
