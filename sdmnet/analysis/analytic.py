"""Teletraffic formulas for loss systems: Erlang B, Kaufman-Roberts, the Erlang fixed point.

Pure functions of numbers; nothing here knows about topologies or scenarios
(:mod:`sdmnet.analysis.estimate` maps a scenario onto them).

* :func:`erlang_b` -- one class of one-server calls on ``n`` servers, full availability.
* :func:`kaufman_roberts` -- several Poisson classes, class k taking ``b_k`` units of one
  shared pool of ``C`` units (complete sharing).  Exact for that model.
* :func:`reduced_load_fixed_point` -- a network of such pools: each link sees the streams
  crossing it, thinned by the blocking of the other links on their routes (Kelly's Erlang fixed
  point, here with Kaufman-Roberts links).  An approximation: it treats links as blocking
  independently.

What each assumes and where it fails for multicore networks: ``docs/estimate.md``.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, replace

import numpy as np

__all__ = [
    "erlang_b",
    "erlang_b_servers",
    "erlang_b_load",
    "kaufman_roberts_occupancy",
    "kaufman_roberts",
    "Stream",
    "FixedPointResult",
    "reduced_load_fixed_point",
    "reduced_load_fixed_point_batch",
]

# Largest power of ten the Kaufman-Roberts window may grow by between two rescalings.
_GROWTH_DECADES = 200.0


# --------------------------------------------------------------------------------------------
# Erlang B


def _check_servers_load(servers: int, load: float) -> None:
    if int(servers) != servers or servers < 0:
        raise ValueError(f"servers must be a non-negative integer, got {servers!r}")
    if not math.isfinite(load) or load < 0:
        raise ValueError(f"load must be a finite non-negative number of Erlang, got {load!r}")


def erlang_b(servers: int, load: float) -> float:
    """Erlang's loss formula B(n, A): blocking of Poisson calls on ``n`` servers.

    Computed by the recursion B(0) = 1, B(k) = A B(k-1) / (k + A B(k-1)), which stays in
    [0, 1] and never forms A^n or n!, so it is stable for any n.

    Parameters
    ----------
    servers : int
        Number of servers n >= 0.
    load : float
        Offered load A >= 0 in Erlang.

    Returns
    -------
    float
        Probability that an arriving call finds all servers busy.
    """
    _check_servers_load(servers, load)
    b = 1.0
    for k in range(1, int(servers) + 1):
        ab = load * b
        b = ab / (k + ab)
    return b


def erlang_b_servers(load: float, target: float) -> int:
    """Fewest servers whose Erlang B blocking at ``load`` is at most ``target``.

    Parameters
    ----------
    load : float
        Offered load in Erlang (>= 0).
    target : float
        Blocking to meet, 0 < target <= 1.

    Returns
    -------
    int
        The smallest n with B(n, load) <= target.
    """
    _check_servers_load(0, load)
    if not 0 < target <= 1:
        raise ValueError(f"target blocking must be in (0, 1], got {target!r}")
    n, b = 0, 1.0
    while b > target:
        n += 1
        ab = load * b
        b = ab / (n + ab)
    return n


def erlang_b_load(servers: int, target: float, *, rel_tol: float = 1e-12) -> float:
    """Largest load that ``servers`` servers carry at Erlang B blocking ``target``.

    The inverse of :func:`erlang_b` in its load argument (what printed Erlang tables list),
    found by bisection: B(n, A) increases strictly with A.

    Parameters
    ----------
    servers : int
        Number of servers n >= 1.
    target : float
        Blocking, 0 < target < 1.
    rel_tol : float
        Relative width of the final bracket.

    Returns
    -------
    float
        A with B(n, A) = target.
    """
    _check_servers_load(servers, 0.0)
    if servers < 1:
        raise ValueError("at least one server is needed to carry any load")
    if not 0 < target < 1:
        raise ValueError(f"target blocking must be in (0, 1), got {target!r}")
    lo, hi = 0.0, float(servers) + 1.0
    while erlang_b(servers, hi) < target:
        lo, hi = hi, 2.0 * hi
    while hi - lo > rel_tol * hi:
        mid = 0.5 * (lo + hi)
        if erlang_b(servers, mid) < target:
            lo = mid
        else:
            hi = mid
    return 0.5 * (lo + hi)


# --------------------------------------------------------------------------------------------
# Kaufman-Roberts


def _as_classes(loads: Sequence[float], sizes: Sequence[int]) -> tuple[np.ndarray, np.ndarray]:
    a = np.asarray(loads, dtype=float).reshape(-1)
    b = np.asarray(sizes).reshape(-1)
    if a.shape != b.shape:
        raise ValueError(f"{a.size} loads but {b.size} sizes")
    if np.any(~np.isfinite(a)) or np.any(a < 0):
        raise ValueError("loads must be finite and non-negative")
    if b.size and (np.any(b != np.round(b)) or np.any(b < 1)):
        raise ValueError("sizes must be positive integers")
    return a, b.astype(np.int64)


def _occupancy_log(capacities: np.ndarray, sizes: np.ndarray, loads: np.ndarray) -> np.ndarray:
    """Log of the unnormalised Kaufman-Roberts occupancy q(j), j = 0..max capacity, per row.

    Parameters
    ----------
    capacities : ndarray of int, shape (R,)
    sizes : ndarray of int, shape (K,)
    loads : ndarray of float, shape (R, K)

    Returns
    -------
    ndarray, shape (max capacity + 1, R)
        log q(j) (``-inf`` where q(j) = 0).  q(j) does not depend on the capacity (the
        truncation only normalises), so one pass up to the largest capacity serves every row.

    Notes
    -----
    Recursion j q(j) = sum_k a_k b_k q(j - b_k), q(0) = 1 (Kaufman 1981; Roberts 1981), run for
    all rows at once.  Only the last max(b) values feed the next step, so every few steps that
    window is rescaled to a peak of 1 and the scale is kept apart as a logarithm: thousands of
    units at any load stay finite.  Values that underflow to 0 are below 1e-300 of a value
    already seen, so they do not move the result.
    """
    n_rows = capacities.size
    top = int(capacities.max()) if n_rows else 0
    if sizes.size == 0:
        out = np.full((top + 1, n_rows), -np.inf)
        out[0] = 0.0
        return out
    width = int(sizes.max())
    coef = (loads * sizes[None, :]).T.copy()  # (K, R): a_k b_k
    q = np.zeros((width + top + 1, n_rows))  # row width + j holds q(j); rows above are zero
    q[width] = 1.0
    log_scale = np.zeros(n_rows)
    # scale_at[j]: log scale of q(j) as finally stored (set in blocks at each check).
    scale_at = np.zeros((top + 1, n_rows))
    growth = float(coef.sum(axis=0).max()) if n_rows else 0.0
    every = max(1, int(_GROWTH_DECADES / math.log10(max(growth, 10.0))))
    last_filled = -1
    back = sizes.astype(np.int64)
    for j in range(1, top + 1):
        here = width + j
        np.sum(q[here - back] * coef, axis=0, out=q[here])
        q[here] *= 1.0 / j
        if j % every == 0 or j == top:
            # Positions written since the last check carry the scale in force before it.
            scale_at[last_filled + 1 : j + 1] = log_scale
            last_filled = j
            window = q[here - width + 1 : here + 1]
            peak = window.max(axis=0)
            # Bring the window's peak back to 1, so the next `every` steps cannot overflow.
            factor = np.where(peak > 0, peak, 1.0)
            window /= factor
            log_scale = log_scale + np.log(factor)
            # The window's values now carry the new scale.
            scale_at[max(0, j - width + 1) : j + 1] = log_scale
    with np.errstate(divide="ignore"):
        return np.log(q[width:]) + scale_at


def _blocking_from_log(log_q: np.ndarray, capacities: np.ndarray, sizes: np.ndarray) -> np.ndarray:
    """Per-row, per-class blocking sum_{C-b < j <= C} q(j) / sum_{j <= C} q(j), shape (R, K)."""
    n_rows = capacities.size
    top = log_q.shape[0] - 1
    j = np.arange(top + 1)[:, None]
    inside = j <= capacities[None, :]
    masked = np.where(inside, log_q, -np.inf)
    peak = masked.max(axis=0)
    peak = np.where(np.isfinite(peak), peak, 0.0)
    p = np.exp(masked - peak[None, :])  # (top + 1, R), exactly 0 beyond each capacity
    total = p.sum(axis=0)
    out = np.empty((n_rows, sizes.size))
    rows = np.arange(n_rows)
    for k, b in enumerate(sizes):
        # Sum the b states nearest capacity directly (not as a difference of cumulative sums),
        # so small blocking keeps its relative precision.
        idx = capacities[:, None] - np.arange(int(b))[None, :]
        ok = idx >= 0
        tail = np.where(ok, p[np.clip(idx, 0, top), rows[:, None]], 0.0).sum(axis=1)
        out[:, k] = tail / total
    # A call larger than the link sums every state in both, in different orders: the ratio can
    # round just past 1, and 1 - B < 0 would then thin a load below zero.
    return np.minimum(out, 1.0)


def _single_link(
    capacity: int, loads: Sequence[float], sizes: Sequence[int]
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Checked capacity (as a one-row array), sizes and log occupancy of one link."""
    if int(capacity) != capacity or capacity < 0:
        raise ValueError(f"capacity must be a non-negative integer, got {capacity!r}")
    a, b = _as_classes(loads, sizes)
    caps = np.array([int(capacity)])
    return caps, b, _occupancy_log(caps, b, a[None, :])


