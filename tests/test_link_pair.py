"""The two-link joint chain against exact laws.

References computed here, in the test: Kaufman-Roberts occupancy by its recursion (Kaufman,
IEEE Trans. Commun. 29(10), 1981) and the stationary law of small chains with every state
enumerated (pi Q = 0, sum pi = 1).  Where the chain's departure rule is exact (one stream over
both links; no call over both) it must agree to solver precision.
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from markov import stationary

from sdmnet.analysis import link_pair
from sdmnet.analysis.link_pair import PairArrival, calls_given_occupancy, pair_law


def _kr_law(capacity: int, loads: list[float], sizes: list[int]) -> np.ndarray:
    q = [1.0] + [0.0] * capacity
    for j in range(1, capacity + 1):
        q[j] = sum(a * b * q[j - b] for a, b in zip(loads, sizes) if j >= b) / j
    return np.array(q) / sum(q)


def _only_arrival(units: tuple[int, int], rate: float) -> PairArrival:
    """Calls that need room on the links they join (and only those)."""
    rates = np.zeros((2, 2))
    need_l, need_m = units
    for a, b in itertools.product((0, 1), repeat=2):
        rates[a, b] = rate if (a or not need_l) and (b or not need_m) else 0.0
    return PairArrival(units, units, rates)


@pytest.mark.parametrize(("capacity", "loads"), [(6, [2.0, 1.0]), (10, [3.0, 2.5])])
def test_one_stream_over_both_links_is_kaufman_roberts(capacity, loads):
    # Calls of 1 and 2 units that cross both links of equal capacity: the two links are one
    # Kaufman-Roberts system, the law on the diagonal.
    sizes = np.array([1, 2])
    arrivals = [_only_arrival((int(b), int(b)), a) for a, b in zip(loads, sizes)]
    calls = calls_given_occupancy(capacity, sizes, np.array(loads))
    law = pair_law((capacity, capacity), sizes, arrivals, (calls, calls), np.ones((2, 2)), tol=1e-14)
    exact = _kr_law(capacity, loads, [1, 2])
    np.testing.assert_allclose(np.diag(law), exact, atol=1e-9)
    assert law.sum() - np.trace(law) < 1e-9


@pytest.mark.parametrize("solver", ["direct", "iterative"])
def test_two_links_without_shared_calls_are_independent(solver, monkeypatch):
    # A Poisson stream on each link and nothing over both: the product of two Erlang laws,
    # by either solver (the iterative one is forced by lowering the direct solver's size).
    if solver == "iterative":
        monkeypatch.setattr(link_pair, "DIRECT_STATES", 0)
    sizes = np.array([1])
    arrivals = [_only_arrival((1, 0), 3.0), _only_arrival((0, 1), 1.5)]
    calls = (calls_given_occupancy(5, sizes, np.array([3.0])), calls_given_occupancy(4, sizes, np.array([1.5])))
    law = pair_law((5, 4), sizes, arrivals, calls, np.zeros((2, 1)), tol=1e-14)
    np.testing.assert_allclose(law, np.outer(_kr_law(5, [3.0], [1]), _kr_law(4, [1.5], [1])), atol=1e-9)


def test_calls_given_occupancy_is_the_conditional_mean():
    # On an Erlang link (one size) the calls in progress are the occupancy itself.
    calls = calls_given_occupancy(8, np.array([1]), np.array([5.0]))
    np.testing.assert_allclose(calls[0], np.arange(9.0), rtol=1e-12)


def test_alternate_routes_that_keep_both_links_loaded_against_the_exact_chain():
    # Links l and m; a pair tries (l, m), then a route over m alone, then over l alone (the
    # other links of those routes never full); a local stream on m.  The pair keeps loading
    # each link while the other is full.  Exact chain state: (pair calls on each route, local).
    c, pair, local = 5, 3.0, 1.0
    states = [s for s in itertools.product(range(c + 1), repeat=4) if s[0] + s[2] <= c and s[0] + s[1] + s[3] <= c]

    def free(s):
        return c - s[0] - s[2], c - s[0] - s[1] - s[3]

    def moves(s):
        fl, fm = free(s)
        route = 0 if fl and fm else 1 if fm else 2 if fl else None
        if route is not None:
            yield s[:route] + (s[route] + 1,) + s[route + 1 :], pair
        if fm:
            yield s[:3] + (s[3] + 1,), local
        for i, n in enumerate(s):
            if n:
                yield s[:i] + (n - 1,) + s[i + 1 :], float(n)

    pi = stationary(states, moves)
    exact = np.zeros((c + 1, c + 1))
    for s, p in zip(states, pi):
        exact[s[0] + s[2], s[0] + s[1] + s[3]] += p
    # Rates by (l has room, m has room): the first route when both have room, else the one that has.
    joined = [
        PairArrival((1, 1), (1, 1), np.array([[0.0, 0.0], [0.0, pair]])),
        PairArrival((0, 1), (1, 1), np.array([[0.0, pair], [0.0, 0.0]])),
        PairArrival((1, 0), (1, 1), np.array([[0.0, 0.0], [pair, 0.0]])),
        _only_arrival((0, 1), local),
    ]
    # Each link's calls at each occupancy from its own Erlang law (the chain's approximation),
    # and the share over both from the exact chain's carried traffic.
    on_both = sum(p * s[0] for s, p in zip(states, pi))
    on_l = sum(p * (s[0] + s[2]) for s, p in zip(states, pi))
    on_m = sum(p * (s[0] + s[1] + s[3]) for s, p in zip(states, pi))
    calls = (np.arange(c + 1.0)[None, :], np.arange(c + 1.0)[None, :])
    law = pair_law((c, c), np.array([1]), joined, calls, np.array([[on_both / on_l], [on_both / on_m]]), tol=1e-13)
    both_full = law[c, c]
    # Measured: both links full 0.0949 exactly, 0.0844 in the chain (11 % low; each link's
    # law exact within 1e-13); independent links with the exact marginals say 0.0219 (4.3x low).
    np.testing.assert_allclose(law.sum(axis=1), exact.sum(axis=1), atol=1e-9)
    assert both_full == pytest.approx(exact[c, c], rel=0.15)
    assert exact[c, :].sum() * exact[:, c].sum() < 0.3 * exact[c, c]


def test_an_overloaded_chain_is_solved_exactly_or_left_to_the_product_form(monkeypatch):
    # One stream of a million Erlang over both links of 4 units: Erlang's law on the diagonal,
    # almost all of it at 4 busy units.  The uniformised iteration cannot settle there (each
    # step moves a millionth of the mass down), so it must give up rather than run on.
    capacity, load, sizes = 4, 1e6, np.array([1])
    arrivals = [_only_arrival((1, 1), load)]
    calls = calls_given_occupancy(capacity, sizes, np.array([load]))
    law = pair_law((capacity, capacity), sizes, arrivals, (calls, calls), np.ones((2, 1)))
    np.testing.assert_allclose(np.diag(law), _kr_law(capacity, [load], [1]), rtol=1e-9, atol=1e-15)
    monkeypatch.setattr(link_pair, "DIRECT_STATES", 0)
    assert pair_law((capacity, capacity), sizes, arrivals, (calls, calls), np.ones((2, 1)), max_steps=2000) is None
