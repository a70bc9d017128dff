"""Engine speed and memory: requests per second on NSFNET, the ratio to a bare event loop on
one cable, and peak memory against run length.

Run: ``.venv/bin/python bench/bench_engine.py`` (``--quick`` for a short run, ``--help`` for
options).  Prints figures only; nothing here asserts a time.
"""

from __future__ import annotations

import argparse
import heapq
import json
import os
import re
import shutil
import subprocess
import sys
import time
from concurrent.futures import ThreadPoolExecutor
from dataclasses import replace
from pathlib import Path

import numpy as np

from sdmnet.inputs.model import (
    Architecture,
    Cable,
    FiberType,
    RunSpec,
    Scenario,
    Site,
    Topology,
    TrafficSpec,
    TransceiverSpec,
)
from sdmnet.network.routing import Route, datacenter_pairs, k_shortest_routes
from sdmnet.sim.engine import EngineSetup, prepare, replication_seed, simulate_replication

ROOT = Path(__file__).resolve().parent.parent
NSFNET_FILE = ROOT / "topologies" / "nsfnet.toml"
LANE_GBPS = 100.0
# Demands of 1, 2 and 4 lanes (our choice for the benchmark: a mix, so multi-unit grants are timed).
SIZES = ((100.0, 0.5), (200.0, 0.3), (400.0, 0.2))

# The 14-site, 21-link NSFNET graph, used only when topologies/nsfnet.toml is missing.  Lengths
# are rough (km, from memory); they only order the candidate routes.
_NSFNET_EDGES = (
    (0, 1, 1100), (0, 2, 1600), (0, 7, 2800), (1, 2, 600), (1, 3, 1000), (2, 5, 2000),
    (3, 4, 600), (3, 10, 2400), (4, 5, 1100), (4, 6, 800), (5, 9, 1200), (5, 12, 2000),
    (6, 7, 700), (7, 8, 700), (8, 9, 900), (8, 11, 500), (8, 13, 500), (10, 11, 800),
    (10, 13, 800), (11, 12, 300), (12, 13, 300),
)  # fmt: skip


def _weak_7core(channels: int) -> FiberType:
    return FiberType("mcf7-weak", 7, "weak", 1, channels, 0.22, crosstalk_db_per_km=-61.4)


def nsfnet_topology(channels: int = 40) -> Topology:
    """NSFNET with one pair of weakly coupled 7-core fiber of ``channels`` channels per cable.

    Reads ``topologies/nsfnet.toml`` when it exists and loads; otherwise the embedded edge list.
    """
    fiber = _weak_7core(channels)
    try:
        from sdmnet.inputs.loaders import load_topology

        topo = load_topology(NSFNET_FILE)
    except (ImportError, OSError, ValueError):
        topo = None
    if topo is not None:
        sites = tuple(replace(s, role="datacenter", traffic_weight=1.0) for s in topo.sites)
        cables = tuple(replace(c, fiber_type=fiber.name, fiber_pairs=1) for c in topo.cables)
        return Topology("nsfnet", {fiber.name: fiber}, sites, cables, topo.source)
    sites = tuple(Site(f"N{i}", "datacenter") for i in range(14))
    cables = tuple(Cable(f"N{a}", f"N{b}", float(km), fiber.name, 1) for a, b, km in _NSFNET_EDGES)
    return Topology("nsfnet-embedded", {fiber.name: fiber}, sites, cables)


def bench_scenario(topo: Topology, arch: Architecture, load: float, sizes=SIZES, k_paths: int = 3) -> Scenario:
    """A uniform-traffic scenario on ``topo`` (run lengths are passed to the engine directly)."""
    return Scenario(
        name="bench",
        topology=topo,
        seed=12345,
        traffic=TrafficSpec("uniform", (load,), 1.0, tuple(sizes)),
        transceiver=TransceiverSpec(lane_gbps=LANE_GBPS),
        run=RunSpec(10_000, 1_000, 1, k_paths),
        architectures=(arch,),
    )


def shortest_routes(sc: Scenario, arch: Architecture) -> dict[tuple[str, str], list[Route]]:
    """Route finder without physics: the k shortest routes of every datacenter pair."""
    topo = sc.topology_for(arch)
    return {p: k_shortest_routes(topo, *p, sc.run.k_paths) for p in datacenter_pairs(topo)}


INDEPENDENT = Architecture("independent", "independent", lane_change=True)


