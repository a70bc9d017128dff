"""The memory estimate of a run against measured peaks, what the OS says is available, and the
refusal.

Measured peaks are tracemalloc's (the bytes Python allocated during the call, numpy's arrays
included): the estimate must not fall below them, nor lie far above (it may err high, not low).
"""

from __future__ import annotations

import math
import subprocess
import sys
import tracemalloc
from dataclasses import replace

import pytest
from builders import chain, fiber_type, scenario, shortest_routes, single_cable

from sdmnet.analysis.estimate import estimate
from sdmnet.errors import InputError
from sdmnet.inputs.model import Architecture, RunSpec
from sdmnet.sim.allocation import UnitState
from sdmnet.sim.engine import prepare, simulate_replication
from sdmnet.sim.memory import available_memory, estimate_memory, format_bytes, parse_size, require_memory

INDEPENDENT = Architecture("ind", "independent")


def _peak(call) -> int:
    tracemalloc.start()
    try:
        call()
        return tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()


def _part(estimate_, where: str) -> float:
    return sum(p.nbytes for p in estimate_.parts if p.where == where)


def test_occupancy_of_a_cable_of_ten_thousand_pairs_is_a_bit_per_unit():
    # 10,000 fiber pairs x 16 core groups x 64 channels: 10.24 million units, 1.28 MB of bits.
    fiber = fiber_type(cores=16, channels=64)
    sc = scenario(single_cable(fiber, fiber_pairs=10_000), [INDEPENDENT], loads=(1.0,))
    predicted = _part(estimate_memory(sc), "topology")
    # Building the state allocates next to nothing (no table over fiber pairs x core groups:
    # the one removed took 1.72 GB here, measured with tracemalloc) ...
    built = _peak(lambda: UnitState([10_000], [16], [64], lane_change=True))
    assert built < 100_000
    # ... and once every channel's integer is its own object, they take what the estimate says.
    one_row = sys.getsizeof((1 << (10_000 * 16)) - 1)
    assert 64 * one_row <= predicted <= 1.2 * 64 * one_row + 10_000


def test_demands_in_flight_and_the_analytic_estimate_are_bounded_by_their_parts():
    fiber = fiber_type(cores=7, channels=40)
    sc = scenario(chain(fiber, 3, fiber_pairs=20), [INDEPENDENT], loads=(2000.0,),
                  sizes=((100.0, 0.5), (400.0, 0.5)), lane_gbps=100.0)
    sc = replace(sc, run=RunSpec(requests=6000, warmup=3000, replications=1, k_paths=1))
    predicted = estimate_memory(sc)
    setup = prepare(sc, INDEPENDENT, shortest_routes)
    run = _peak(lambda: simulate_replication(setup, 2000.0, 1, 0, 6000, 3000))
    # A replication holds the occupancy, the demands in flight and the routes.
    assert run <= predicted.total <= 4 * run, (run, predicted.total)

    analytic = _peak(lambda: estimate(sc, route_finder=shortest_routes))
    beside = predicted.optional.nbytes
    assert analytic <= beside <= 4 * analytic, (analytic, beside)


def test_more_workers_and_plans_need_more():
    fiber = fiber_type(cores=7, channels=40)
    sc = scenario(chain(fiber, 3, fiber_pairs=2), [INDEPENDENT], loads=(50.0,))
    one, two = estimate_memory(sc, jobs=1), estimate_memory(sc, jobs=2)
    assert _part(two, "topology") == pytest.approx(2 * _part(one, "topology"))
    # A plan searches up to plan.max_fiber_pairs (64 by default) on every cable.
    planned = estimate_memory(replace(sc, plan=replace_plan()), "plan")
    assert _part(planned, "topology") > 10 * _part(one, "topology")


def replace_plan():
    from sdmnet.inputs.model import PlanSpec

    return PlanSpec(max_fiber_pairs=64)


def test_refusal_names_the_largest_part_and_the_way_out():
    fiber = fiber_type(cores=64, channels=512)
    sc = scenario(single_cable(fiber, fiber_pairs=10_000), [INDEPENDENT], loads=(1.0,))
    with pytest.raises(InputError) as caught:
        require_memory(sc, "simulate", limit=1e6)
    err = caught.value
    assert err.where == "topology"
    assert "more than the --memory-limit given (1 MB)" in err.what
    assert "the occupancy under 'ind', a bit per fiber pair, core group and channel" in err.what
    assert "--memory-limit SIZE (or none)" in err.what
    # No limit: anything goes.
    found, room = require_memory(sc, "simulate", limit=math.inf)
    assert room == math.inf and found.total > 1e6


def test_a_simulation_runs_without_the_estimate_when_only_the_estimate_does_not_fit():
    # 10,000 pairs x 7 cores x 96 channels: 6.7 million units per cable; the engine needs its
    # bits (a few MB), Kaufman-Roberts six float arrays of that length per cable and load.
    fiber = fiber_type(cores=7, channels=96)
    sc = scenario(chain(fiber, 4, fiber_pairs=10_000), [INDEPENDENT], loads=(10.0, 20.0))
    found, _room = require_memory(sc, "simulate", limit=200e6)
    assert found.total < 200e6 < found.optional.nbytes


def test_available_memory_is_what_linux_reports_and_follows_ulimit():
    free = available_memory()
    assert free is not None and free > 0
    with open("/proc/meminfo") as fh:
        total = int(next(line for line in fh if line.startswith("MemTotal:")).split()[1]) * 1024
    assert free <= total
    # Under an address-space limit of 3 GB the room left is below 3 GB.
    code = (
        "import resource; resource.setrlimit(resource.RLIMIT_AS, (3 * 2**30, resource.RLIM_INFINITY)); "
        "from sdmnet.sim.memory import available_memory; print(available_memory())"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert 0 < int(out) < 3 * 2**30


@pytest.mark.parametrize(
    ("text", "expected"),
    [("8G", 8 * 2**30), ("500M", 500 * 2**20), ("2.5g", 2.5 * 2**30), ("1000", 1000.0), ("64KiB", 64 * 1024),
     ("none", math.inf), ("OFF", math.inf)],
)
def test_sizes_are_read_with_binary_suffixes(text, expected):
    assert parse_size(text) == expected


@pytest.mark.parametrize("text", ["", "lots", "-1G", "1X", "G"])
def test_a_size_that_is_none_is_refused(text):
    with pytest.raises(ValueError, match="not a size"):
        parse_size(text)


def test_bytes_read_in_the_unit_that_fits():
    assert [format_bytes(x) for x in (512, 2e5, 3.2e9, 1.51e15)] == ["0.512 kB", "0.2 MB", "3.2 GB", "1.51e+03 TB"]


def test_automatic_warm_up_and_precision_are_counted():
    fiber = fiber_type(cores=7, channels=40)
    sc = scenario(chain(fiber, 3, fiber_pairs=2), [INDEPENDENT], loads=(50.0,))
    fixed = estimate_memory(sc)
    auto = estimate_memory(replace(sc, run=replace(sc.run, warmup="auto")))
    assert auto.total > 0
    # With precision a point may get up to max_replications: their records are counted.
    more = estimate_memory(replace(sc, run=replace(sc.run, precision=0.05, max_replications=40)))
    assert _part(more, "run.replications") == pytest.approx(_part(fixed, "run.replications") * 40 / sc.run.replications)