def kaufman_roberts_occupancy(capacity: int, loads: Sequence[float], sizes: Sequence[int]) -> np.ndarray:
    """Stationary distribution of occupied units on one complete-sharing link.

    Parameters
    ----------
    capacity : int
        Units on the link, C >= 0.
    loads : sequence of float
        Offered load of each class in Erlang.
    sizes : sequence of int
        Units one call of each class holds.

    Returns
    -------
    ndarray, shape (capacity + 1,)
        P(j units busy), j = 0..C.
    """
    log_q = _single_link(capacity, loads, sizes)[2][:, 0]
    p = np.exp(log_q - log_q.max())
    return p / p.sum()


def kaufman_roberts(capacity: int, loads: Sequence[float], sizes: Sequence[int]) -> np.ndarray:
    """Per-class blocking on one link shared completely by several Poisson classes.

    A call of class k needs ``sizes[k]`` free units anywhere on the link (no contiguity) and is
    lost otherwise; holding times are exponential (the result holds for any holding-time
    distribution with the same mean: the product form is insensitive).

    Parameters
    ----------
    capacity : int
        Units on the link, C >= 0 (thousands are fine: the recursion is rescaled as it goes).
    loads : sequence of float
        Offered load of each class in Erlang.
    sizes : sequence of int
        Units per call of each class (>= 1).

    Returns
    -------
    ndarray, shape (len(sizes),)
        Blocking of each class: P(more than C - b_k units busy).  1 for a class that can never
        fit (b_k > C).

    Notes
    -----
    J. S. Kaufman, "Blocking in a shared resource environment", IEEE Trans. Commun. 29(10),
    1981; J. W. Roberts, 1981.  With every size 1 this is Erlang B on the total load.
    """
    caps, b, log_q = _single_link(capacity, loads, sizes)
    return _blocking_from_log(log_q, caps, b)[0]


