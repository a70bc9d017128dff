"""Sweep scaling: throughput of 8 tasks with 1 and with 2 local worker processes.

Run: ``.venv/bin/python bench/bench_sweep.py`` (``--requests N`` per task).  The tasks are NSFNET
replications (7-core weakly coupled fiber, independent switching, k = 3, near 1 % blocking), run
through :func:`sdmnet.sweep.run_sweep` with ``jobs=1`` and ``jobs=2``.  Prints figures only.
Routes come from the k shortest paths without physics (the bench replaces the engine's default
route finder in this process; forked workers inherit it).
"""

from __future__ import annotations

import argparse
import os
import sys
import time
from dataclasses import replace
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))

import bench_engine  # noqa: E402

from sdmnet import engine  # noqa: E402
from sdmnet.model import RunSpec  # noqa: E402
from sdmnet.sweep import plan_tasks, run_sweep  # noqa: E402

NSFNET_LOAD = 640.0  # Erlang; about 1 % blocking with 40 channels (bench_engine.load_for_blocking)


def sweep_rate(jobs: int, requests: int, repeats: int) -> tuple[float, float]:
    """Best requests per second over ``repeats`` sweeps of 8 tasks, and that sweep's wall time."""
    topo = bench_engine.nsfnet_topology()
    arch = bench_engine.INDEPENDENT
    sc = bench_engine.bench_scenario(topo, arch, NSFNET_LOAD)
    traffic = replace(sc.traffic, loads_erlang=(NSFNET_LOAD, NSFNET_LOAD * 1.05))
    sc = replace(sc, traffic=traffic, run=RunSpec(requests, requests // 10, 4, 3))
    tasks = plan_tasks(sc)
    assert len(tasks) == 8
    best, wall = 0.0, 0.0
    for _ in range(repeats):
        started = time.perf_counter()
        records = run_sweep(sc, None, jobs=jobs)
        elapsed = time.perf_counter() - started
        simulated = len(records) * (requests + requests // 10)
        if simulated / elapsed > best:
            best, wall = simulated / elapsed, elapsed
    return best, wall


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--requests", type=int, default=150_000, help="measured requests per task")
    parser.add_argument("--repeats", type=int, default=2)
    args = parser.parse_args(argv)
    engine._default_route_finder = bench_engine.shortest_routes
    print(f"cores {os.cpu_count()}, load average {os.getloadavg()[0]:.2f} (other work on the machine skews this)")
    one, wall_one = sweep_rate(1, args.requests, args.repeats)
    two, wall_two = sweep_rate(2, args.requests, args.repeats)
    print(f"8 tasks x {args.requests:,} requests: jobs=1 {one:,.0f} req/s ({wall_one:.1f} s), "
          f"jobs=2 {two:,.0f} req/s ({wall_two:.1f} s), speed-up {two / one:.2f}x")
    return 0


if __name__ == "__main__":
    sys.exit(main())
