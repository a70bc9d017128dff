"""Overflow moments and links offered peaked traffic, against exact Markov chains.

Every reference is computed here, in the test: small continuous-time Markov chains with every
state enumerated (pi Q = 0, sum pi = 1), unit holding times.  Riordan's moments are exact for
Poisson input, the thinning rule is exact for a Poisson parcel, and Delbrouck's recursion is exact
for the Pascal (BPP) chain it describes, so all three must agree to solver precision.  The routed
estimate with peaked overflow is an approximation: its bounds are the errors measured here
(docs/estimate.md), so a change that makes it worse fails.
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from markov import stationary

from sdmnet.analysis.overflow import (
    bpp_link_blocking,
    overflow_peakedness,
    riordan_moments,
    thinned_peakedness,
)
from sdmnet.analysis.reduced_load import RoutedStream, RouteOption, routed_fixed_point


def _erlang_b(servers: int, load: float) -> float:
    """Erlang B written out (test_analytic.py checks the library's against printed tables)."""
    b = 1.0
    for k in range(1, servers + 1):
        b = load * b / (k + load * b)
    return b


def _overflow_chain(servers: int, loads: tuple[float, ...], depth: int) -> tuple[np.ndarray, list]:
    """Poisson streams offered to ``servers``; each stream's overflow held on its own infinite
    group (cut at ``depth`` calls, far beyond any mass).  State: (primary busy, overflow calls
    in progress per stream)."""
    states = [(i, *js) for i in range(servers + 1) for js in itertools.product(range(depth + 1), repeat=len(loads))]

    def moves(s):
        i, js = s[0], s[1:]
        for k, rate in enumerate(loads):
            if i < servers:
                yield (i + 1, *js), rate
            elif js[k] < depth:
                yield (i, *js[:k], js[k] + 1, *js[k + 1 :]), rate
        if i:
            yield (i - 1, *js), float(i)
        for k, j in enumerate(js):
            if j:
                yield (i, *js[:k], j - 1, *js[k + 1 :]), float(j)

    return stationary(states, moves), states


@pytest.mark.parametrize(("servers", "load"), [(1, 0.5), (3, 2.0), (5, 4.0), (4, 6.0)])
def test_riordan_moments_equal_the_exact_overflow_chain(servers, load):
    pi, states = _overflow_chain(servers, (load,), 40)
    j = np.array([s[1] for s in states], dtype=float)
    mean, variance = float(pi @ j), float(pi @ j**2) - float(pi @ j) ** 2
    m, v = riordan_moments(load, servers)
    assert m == pytest.approx(mean, rel=1e-9)
    assert v == pytest.approx(variance, rel=1e-9)
    assert v > m  # overflow is peaked
    z = overflow_peakedness(load, servers, _erlang_b(servers, load))
    assert z == pytest.approx(variance / mean, rel=1e-9)


def test_a_poisson_parcel_of_an_overflow_is_a_binomial_thinning():
    # Two Poisson streams share 3 servers; the overflow of stream 0 is a random parcel (share
    # 1.5 / 4) of the total overflow, so its peakedness is 1 + p (Z - 1).
    loads = (1.5, 2.5)
    pi, states = _overflow_chain(3, loads, 18)
    j0 = np.array([s[1] for s in states], dtype=float)
    z0 = (float(pi @ j0**2) - float(pi @ j0) ** 2) / float(pi @ j0)
    z = overflow_peakedness(4.0, 3, _erlang_b(3, 4.0))
    assert thinned_peakedness(z, 1.5 / 4.0) == pytest.approx(z0, rel=1e-8)


def _pascal_link(capacity: int, poisson: float, alpha: float, beta: float) -> tuple[float, float, float]:
    """Exact time congestion of one-unit Poisson calls and of two-unit Pascal calls (arrivals
    alpha + beta n, n the Pascal calls in progress), and the Pascal calls' call congestion."""
    states = [(a, b) for a in range(capacity + 1) for b in range(capacity // 2 + 1) if a + 2 * b <= capacity]

    def moves(s):
        a, b = s
        if a + 2 * b + 1 <= capacity:
            yield (a + 1, b), poisson
        if a + 2 * b + 2 <= capacity:
            yield (a, b + 1), alpha + beta * b
        if a:
            yield (a - 1, b), float(a)
        if b:
            yield (a, b - 1), float(b)

    pi = stationary(states, moves)
    free = np.array([capacity - a - 2 * b for a, b in states])
    rate = np.array([alpha + beta * b for _a, b in states])
    return float(pi[free < 1].sum()), float(pi[free < 2].sum()), float((pi * rate)[free < 2].sum() / (pi * rate).sum())


@pytest.mark.parametrize(
    ("capacity", "poisson", "mean", "z"), [(6, 2.0, 1.0, 1.8), (9, 3.0, 2.0, 2.5), (8, 1.0, 0.5, 1.0)]
)
def test_delbrouck_recursion_equals_the_exact_pascal_chain(capacity, poisson, mean, z):
    beta = 1.0 - 1.0 / z
    time, call, _ = bpp_link_blocking(np.array([capacity]), np.array([1, 2]), np.array([[poisson, 0.0]]),
                                      np.array([[0.0, mean]]), np.array([[1.0, z]]))  # fmt: skip
    exact_one, exact_two, exact_call = _pascal_link(capacity, poisson, mean / z, beta)
    np.testing.assert_allclose(time[0], [exact_one, exact_two], rtol=1e-9)
    assert call[0, 1] == pytest.approx(exact_call, rel=1e-9)
    if z == 1.0:
        assert call[0, 1] == pytest.approx(time[0, 1], rel=1e-12)  # Poisson calls see time congestion
    else:
        assert call[0, 1] > time[0, 1]


def test_the_call_guess_makes_the_pascal_stream_arrive_at_its_mean():
    # With alpha = M (1 - beta (1 - B)) and B the call congestion that results, the Pascal
    # stream's mean arrival rate alpha + beta Y (Y its carried calls) is M again.
    capacity, mean, z = 6, 2.0, 2.0
    beta = 1.0 - 1.0 / z
    guess = np.zeros((1, 1))
    for _ in range(200):
        _, call, _ = bpp_link_blocking(np.array([capacity]), np.array([1]), np.zeros((1, 1)), np.array([[mean]]),
                                       np.array([[z]]), guess)  # fmt: skip
        guess = call
    b = float(call[0, 0])
    alpha = mean * (1.0 - beta * (1.0 - b))
    states = list(range(capacity + 1))
    pi = stationary(states, lambda n: ([(n + 1, alpha + beta * n)] if n < capacity else []) + ([(n - 1, float(n))]
                                                                                                 if n else []))
    arrival = float(sum(p * (alpha + beta * n) for n, p in zip(states, pi)))
    assert arrival == pytest.approx(mean, rel=1e-6)


def test_overflow_between_two_parallel_links():
    # Exact: one pair on two groups of 5 tried in order is one group of 10, Erlang B(10, 4) =
    # 0.00531.  Overflow offered as Poisson: over 10x low; as Pascal traffic of Riordan's
    # peakedness: measured 3 % low.
    stream = RoutedStream((RouteOption((0,), (1,)), RouteOption((1,), (1,))))
    exact = _erlang_b(10, 4.0)
    peaked = routed_fixed_point([5, 5], [stream], np.array([[4.0]])).stream_blocking[0, 0]
    poisson = routed_fixed_point([5, 5], [stream], np.array([[4.0]]), peakedness=False).stream_blocking[0, 0]
    assert poisson < exact / 10
    assert abs(peaked / exact - 1) < 0.05


def test_a_larger_link_elsewhere_leaves_the_overflow_alone():
    # Links block independently: a stream on a larger third link changes nothing for the pair
    # that overflows from 8 units to 4 (the occupancy arrays then span different capacities).
    pair = RoutedStream((RouteOption((0,), (1,)), RouteOption((1,), (1,))))
    other = RoutedStream((RouteOption((2,), (1,)),))
    alone = routed_fixed_point([8, 4], [pair], np.array([[7.0]])).stream_blocking[0, 0]
    beside = routed_fixed_point([8, 4, 12], [pair, other], np.array([[7.0, 9.0]])).stream_blocking[0, 0]
    assert beside == pytest.approx(alone, rel=1e-12)
    assert 0.0 < alone < 1.0


def test_one_route_per_stream_is_untouched_by_peakedness():
    routes = [((0,), 1), ((0, 1), 2), ((1, 2), 1), ((2,), 3)]
    streams = [RoutedStream((RouteOption(links, (u,) * len(links), 8, (1,) * len(links)),)) for links, u in routes]
    loads = np.array([[3.0, 1.5, 2.0, 1.0], [6.0, 3.0, 4.0, 2.0]])
    on = routed_fixed_point([10, 8, 12], streams, loads)
    off = routed_fixed_point([10, 8, 12], streams, loads, peakedness=False)
    np.testing.assert_array_equal(on.stream_blocking, off.stream_blocking)