def _kaufman_roberts_rows(capacities: np.ndarray, sizes: np.ndarray, loads: np.ndarray) -> np.ndarray:
    """Blocking (R, K) of R independent links at once; loads has shape (R, K)."""
    out = (sizes[None, :] > capacities[:, None]).astype(float)
    busy = loads.sum(axis=1) > 0
    if busy.any():
        caps = capacities[busy]
        out[busy] = _blocking_from_log(_occupancy_log(caps, sizes, loads[busy]), caps, sizes)
    return out


# --------------------------------------------------------------------------------------------
# Erlang fixed point (reduced-load approximation) with multi-rate links


@dataclass(frozen=True)
class Stream:
    """Poisson calls along a fixed route.

    Attributes
    ----------
    load : float
        Offered load in Erlang.
    links : tuple of int
        Indices of the links the route crosses (each at most once).
    units : int or tuple of int
        Units a call holds on each link: one number for every link, or one per link.
    """

    load: float
    links: tuple[int, ...]
    units: int | tuple[int, ...] = 1

    def units_per_link(self) -> tuple[int, ...]:
        """Units held on each link of the route, in route order."""
        if isinstance(self.units, (int, np.integer)):
            return (int(self.units),) * len(self.links)
        return tuple(int(u) for u in self.units)


