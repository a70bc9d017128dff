"""Wall time of ``plan`` on a generated 30-site region, with candidates simulated and prepare calls.

Run with ``.venv/bin/python bench/bench_plan.py [--sites N] [--load E] [--jobs J]``.

The region is ``bench_scale.py``'s generated metro region (one generator for both benchmarks,
invented, seed fixed): ``N`` datacenter sites joined by a ring plus a cable from every site to its
two nearest neighbours; one pair of weakly coupled 7-core fiber with 64 channels per cable;
uniform traffic of 1, 2 and 4-lane demands (100/200/400 Gb/s at 100 Gb/s a lane); k = 3 paths.
Two architectures are planned: per core (independent, lane change) and joint.

Printed per architecture: candidates simulated, replications simulated over all of them (work
that machine load does not change), planned fiber pairs, blocking with its interval,
and for the whole run: wall time and how many times the engine's ``prepare`` (routes and
physics) ran.  No assertions: the figures are for reading.  The machine may be shared: wall
times move with its load (CPU time of the process, printed too, moves less; run with
``--jobs 1`` so that it counts all the work); the candidate and prepare counts do not.
"""

from __future__ import annotations

import argparse
import importlib
import math
import pkgutil
import sys
import tempfile
import time

from bench_scale import DEMANDS, LANE_GBPS, metro_region

import sdmnet
import sdmnet.sim.engine as engine
from sdmnet import api
from sdmnet.inputs.model import Architecture, PlanSpec, RunSpec, Scenario, TrafficSpec, TransceiverSpec

ARCHITECTURES = (
    Architecture("per-core", "independent", lane_change=True),
    Architecture("joint", "joint"),
)


def region_scenario(sites: int, load: float, requests: int, replications: int) -> Scenario:
    """The benchmark scenario: the region, its traffic and a 1 % target."""
    return Scenario(
        name="bench-plan",
        topology=metro_region(sites),
        seed=2024,
        traffic=TrafficSpec("uniform", (load,), 1.0, DEMANDS),
        # Long-haul figures: amplified spans make the loss of a path no limit here.
        transceiver=TransceiverSpec(lane_gbps=LANE_GBPS, reach_km=2500.0, power_budget_db=1000.0),
        run=RunSpec(requests, requests // 10, replications, 3),
        architectures=ARCHITECTURES,
        plan=PlanSpec(target_blocking=0.01),
    )


class PrepareCounter:
    """Counts calls of the engine's ``prepare`` wherever a module of the package imported it."""

    def __init__(self) -> None:
        self.calls = 0
        original = engine.prepare

        def counted(*args, **kwargs):
            self.calls += 1
            return original(*args, **kwargs)

        for info in pkgutil.walk_packages(sdmnet.__path__, "sdmnet."):
            if info.name.endswith("__main__"):
                continue
            try:
                importlib.import_module(info.name)
            except ImportError:
                continue
        for module in list(sys.modules.values()):
            if getattr(module, "__name__", "").startswith("sdmnet") and getattr(module, "prepare", None) is original:
                module.prepare = counted


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sites", type=int, default=30)
    parser.add_argument("--load", type=float, default=1500.0)
    parser.add_argument("--requests", type=int, default=20_000)
    parser.add_argument("--replications", type=int, default=5)
    parser.add_argument("--jobs", type=int, default=1)
    args = parser.parse_args(argv)
    scenario = region_scenario(args.sites, args.load, args.requests, args.replications)
    topo = scenario.topology
    print(f"region: {len(topo.sites)} sites, {len(topo.cables)} cables, "
          f"{math.comb(len(topo.sites), 2)} pairs, load {args.load:g} Erlang, "
          f"{args.replications} x {args.requests} requests per candidate (first batch), jobs {args.jobs}")  # fmt: skip
    counter = PrepareCounter()
    with tempfile.TemporaryDirectory() as out:
        started, cpu_started = time.perf_counter(), time.process_time()
        result = api.plan(scenario, out, jobs=args.jobs, progress=False)
        wall, cpu = time.perf_counter() - started, time.process_time() - cpu_started
    for plan in result.plans:
        iv = plan.evaluation.point.blocking
        replications = sum(ev.point.replications for ev in plan.history)
        print(f"{plan.architecture.name:<10} candidates {plan.candidates:>3}  replications {replications:>4}  "
              f"fiber pairs {sum(plan.fiber_pairs):>4}  blocking {iv.mean:.4f} [{iv.low:.4f}, {iv.high:.4f}]  "
              f"met {plan.met}")  # fmt: skip
    print(f"wall time {wall:.1f} s, CPU time of this process {cpu:.1f} s, "
          f"prepare calls {counter.calls} ({len(scenario.architectures)} architectures)")  # fmt: skip
    return 0


if __name__ == "__main__":
    sys.exit(main())
