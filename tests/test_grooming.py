"""The grooming estimate (unit switching, ``share = true``) against exact results.

Method: every reference is computed here, in the test.  Small continuous-time Markov chains are
solved exactly (every state enumerated, pi Q = 0 with sum pi = 1; blocking by Poisson arrivals
seeing time averages); Kaufman-Roberts by its recursion (Kaufman, IEEE Trans. Commun. 29(10),
1981).  Two chains:

* *tight packing*: a pair holding U lanes keeps ceil(U / g) units lit.  On one link the estimate
  is exact for it (truncation of a reversible process), so it must agree to solver precision.
* *the engine's rule*: a pair's lit units in the order they were lit, each demand in the oldest
  unit with a spare lane, a unit dark only when empty.  The estimate approximates it; the bound
  is the error measured here (docs/estimate.md), so a change that makes it worse fails.
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from markov import stationary

from sdmnet.analysis import grooming
from sdmnet.analysis.grooming import GroomedGroup, groomed_fixed_point
from sdmnet.analysis.reduced_load import RouteOption


def _kaufman_roberts(capacity: int, loads: list[float], sizes: list[int]) -> np.ndarray:
    """Per-class blocking by the recursion j q(j) = sum_k a_k b_k q(j - b_k), written out here."""
    q = np.zeros(capacity + 1)
    q[0] = 1.0
    for j in range(1, capacity + 1):
        q[j] = sum(a * b * q[j - b] for a, b in zip(loads, sizes) if j >= b) / j
    q /= q.sum()
    return np.array([q[capacity - b + 1 :].sum() for b in sizes])


def _one_link(pairs: int, lanes_per_unit: int) -> list[GroomedGroup]:
    """``pairs`` groups on link 0, each its pair's only route (one hop: no continuity factor)."""
    return [GroomedGroup(n, RouteOption((0,), (1,), 4, (1,)), lanes_per_unit) for n in range(pairs)]


def test_one_pair_on_one_link_is_kaufman_roberts_over_its_lanes():
    # One pair alone: it may fill all C g lanes, so tight packing is Kaufman-Roberts over lanes.
    capacity, g, lanes, loads = 4, 3, [1, 2, 4], [2.0, 1.5, 0.7]
    solved = groomed_fixed_point([capacity], _one_link(1, g), lanes, np.array([[loads]]))
    expected = _kaufman_roberts(capacity * g, loads, lanes)
    assert solved.converged
    np.testing.assert_allclose(solved.pair_blocking[0, 0], expected, rtol=1e-9)