@dataclass(frozen=True)
class FixedPointResult:
    """Outcome of :func:`reduced_load_fixed_point`.

    Attributes
    ----------
    sizes : ndarray of int, shape (K,)
        The distinct call sizes (units) met on any link, ascending; the class axis below.
    link_blocking : ndarray, shape (L, K)
        Blocking of a call of ``sizes[k]`` units on link l, given the thinned loads.
    stream_blocking : ndarray, shape (S,)
        1 - prod over the route of (1 - link blocking for the stream's size there).
    link_loads : ndarray, shape (L, K)
        Thinned load offered to each link per size class at the fixed point.
    iterations : int
        Fixed-point iterations done.
    converged : bool
        Whether the largest change of a link blocking fell below ``tol``.
    residual : float
        That largest change in the last iteration.
    """

    sizes: np.ndarray
    link_blocking: np.ndarray
    stream_blocking: np.ndarray
    link_loads: np.ndarray
    iterations: int
    converged: bool
    residual: float


@dataclass(frozen=True)
class _Incidence:
    """Which stream uses which link with which size class, flattened (one row per hop)."""

    n_links: int
    sizes: np.ndarray  # (K,)
    stream: np.ndarray  # (I,)
    link: np.ndarray  # (I,)
    size_index: np.ndarray  # (I,)
    hop: np.ndarray  # (I,)
    hops: int  # longest route


def _incidence(n_links: int, routes: Sequence[tuple[tuple[int, ...], tuple[int, ...]]]) -> _Incidence:
    stream, link, units, hop = [], [], [], []
    for s, (links, per_link) in enumerate(routes):
        if len(per_link) != len(links):
            raise ValueError(f"stream {s}: {len(per_link)} unit counts for {len(links)} links")
        if len(set(links)) != len(links):
            raise ValueError(f"stream {s}: a route crosses a link twice")
        for h, (ell, u) in enumerate(zip(links, per_link)):
            if not 0 <= ell < n_links:
                raise ValueError(f"stream {s}: link {ell} out of range 0..{n_links - 1}")
            if u < 1:
                raise ValueError(f"stream {s}: units must be >= 1")
            stream.append(s)
            link.append(ell)
            units.append(u)
            hop.append(h)
    sizes, size_index = np.unique(np.array(units, dtype=np.int64), return_inverse=True)
    return _Incidence(
        n_links=n_links,
        sizes=sizes,
        stream=np.array(stream, dtype=np.int64),
        link=np.array(link, dtype=np.int64),
        size_index=np.asarray(size_index, dtype=np.int64).reshape(-1),
        hop=np.array(hop, dtype=np.int64),
        hops=max((len(r[0]) for r in routes), default=0),
    )


def _exclusive_products(survive: np.ndarray, inc: _Incidence, n_streams: int) -> np.ndarray:
    """For each hop, the product of the survival (1 - blocking) of the *other* hops of its route.

    Prefix times suffix products, so a hop with blocking 1 does not turn the others into 0/0.
    survive: (P, I) -> (P, I).
    """
    n_points = survive.shape[0]
    grid = np.ones((n_points, n_streams, inc.hops + 2))
    grid[:, inc.stream, inc.hop + 1] = survive
    before = np.cumprod(grid, axis=2)
    after = np.cumprod(grid[:, :, ::-1], axis=2)[:, :, ::-1]
    return before[:, inc.stream, inc.hop] * after[:, inc.stream, inc.hop + 2]


