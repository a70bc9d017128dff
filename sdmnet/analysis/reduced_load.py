"""Reduced-load approximation with alternate routes and channel continuity.

The plain Erlang fixed point (:func:`sdmnet.analysis.analytic.reduced_load_fixed_point`) offers
each stream one route and lets a call take any free units on each link.  The engine does more:
it tries the ``k`` routes of a pair in order, and a unit keeps its channel (and, without lane
change, its core group) on every hop.  This module adds both to the fixed point.

Model (docs/estimate.md, "The routed estimate"):

* Links block independently (the reduced-load assumption), each link a Kaufman-Roberts
  complete-sharing pool of units loaded by the thinned streams that cross it.
* **Alternate routing.** A call is carried on route r when route r accepts it and every
  earlier route refuses it.  With independent links this probability is exact by
  inclusion-exclusion over the earlier routes (a link that two routes share counts once):
  ``P(r accepts, r' < r refuse) = sum over subsets T of earlier routes (-1)^|T|
  P(r and every route in T accept)``.  A link sees the stream's calls of route r thinned by
  the other links of r and by the earlier routes' refusal (conditioned on the link itself
  having room), the link-independence scheme of Chung, Kashper and Ross (IEEE/ACM Trans.
  Netw. 1(1), 1993).
* **Peaked overflow.** The calls a later route gets are the earlier route's overflow, which
  comes in bursts.  On the links that a later route meets first (on no earlier route of the
  stream) they are offered as Pascal traffic with the overflow's peakedness (Riordan's, of
  the previous route's refusing links, for the stream's parcel) and see that traffic's call
  congestion; the link's other calls see its time congestion (Delbrouck's recursion:
  :mod:`sdmnet.analysis.overflow`).  Without alternate routes nothing changes.
* **Shared calls.** For a stream with alternate routes, two links of a term that the same
  calls cross (a route over both) are busy together: the term's independent product is
  multiplied, per such pair, by ``P(both have room) / (P(one has room) P(the other has room))``
  from the two-link product form of those calls and the rest of each link's calls
  (:func:`_pair_correlation`); neighbours only along one route, so that a chain of factors
  does not count one stream's dependence many times.  A stream with one route keeps the plain
  fixed point.
* **Joint chains.**  Where the calls that cross both links of such a pair carry at least half of
  each link's traffic (the access cables of a site without transit, loaded by one heavy pair
  whose later routes keep loading each cable while the other is full), the pair's factor comes
  from the two links' joint Markov chain (:mod:`sdmnet.analysis.link_pair`) instead of the
  product form, which undercounts it there (fixed routing stops the shared calls while either
  link is full; alternate routing does not).
* **Channel continuity.** A route of several hops also needs its units on *common* slots: a
  slot is a channel (lane change) or a channel and core group (no lane change); on hop h a slot
  has ``positions[h]`` unit positions (fiber pairs x core groups, or fiber pairs).  Given that
  every hop has room for the call, the free positions are taken as spread at random over the
  slots (the random-assignment picture of wavelength-routing analyses: A. Birman, IEEE JSAC
  14(5), 1996; A. Sridharan and K. N. Sivarajan, "Blocking in all-optical networks", IEEE/ACM
  Trans. Netw. 12(2), 2004): each slot independently has Binomial(positions, phi_h) free
  positions on hop h, phi_h the link's mean free share given room for the call.  The call fits
  when the per-slot minima over the hops add up to its unit count.  The continuity factor is
  that probability divided by the same probability for the route's tightest hop alone, so a
  one-hop route gets exactly 1 and the single-link formulas stay exact.

Every approximation here and where it fails: ``docs/estimate.md``.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from itertools import combinations

import numpy as np

from .analytic import _blocking_from_log, _occupancy_log
from .link_pair import PairArrival, calls_given_occupancy, pair_law
from .overflow import bpp_link_blocking, overflow_peakedness, thinned_peakedness

__all__ = ["RouteOption", "RoutedStream", "RoutedResult", "routed_fixed_point"]


def _binomial_sf(k, n, p) -> np.ndarray:
    """P(X > k) for X ~ Binomial(n, p), broadcast: scipy.stats' binom.sf without importing
    scipy.stats (slow to import); bdtrc is the same sum, defined only for 0 <= k < n."""
    from scipy.special import bdtrc  # here: a tenth of a second to import, and one hop never needs it

    k, n, p = np.broadcast_arrays(np.asarray(k, np.int64), np.asarray(n, np.int64), np.asarray(p, float))
    inside = (k >= 0) & (k < n)
    out = np.where(k < 0, 1.0, 0.0)
    out[inside] = bdtrc(k[inside], n[inside], p[inside])
    return out


@dataclass(frozen=True)
class RouteOption:
    """One route a stream may take, with what a call holds on it.

    Attributes
    ----------
    links : tuple of int
        Links crossed, each at most once.
    units : tuple of int
        Units a call holds on each link.
    slots : int
        Continuity slots along the route (channels, or channels x core groups); 0 means no
        continuity rule (a call takes any free units on each link).
    positions : tuple of int
        Unit positions per slot on each link (used when ``slots > 0``).
    """

    links: tuple[int, ...]
    units: tuple[int, ...]
    slots: int = 0
    positions: tuple[int, ...] = ()


@dataclass(frozen=True)
class RoutedStream:
    """Poisson calls that try ``options`` in order; ``load_scale`` scales the units they load
    links with (below 1 where calls share units already lit, see the estimate's grooming)."""

    options: tuple[RouteOption, ...]
    load_scale: float = 1.0


@dataclass(frozen=True)
class RoutedResult:
    """Outcome of :func:`routed_fixed_point` (a leading axis P over load points).

    Attributes
    ----------
    sizes : ndarray (K,)
        Distinct unit counts, the class axis of the link arrays.
    link_blocking : ndarray (P, L, K)
        Probability that a link lacks room for a call of ``sizes[k]`` units.
    link_loads : ndarray (P, L, K)
        Thinned load offered to each link per size at the fixed point.
    carried : ndarray (P, S, R)
        Probability that a call of stream s is carried on its option r (0 past its options).
    stream_blocking : ndarray (P, S)
        1 - sum over options of ``carried``.
    iterations : int
    converged : bool
    residual : float
    """

    sizes: np.ndarray
    link_blocking: np.ndarray
    link_loads: np.ndarray
    carried: np.ndarray
    stream_blocking: np.ndarray
    iterations: int
    converged: bool
    residual: float


@dataclass(frozen=True)
class _Terms:
    """Inclusion-exclusion terms, one per (stream, route r, subset T of earlier routes).

    Each term's value is ``sign * prod over its links (1 - B) * prod over its routes c``;
    ``stream`` and ``hop`` name the term (as a 'stream') and position of each of its links for
    :func:`_exclusive`, ``hops`` the largest link count of a term.
    """

    sign: np.ndarray  # (T,)
    term_stream: np.ndarray  # (T,)
    term_option: np.ndarray  # (T,) global option index of the carried route r
    stream: np.ndarray  # (I,) term of each term-link
    link: np.ndarray  # (I,)
    size_index: np.ndarray  # (I,)
    hop: np.ndarray  # (I,)
    on_route: np.ndarray  # (I,) bool: the link belongs to route r (it is loaded by the term)
    peaked: np.ndarray  # (I,) bool: on route r, r > 0, on no earlier route (overflow meets it first)
    hops: int
    factor_term: np.ndarray  # (F,) term of each continuity factor
    factor_option: np.ndarray  # (F,) global option index of the factor


def _build_terms(streams: Sequence[RoutedStream], size_of: dict[int, int]) -> tuple[_Terms, list]:
    options = []  # (stream, option index within stream, RouteOption), in global order
    sign, t_stream, t_option = [], [], []
    stream, link, size_index, hop, on_route, peaked = [], [], [], [], [], []
    f_term, f_option = [], []
    hops = 0
    for s, st in enumerate(streams):
        first = len(options)
        for r, opt in enumerate(st.options):
            if len(opt.units) != len(opt.links) or len(set(opt.links)) != len(opt.links):
                raise ValueError(f"stream {s} option {r}: links and units do not match or repeat")
            options.append((s, r, opt))
        for r, opt in enumerate(st.options):
            if r == 0:
                # The first route has no earlier ones: one term, its own links in order (the
                # loop below for r = 0, written out: most streams of a large network stop here).
                t, n_links = len(sign), len(opt.links)
                sign.append(1.0)
                t_stream.append(s)
                t_option.append(first)
                f_term.append(t)
                f_option.append(first)
                stream.extend([t] * n_links)
                link.extend(opt.links)
                size_index.extend(size_of[u] for u in opt.units)
                hop.extend(range(n_links))
                on_route.extend([True] * n_links)
                peaked.extend([False] * n_links)
                hops = max(hops, n_links)
                continue
            earlier = range(r)
            for n_t in range(r + 1):
                for subset in combinations(earlier, n_t):
                    t = len(sign)
                    sign.append(-1.0 if n_t % 2 else 1.0)
                    t_stream.append(s)
                    t_option.append(first + r)
                    units: dict[int, int] = {}
                    for q in (r, *subset):
                        for ell, u in zip(st.options[q].links, st.options[q].units):
                            units[ell] = max(units.get(ell, 0), u)
                        f_term.append(t)
                        f_option.append(first + q)
                    route_links = set(opt.links)
                    earlier_links = {ell for q in range(r) for ell in st.options[q].links}
                    for h, (ell, u) in enumerate(units.items()):
                        stream.append(t)
                        link.append(ell)
                        size_index.append(size_of[u])
                        hop.append(h)
                        on_route.append(ell in route_links)
                        peaked.append(r > 0 and ell in route_links and ell not in earlier_links)
                    hops = max(hops, len(units))
    terms = _Terms(
        sign=np.array(sign),
        term_stream=np.array(t_stream, dtype=np.int64),
        term_option=np.array(t_option, dtype=np.int64),
        stream=np.array(stream, dtype=np.int64),
        link=np.array(link, dtype=np.int64),
        size_index=np.array(size_index, dtype=np.int64),
        hop=np.array(hop, dtype=np.int64),
        on_route=np.array(on_route, dtype=bool),
        peaked=np.array(peaked, dtype=bool),
        hops=hops,
        factor_term=np.array(f_term, dtype=np.int64),
        factor_option=np.array(f_option, dtype=np.int64),
    )
    return terms, options


def _reduce_at(ufunc: np.ufunc, out: np.ndarray, index: np.ndarray, values: np.ndarray) -> None:
    """``ufunc.at(out, (slice(None), index), values)`` for a non-decreasing ``index``: each run of
    equal indices reduced at once (:meth:`numpy.ufunc.reduceat`, far faster than ``ufunc.at``).
    For products and minima the values meet in the same order, so the floats are the same."""
    if index.size == 0:
        return
    starts = np.flatnonzero(np.r_[True, index[1:] != index[:-1]])
    at = index[starts]
    out[:, at] = ufunc(out[:, at], ufunc.reduceat(values, starts, axis=1))


def _add_at(index: np.ndarray, values: np.ndarray, size: int) -> np.ndarray:
    """Sums of ``values`` (P, N) by ``index`` (N,) into (P, size): ``np.add.at`` on zeros, by
    :func:`numpy.bincount` per row (the same additions in the same order, so the same floats)."""
    return np.stack([np.bincount(index, weights=row, minlength=size) for row in values]).reshape(len(values), size)


@dataclass(frozen=True)
class _HopLayout:
    """Where :func:`_exclusive` keeps each term-link: a (hop, term) grid whose columns hold the
    terms longest first, so that the terms with a link at hop h are the first ``active[h]``
    columns; flat indices into that grid counted from each term's first link and from its last."""

    forward: np.ndarray  # (I,) hop, column
    backward: np.ndarray  # (I,) links after it in its term, column
    end: np.ndarray  # (T,) link count, column of each term
    active: tuple[int, ...]  # per hop, the columns with a link there


def _hop_layout(terms: _Terms, n_terms: int) -> _HopLayout:
    length = np.bincount(terms.stream, minlength=n_terms)
    order = np.argsort(-length, kind="stable")
    column = np.empty(n_terms, dtype=np.int64)
    column[order] = np.arange(n_terms)
    at = column[terms.stream]
    active = tuple(int(n) for n in np.bincount(length, minlength=terms.hops + 1)[::-1].cumsum()[::-1][1:])
    return _HopLayout(terms.hop * n_terms + at, (length[terms.stream] - 1 - terms.hop) * n_terms + at,
                      length * n_terms + column, active)  # fmt: skip


def _exclusive(survive: np.ndarray, layout: _HopLayout, n_terms: int) -> tuple[np.ndarray, np.ndarray]:
    """Per term-link, the product of the term's *other* links' survival; and per term the full product.

    The products run from the term's first link on and from its last link back, hop by hop over
    the terms that reach that hop: the same multiplications, in the same order, as running
    products over every term padded with ones to the longest, without the padding's work.
    """
    n_points, hops = survive.shape[0], len(layout.active)
    ahead = np.empty((n_points, hops + 1, n_terms))  # ahead[h]: links 0..h-1
    behind = np.empty((n_points, hops + 1, n_terms))  # behind[h]: the last h links
    ahead[:, 0] = behind[:, 0] = 1.0
    step_ahead, step_behind = np.empty((n_points, hops, n_terms)), np.empty((n_points, hops, n_terms))
    step_ahead.reshape(n_points, hops * n_terms)[:, layout.forward] = survive
    step_behind.reshape(n_points, hops * n_terms)[:, layout.backward] = survive
    for h, n in enumerate(layout.active):
        np.multiply(ahead[:, h, :n], step_ahead[:, h, :n], out=ahead[:, h + 1, :n])
        np.multiply(behind[:, h, :n], step_behind[:, h, :n], out=behind[:, h + 1, :n])
    ahead_flat, behind_flat = (x.reshape(n_points, (hops + 1) * n_terms) for x in (ahead, behind))
    return ahead_flat[:, layout.forward] * behind_flat[:, layout.backward], ahead_flat[:, layout.end]


def _sum_at_least(pmf: np.ndarray, copies: np.ndarray, need: int) -> np.ndarray:
    """P(sum of ``copies`` iid variables >= need), per row of ``pmf`` (..., need + 1) whose last
    bin holds P(X >= need); ``copies`` broadcasts against ``pmf[..., 0]``.  Convolution
    truncated at ``need``, by repeated squaring."""
    copies = np.broadcast_to(copies, pmf.shape[:-1])
    result = np.zeros_like(pmf)
    result[..., 0] = 1.0
    base = pmf
    k = copies.copy()
    while np.any(k):
        result = np.where((k & 1)[..., None] == 1, _truncated_convolve(result, base, need), result)
        k = k >> 1
        if np.any(k):
            base = _truncated_convolve(base, base, need)
    return result[..., need]


def _truncated_convolve(a: np.ndarray, b: np.ndarray, need: int) -> np.ndarray:
    out = np.zeros_like(a)
    for i in range(need + 1):
        # a_i b_j lands in bin min(i + j, need): bins i..need-1 exactly, the rest in the last.
        out[..., i:need] += a[..., i : i + 1] * b[..., : need - i]
        out[..., need] += a[..., i] * b[..., need - i :].sum(axis=-1)
    return out


@dataclass(frozen=True)
class _OptionHops:
    """The hops of every option under a continuity rule (multi-hop options only), flattened,
    and which options cover each of them (cross all its links)."""

    option: np.ndarray  # (H,) global option index
    link: np.ndarray  # (H,)
    positions: np.ndarray  # (H,)
    need: np.ndarray  # (H,) the option's unit count
    slots: np.ndarray  # (O,) continuity slots per option (0: none)
    groups: list  # [(need, option indices)]
    cover_option: np.ndarray  # (V,) an option under a continuity rule
    cover_by: np.ndarray  # (V,) an option crossing all of its links (itself included)
    cover_units: np.ndarray  # (V,) units the covering option holds on those links
    pair_link: np.ndarray  # (U,) the distinct (link, need) pairs of the hops
    pair_need: np.ndarray  # (U,)
    pair_of_hop: np.ndarray  # (H,) each hop's pair


def _crossing_options(options: list) -> tuple[dict, dict, np.ndarray]:
    """Per link, the options crossing it and the units each holds there; and each option's links
    as a bitmask in 64-bit words, so that "crosses all of o's links" is one AND per candidate,
    for all candidates of a link at once."""
    by_link: dict[int, list[int]] = {}
    for o, (_s, _r, opt) in enumerate(options):
        for ell in opt.links:
            by_link.setdefault(ell, []).append(o)
    words = max((ell for ell in by_link), default=0) // 64 + 1
    masks = np.zeros((len(options), words), dtype=np.uint64)
    for o, (_s, _r, opt) in enumerate(options):
        bits = sum(1 << ell for ell in opt.links)
        masks[o] = [(bits >> (64 * w)) & 0xFFFFFFFFFFFFFFFF for w in range(words)]
    crossing = {ell: np.array(members, dtype=np.int64) for ell, members in by_link.items()}
    held_on = {
        ell: np.array([options[q][2].units[options[q][2].links.index(ell)] for q in members], dtype=float)
        for ell, members in by_link.items()
    }
    return crossing, held_on, masks


def _option_hops(options: list) -> _OptionHops:
    option, link, positions, need, groups = [], [], [], [], {}
    slots = np.zeros(len(options), dtype=np.int64)
    ruled = [o for o, (_s, _r, opt) in enumerate(options) if opt.slots > 0 and len(opt.links) >= 2]
    if ruled:
        crossing, held_on, masks = _crossing_options(options)
    cover_option, cover_by, cover_units = [], [], []
    for o in ruled:
        opt = options[o][2]
        n = int(max(opt.units))
        slots[o] = opt.slots
        for ell, m in zip(opt.links, opt.positions):
            option.append(o)
            link.append(ell)
            positions.append(int(m))
            need.append(n)
        groups.setdefault(n, []).append(o)
        candidates = crossing[opt.links[0]]
        mine = masks[o]
        covers = ((masks[candidates] & mine) == mine).all(axis=1)
        cover_by.append(candidates[covers])
        cover_units.append(held_on[opt.links[0]][covers])
        cover_option.append(np.full(int(covers.sum()), o, dtype=np.int64))
    as_int = lambda x: np.array(x, dtype=np.int64)  # noqa: E731
    pairs, pair_of_hop = np.unique(np.stack([as_int(link), as_int(need)]).reshape(2, -1), axis=1, return_inverse=True)
    return _OptionHops(
        as_int(option), as_int(link), as_int(positions), as_int(need), slots,
        [(n, as_int(members)) for n, members in sorted(groups.items())],
        *(np.concatenate(x) if x else np.zeros(0, dtype=kind)
          for x, kind in ((cover_option, np.int64), (cover_by, np.int64), (cover_units, float))),
        pairs[0], pairs[1], pair_of_hop.ravel(),
    )


def _continuity(hops: _OptionHops, n_options: int, occupancy: np.ndarray, capacities: np.ndarray,
                aligned: np.ndarray) -> np.ndarray:  # fmt: skip
    """Continuity factor (P, O) of every option at the link occupancies (P, L, Cmax + 1).

    ``aligned`` (P, O) is the mean number of units held on the option's links by calls that
    cross all of them: they sit on the same slots on every hop, so they are taken out of the
    slots before the rest of each hop's busy units are spread at random.  1 for options
    without a continuity rule and for one-hop options.
    """
    n_points = occupancy.shape[0]
    out = np.ones((n_points, n_options))
    if hops.option.size == 0:
        return out
    caps = capacities[hops.link]
    top = occupancy.shape[2] - 1
    # A hop's room and mean free units depend on its link and need only: computed once per such
    # pair (hundreds) rather than per hop (every hop of every route), then handed to the hops.
    pair_link, pair_need, per_hop = hops.pair_link, hops.pair_need, hops.pair_of_hop
    pi = occupancy[:, pair_link, :]  # (P, U, Cmax + 1)
    free = capacities[pair_link][:, None] - np.arange(top + 1)[None, :]
    room = free >= pair_need[:, None]
    pair_mass = (pi * room[None]).sum(axis=2)
    pair_free = np.divide((pi * (free * room)[None]).sum(axis=2), pair_mass, out=np.zeros_like(pair_mass),
                          where=pair_mass > 0)  # fmt: skip
    mean_free = pair_free[:, per_hop]
    # Units of each hop not held by aligned calls, and the slots they fill.
    busy_aligned = np.minimum(aligned[:, hops.option], caps[None, :] - mean_free)
    open_units = np.maximum(caps[None, :] - busy_aligned, 1.0)
    phi = np.clip(mean_free / open_units, 0.0, 1.0)  # (P, H)
    open_share = np.ones((n_points, n_options))
    _reduce_at(np.minimum, open_share, hops.option, open_units / caps[None, :])
    slots = np.maximum(np.rint(hops.slots[None, :] * open_share), 1).astype(np.int64)  # (P, O)
    largest = int(hops.need.max())
    z = np.arange(largest + 1)
    # P(a slot has >= z free positions on the hop), then over the hops' minimum per option.
    tail = _binomial_sf(z[None, None, :] - 1, hops.positions[None, :, None], phi[:, :, None])  # (P, H, Z)
    minimum_tail = np.ones((n_points, n_options, largest + 1))
    _reduce_at(np.multiply, minimum_tail, hops.option, tail)
    alone = np.ones((n_points, n_options))
    _reduce_at(np.minimum, alone, hops.option,
               _binomial_sf(hops.need[None, :] - 1, slots[:, hops.option] * hops.positions[None, :], phi))
    for n, members in hops.groups:
        t = minimum_tail[:, members, : n + 1]
        pmf = np.empty_like(t)
        pmf[..., :-1] = t[..., :-1] - t[..., 1:]
        pmf[..., -1] = t[..., -1]
        joint = _sum_at_least(np.clip(pmf, 0.0, 1.0), slots[:, members], n)
        lone = alone[:, members]
        out[:, members] = np.divide(joint, lone, out=np.ones_like(joint), where=lone > 0)
    return np.clip(out, 0.0, 1.0)


@dataclass(frozen=True)
class _SharedPairs:
    """Link pairs whose occupancies the same calls couple, where an alternate route's terms
    meet them: ``term`` (non-decreasing) and ``entry`` name a term and one (l, m, size) entry
    whose factor it multiplies; per entry its links and size; per crossing (an option that
    crosses both links of an entry's pair) the entry's pair, the option and its size."""

    term: np.ndarray
    entry: np.ndarray
    first: np.ndarray  # (N,) link l of each entry
    second: np.ndarray  # (N,) link m
    size_index: np.ndarray  # (N,)
    entry_pair: np.ndarray  # (N,) pair (l, m) of each entry
    n_pairs: int
    cross_pair: np.ndarray  # (X,)
    cross_option: np.ndarray  # (X,)
    cross_size: np.ndarray  # (X,)


def _shared_pairs(terms: _Terms, options: list, size_of: dict[int, int]) -> _SharedPairs:
    """The (term, link pair) couples where shared calls correct independence: pairs of a term's
    links that some calls cross together, in every term of a stream with alternate routes (all
    of them, so that the stream's inclusion-exclusion stays consistent; a stream with one route
    keeps the plain fixed point).  Two links of one route count only as neighbours: along the
    route they make a chain, and a chain of pairwise factors is exact when one stream loads
    every link alike, where a factor for every pair would count that dependence many times."""
    crossing: dict[tuple[int, int], list[tuple[int, int]]] = {}
    for o, (_s, _r, opt) in enumerate(options):
        for i, (a, u) in enumerate(zip(opt.links, opt.units)):
            for b in opt.links[i + 1 :]:
                crossing.setdefault((min(a, b), max(a, b)), []).append((o, size_of[u]))
    pair_ids: dict[tuple[int, int], int] = {}
    entry_ids: dict[tuple[int, int, int], int] = {}
    term_list, entry_list = [], []
    routes_of = np.bincount(np.array([s_ for s_, _r, _o in options], dtype=np.int64))
    alone = routes_of < 2
    bounds = np.flatnonzero(np.r_[True, terms.factor_term[1:] != terms.factor_term[:-1], True])
    for lo, hi in zip(bounds[:-1], bounds[1:]):
        t = int(terms.factor_term[lo])
        if alone[terms.term_stream[t]]:
            continue
        routes = [options[int(q)][2] for q in terms.factor_option[lo:hi]]
        units: dict[int, int] = {}
        for opt in routes:
            for ell, u in zip(opt.links, opt.units):
                units[ell] = max(units.get(ell, 0), u)
        # Two links of one earlier route: only neighbours (a chain along the route).
        apart = {(min(a, b), max(a, b)) for opt in routes for i, a in enumerate(opt.links)
                 for b in opt.links[i + 2 :]}  # fmt: skip
        links = list(units)
        for i, a in enumerate(links):
            for b in links[i + 1 :]:
                key = (min(a, b), max(a, b))
                if key in apart or key not in crossing:
                    continue
                pair_ids.setdefault(key, len(pair_ids))
                entry = entry_ids.setdefault((*key, size_of[max(units[a], units[b])]), len(entry_ids))
                term_list.append(t)
                entry_list.append(entry)
    keys = list(entry_ids)
    cross_pair, cross_option, cross_size = [], [], []
    for key, pair in pair_ids.items():
        for o, k in crossing[key]:
            cross_pair.append(pair)
            cross_option.append(o)
            cross_size.append(k)
    as_int = lambda x: np.array(x, dtype=np.int64)  # noqa: E731
    return _SharedPairs(
        as_int(term_list), as_int(entry_list), as_int([k[0] for k in keys]), as_int([k[1] for k in keys]),
        as_int([k[2] for k in keys]), as_int([pair_ids[k[:2]] for k in keys]), len(pair_ids),
        as_int(cross_pair), as_int(cross_option), as_int(cross_size),
    )


def _normalised_laws(capacities: np.ndarray, sizes: np.ndarray, loads: np.ndarray) -> np.ndarray:
    """(R, Cmax + 1): Kaufman-Roberts occupancy laws per row, cut at each row's capacity."""
    log_q = _occupancy_log(capacities, sizes, loads)
    j = np.arange(log_q.shape[0])[:, None]
    masked = np.where(j <= capacities[None, :], log_q, -np.inf)
    peak = masked.max(axis=0)
    p = np.exp(masked - np.where(np.isfinite(peak), peak, 0.0)[None, :])
    return (p / p.sum(axis=0, keepdims=True)).T


def _pair_correlation(pairs: _SharedPairs, blocking: np.ndarray, link_loads: np.ndarray, option_traffic: np.ndarray,
                      capacities: np.ndarray, sizes: np.ndarray) -> np.ndarray:  # fmt: skip
    """Factor (P, N) ``P(l and m have room) / (P(l has room) P(m has room))`` per entry.

    The calls that cross both links (load ``Y``) and the rest of each link's calls (``U_l``,
    ``U_m``) are taken as independent Kaufman-Roberts streams, restricted jointly to
    ``Y + U_l <= C_l`` and ``Y + U_m <= C_m`` (the product form of fixed routing on two links;
    F. Kelly, "Loss networks", Ann. Appl. Probab. 1(3), 1991).  The factor is computed within
    that two-link law, so its own marginal errors cancel, and multiplies the independent
    product of the fixed point.
    """
    n_points = blocking.shape[0]
    n_sizes = sizes.size
    kappa = np.ones((n_points, pairs.first.size))
    # Only where both links refuse calls now and then: elsewhere the factor is 1 within 1e-9.
    active = ((blocking[:, pairs.first, pairs.size_index] > 1e-9)
              & (blocking[:, pairs.second, pairs.size_index] > 1e-9)).any(axis=0)  # fmt: skip
    if not active.any():
        return kappa
    entries = np.flatnonzero(active)
    used, e_pair = np.unique(pairs.entry_pair[entries], return_inverse=True)
    e_pair = e_pair.ravel()
    n_used = used.size
    local = np.full(pairs.n_pairs, -1, dtype=np.int64)
    local[used] = np.arange(n_used)
    first_link = pairs.first[_first_entry(pairs)][used]
    second_link = pairs.second[_first_entry(pairs)][used]
    crosses = np.flatnonzero(local[pairs.cross_pair] >= 0)
    cross_pair, cross_size = local[pairs.cross_pair[crosses]], pairs.cross_size[crosses]
    room = 1.0 - blocking  # (P, L, K)
    # Load of the shared calls offered to the pair given room on both (carried / both rooms).
    both = room[:, first_link[cross_pair], cross_size] * room[:, second_link[cross_pair], cross_size]
    traffic = option_traffic[:, pairs.cross_option[crosses]]
    shared = np.zeros((n_points, n_used, n_sizes))
    np.add.at(shared, (slice(None), cross_pair, cross_size),
              np.divide(traffic, both, out=np.zeros_like(both), where=both > 0))
    # No more than either link is offered (the division by the rooms overshoots at heavy load).
    shared = np.minimum(shared, np.minimum(link_loads[:, first_link, :], link_loads[:, second_link, :]))
    rest_l = np.maximum(link_loads[:, first_link, :] - shared, 0.0)
    rest_m = np.maximum(link_loads[:, second_link, :] - shared, 0.0)
    cap_l, cap_m = capacities[first_link], capacities[second_link]
    rows_caps = np.concatenate([np.tile(np.minimum(cap_l, cap_m), n_points), np.tile(cap_l, n_points),
                                np.tile(cap_m, n_points)])  # fmt: skip
    laws = _normalised_laws(rows_caps, sizes, np.concatenate(
        [shared.reshape(-1, n_sizes), rest_l.reshape(-1, n_sizes), rest_m.reshape(-1, n_sizes)]))
    width = laws.shape[1]
    law_y, law_l, law_m = (laws[i * n_points * n_used : (i + 1) * n_points * n_used].reshape(
        n_points, n_used, width) for i in range(3))  # fmt: skip
    cdf_l, cdf_m = np.cumsum(law_l, axis=2), np.cumsum(law_m, axis=2)
    y = np.arange(width)
    b = sizes[pairs.size_index[entries]]

    def below(cdf: np.ndarray, cap: np.ndarray, need: np.ndarray) -> np.ndarray:
        """P(U <= cap - need - y) per point, entry and y (0 where negative)."""
        idx = cap[e_pair][:, None] - need[:, None] - y[None, :]
        return np.where(idx >= 0, cdf[:, e_pair[:, None], np.clip(idx, 0, width - 1)], 0.0)

    wy = law_y[:, e_pair]
    l0, l1 = below(cdf_l, cap_l, 0 * b), below(cdf_l, cap_l, b)
    m0, m1 = below(cdf_m, cap_m, 0 * b), below(cdf_m, cap_m, b)
    n_all, n_both = (wy * l0 * m0).sum(axis=2), (wy * l1 * m1).sum(axis=2)
    den = (wy * l1 * m0).sum(axis=2) * (wy * l0 * m1).sum(axis=2)
    kappa[:, entries] = np.clip(np.divide(n_both * n_all, den, out=np.ones_like(den), where=den > 0), 1e-3, 1e3)
    return kappa


def _first_entry(pairs: _SharedPairs) -> np.ndarray:
    """(n_pairs,): an entry of each pair (to read the pair's two links)."""
    first = np.zeros(pairs.n_pairs, dtype=np.int64)
    first[pairs.entry_pair[::-1]] = np.arange(pairs.entry_pair.size)[::-1]
    return first


#: The joint chain (:mod:`sdmnet.analysis.link_pair`) replaces the product form of a pair of
#: links where the calls that cross both carry at least this share of each link's traffic (in
#: units): the pair is then dominated by the same calls (common practice, no source: a majority).
JOINT_PAIR_SHARE = 0.5
#: Joint chains solved per load point hold at most this many states in all ((C_l + 1)(C_m + 1)
#: each), the pairs whose links block most first: a chain of two 112-unit links (12,769 states)
#: takes about 0.05 s a solve (docs/estimate.md, "What it costs").
JOINT_PAIR_STATES = 20_000
_JOINT_TOL = 1e-4  # largest change of a log factor between two rounds that counts as settled
_JOINT_ROUNDS = 20  # rounds of joint chains at most (then the last factors stand)
_JOINT_REFRESH = 1e-6  # the chains are solved again once the link blocking changes less than this


class _JointPairs:
    """The pairs of links whose shared-call factor comes from their joint chain, and that chain's
    arrivals, departures and laws (warm-started from the previous round)."""

    def __init__(self, pairs: _SharedPairs, terms: _Terms, options: list, capacities: np.ndarray,
                 sizes: np.ndarray) -> None:  # fmt: skip
        self.pairs, self.terms, self.options, self.caps, self.sizes = pairs, terms, options, capacities, sizes
        first = _first_entry(pairs) if pairs.n_pairs else np.zeros(0, dtype=np.int64)
        self.first_link, self.second_link = pairs.first[first], pairs.second[first]
        self.units_on = [dict(zip(opt.links, opt.units)) for _s, _r, opt in options]
        self.need: dict[tuple[int, int], int] = {}
        for (s, _r, _opt), held in zip(options, self.units_on):
            for ell, u in held.items():
                self.need[(s, ell)] = max(self.need.get((s, ell), 0), u)
        self.terms_of = [np.flatnonzero(terms.term_option == o) for o in range(len(options))]
        self.selected: list[int] | None = None
        self.laws: dict[tuple[int, int], np.ndarray] = {}
        self.rounds = 0

    def _select(self, blocking: np.ndarray, traffic: np.ndarray) -> list[int]:
        """Pairs dominated by the calls crossing both, the most blocking first, within the budget."""
        on_link: dict[int, tuple[np.ndarray, np.ndarray]] = {}
        for o, held in enumerate(self.units_on):
            for ell, u in held.items():
                on_link.setdefault(ell, ([], []))
                on_link[ell][0].append(o)
                on_link[ell][1].append(u)
        on_link = {ell: (np.array(os_), np.array(us, dtype=float)) for ell, (os_, us) in on_link.items()}
        candidates = []
        for q, (ell, m) in enumerate(zip(self.first_link.tolist(), self.second_link.tolist())):
            strength = np.minimum(blocking[:, ell].max(axis=1), blocking[:, m].max(axis=1))
            if not (strength > 1e-9).any():
                continue
            dominated = np.ones(traffic.shape[0], dtype=bool)
            for a, b in ((ell, m), (m, ell)):
                crossing, units = on_link[a]
                also = np.array([b in self.units_on[o] for o in crossing.tolist()])
                total = traffic[:, crossing] @ units
                dominated &= traffic[:, crossing[also]] @ units[also] >= JOINT_PAIR_SHARE * np.maximum(total, 1e-300)
            if (dominated & (strength > 1e-9)).any():
                candidates.append((-float(strength.max()), q))
        chosen, states = [], 0
        for _key, q in sorted(candidates):
            size = int(self.caps[self.first_link[q]] + 1) * int(self.caps[self.second_link[q]] + 1)
            if states + size <= JOINT_PAIR_STATES:
                chosen.append(q)
                states += size
        return chosen

    def kappa(self, blocking: np.ndarray, link_loads: np.ndarray, carried: np.ndarray, stream_load: np.ndarray,
              survive: np.ndarray, route_factor: np.ndarray) -> np.ndarray | None:  # fmt: skip
        """(P, N): each chosen pair's entries' factor ``P(both have room) / (P(l) P(m))`` within
        its joint chain (NaN elsewhere); None when no pair is chosen."""
        traffic = carried * stream_load
        if self.selected is None:
            self.selected = self._select(blocking, traffic)
        if not self.selected:
            return None
        self.rounds += 1
        pairs, sizes = self.pairs, self.sizes
        out = np.full((blocking.shape[0], pairs.first.size), np.nan)
        for q in self.selected:
            ell, m = int(self.first_link[q]), int(self.second_link[q])
            entries = np.flatnonzero(pairs.entry_pair == q)
            touching = [o for o, held in enumerate(self.units_on) if ell in held or m in held]
            joint = [o for o in touching if ell in self.units_on[o] and m in self.units_on[o]]
            has_l = np.zeros(self.terms.sign.size, dtype=bool)
            has_m = np.zeros_like(has_l)
            has_l[self.terms.stream[self.terms.link == ell]] = True
            has_m[self.terms.stream[self.terms.link == m]] = True
            # Each term's room on its links other than these two, at every point.
            rest = np.ones_like(route_factor)
            elsewhere = (self.terms.link != ell) & (self.terms.link != m)
            _reduce_at(np.multiply, rest, self.terms.stream, np.where(elsewhere, survive, 1.0))
            for p in range(blocking.shape[0]):
                if blocking[p, ell].max() <= 1e-9 or blocking[p, m].max() <= 1e-9:
                    continue
                weight = self.terms.sign * route_factor[p] * rest[p]
                arrivals = []
                for o in touching:
                    ts = self.terms_of[o]
                    rates = np.array([[weight[ts][(~has_l[ts] | (a == 1)) & (~has_m[ts] | (b == 1))].sum()
                                       for b in (0, 1)] for a in (0, 1)])  # fmt: skip
                    s, held = self.options[o][0], self.units_on[o]
                    arrivals.append(PairArrival((held.get(ell, 0), held.get(m, 0)),
                                                (self.need.get((s, ell), 0), self.need.get((s, m), 0)),
                                                stream_load[p, o] * np.clip(rates, 0.0, None)))  # fmt: skip
                shared = np.zeros((2, sizes.size))
                for side, a in enumerate((ell, m)):
                    for k, u in enumerate(sizes.tolist()):
                        total = sum(traffic[p, o] for o in touching if self.units_on[o].get(a) == u)
                        both = sum(traffic[p, o] for o in joint if self.units_on[o].get(a) == u)
                        shared[side, k] = both / total if total > 0 else 0.0
                cap_l, cap_m = int(self.caps[ell]), int(self.caps[m])
                start = self.laws.get((q, p))
                if start is None:
                    laws = _normalised_laws(np.array([cap_l, cap_m], dtype=np.int64), sizes, link_loads[p, [ell, m]])
                    start = np.outer(laws[0, : cap_l + 1], laws[1, : cap_m + 1])
                calls = (calls_given_occupancy(cap_l, sizes, link_loads[p, ell]),
                         calls_given_occupancy(cap_m, sizes, link_loads[p, m]))  # fmt: skip
                law = pair_law((cap_l, cap_m), sizes, arrivals, calls, shared, start)
                if law is None:  # an overloaded chain that does not settle keeps the product form
                    continue
                self.laws[(q, p)] = law
                cdf = law.cumsum(axis=0).cumsum(axis=1)
                for e in entries:
                    b = int(sizes[pairs.size_index[e]])
                    if b > min(cap_l, cap_m):
                        continue
                    both, room_l, room_m = cdf[cap_l - b, cap_m - b], cdf[cap_l - b, cap_m], cdf[cap_l, cap_m - b]
                    if room_l > 0 and room_m > 0 and both > 0:
                        out[p, e] = float(np.clip(both / (room_l * room_m), 1e-3, 1e3))
        return out


def routed_fixed_point(
    capacities: Sequence[int],
    streams: Sequence[RoutedStream],
    loads: np.ndarray,
    *,
    damping: float = 0.5,
    tol: float = 1e-9,
    max_iter: int = 2000,
    peakedness: bool = True,
    shared_calls: bool = True,
    joint_pairs: bool = True,
) -> RoutedResult:
    """Reduced-load fixed point with routes tried in order and channel continuity.

    Parameters
    ----------
    capacities : sequence of int
        Units per link.
    streams : sequence of RoutedStream
        The offered streams and the routes each tries in order.
    loads : array_like, shape (P, S)
        Offered load of each stream at each of P points.
    damping : float
        Weight kept from the previous link loads at each step, in [0, 1); raised towards 1
        each time a step does not shrink the change by a tenth.
    tol : float
        Stop when the largest change of a link blocking falls below this.
    max_iter : int
        Give up (``converged = False``) after this many iterations.
    peakedness : bool
        Offer the overflow of earlier routes to the links a later route meets first as peaked
        (Pascal) traffic of Riordan's peakedness (:mod:`sdmnet.analysis.overflow`); False offers
        it as Poisson traffic.  Without alternate routes there is no overflow and no difference.
    shared_calls : bool
        Where a later route is weighed against the refusal of earlier ones, count two links
        that the same calls cross as busy together (:func:`_pair_correlation`); False takes
        every link as independent.  Without alternate routes there is no difference.
    joint_pairs : bool
        Where the calls that cross two links of such a pair carry at least half of each link's
        traffic, take the pair's factor from the two links' joint chain
        (:mod:`sdmnet.analysis.link_pair`) instead of the product form, once the fixed point has
        converged, and iterate until those factors settle (at most :data:`JOINT_PAIR_STATES`
        chain states per point).  Needs ``shared_calls``.

    Returns
    -------
    RoutedResult

    Notes
    -----
    With one option per stream and no continuity rule this is the Erlang fixed point of
    :func:`sdmnet.analysis.analytic.reduced_load_fixed_point` (Kelly, Ann. Appl. Probab. 1(3),
    1991); on a single link it is Kaufman-Roberts exactly.  The link loads are damped (not the
    blocking), since the continuity factor needs each link's whole occupancy distribution.
    """
    caps = np.asarray(capacities, dtype=np.int64)
    load_matrix = np.asarray(loads, dtype=float)
    if load_matrix.ndim != 2 or load_matrix.shape[1] != len(streams):
        raise ValueError(f"loads must have shape (points, {len(streams)}), got {load_matrix.shape}")
    if not 0 <= damping < 1:
        raise ValueError(f"damping must be in [0, 1), got {damping!r}")
    unit_counts = sorted({u for st in streams for o in st.options for u in o.units})
    sizes = np.array(unit_counts, dtype=np.int64)
    size_of = {int(u): k for k, u in enumerate(unit_counts)}
    terms, options = _build_terms(streams, size_of)
    option_hops = _option_hops(options)
    layout = _hop_layout(terms, terms.sign.size)
    n_points, n_streams = load_matrix.shape
    n_links, n_sizes, n_terms = caps.size, sizes.size, terms.sign.size
    max_options = max((len(st.options) for st in streams), default=0)
    scale = np.array([st.load_scale for st in streams])
    offered = load_matrix[:, terms.term_stream] * terms.sign[None, :]  # (P, T)
    offered_hop = (offered * scale[terms.term_stream][None, :])[:, terms.stream] * terms.on_route[None, :]
    flat = terms.link * n_sizes + terms.size_index
    cell = (np.arange(n_points)[:, None] * (n_links * n_sizes) + flat[None, :]).ravel()
    used = np.unique(terms.link) if terms.link.size else np.array([], dtype=np.int64)
    top = int(caps[used].max()) if used.size else 0

    # Overflow: where each later route's calls come from (the previous route's links that it
    # does not share), to give them the peakedness of that route's overflow.
    prev_option, prev_link, prev_size, prev_before = [], [], [], []
    first_of_stream: dict[int, int] = {}
    for o, (s_, r, opt) in enumerate(options):
        first_of_stream.setdefault(s_, o)
        if r == 0:
            continue
        before = options[o - 1][2]
        for ell, u in zip(before.links, before.units):
            if ell not in opt.links:
                prev_option.append(o)
                prev_link.append(ell)
                prev_size.append(size_of[u])
                prev_before.append(o - 1)
    prev_option_a = np.array(prev_option, dtype=np.int64)
    prev_link_a = np.array(prev_link, dtype=np.int64)
    prev_size_a = np.array(prev_size, dtype=np.int64)
    prev_before_a = np.array(prev_before, dtype=np.int64)
    option_first = np.array([first_of_stream[o[0]] for o in options], dtype=np.int64)
    peaked_terms = peakedness and bool(terms.peaked.any())
    # The term-links an overflow meets first, grouped by (option, link, size): one parcel each.
    peaked_at = np.flatnonzero(terms.peaked)
    parcel_keys = np.stack([terms.term_option[terms.stream[peaked_at]], flat[peaked_at]])
    parcel_pairs, parcel_index = np.unique(parcel_keys.reshape(2, -1), axis=1, return_inverse=True)
    parcel_index = parcel_index.ravel()
    parcel_option, parcel_cell, n_parcels = parcel_pairs[0], parcel_pairs[1], parcel_pairs.shape[1]
    stream_load = load_matrix[:, [o[0] for o in options]] * scale[[o[0] for o in options]][None, :]

    pairs = _shared_pairs(terms, options, size_of) if shared_calls else None

    def refused(carried: np.ndarray) -> np.ndarray:
        """(P, O): the share of each option's stream that its earlier options refused."""
        cum = np.cumsum(carried, axis=1)
        start = cum[:, option_first] - carried[:, option_first]
        return np.clip(1.0 - (cum - carried - start), 0.0, 1.0)

    def link_state(link_loads: np.ndarray, peaked: np.ndarray, variance: np.ndarray, call_guess: np.ndarray
                   ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:  # fmt: skip
        """Time congestion (P, L, K), the overflow's call congestion (P, L, K) and occupancy."""
        blocking = np.zeros((n_points, n_links, n_sizes))
        occupancy = np.zeros((n_points, n_links, top + 1))
        occupancy[:, :, 0] = 1.0
        if used.size:
            rows_caps = np.tile(caps[used], n_points)
            rows = link_loads[:, used, :].reshape(-1, n_sizes)
            log_q = _occupancy_log(rows_caps, sizes, rows)  # (top + 1, R)
            flat_blocking = _blocking_from_log(log_q, rows_caps, sizes)
            flat_call = flat_blocking.copy()
            # Links reached by overflow: Poisson and Pascal classes (Delbrouck's recursion);
            # the others keep Kaufman-Roberts exactly.
            rows_peaked = peaked[:, used, :].reshape(-1, n_sizes)
            hit = np.flatnonzero((rows_peaked > 0).any(axis=1))
            if hit.size:
                rows_var = variance[:, used, :].reshape(-1, n_sizes)[hit]
                z = np.divide(rows_var, rows_peaked[hit], out=np.ones_like(rows_var), where=rows_peaked[hit] > 0)
                guess = call_guess[:, used, :].reshape(-1, n_sizes)[hit]
                time, call, log_hit = bpp_link_blocking(rows_caps[hit], sizes, rows[hit], rows_peaked[hit], z, guess)
                flat_blocking[hit], flat_call[hit] = time, call
                # The hit links' recursion runs to their own largest capacity only.
                log_q[:, hit] = -np.inf
                log_q[: log_hit.shape[0], hit] = log_hit
            blocking[:, used, :] = flat_blocking.reshape(n_points, used.size, n_sizes)
            call_blocking = np.zeros_like(blocking)
            call_blocking[:, used, :] = flat_call.reshape(n_points, used.size, n_sizes)
            if option_hops.option.size:  # only the continuity factor reads the occupancy
                j = np.arange(log_q.shape[0])[:, None]
                masked = np.where(j <= rows_caps[None, :], log_q, -np.inf)
                peak = masked.max(axis=0)
                p = np.exp(masked - np.where(np.isfinite(peak), peak, 0.0)[None, :])
                p /= p.sum(axis=0, keepdims=True)
                occupancy[:, used, :] = p.T.reshape(n_points, used.size, -1)[:, :, : top + 1]
        else:
            call_blocking = blocking.copy()
        # A call larger than its link never fits (no load reaches it then, so set it here).
        too_large = (sizes[None, None, :] > caps[None, :, None]).astype(float)
        return np.maximum(blocking, too_large), np.maximum(call_blocking, too_large), occupancy

    option_stream = np.array([o[0] for o in options], dtype=np.int64)
    cover_load = load_matrix[:, option_stream[option_hops.cover_by]] * scale[option_stream[option_hops.cover_by]]

    def option_peakedness(blocking: np.ndarray, loads_now: np.ndarray, carried: np.ndarray) -> np.ndarray:
        """Peakedness (P, O) of the overflow each option is offered: Riordan's on each link of the
        previous route that it does not share, for the stream's parcel of that link's load,
        averaged with the links' blocking as weights (1 for first routes)."""
        z_option = np.ones((n_points, len(options)))
        if prev_option_a.size == 0:
            return z_option
        b_units = sizes[prev_size_a].astype(float)
        # The link's load counted in calls of the stream's size, and its servers.
        unit_load = (loads_now * sizes[None, None, :]).sum(axis=2)[:, prev_link_a]  # (P, E)
        load_b = unit_load / b_units[None, :]
        servers = caps[prev_link_a] / b_units
        block = blocking[:, prev_link_a, prev_size_a]
        z_link = overflow_peakedness(load_b, servers[None, :], block)
        # Offered to the previous route: what the options before it refused.
        parcel = stream_load[:, prev_before_a] * refused(carried)[:, prev_before_a]
        share = np.divide(parcel, load_b, out=np.zeros_like(parcel), where=load_b > 0)
        z_parcel = thinned_peakedness(z_link, share)
        weight = _add_at(prev_option_a, block, len(options))
        weighted = _add_at(prev_option_a, block * z_parcel, len(options))
        return np.where(weight > 0, np.divide(weighted, weight, out=np.ones_like(weight), where=weight > 0), 1.0)

    def term_parts(blocking: np.ndarray, call_blocking: np.ndarray, occupancy: np.ndarray, carried: np.ndarray
                   ) -> tuple[np.ndarray, np.ndarray]:  # fmt: skip
        """Each term-link's room (P, I) and each term's continuity factor (P, T)."""
        survive = 1.0 - blocking[:, terms.link, terms.size_index]
        if peaked_terms:
            survive = np.where(terms.peaked[None, :], 1.0 - call_blocking[:, terms.link, terms.size_index], survive)
        aligned = _add_at(option_hops.cover_option, carried[:, option_hops.cover_by] * cover_load
                          * option_hops.cover_units[None, :], len(options))  # fmt: skip
        factor = _continuity(option_hops, len(options), occupancy, caps, aligned)  # (P, O)
        route_factor = np.ones((n_points, n_terms))
        _reduce_at(np.multiply, route_factor, terms.factor_term, factor[:, terms.factor_option])
        return survive, route_factor

    joint_kappa: np.ndarray | None = None  # (P, N): the joint chain's factor per entry, NaN where not solved
    joint = (_JointPairs(pairs, terms, options, caps, sizes) if joint_pairs and pairs is not None
             and pairs.term.size else None)  # fmt: skip
    settled = joint is None

    def step(blocking: np.ndarray, call_blocking: np.ndarray, occupancy: np.ndarray, carried: np.ndarray,
             z_option: np.ndarray, link_loads_now: np.ndarray
             ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:  # fmt: skip
        survive, route_factor = term_parts(blocking, call_blocking, occupancy, carried)
        if pairs is not None and pairs.term.size:
            # Links that the same calls cross are busy together (docs/estimate.md, step 2).
            kappa = _pair_correlation(pairs, blocking, link_loads_now, carried * stream_load, caps, sizes)
            if joint_kappa is not None:
                kappa = np.where(np.isnan(joint_kappa), kappa, joint_kappa)
            _reduce_at(np.multiply, route_factor, pairs.term, kappa[:, pairs.entry])
        others, whole = _exclusive(survive, layout, n_terms)
        thinned = offered_hop * others * route_factor[:, terms.stream]
        total = n_points * n_links * n_sizes

        def by_cell(values: np.ndarray) -> np.ndarray:
            sums = np.bincount(cell, weights=values.ravel(), minlength=total)
            return np.maximum(sums.reshape(n_points, n_links, n_sizes), 0.0)

        if peaked_terms:
            poisson = by_cell(np.where(terms.peaked[None, :], 0.0, thinned))
            over = np.where(terms.peaked[None, :], thinned, 0.0)
            peaked = by_cell(over)
            # Per (option, link, size): the option's overflow reaching the link is a parcel of
            # the overflow offered to the option (thinned by the route's other links), so its
            # peakedness is 1 + p (Z - 1), p the share that reaches the link.
            mean = _add_at(parcel_index, thinned[:, peaked_at], n_parcels)
            arriving = refused(carried)[:, parcel_option] * stream_load[:, parcel_option]
            share = np.divide(mean, arriving, out=np.zeros_like(mean), where=arriving > 0)
            spread = mean * thinned_peakedness(z_option[:, parcel_option], share)
            variance = np.stack([np.bincount(parcel_cell, weights=row, minlength=n_links * n_sizes)
                                 for row in spread]).reshape(n_points, n_links, n_sizes)  # fmt: skip
            variance = np.maximum(variance, peaked)
        else:
            poisson = by_cell(thinned)
            peaked = variance = np.zeros_like(poisson)
        value = terms.sign[None, :] * whole * route_factor  # (P, T)
        carried_option = _add_at(terms.term_option, value, len(options))
        return poisson, peaked, variance, np.clip(carried_option, 0.0, 1.0)

    zero = np.zeros((n_points, n_links, n_sizes))
    blocking, call_blocking, occupancy = link_state(zero, zero, zero, zero)
    no_overflow = np.ones((n_points, len(options)))
    link_loads, peaked_loads, variances, carried_option = step(
        blocking, call_blocking, occupancy, np.zeros((n_points, len(options))), no_overflow, zero)
    iterations, converged, residual, previous, weight = 0, False, 0.0, np.inf, damping
    carried_damped = carried_option
    for iterations in range(1, max_iter + 1):  # noqa: B007 - the count is returned
        new_blocking, call_blocking, occupancy = link_state(link_loads, peaked_loads, variances, call_blocking)
        residual = float(np.abs(new_blocking - blocking).max()) if blocking.size else 0.0
        blocking = new_blocking
        z_option = (option_peakedness(blocking, link_loads + peaked_loads, carried_option) if peaked_terms
                    else no_overflow)  # fmt: skip
        refreshed = False
        if residual < max(tol, _JOINT_REFRESH) and not settled:
            # Near the fixed point with the factors in hand: solve the joint chains of the pairs
            # of links that the same calls dominate at this state, and go on until they settle.
            # The carried shares damped like the loads (the undamped map oscillates at high load).
            survive, route_factor = term_parts(blocking, call_blocking, occupancy, carried_damped)
            fresh = joint.kappa(blocking, link_loads + peaked_loads, carried_damped, stream_load, survive,
                                route_factor)  # fmt: skip
            if fresh is None:
                settled = True
            else:
                change = np.inf if joint_kappa is None else float(np.nanmax(np.abs(np.log(fresh / joint_kappa)),
                                                                            initial=0.0))  # fmt: skip
                joint_kappa = fresh
                settled = change < _JOINT_TOL or joint.rounds >= _JOINT_ROUNDS
                refreshed = not settled
        new_loads, new_peaked, new_var, carried_option = step(blocking, call_blocking, occupancy, carried_option,
                                                              z_option, link_loads + peaked_loads)  # fmt: skip
        if residual < tol and settled and not refreshed:
            converged = True
            break
        if refreshed:
            previous = np.inf  # the new factors move the loads: not a failure of the damping
        # Damp harder each time a step fails to shrink the change by a tenth (alternate routing
        # makes the plain map oscillate at high load).
        if iterations > 1 and residual > 0.9 * previous:
            weight = 1.0 - 0.5 * (1.0 - weight)
        previous = residual
        link_loads = weight * link_loads + (1.0 - weight) * new_loads
        peaked_loads = weight * peaked_loads + (1.0 - weight) * new_peaked
        variances = weight * variances + (1.0 - weight) * new_var
        carried_damped = weight * carried_damped + (1.0 - weight) * carried_option
    carried = np.zeros((n_points, n_streams, max_options))
    for o, (s, r, _opt) in enumerate(options):
        carried[:, s, r] = carried_option[:, o]
    stream_blocking = np.clip(1.0 - carried.sum(axis=2), 0.0, 1.0)
    return RoutedResult(
        sizes=sizes,
        link_blocking=blocking,
        link_loads=link_loads + peaked_loads,
        carried=carried,
        stream_blocking=stream_blocking,
        iterations=iterations,
        converged=converged,
        residual=residual,
    )