def nsfnet_setup(load: float, channels: int = 40) -> EngineSetup:
    return prepare(bench_scenario(nsfnet_topology(channels), INDEPENDENT, load), INDEPENDENT, shortest_routes)


def blocking_at(setup: EngineSetup, load: float, requests: int, seed: int = 1) -> float:
    rec = simulate_replication(setup, load, seed, 0, requests, requests // 5)
    return rec.blocked / max(rec.requests, 1)


def load_for_blocking(target: float = 0.01, channels: int = 40, requests: int = 20_000) -> tuple[float, float]:
    """Bisect the offered load (Erlang) that gives about ``target`` request blocking."""
    setup = nsfnet_setup(1.0, channels)
    low, high = 10.0, 2000.0
    for _ in range(14):
        mid = (low * high) ** 0.5
        if blocking_at(setup, mid, requests) < target:
            low = mid
        else:
            high = mid
    load = (low * high) ** 0.5
    return load, blocking_at(setup, load, 4 * requests, seed=2)


def engine_rate(setup: EngineSetup, load: float, requests: int, repeats: int = 3) -> tuple[float, float]:
    """Best requests per second (warm-up included in the count) over ``repeats`` runs, and blocking."""
    best, blocking = 0.0, 0.0
    warmup = requests // 10
    for r in range(repeats):
        started = time.perf_counter()
        rec = simulate_replication(setup, load, 99, r, requests, warmup)
        rate = (requests + warmup) / (time.perf_counter() - started)
        if rate > best:
            best, blocking = rate, rec.blocked / rec.requests
    return best, blocking


# ---- the bare loop: heapq of departure times, an int bitmask, first fit, the engine's draws ----


def _gaps_and_holds(load: float, seed: int, replication: int, total: int) -> tuple[list[float], list[float]]:
    """Interarrival gaps and holding times of ``total`` arrivals from the engine's own streams for
    the same replication (on one cable with one size the pair and size draws change nothing), so
    every loop here meets the very same demands as the engine.  Drawn at once: a generator gives
    the same numbers whether asked in one call or in the engine's batches."""
    gap_rng, _pairs, _sizes, hold_rng = (np.random.default_rng(s) for s in replication_seed(seed, replication).spawn(4))
    return (gap_rng.standard_exponential(total) / load).tolist(), hold_rng.standard_exponential(total).tolist()


def bare_erlang_loop(channels: int, load: float, seed: int, replication: int, requests: int, warmup: int) -> int:
    """Blocked requests among the measured ones, on one cable of ``channels`` single-lane servers.

    Uses the same random streams and the same order of use as the engine (arrival ``i`` comes
    ``gap[i]`` after arrival ``i - 1`` and holds for ``hold[i]``), so its count equals the
    engine's on the single-cable Erlang case.
    """
    total = warmup + requests
    gaps, holds = _gaps_and_holds(load, seed, replication, total)
    free = (1 << channels) - 1
    heap: list[tuple[float, int]] = []
    push, pop = heapq.heappush, heapq.heappop
    blocked = 0
    t = 0.0
    for n in range(total):
        t += gaps[n]
        while heap and heap[0][0] <= t:
            free |= pop(heap)[1]
        if free:
            bit = free & -free
            free ^= bit
            push(heap, (t + holds[n], bit))
        elif n >= warmup:
            blocked += 1
    return blocked


def simpy_floor_loop(channels: int, load: float, seed: int, replication: int, requests: int, warmup: int) -> int:
    """The bare loop with its departures moved onto a SimPy queue (one event per accepted demand,
    processed by ``env.peek``/``env.step`` as in the engine): the least any SimPy-based engine pays."""
    import simpy
    from simpy.events import NORMAL

    total = warmup + requests
    gaps, holds = _gaps_and_holds(load, seed, replication, total)
    env = simpy.Environment()
    peek, step, schedule = env.peek, env.step, env.schedule
    free = [(1 << channels) - 1]

    def release(event: simpy.events.Event) -> None:
        free[0] |= event._value

    blocked = 0
    t = 0.0
    for n in range(total):
        t += gaps[n]
        while peek() <= t:
            step()
        f = free[0]
        if f:
            bit = f & -f
            free[0] = f ^ bit
            ev = simpy.events.Event(env)
            ev._ok, ev._value = True, bit
            ev.callbacks.append(release)
            schedule(ev, NORMAL, t + holds[n] - env.now)
        elif n >= warmup:
            blocked += 1
    return blocked


def same_allocation_loop(channels: int, load: float, seed: int, replication: int, requests: int, warmup: int) -> int:
    """A bare heapq loop doing the engine's own allocation: the same first-fit state object
    (:class:`sdmnet.sim.allocation.UnitState`, take / give_back with grants) and the same draws, but
    no SimPy and no statistics beyond the blocked count."""
    from sdmnet.sim.allocation import UnitState

    total = warmup + requests
    gaps, holds = _gaps_and_holds(load, seed, replication, total)
    state = UnitState([1], [1], [channels], lane_change=True)
    take, give_back = state.take, state.give_back
    cables = (0,)
    heap: list = []
    push, pop = heapq.heappush, heapq.heappop
    blocked = 0
    t = 0.0
    seq = 0
    for n in range(total):
        t += gaps[n]
        while heap and heap[0][0] <= t:
            give_back(pop(heap)[2])
        grant = take(cables, 1)
        if grant is not None:
            seq += 1
            push(heap, (t + holds[n], seq, grant))
        elif n >= warmup:
            blocked += 1
    return blocked


def erlang_setup(channels: int, load: float) -> EngineSetup:
    """The single-cable Erlang case: one cable of ``channels`` single-core channels, 1-lane demands."""
    fiber = FiberType("f1", 1, "weak", 1, channels, 0.2)
    topo = Topology("one", {"f1": fiber}, (Site("A", "datacenter"), Site("B", "datacenter")),
                    (Cable("A", "B", 10.0, "f1", 1),))
    arch = Architecture("ind", "independent")
    return prepare(bench_scenario(topo, arch, load, sizes=((LANE_GBPS, 1.0),), k_paths=1), arch, shortest_routes)


def erlang_ratio(channels: int = 40, load: float = 30.0, requests: int = 300_000, repeats: int = 3) -> dict:
    """Engine and bare loop on one cable of ``channels`` single-core channels; times and ratio."""
    setup = erlang_setup(channels, load)
    warmup = requests // 10
    t_engine, t_bare, t_floor, t_same = float("inf"), float("inf"), float("inf"), float("inf")
    for _ in range(repeats):
        started = time.perf_counter()
        same_blocked = same_allocation_loop(channels, load, 5, 0, requests, warmup)
        t_same = min(t_same, time.perf_counter() - started)
        started = time.perf_counter()
        floor_blocked = simpy_floor_loop(channels, load, 5, 0, requests, warmup)
        t_floor = min(t_floor, time.perf_counter() - started)
        started = time.perf_counter()
        rec = simulate_replication(setup, load, 5, 0, requests, warmup)
        t_engine = min(t_engine, time.perf_counter() - started)
        started = time.perf_counter()
        bare_blocked = bare_erlang_loop(channels, load, 5, 0, requests, warmup)
        t_bare = min(t_bare, time.perf_counter() - started)
    return {
        "engine_s": t_engine,
        "bare_s": t_bare,
        "floor_s": t_floor,
        "ratio": t_engine / t_bare,
        "floor_ratio": t_floor / t_bare,
        "same_ratio": t_engine / t_same,
        "same_blocked": same_blocked,
        "floor_blocked": floor_blocked,
        "engine_blocked": rec.blocked,
        "bare_blocked": bare_blocked,
        "engine_rps": (requests + warmup) / t_engine,
        "bare_rps": (requests + warmup) / t_bare,
    }


# ---- instructions: a count that does not depend on what else runs on the machine ----

_COUNT_CHILD = """
import sys
sys.path.insert(0, {bench!r})
from bench_engine import erlang_setup, same_allocation_loop
from sdmnet.sim.engine import simulate_replication
setup = erlang_setup({channels}, {load})
if {engine}:
    simulate_replication(setup, {load}, 5, 0, {requests}, {requests} // 10)
else:
    same_allocation_loop({channels}, {load}, 5, 0, {requests}, {requests} // 10)
"""


def instructions_per_request(engine: bool, channels: int = 40, load: float = 30.0) -> float:
    """Instructions per request (warm-up included) of the engine or of the same-allocation loop on
    the single-cable case, counted by valgrind's callgrind as the difference of two run lengths
    (so start-up and imports cancel)."""
    counts = []
    for requests in (10_000, 30_000):
        code = _COUNT_CHILD.format(
            bench=str(Path(__file__).parent), channels=channels, load=load, requests=requests, engine=engine
        )
        out = subprocess.run(["valgrind", "--tool=callgrind", "--callgrind-out-file=/dev/null", sys.executable,
                              "-c", code], capture_output=True, text=True, check=True)
        counts.append(int(re.search(r"Collected : (\d+)", out.stderr).group(1)))
    return (counts[1] - counts[0]) / (1.1 * 20_000)


# ---- memory: each measurement in a fresh process ----

_MEMORY_CHILD = """
import json, resource, sys, tracemalloc
sys.path.insert(0, {bench!r})
from bench_engine import nsfnet_setup
from sdmnet.sim.engine import simulate_replication
setup = nsfnet_setup({load})
simulate_replication(setup, {load}, 3, 0, 2000, 0)  # warm caches and imports
before = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
if {traced}:
    tracemalloc.start()
rec = simulate_replication(setup, {load}, 3, 1, {requests}, 1000)
peak = tracemalloc.get_traced_memory()[1] if {traced} else 0
after = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
print(json.dumps({{"maxrss_kib": after, "maxrss_before_kib": before, "traced_peak_bytes": peak,
                  "requests": rec.requests}}))
"""


def memory_of_run(requests: int, load: float, traced: bool) -> dict:
    code = _MEMORY_CHILD.format(bench=str(Path(__file__).parent), load=load, requests=requests, traced=traced)
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="shorter runs (noisier figures)")
    parser.add_argument("--load", type=float, help="NSFNET load in Erlang (default: searched for ~1 %% blocking)")
    parser.add_argument("--skip-memory", action="store_true")
    parser.add_argument("--instructions", action="store_true",
                        help="also count instructions per request under valgrind (slow, needs valgrind)")
    args = parser.parse_args(argv)
    requests = 100_000 if args.quick else 300_000
    print(f"python {sys.version.split()[0]}, pid {os.getpid()}, load average {os.getloadavg()[0]:.2f}")
    print(f"topology: {nsfnet_topology().name} ({'file' if NSFNET_FILE.exists() else 'embedded'})")

    if args.load:
        load, check = args.load, float("nan")
    else:
        load, check = load_for_blocking(requests=10_000 if args.quick else 20_000)
    print(f"NSFNET, 7-core weak, 40 channels, independent, k=3: load {load:.1f} Erlang, blocking {check:.4f}")
    setup = nsfnet_setup(load)
    rate, blocking = engine_rate(setup, load, requests)
    print(f"  engine: {rate:,.0f} requests/s on one core (blocking {blocking:.4f}, {requests:,} measured)")

    r = erlang_ratio(requests=requests, repeats=5)
    print(
        f"single cable, 40 channels, 30 Erlang: engine {r['engine_rps']:,.0f} req/s, bare heapq loop "
        f"{r['bare_rps']:,.0f} req/s, ratio engine/bare time = {r['ratio']:.2f} "
        f"(blocked: engine {r['engine_blocked']}, bare {r['bare_blocked']})"
    )
    print(f"  SimPy floor (bare loop with departures on a SimPy queue): {r['floor_ratio']:.2f} x the bare loop "
          f"(blocked {r['floor_blocked']})")
    print(f"  engine / bare heapq loop doing the engine's allocation (UnitState take/give_back): "
          f"{r['same_ratio']:.2f} (blocked {r['same_blocked']})")

    if args.instructions:
        if shutil.which("valgrind") is None:
            print("instructions: valgrind not found, skipped")
        else:
            with ThreadPoolExecutor(max_workers=2) as pool:
                engine_count, same_count = pool.map(instructions_per_request, (True, False))
            print(f"  instructions per request (callgrind): engine {engine_count:,.0f}, bare heapq loop doing the "
                  f"engine's allocation {same_count:,.0f}, ratio {engine_count / same_count:.2f}")

    if not args.skip_memory:
        for traced in (False, True):
            figures = {n: memory_of_run(n, load, traced) for n in (10**5, 10**6)}
            small, large = figures[10**5], figures[10**6]
            if traced:
                a, b = small["traced_peak_bytes"], large["traced_peak_bytes"]
                what = "tracemalloc peak during the run"
            else:
                a, b = small["maxrss_kib"] * 1024, large["maxrss_kib"] * 1024
                what = "process max RSS"
            print(f"memory ({what}): 1e5 requests {a / 2**20:.2f} MiB, 1e6 requests {b / 2**20:.2f} MiB, "
                  f"growth {100 * (b - a) / a:+.1f} %")
    return 0


if __name__ == "__main__":
    sys.exit(main())