def _solve(
    capacities: np.ndarray,
    inc: _Incidence,
    loads: np.ndarray,
    damping: float,
    tol: float,
    max_iter: int,
    adaptive: bool,
) -> FixedPointResult:
    """Fixed point for P load vectors at once; loads has shape (P, S).

    The result's link blocking and link loads have shape (P, L, K), its stream blocking (P, S).
    """
    n_points, n_streams = loads.shape
    n_links, n_sizes = inc.n_links, inc.sizes.size
    blocking = np.zeros((n_points, n_links, n_sizes))
    link_loads = np.zeros_like(blocking)
    # Flat (point, link, size) cell of every hop, for one bincount per iteration.
    cell = (np.arange(n_points)[:, None] * (n_links * n_sizes) + (inc.link * n_sizes + inc.size_index)[None, :]).ravel()
    # Only links carrying some stream need Kaufman-Roberts; the rest never block anything.
    used = np.unique(inc.link)
    caps_rows = np.tile(capacities[used], n_points)
    offered_hop = loads[:, inc.stream]  # (P, I)
    iterations, converged, residual = 0, False, 0.0
    damped = not adaptive
    for iterations in range(1, max_iter + 1):  # noqa: B007 - the count is returned
        survive = 1.0 - blocking[:, inc.link, inc.size_index]
        thinned = offered_hop * _exclusive_products(survive, inc, n_streams)
        link_loads = np.bincount(cell, weights=thinned.ravel(), minlength=n_points * n_links * n_sizes).reshape(
            n_points, n_links, n_sizes
        )
        mapped = np.zeros_like(blocking)
        if used.size:
            rows = link_loads[:, used, :].reshape(-1, n_sizes)
            mapped[:, used, :] = _kaufman_roberts_rows(caps_rows, inc.sizes, rows).reshape(
                n_points, used.size, n_sizes
            )
        previous, residual = residual, float(np.abs(mapped - blocking).max()) if blocking.size else 0.0
        if residual < tol:
            blocking = mapped
            converged = True
            break
        # Plain steps while they at least halve the residual (light load: the map is nearly
        # constant); damped steps for good from the first one that does not.
        if not damped and iterations > 1 and residual > 0.5 * previous:
            damped = True
        weight = damping if damped else 0.0
        blocking = weight * blocking + (1.0 - weight) * mapped
    survive = 1.0 - blocking[:, inc.link, inc.size_index]
    grid = np.ones((n_points, n_streams))
    np.multiply.at(grid, (slice(None), inc.stream), survive)
    return FixedPointResult(
        sizes=inc.sizes,
        link_blocking=blocking,
        stream_blocking=1.0 - grid,
        link_loads=link_loads,
        iterations=iterations,
        converged=converged,
        residual=residual,
    )


_Route = tuple[tuple[int, ...], tuple[int, ...]]  # (links, units per link)


def _stream_routes(streams: Sequence[Stream | tuple]) -> tuple[np.ndarray, list[_Route]]:
    loads, routes = [], []
    for s in streams:
        st = s if isinstance(s, Stream) else Stream(float(s[0]), tuple(s[1]), s[2] if len(s) > 2 else 1)
        if not math.isfinite(st.load) or st.load < 0:
            raise ValueError(f"stream load must be finite and non-negative, got {st.load!r}")
        loads.append(float(st.load))
        routes.append((tuple(int(x) for x in st.links), st.units_per_link()))
    return np.array(loads, dtype=float), routes


