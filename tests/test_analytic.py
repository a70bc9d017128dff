"""Checks of the teletraffic formulas against published tables and independent computations."""

from __future__ import annotations

import itertools
import math
from fractions import Fraction

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from sdmnet.analysis.analytic import (
    Stream,
    erlang_b,
    erlang_b_load,
    erlang_b_servers,
    kaufman_roberts,
    kaufman_roberts_occupancy,
    reduced_load_fixed_point,
    reduced_load_fixed_point_batch,
)

# --------------------------------------------------------------------------------------------
# Independent references (no code from sdmnet.analysis.analytic)


def erlang_b_exact(n: int, a: Fraction) -> Fraction:
    """Erlang's formula as printed: (A^n / n!) / sum_{k<=n} A^k / k!, in exact rationals."""
    terms = [a**k / math.factorial(k) for k in range(n + 1)]
    return terms[-1] / sum(terms)


def erlang_b_logsum(n: int, a: float) -> float:
    """Erlang's formula through log-sum-exp of the Poisson terms (for large n)."""
    logs = np.array([k * math.log(a) - math.lgamma(k + 1) for k in range(n + 1)])
    top = logs.max()
    return float(math.exp(logs[-1] - top) / np.exp(logs - top).sum())


def product_form_blocking(capacity: int, loads, sizes) -> list[Fraction]:
    """Per-class blocking by enumerating every state of the complete-sharing link.

    pi(n) proportional to prod_k a_k^n_k / n_k! over {n : sum_k b_k n_k <= C} (the product form
    of the multi-rate loss system, Kaufman 1981); class k is blocked in states with more than
    C - b_k units busy.
    """
    loads = [Fraction(x) for x in loads]
    ranges = [range(capacity // b + 1) for b in sizes]
    total = Fraction(0)
    blocked = [Fraction(0)] * len(sizes)
    for n in itertools.product(*ranges):
        used = sum(b * m for b, m in zip(sizes, n))
        if used > capacity:
            continue
        weight = Fraction(1)
        for a, m in zip(loads, n):
            weight *= a**m / math.factorial(m)
        total += weight
        for k, b in enumerate(sizes):
            if used > capacity - b:
                blocked[k] += weight
    return [x / total for x in blocked]


# --------------------------------------------------------------------------------------------
# Erlang B against published tables

# D. Collins, *Carrier Grade Voice over IP*, 2nd ed., Appendix A "Table of Erlang B" (as
# reproduced at globalspec.com/reference/55139/203279): offered Erlang for n channels at each
# blocking probability, printed to one decimal.  Rows 1-9.
COLLINS_BLOCKING = (0.0001, 0.0005, 0.001, 0.002, 0.003, 0.004, 0.005, 0.006, 0.007, 0.008, 0.009,
                    0.01, 0.02, 0.03, 0.04, 0.05)  # fmt: skip
COLLINS_ROWS = {
    1: (0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.1),
    2: (0.0, 0.0, 0.0, 0.1, 0.1, 0.1, 0.1, 0.1, 0.1, 0.1, 0.1, 0.2, 0.2, 0.3, 0.3, 0.4),
    3: (0.1, 0.2, 0.2, 0.2, 0.3, 0.3, 0.3, 0.4, 0.4, 0.4, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9),
    4: (0.2, 0.4, 0.4, 0.5, 0.6, 0.7, 0.7, 0.7, 0.8, 0.8, 0.8, 0.9, 1.1, 1.3, 1.4, 1.5),
    5: (0.5, 0.6, 0.8, 0.9, 1.0, 1.1, 1.1, 1.2, 1.2, 1.3, 1.3, 1.4, 1.7, 1.9, 2.1, 2.2),
    6: (0.7, 1.0, 1.1, 1.3, 1.4, 1.5, 1.6, 1.7, 1.8, 1.8, 1.9, 1.9, 2.3, 2.5, 2.8, 3.0),
    7: (1.1, 1.4, 1.6, 1.8, 1.9, 2.1, 2.2, 2.2, 2.3, 2.4, 2.4, 2.5, 2.9, 3.2, 3.5, 3.7),
    8: (1.4, 1.8, 2.1, 2.3, 2.5, 2.6, 2.7, 2.8, 2.9, 3.0, 3.1, 3.1, 3.6, 4.0, 4.3, 4.5),
    9: (1.8, 2.3, 2.6, 2.9, 3.1, 3.2, 3.3, 3.4, 3.5, 3.6, 3.7, 3.8, 4.3, 4.7, 5.1, 5.4),
}


@pytest.mark.parametrize("servers", sorted(COLLINS_ROWS))
def test_erlang_b_matches_collins_appendix_a(servers):
    # Source: Collins, Carrier Grade Voice over IP, 2nd ed., App. A (one decimal: +-0.05).
    for target, printed in zip(COLLINS_BLOCKING, COLLINS_ROWS[servers]):
        assert erlang_b_load(servers, target) == pytest.approx(printed, abs=0.05 + 1e-9)


# "Erlang-B capacity table, voice channels needed to serve offered traffic load for 2 %
# blocking", WirelessU traffic-engineering course (Lucent Technologies), reproduced at
# garywagoner.tripod.com/traffic/ERLANG.HTML: channels -> Erlang, three decimals.
WIRELESSU_2PCT = {
    1: 0.020, 3: 0.602, 5: 1.657, 7: 2.935, 9: 4.345, 11: 5.842, 13: 7.402, 15: 9.010, 17: 10.656,
    19: 12.333, 21: 14.036, 23: 15.761, 25: 17.505, 27: 19.265, 29: 21.039, 31: 22.827, 35: 26.435,
    37: 28.254, 39: 30.081, 41: 31.915, 43: 33.758, 47: 37.462, 49: 39.323, 51: 41.189, 53: 43.060,
    57: 46.816, 59: 48.700, 65: 54.376, 67: 56.275, 71: 60.082, 73: 61.990, 75: 63.900, 77: 65.814,
    79: 67.729, 81: 69.647, 83: 71.568, 85: 73.490, 87: 75.415, 89: 77.342,
}  # fmt: skip
# Rows of the same printed table that disagree with Erlang's formula beyond rounding of the third
# decimal (printing errors: printed tables are known to carry typos).  Checked only
# loosely, so that a gross error in our formula would still show.
WIRELESSU_2PCT_MISPRINTED = {33: 24.628, 45: 35.507, 55: 44.938, 61: 50.389, 63: 52.461, 69: 58.117}


def test_erlang_b_matches_wirelessu_two_percent_table():
    # Source: WirelessU / Lucent Erlang-B capacity table at 2 % (three decimals: +-0.0005,
    # plus the 0.020 of one channel, which is 0.0204 truncated).
    for servers, printed in WIRELESSU_2PCT.items():
        assert erlang_b_load(servers, 0.02) == pytest.approx(printed, abs=0.0015), servers
    for servers, printed in WIRELESSU_2PCT_MISPRINTED.items():
        assert erlang_b_load(servers, 0.02) == pytest.approx(printed, abs=0.25), servers


def test_erlang_b_published_calculator_examples():
    # Source: Westbay Engineers, erlang.com calculator manual, "How much traffic can a trunk
    # group handle": 15 lines at 1 % blocking carry 8.108 Erlang.
    assert erlang_b_load(15, 0.01) == pytest.approx(8.108, abs=0.0005)
    # Source: Westbay Engineers forum post "Erlang B Table in Excel" (T. Howard, 2020): 13.5 Erlang
    # needs 22 circuits at 1 % blocking and 16 circuits at 10 %.
    assert erlang_b_servers(13.5, 0.01) == 22
    assert erlang_b_servers(13.5, 0.10) == 16
    # Source: Abstract Micro Systems, Erlang Library for Excel, ErlbNsrvFromBlockage: 17.445
    # (continuous) servers for 10 Erlang at 1 %, 14.300 at 5 %, 24.489 for 15.7 Erlang at 1 %;
    # whole servers are the next integers.
    assert erlang_b_servers(10.0, 0.01) == 18
    assert erlang_b_servers(10.0, 0.05) == 15
    assert erlang_b_servers(15.7, 0.01) == 25
    # Source: Wolfram Language documentation of ErlangB: 30 lines offered 25 Erlang block
    # "approximately 0.05".
    assert erlang_b(30, 25.0) == pytest.approx(0.05, abs=0.005)


# --------------------------------------------------------------------------------------------
# Erlang B: the recursion against the formula


@pytest.mark.parametrize("load", [Fraction(1, 10), Fraction(1), Fraction(7, 2), Fraction(12), Fraction(45)])
def test_erlang_b_recursion_equals_direct_formula(load):
    # Source: Erlang's loss formula B = (A^n/n!) / sum_k A^k/k!, evaluated exactly in rationals.
    for n in range(0, 41):
        exact = erlang_b_exact(n, load)
        assert erlang_b(n, float(load)) == pytest.approx(float(exact), rel=1e-13, abs=1e-300)


@pytest.mark.parametrize(("servers", "load"), [(500, 450.0), (2000, 1900.0), (2000, 2300.0), (5000, 4000.0)])
def test_erlang_b_large_groups_match_log_domain_formula(servers, load):
    # Source: same formula summed in the log domain (no overflow at thousands of servers).
    assert erlang_b(servers, load) == pytest.approx(erlang_b_logsum(servers, load), rel=1e-9)


def test_erlang_b_edge_cases():
    # Source: the definition (common practice, no source needed beyond the formula).
    assert erlang_b(0, 3.0) == 1.0
    assert erlang_b(5, 0.0) == 0.0
    assert erlang_b(1, 1.0) == pytest.approx(0.5)  # A / (1 + A)
    with pytest.raises(ValueError):
        erlang_b(-1, 1.0)
    with pytest.raises(ValueError):
        erlang_b(3, -0.5)
    with pytest.raises(ValueError):
        erlang_b_servers(3.0, 0.0)


@settings(max_examples=60, deadline=None)
@given(load=st.floats(0.01, 200.0), target=st.floats(1e-6, 0.5))
def test_erlang_b_servers_is_the_fewest(load, target):
    # Definition of the inverse: B(n) <= target < B(n - 1).
    n = erlang_b_servers(load, target)
    assert erlang_b(n, load) <= target
    assert n == 0 or erlang_b(n - 1, load) > target


@settings(max_examples=40, deadline=None)
@given(servers=st.integers(1, 300), target=st.floats(1e-6, 0.9))
def test_erlang_b_load_inverts_erlang_b(servers, target):
    assert erlang_b(servers, erlang_b_load(servers, target)) == pytest.approx(target, rel=1e-8)


# --------------------------------------------------------------------------------------------
# Kaufman-Roberts


def test_kaufman_roberts_two_class_example():
    # Example set: C = 4 units; class 1 offers 2 Erlang of 1-unit calls, class 2 offers 1 Erlang
    # of 2-unit calls (the validation case of the public repository mariakourtesi/Teletraffic-
    # models, kaufman-roberts-formulas/README.md, whose table lists q = 1, 2, 3, 3.3333, 3.1667
    # and normalised 0.08, 0.16, 0.24, 0.26667, 0.25333).  By hand with j q(j) = sum a b q(j-b):
    # q1 = 2; q2 = (2*2 + 2*1)/2 = 3; q3 = (2*3 + 2*2)/3 = 10/3; q4 = (2*10/3 + 2*3)/4 = 19/6;
    # sum = 25/2.
    q = np.array([1, 2, 3, 10 / 3, 19 / 6]) / 12.5
    assert kaufman_roberts_occupancy(4, [2.0, 1.0], [1, 2]) == pytest.approx(q, rel=1e-12)
    # Class 1 blocked in state 4: 19/75; class 2 in states 3 and 4: (10/3 + 19/6) / 12.5 = 13/25.
    assert kaufman_roberts(4, [2.0, 1.0], [1, 2]) == pytest.approx([19 / 75, 13 / 25], rel=1e-12)


@pytest.mark.parametrize(
    ("capacity", "loads", "sizes"),
    [
        (6, (1.5, 0.7), (1, 3)),
        (10, (2.0, 1.0, 0.25), (1, 2, 5)),
        (12, (4.0, 0.5), (2, 3)),  # no size 1: odd states only reachable by mixing
        (9, (0.3, 0.2, 0.1), (2, 4, 9)),  # a class as large as the link
        (5, (1.0, 1.0), (1, 7)),  # a class larger than the link
        (15, (6.0, 2.0, 1.0), (1, 2, 4)),
    ],
)
def test_kaufman_roberts_equals_product_form_enumeration(capacity, loads, sizes):
    # Source: product-form stationary distribution of the multi-rate complete-sharing link
    # (Kaufman, IEEE Trans. Commun. 29(10), 1981), enumerated state by state in exact rationals.
    exact = [float(x) for x in product_form_blocking(capacity, loads, sizes)]
    assert kaufman_roberts(capacity, loads, sizes) == pytest.approx(exact, rel=1e-12)


@pytest.mark.parametrize(("capacity", "loads"), [(1, (0.5,)), (10, (3.0, 4.0)), (64, (20.0, 30.0, 5.0)),
                                                  (3000, (1000.0, 1990.0))])  # fmt: skip
def test_kaufman_roberts_with_unit_sizes_is_erlang_b(capacity, loads):
    # Source: with every b_k = 1 the product form collapses to Erlang B on the total load.
    expected = erlang_b_logsum(capacity, sum(loads))
    assert kaufman_roberts(capacity, loads, [1] * len(loads)) == pytest.approx([expected] * len(loads), rel=1e-9)


@pytest.mark.parametrize("load", [10.0, 3000.0, 4500.0, 6000.0, 60000.0])
def test_kaufman_roberts_stays_finite_at_thousands_of_units(load):
    # Capacity 5000 with 1- and 4-unit calls: the unnormalised recursion would overflow.
    b = kaufman_roberts(5000, [load, load / 8], [1, 4])
    assert np.all(np.isfinite(b))
    assert np.all((b >= 0) & (b <= 1))
    assert b[1] >= b[0]  # a larger call needs more free units (common practice, no source)
    # Single class at the same capacity: the log-domain formula.
    assert kaufman_roberts(5000, [load], [1])[0] == pytest.approx(erlang_b_logsum(5000, load), rel=1e-9, abs=1e-300)


def test_kaufman_roberts_edge_cases():
    assert kaufman_roberts(0, [1.0, 2.0], [1, 2]) == pytest.approx([1.0, 1.0])
    assert kaufman_roberts(8, [0.0, 0.0], [1, 3]) == pytest.approx([0.0, 0.0])
    assert kaufman_roberts(2, [1.0, 1.0], [1, 3])[1] == 1.0
    assert kaufman_roberts_occupancy(3, [0.0], [1]) == pytest.approx([1, 0, 0, 0])
    with pytest.raises(ValueError):
        kaufman_roberts(5, [1.0], [0])
    with pytest.raises(ValueError):
        kaufman_roberts(5, [1.0, 2.0], [1])
    with pytest.raises(ValueError):
        kaufman_roberts(5, [-1.0], [1])


# --------------------------------------------------------------------------------------------
# Erlang fixed point


def scalar_fixed_point(capacity: int, load: float, hops: int) -> float:
    """Solve B = E(C, A (1 - B)^(hops - 1)) by bisection, E from the log-domain formula.

    On a chain of equal links carrying one stream every link has the same blocking B; the left
    side minus the right side rises strictly from negative at B = 0 to 1 at B = 1, so there is
    exactly one root.
    """

    def gap(b: float) -> float:
        thinned = load * (1.0 - b) ** (hops - 1)
        return b - (erlang_b_logsum(capacity, thinned) if thinned > 0 else 0.0)

    lo, hi = 0.0, 1.0
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        if gap(mid) < 0:
            lo = mid
        else:
            hi = mid
    return 0.5 * (lo + hi)


@pytest.mark.parametrize(("capacity", "load", "hops"), [(10, 5.0, 2), (10, 8.0, 3), (20, 15.0, 4), (5, 9.0, 5)])
def test_fixed_point_on_links_in_series(capacity, load, hops):
    # One stream over `hops` cables in series of equal capacity: every cable carries exactly the
    # same calls, so the network is one Erlang loss system: exact blocking = E(C, A).
    # Source: Kelly, "Loss networks", Ann. Appl. Probab. 1(3), 1991 -- the fixed point treats the
    # cables as blocking independently and overestimates here.
    exact = erlang_b_logsum(capacity, load)
    b_star = scalar_fixed_point(capacity, load, hops)
    result = reduced_load_fixed_point([capacity] * hops, [Stream(load, tuple(range(hops)), 1)])
    assert result.converged
    assert result.link_blocking[:, 0] == pytest.approx([b_star] * hops, abs=1e-9)
    assert result.stream_blocking[0] == pytest.approx(1 - (1 - b_star) ** hops, abs=1e-9)
    assert result.stream_blocking[0] > exact
    # And the exact value itself is what Erlang B gives for the whole chain.
    assert erlang_b(capacity, load) == pytest.approx(exact, rel=1e-12)


def test_fixed_point_damping_choices_reach_the_same_point():
    streams = [Stream(6.0, (0, 1), 1), Stream(4.0, (1, 2), 2), Stream(3.0, (0, 2), 1)]
    plain = reduced_load_fixed_point([12, 10, 8], streams, damping=0.0)
    damped = reduced_load_fixed_point([12, 10, 8], streams, damping=0.5, adaptive=False)
    adaptive = reduced_load_fixed_point([12, 10, 8], streams)
    for r in (plain, damped, adaptive):
        assert r.converged
        assert r.stream_blocking == pytest.approx(adaptive.stream_blocking, abs=1e-8)
    # The fixed point satisfies its own equations: each link's blocking is Kaufman-Roberts of
    # the loads thinned by the other links (checked here without the solver's code path).
    b = adaptive.link_blocking
    size_col = {int(s): k for k, s in enumerate(adaptive.sizes)}
    offered = np.zeros_like(b)
    for s in streams:
        for ell in s.links:
            others = np.prod([1 - b[m, size_col[s.units]] for m in s.links if m != ell])
            offered[ell, size_col[s.units]] += s.load * others
    for ell, cap in enumerate([12, 10, 8]):
        assert kaufman_roberts(cap, offered[ell], adaptive.sizes) == pytest.approx(b[ell], abs=1e-8)


def test_fixed_point_single_link_is_kaufman_roberts():
    # With one link nothing is thinned: the fixed point is Kaufman-Roberts itself.
    streams = [Stream(3.0, (0,), 1), (2.0, (0,), 3)]
    result = reduced_load_fixed_point([10], streams)
    expected = [float(x) for x in product_form_blocking(10, (3.0, 2.0), (1, 3))]
    assert result.stream_blocking == pytest.approx(expected, rel=1e-10)
    assert result.iterations <= 3


def test_fixed_point_disjoint_routes_are_independent_erlang_links():
    result = reduced_load_fixed_point([5, 7], [Stream(2.0, (0,)), Stream(4.0, (1,))])
    assert result.stream_blocking == pytest.approx([erlang_b_logsum(5, 2.0), erlang_b_logsum(7, 4.0)], rel=1e-10)


def test_fixed_point_link_without_capacity_blocks_and_thins_to_zero():
    result = reduced_load_fixed_point([0, 10], [Stream(5.0, (0, 1)), Stream(5.0, (1,))])
    assert result.stream_blocking[0] == 1.0
    # The blocked stream offers nothing to link 1, which then sees only the second stream.
    assert result.link_loads[1, 0] == pytest.approx(5.0)
    assert result.stream_blocking[1] == pytest.approx(erlang_b_logsum(10, 5.0), rel=1e-10)


@pytest.mark.filterwarnings("error")
def test_fixed_point_calls_larger_than_their_links_block_exactly_and_thin_to_zero_not_below():
    # 16-unit calls over links of 10 and 9 units: blocked with probability 1 (not 1 + rounding),
    # so the loads they leave on their other links are zero, never negative (a negative load
    # would take the log of a negative occupancy).
    streams = [Stream(1.5159, (2,), 16), Stream(0.6683, (0, 1, 2), 1), Stream(1.2755, (0, 1, 2), 16)]
    result = reduced_load_fixed_point([22, 10, 9], streams)
    assert result.converged
    assert np.all(result.link_loads >= 0.0)
    assert np.all(result.link_blocking <= 1.0)
    assert result.stream_blocking[0] == 1.0 and result.stream_blocking[2] == 1.0
    # The 1-unit stream then meets only its own load on each link: three Erlang B links
    # (capacity >= 9 at under 1 Erlang), each thinned by the other two.
    assert 0.0 < result.stream_blocking[1] < 1e-6


def test_fixed_point_units_may_differ_per_link():
    # 2 units on link 0, 1 unit on link 1: each link sees its own size class.
    result = reduced_load_fixed_point([6, 6], [Stream(1.0, (0, 1), (2, 1))])
    assert list(result.sizes) == [1, 2]
    assert result.link_loads[0, 1] > 0 and result.link_loads[0, 0] == 0
    assert result.link_loads[1, 0] > 0 and result.link_loads[1, 1] == 0


def test_fixed_point_batch_matches_one_by_one():
    streams = [Stream(0.0, (0, 1), 1), Stream(0.0, (1, 2), 2), Stream(0.0, (2,), 4)]
    loads = np.array([[1.0, 2.0, 0.5], [5.0, 3.0, 1.0], [20.0, 10.0, 3.0]])
    batch = reduced_load_fixed_point_batch([16, 16, 16], streams, loads)
    for p, row in enumerate(loads):
        one = reduced_load_fixed_point([16, 16, 16], [Stream(a, s.links, s.units) for a, s in zip(row, streams)])
        assert batch.stream_blocking[p] == pytest.approx(one.stream_blocking, abs=1e-9)


def test_fixed_point_rejects_bad_input():
    with pytest.raises(ValueError):
        reduced_load_fixed_point([5], [Stream(1.0, (1,))])
    with pytest.raises(ValueError):
        reduced_load_fixed_point([5, 5], [Stream(1.0, (0, 0))])
    with pytest.raises(ValueError):
        reduced_load_fixed_point([5], [Stream(1.0, (0,))], damping=1.0)
    with pytest.raises(ValueError):
        reduced_load_fixed_point([5, 5], [Stream(1.0, (0, 1), (1,))])
