"""Installed transceivers: per-site overflow quantiles of the modules and lanes in use.

The single-link check uses the Erlang loss distribution: on C servers offered A Erlang, the
number busy is Poisson truncated at C, P(j) = (A^j / j!) / sum_{i<=C} A^i / i! (A. K. Erlang,
1917; any teletraffic handbook, e.g. V. B. Iversen, *Teletraffic Engineering and Network
Planning*, ITU-D/DTU, the chapter on Erlang's B-formula).  It is computed here, not taken from
sdmnet.
"""

from __future__ import annotations

import math

import pytest
from builders import fiber_type, scenario, shortest_routes, single_cable

from sdmnet.equipment.installed import installed_count, installed_transceivers
from sdmnet.inputs.model import Architecture
from sdmnet.sim.engine import prepare, simulate_replication
from sdmnet.sim.stats import summarize_point


def test_installed_count_is_the_smallest_count_whose_tail_is_within_the_overflow():
    # Hand-built: 1000 observations; 5 above 7, 15 above 6.  At 1 % overflow, 7 (5 <= 10 above
    # it) and not 6 (15 > 10); at exactly 0.5 %, 7 still qualifies (5 <= 5); at 0.4 %, 8 does.
    histogram = {0: 500, 3: 300, 5: 150, 6: 35, 7: 10, 8: 5}
    assert installed_count(histogram, 0.01) == 7
    assert installed_count(histogram, 0.005) == 7
    assert installed_count(histogram, 0.004) == 8
    assert installed_count(histogram, 0.6) == 0
    assert installed_count({}, 0.001) == 0
    with pytest.raises(ValueError):
        installed_count(histogram, 0.0)


def erlang_loss_distribution(servers: int, load: float) -> list[float]:
    weights = [load**j / math.factorial(j) for j in range(servers + 1)]
    total = sum(weights)
    return [w / total for w in weights]


def overflow_quantile(probabilities: list[float], overflow: float) -> int:
    return next(n for n in range(len(probabilities)) if sum(probabilities[n + 1 :]) <= overflow)


# Overflow targets placed between two tail probabilities of the exact distribution (C = 30,
# A = 15: P(X > 22) = 0.0326, P(X > 23) = 0.0193, P(X > 25) = 0.0060, P(X > 26) = 0.0031), so that
# sampling noise cannot move the answer by one.
@pytest.mark.parametrize("overflow", [0.025, 0.0045])
def test_installed_lanes_on_one_cable_are_the_overflow_quantile_of_the_erlang_loss_distribution(overflow):
    servers, load = 30, 15.0
    fiber = fiber_type(cores=1, channels=servers)
    arch = Architecture("ind", "independent")
    sc = scenario(single_cable(fiber), [arch], loads=(load,), sizes=((100.0, 1.0),), lane_gbps=100.0)
    setup = prepare(sc, arch, shortest_routes)
    records = [simulate_replication(setup, load, sc.seed, r, 50_000, 2_000) for r in range(8)]
    installed = installed_transceivers(summarize_point(records), overflow)
    exact = erlang_loss_distribution(servers, load)
    expected = overflow_quantile(exact, overflow)
    # The margins that make the check meaningful: the target sits well inside a step of the tail.
    assert sum(exact[expected:]) > 1.25 * overflow > 1.25**2 * sum(exact[expected + 1 :])
    # Every demand is one single-lane module at each end: both sites see the busy servers.
    assert installed.site_lanes == (expected, expected)
    assert installed.site_modules == (expected, expected)
    assert installed.site_mimo_lanes == (0, 0)
    assert installed.lanes == 2 * expected