def reduced_load_fixed_point(
    capacities: Sequence[int],
    streams: Sequence[Stream | tuple],
    *,
    damping: float = 0.5,
    tol: float = 1e-10,
    max_iter: int = 10_000,
    adaptive: bool = True,
) -> FixedPointResult:
    """Erlang fixed point (reduced-load approximation) for multi-rate streams on fixed routes.

    Each link l sees, for each call size b, the load of the streams crossing it with that size,
    each *thinned* by the probability that the stream's other links accept it:
    nu_s prod_{m in route(s), m != l} (1 - B_{m, b_s}).  The link's per-size blocking B_{l, b}
    follows from Kaufman-Roberts on those loads, and the iteration repeats to a fixed point.
    A stream is then blocked with probability 1 - prod_{l in route} (1 - B_{l, b_s}).

    Parameters
    ----------
    capacities : sequence of int
        Units per link.
    streams : sequence of Stream or (load, links, units) tuples
        The offered streams.
    damping : float
        Weight kept from the previous iterate, in [0, 1): B <- damping B + (1 - damping) T(B).
        Damping stops the oscillation the plain iteration shows at high load, but halves the
        progress where the plain iteration already contracts fast.
    adaptive : bool
        If true (default), take plain steps while each one at least halves the residual and
        damped steps from the first one that does not, to the end.  If false, damp every step.
    tol : float
        Stop when max |T(B) - B| over links and sizes falls below this.
    max_iter : int
        Give up (``converged = False``) after this many iterations.

    Returns
    -------
    FixedPointResult

    Notes
    -----
    F. P. Kelly, "Loss networks", Ann. Appl. Probab. 1(3), 1991 (single-rate fixed point, unique);
    for several sizes the same construction with Kaufman-Roberts links is the usual multi-rate
    extension, whose fixed point need not be unique.  The approximation assumes links block
    independently and that thinned traffic stays Poisson; it overestimates blocking on links in
    series that carry the same calls (see ``docs/estimate.md``).
    """
    loads, _ = _stream_routes(streams)
    batch = reduced_load_fixed_point_batch(
        capacities, streams, loads[None, :], damping=damping, tol=tol, max_iter=max_iter, adaptive=adaptive
    )
    return replace(
        batch,
        link_blocking=batch.link_blocking[0],
        stream_blocking=batch.stream_blocking[0],
        link_loads=batch.link_loads[0],
    )


def reduced_load_fixed_point_batch(
    capacities: Sequence[int],
    streams: Sequence[Stream | tuple],
    loads: np.ndarray,
    *,
    damping: float = 0.5,
    tol: float = 1e-10,
    max_iter: int = 10_000,
    adaptive: bool = True,
) -> FixedPointResult:
    """:func:`reduced_load_fixed_point` for several load vectors on the same routes at once.

    Solving the load points together shares the sequential Kaufman-Roberts recursion between
    them, which is where the time goes.

    Parameters
    ----------
    capacities : sequence of int
        Units per link.
    streams : sequence of Stream or (load, links, units) tuples
        Routes and units of the streams; their ``load`` is ignored in favour of ``loads``.
    loads : array_like, shape (P, S)
        Offered load of each stream at each of P points.
    damping, tol, max_iter, adaptive
        As in :func:`reduced_load_fixed_point`; iteration stops when every point has converged.

    Returns
    -------
    FixedPointResult
        With a leading axis of length P on ``link_blocking``, ``stream_blocking`` and
        ``link_loads``.
    """
    if not 0 <= damping < 1:
        raise ValueError(f"damping must be in [0, 1), got {damping!r}")
    if tol <= 0 or max_iter < 1:
        raise ValueError("tol must be positive and max_iter at least 1")
    caps = np.asarray(capacities)
    if caps.ndim != 1 or np.any(caps != np.round(caps)) or np.any(caps < 0):
        raise ValueError("capacities must be non-negative integers")
    caps = caps.astype(np.int64)
    _, routes = _stream_routes(streams)
    load_matrix = np.asarray(loads, dtype=float)
    if load_matrix.ndim != 2 or load_matrix.shape[1] != len(routes):
        raise ValueError(f"loads must have shape (points, {len(routes)}), got {load_matrix.shape}")
    if np.any(~np.isfinite(load_matrix)) or np.any(load_matrix < 0):
        raise ValueError("stream loads must be finite and non-negative")
    return _solve(caps, _incidence(caps.size, routes), load_matrix, damping, tol, max_iter, adaptive)
