"""Warm-up chosen by the run: MSER-5 (K. P. White Jr., Simulation 69(6), 1997, from memory;
MSER-5 after Spratt, 1998) on the demands in flight.

The rule is checked against its own definition computed by brute force, on series whose
biased start is known, and in the engine against Erlang B: a run started empty and measured
at once blocks too little; the warm-up the run chooses removes that bias.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from builders import fiber_type, scenario, shortest_routes, single_cable
from test_engine import erlang_b

from sdmnet.inputs.model import Architecture
from sdmnet.sim.engine import prepare, simulate_replication
from sdmnet.sim.stats import ratio_interval
from sdmnet.sim.warmup import AutoWarmUp, mser_truncation


def _mser_by_definition(series: list[float], batch: int = 5) -> int:
    """d minimising sum_{j > d} (z_j - mean z_{d+1..m})^2 / (m - d)^2 over the first half."""
    m = len(series) // batch
    z = [sum(series[j * batch : (j + 1) * batch]) / batch for j in range(m)]
    best, best_d = math.inf, 0
    for d in range(m // 2 + 1):
        kept = z[d:]
        mean = sum(kept) / len(kept)
        value = sum((x - mean) ** 2 for x in kept) / len(kept) ** 2
        if value < best:
            best, best_d = value, d
    return batch * best_d


@pytest.mark.parametrize("seed", range(5))
def test_the_rule_is_its_definition(seed):
    rng = np.random.default_rng(seed)
    series = (np.minimum(np.arange(400) / 60.0, 1.0) * 50 + rng.normal(0, 4, 400)).tolist()
    assert mser_truncation(series)[0] == _mser_by_definition(series)


def test_a_biased_start_is_cut_and_a_steady_series_is_kept():
    rng = np.random.default_rng(1)
    # An exponential approach to 100 with time constant 40 observations, then noise only.
    start = 100 * (1 - np.exp(-np.arange(1000) / 40.0)) + rng.normal(0, 3, 1000)
    deleted, settled = mser_truncation(start.tolist())
    assert settled and 80 <= deleted <= 300  # past three time constants, far from the half
    deleted, settled = mser_truncation(rng.normal(100, 3, 1000).tolist())
    assert settled and deleted < 200
    # Still climbing at the end: the minimum sits on the edge of the half searched.
    deleted, settled = mser_truncation(np.linspace(0, 100, 1000).tolist())
    assert not settled and deleted == 500


def test_a_series_that_never_settles_ends_at_the_cap():
    rule = AutoWarmUp(load_erlang=10.0)
    in_flight = 0
    while not rule.observe(in_flight):
        in_flight += 1  # a steady climb
    assert not rule.settled
    assert rule.arrivals >= rule.cap


def _erlang_records(warmup, replications=200, requests=200):
    # 40 single-lane servers at 30 Erlang; each replication measures about 7 holding times.
    arch = Architecture("ind", "independent")
    sc = scenario(single_cable(fiber_type(cores=1, channels=40)), [arch], loads=(30.0,))
    setup = prepare(sc, arch, shortest_routes)
    return [simulate_replication(setup, 30.0, 3, r, requests, warmup) for r in range(replications)]


def test_the_chosen_warm_up_removes_the_empty_start_bias():
    exact = erlang_b(40, 30.0)  # 0.0144, the recursion of test_engine (Iversen, ch. 4)
    cold = _erlang_records(0)
    iv = ratio_interval([r.blocked for r in cold], [r.requests for r in cold], 0.999)
    assert iv.high < exact  # an empty start blocks too little
    warm = _erlang_records("auto")
    iv = ratio_interval([r.blocked for r in warm], [r.requests for r in warm], 0.999)
    assert iv.low <= exact <= iv.high, (iv, exact)
    assert all(r.warmup_settled for r in warm)
    assert all(r.warmup >= 100 for r in warm)  # at least the first look: 100 samples


def test_a_chosen_warm_up_gives_the_records_of_that_fixed_warm_up():
    # Measuring starts where the rule stopped: the same run as a fixed warm-up of that length.
    arch = Architecture("ind", "independent")
    sc = scenario(single_cable(fiber_type(cores=4, channels=8)), [arch], loads=(20.0,),
                  sizes=((100.0, 0.6), (300.0, 0.4)))  # fmt: skip
    setup = prepare(sc, arch, shortest_routes)
    auto = simulate_replication(setup, 20.0, 11, 2, 5000, "auto")
    fixed = simulate_replication(setup, 20.0, 11, 2, 5000, auto.warmup)
    assert auto.warmup % AutoWarmUp(20.0).step == 0 and auto.warmup > 0
    assert auto.warmup_settled is True and fixed.warmup_settled is None
    differ = [f for f in auto.__dataclass_fields__ if f != "wall_time_s" and getattr(auto, f) != getattr(fixed, f)]
    assert differ == ["warmup_settled"]