def _tight_chain(capacity: int, g: int, lanes: list[int], loads: np.ndarray) -> np.ndarray:
    """Exact per-pair, per-size blocking of tight packing on one link (state: demands in
    progress per pair and size; admissible when the pairs' ceil(U / g) fit in ``capacity``)."""
    n_pairs, n_sizes = loads.shape
    top = capacity * g

    def units(state) -> int:
        return sum(-(-sum(c * s for c, s in zip(state[n], lanes)) // g) for n in range(n_pairs))

    per_pair = [c for c in itertools.product(*(range(top // s + 1) for s in lanes))]
    states = [st for st in itertools.product(per_pair, repeat=n_pairs) if units(st) <= capacity]

    def moves(state):
        for n in range(n_pairs):
            for k in range(n_sizes):
                if state[n][k]:
                    down = list(map(list, state))
                    down[n][k] -= 1
                    yield tuple(map(tuple, down)), float(state[n][k])
                up = list(map(list, state))
                up[n][k] += 1
                up = tuple(map(tuple, up))
                if units(up) <= capacity:
                    yield up, float(loads[n, k])

    pi = stationary(states, moves)
    blocking = np.zeros((n_pairs, n_sizes))
    for st, p in zip(states, pi):
        for n in range(n_pairs):
            for k in range(n_sizes):
                up = list(map(list, st))
                up[n][k] += 1
                if units(tuple(map(tuple, up))) > capacity:
                    blocking[n, k] += p
    return blocking


def test_several_pairs_on_one_link_match_the_exact_tight_packing_chain():
    # Three pairs share 3 units of 2 lanes; demands of 1 and 2 lanes.  The truncated product
    # form is exact for this chain, whatever the loads.
    capacity, g, lanes = 3, 2, [1, 2]
    loads = np.array([[1.2, 0.4], [0.5, 0.3], [0.8, 0.0]])
    exact = _tight_chain(capacity, g, lanes, loads)
    solved = groomed_fixed_point([capacity], _one_link(3, g), lanes, loads[None])
    mask = loads > 0
    np.testing.assert_allclose(solved.pair_blocking[0][mask], exact[mask], rtol=1e-8)


def _engine_chain(capacity: int, g: int, loads: list[float]) -> np.ndarray:
    """Exact per-pair blocking of the engine's grooming of one-lane demands on one link.

    State: per pair, the fills of its lit units in the order they were lit.  An arrival goes
    into the oldest unit with a spare lane, else lights a unit if the link has one free, else
    is blocked; each busy lane leaves at rate 1; a unit left empty goes dark.
    """
    n_pairs = len(loads)

    def fills(total_units: int):
        for count in range(total_units + 1):
            yield from itertools.product(range(1, g + 1), repeat=count)

    states = [st for st in itertools.product(list(fills(capacity)), repeat=n_pairs)
              if sum(len(u) for u in st) <= capacity]  # fmt: skip

    def arrive(state, n):
        units = list(state[n])
        for i, f in enumerate(units):
            if f < g:
                units[i] = f + 1
                break
        else:
            if sum(len(u) for u in state) >= capacity:
                return None
            units.append(1)
        return tuple(tuple(units) if m == n else u for m, u in enumerate(state))

    def moves(state):
        for n in range(n_pairs):
            nxt = arrive(state, n)
            if nxt is not None:
                yield nxt, loads[n]
            for i, f in enumerate(state[n]):
                units = list(state[n])
                if f == 1:
                    del units[i]
                else:
                    units[i] = f - 1
                yield tuple(tuple(units) if m == n else u for m, u in enumerate(state)), float(f)

    pi = stationary(states, moves)
    return np.array([sum(p for st, p in zip(states, pi) if arrive(st, n) is None) for n in range(n_pairs)])


@pytest.mark.parametrize(
    ("loads", "low", "high"),
    [
        # Measured (exact chain, estimate): (0.00491, 0.00262), (0.0377, 0.0256), (0.104, 0.0832),
        # (0.262, 0.241); with unequal loads (3, 1): (0.00347, 0.00265) and (0.00655, 0.00255).
        ([2.0, 2.0], 0.50, 0.58),
        ([3.0, 3.0], 0.65, 0.72),
        ([4.0, 4.0], 0.77, 0.83),
        ([6.0, 6.0], 0.90, 0.95),
        ([3.0, 1.0], 0.36, 0.80),
    ],
)
def test_engine_rule_on_one_link_bounds_the_tight_packing_error(loads, low, high):
    # Two pairs, 4 units of 3 lanes, one-lane demands.  The engine keeps a unit lit until it is
    # empty, so a pair may hold more units than its lanes need and the other pair pays for it:
    # the estimate (tight packing) is low, by about half at 0.5 % blocking and by under a tenth
    # at 25 %.  The bounds are those measured ratios estimate / exact, a little widened.
    _assert_engine_rule_ratio(4, 3, loads, low, high)


def _assert_engine_rule_ratio(capacity: int, g: int, loads: list[float], low: float, high: float) -> None:
    exact = _engine_chain(capacity, g, loads)
    solved = groomed_fixed_point([capacity], _one_link(len(loads), g), [1], np.array(loads)[None, :, None])
    ratio = solved.pair_blocking[0, :, 0] / exact
    assert np.all(ratio >= low) and np.all(ratio <= high)


@pytest.mark.parametrize(
    ("capacity", "g", "loads", "low", "high"),
    [
        # Measured (exact chain, estimate): 6 units of 2 lanes, two pairs: (0.000261, 0.000141),
        # (0.0238, 0.0171), (0.159, 0.140); (3, 1) Erlang: (0.00166, 0.00128) and (0.00265, 0.00128).
        (6, 2, [1.5, 1.5], 0.51, 0.57),
        (6, 2, [3.0, 3.0], 0.69, 0.75),
        (6, 2, [5.0, 5.0], 0.86, 0.91),
        (6, 2, [3.0, 1.0], 0.46, 0.80),
        # 3 units of 4 lanes, two pairs: (0.00231, 0.000989), (0.0570, 0.0383), (0.208, 0.183).
        (3, 4, [1.5, 1.5], 0.40, 0.46),
        (3, 4, [3.0, 3.0], 0.64, 0.70),
        (3, 4, [5.0, 5.0], 0.86, 0.91),
        # 4 units of 2 lanes, three pairs: (0.0350, 0.0258), (0.207, 0.183).
        (4, 2, [1.0, 1.0, 1.0], 0.71, 0.77),
        (4, 2, [2.0, 2.0, 2.0], 0.86, 0.91),
    ],
)
def test_engine_rule_with_other_unit_sizes_bounds_the_tight_packing_error(capacity, g, loads, low, high):
    # The same comparison with units of 2 and 4 lanes and three pairs: the estimate is low by
    # 45-60 % at 0.03-0.3 % blocking, by a quarter to a third at 2-6 % and by about a tenth at
    # 16-21 %, the larger the unit the worse at light load.
    _assert_engine_rule_ratio(capacity, g, loads, low, high)


def test_a_two_hop_pair_with_local_traffic_converges_between_the_bounds():
    # A through pair over links 0 and 1 and a local pair on each: blocking lies between the
    # worst single link (the local pairs' own) and the two links blocking independently.
    g = 2
    through = RouteOption((0, 1), (1, 1), 4, (1, 1))
    groups = [
        GroomedGroup(0, through, g),
        GroomedGroup(1, RouteOption((0,), (1,), 4, (1,)), g),
        GroomedGroup(2, RouteOption((1,), (1,), 4, (1,)), g),
    ]
    loads = np.array([[[1.5], [2.0], [2.0]]])
    solved = groomed_fixed_point([4, 4], groups, [1], loads)
    b = solved.pair_blocking[0, :, 0]
    assert solved.converged
    assert 0 < b[1] < b[0] < 1 and b[1] == pytest.approx(b[2])


def test_load_points_solved_together_or_apart_agree(monkeypatch):
    # Each point iterates with its own damping and stopping test: solving three points at once,
    # one at a time (batches of one) or each alone gives the same blocking (to rounding).
    g = 2
    groups = [
        GroomedGroup(0, RouteOption((0, 1), (1, 1), 4, (1, 1)), g),
        GroomedGroup(0, RouteOption((2,), (1,), 4, (1,)), g),  # the pair's second route
        GroomedGroup(1, RouteOption((0,), (1,), 4, (1,)), g),
        GroomedGroup(2, RouteOption((1,), (1,), 4, (1,)), g),
    ]
    loads = np.array([[[0.5, 0.2], [1.0, 0.3], [1.0, 0.1]], [[3.0, 1.0], [4.0, 1.0], [2.0, 2.0]],
                      [[8.0, 2.0], [6.0, 3.0], [9.0, 1.0]]])  # fmt: skip
    together = groomed_fixed_point([4, 4, 3], groups, [1, 2], loads)
    alone = [groomed_fixed_point([4, 4, 3], groups, [1, 2], loads[p : p + 1]) for p in range(3)]
    monkeypatch.setattr(grooming, "_BATCH_VALUES", 1)
    batched = groomed_fixed_point([4, 4, 3], groups, [1, 2], loads)
    assert together.converged and batched.converged
    assert together.iterations == max(a.iterations for a in alone) == batched.iterations
    for p, a in enumerate(alone):
        np.testing.assert_allclose(together.pair_blocking[p], a.pair_blocking[0], rtol=0, atol=1e-12)
        np.testing.assert_allclose(together.lit_units[p], a.lit_units[0], rtol=0, atol=1e-12)
    np.testing.assert_allclose(batched.pair_blocking, together.pair_blocking, rtol=0, atol=1e-12)
    assert np.all((together.pair_blocking > 0) & (together.pair_blocking < 1))
    assert together.pair_blocking[2, 0, 1] > together.pair_blocking[0, 0, 1]  # more load, more blocking
