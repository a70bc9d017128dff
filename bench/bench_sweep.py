"""Sweep scaling: throughput of 8 tasks with 1 and with 2 local worker processes, and on a Dask
cluster of 2 local worker processes.

Run: ``.venv/bin/python bench/bench_sweep.py`` (``--requests N`` per task, ``--repeats R``, ``--dask``).  The tasks
are NSFNET replications (7-core weakly coupled fiber, independent switching, k = 3, near 1 %
blocking), run through :func:`sdmnet.sim.sweep.run_sweep` with ``jobs=1``, ``jobs=2`` and, with
``--dask``, on a ``distributed.LocalCluster`` of 2 single-threaded worker processes (started once,
outside the timing; each sweep connects, broadcasts the prepared setups and runs its tasks).
Prints figures only.  Routes come from the k shortest paths without physics (the bench replaces
the engine's default route finder in this process; the setups are prepared here and sent).
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

from sdmnet.inputs.model import RunSpec, Scenario  # noqa: E402
from sdmnet.sim import engine  # noqa: E402
from sdmnet.sim.sweep import plan_tasks, run_sweep  # noqa: E402

NSFNET_LOAD = 640.0  # Erlang; about 1 % blocking with 40 channels (bench_engine.load_for_blocking)


def sweep_scenario(requests: int) -> Scenario:
    """8 tasks: 2 loads near 1 % blocking x 4 replications of NSFNET, independent switching."""
    topo = bench_engine.nsfnet_topology()
    arch = bench_engine.INDEPENDENT
    sc = bench_engine.bench_scenario(topo, arch, NSFNET_LOAD)
    traffic = replace(sc.traffic, loads_erlang=(NSFNET_LOAD, NSFNET_LOAD * 1.05))
    sc = replace(sc, traffic=traffic, run=RunSpec(requests, requests // 10, 4, 3))
    assert len(plan_tasks(sc)) == 8
    return sc


def sweep_seconds(sc: Scenario, jobs: int, scheduler: str | None = None) -> float:
    """Wall time of one sweep of ``sc`` with ``jobs`` local workers (or on ``scheduler``)."""
    started = time.perf_counter()
    run_sweep(sc, None, jobs=jobs, scheduler=scheduler)
    return time.perf_counter() - started


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--requests", type=int, default=150_000, help="measured requests per task")
    parser.add_argument("--repeats", type=int, default=3, help="sweeps per worker count, interleaved")
    parser.add_argument("--dask", action="store_true", help="also on a LocalCluster of 2 worker processes")
    args = parser.parse_args(argv)
    engine._default_route_finder = bench_engine.shortest_routes
    print(f"cores {os.cpu_count()}, load average {os.getloadavg()[0]:.2f} (other work on the machine skews this)")
    sc = sweep_scenario(args.requests)
    simulated = 8 * (args.requests + args.requests // 10)
    walls: dict[int | str, list[float]] = {1: [], 2: [], "dask": []}
    cluster = None
    if args.dask:
        from distributed import LocalCluster

        cluster = LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None)
    try:
        # Interleaved, so that every way of running meets the same spells of noise from other work.
        for _ in range(args.repeats):
            for jobs in (1, 2):
                walls[jobs].append(sweep_seconds(sc, jobs))
            if cluster is not None:
                walls["dask"].append(sweep_seconds(sc, 1, cluster.scheduler_address))
    finally:
        if cluster is not None:
            cluster.close()
    one, two = min(walls[1]), min(walls[2])
    pairs = ", ".join(f"{a / b:.2f}" for a, b in zip(walls[1], walls[2]))
    print(f"8 tasks x {args.requests:,} requests, best of {args.repeats}: jobs=1 {simulated / one:,.0f} req/s "
          f"({one:.1f} s), jobs=2 {simulated / two:,.0f} req/s ({two:.1f} s), speed-up {one / two:.2f}x "
          f"(per interleaved pair: {pairs})")
    if walls["dask"]:
        dask = min(walls["dask"])
        pairs = ", ".join(f"{a / b:.2f}" for a, b in zip(walls[1], walls["dask"]))
        print(f"  Dask LocalCluster, 2 worker processes: {simulated / dask:,.0f} req/s ({dask:.1f} s), speed-up "
              f"{one / dask:.2f}x over jobs=1 (per interleaved pair: {pairs})")
    return 0


if __name__ == "__main__":
    sys.exit(main())
