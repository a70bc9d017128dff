"""Scale: preparation time, engine speed and memory on generated metro regions of 14 to 100 sites.

Run: ``.venv/bin/python bench/bench_scale.py`` (``--sizes 14 30``, ``--repeats R``, ``--skip-plan``,
``--skip-cli``, ``--instructions``, ``--cli-only LOAD``; ``--help``).  Prints figures only; nothing here asserts a time.

Each region (our own invention, :func:`metro_region`): ``n`` sites, all datacenters, placed at
random in a square of 6 km x sqrt(n) on a side (the same density at every size), joined in a
ring (sites in order of angle around the centre) plus a cable from every site to its two nearest
neighbours; cables are the straight-line distance x 1.25 long and hold one pair of weakly coupled
7-core fiber of 64 channels.  Traffic is uniform over every pair, demands of 1, 2 and 4 lanes of
100 Gb/s (half, 30 %, 20 %), independent switching with lane change, k = 3 routes.

Per region, in a fresh process (so that nothing computed for one size helps the next, and so that
its memory is its own; the libraries are imported first): the time of a cold ``prepare``
(routes and physics, the first call in the process) and of a second ``prepare`` of a copy with
other fiber counts (what a plan's cut or a forecast year pays), the load that gives about 2 %
request blocking (bisection), the engine's requests per
second at that load on one core (best of three runs), and the process's peak resident memory.
The whole is repeated ``--repeats`` times and the best of each figure kept (the machine is shared:
the best is the least disturbed).  Then: the wall time of ``sdmnet simulate`` through the CLI on
the largest region (2 x 2,000 requests) with where one such run's time goes (imports, loading,
``prepare``, the estimate and which method ran, sweep and tables, the report and each figure;
``--cli-only LOAD`` runs only this step), and of a plan of the 30-site region (capped: short
runs and few candidates, see :func:`plan_seconds`).  With ``--instructions``: instructions per
request of the engine on each region under valgrind's callgrind, a figure other work on the
machine does not move.
"""

from __future__ import annotations

import argparse
import json
import math
import os
import pickle
import re
import shutil
import subprocess
import sys
import tempfile
import time
from dataclasses import replace
from pathlib import Path

import numpy as np

from sdmnet.inputs.model import (
    Architecture,
    Cable,
    FiberType,
    PlanSpec,
    RunSpec,
    Scenario,
    Site,
    Topology,
    TrafficSpec,
    TransceiverSpec,
)

SIZES = (14, 30, 60, 100)
LANE_GBPS = 100.0
# Demands of 1, 2 and 4 lanes (our choice for the benchmark, as in bench_engine.py).
DEMANDS = ((100.0, 0.5), (200.0, 0.3), (400.0, 0.2))
TARGET_BLOCKING = 0.02
SEED = 4242
ARCH = Architecture("independent", "independent", lane_change=True)
# Weakly coupled 7-core fiber, 64 channels (a full C band at 75 GHz, about; from memory).
# Attenuation and crosstalk as the bundled demo-metro's mcf7-weak (sources in its file).
FIBER = FiberType("mcf7-weak", 7, "weak", 1, 64, 0.22, crosstalk_db_per_km=-61.4)


def metro_region(n: int, seed: int = SEED) -> Topology:
    """``n`` datacenter sites in a ring plus cables to each site's two nearest neighbours."""
    rng = np.random.default_rng([seed, n])
    side = 6.0 * math.sqrt(n)
    xy = rng.random((n, 2)) * side
    ids = [f"s{i:03d}" for i in range(n)]
    centre = xy.mean(axis=0)
    order = np.argsort(np.arctan2(xy[:, 1] - centre[1], xy[:, 0] - centre[0]), kind="stable")
    links: set[tuple[int, int]] = set()
    for i in range(n):
        u, v = int(order[i]), int(order[(i + 1) % n])
        links.add((min(u, v), max(u, v)))
    dist = np.hypot(xy[:, None, 0] - xy[None, :, 0], xy[:, None, 1] - xy[None, :, 1])
    for u in range(n):
        for v in np.argsort(dist[u], kind="stable")[1:3]:
            links.add((min(u, int(v)), max(u, int(v))))
    sites = tuple(Site(i, "datacenter", 1.0, round(float(x), 2), round(float(y), 2)) for i, (x, y) in zip(ids, xy))
    cables = tuple(
        Cable(ids[u], ids[v], round(1.25 * float(dist[u, v]) + 0.1, 1), FIBER.name, 1) for u, v in sorted(links)
    )
    return Topology(f"metro-{n}", {FIBER.name: FIBER}, sites, cables)


def region_scenario(n: int, load: float = 100.0, run: RunSpec | None = None) -> Scenario:
    """The benchmark scenario on the ``n``-site region (run lengths: ``run``, or the engine's own)."""
    return Scenario(
        name=f"bench-scale-{n}",
        topology=metro_region(n),
        seed=SEED,
        traffic=TrafficSpec("uniform", (load,), 1.0, DEMANDS),
        # A reach and budget every candidate path of these regions meets (the budget stands for
        # amplified switches): blocking comes from capacity, not from refused paths.
        transceiver=TransceiverSpec(lane_gbps=LANE_GBPS, reach_km=600.0, power_budget_db=200.0),
        run=run or RunSpec(20_000, 2_000, 2, 3),
        architectures=(ARCH,),
    )


# ---- one region, in a fresh process ----


def blocking_at(setup, load: float, requests: int, seed: int = 1) -> float:
    from sdmnet.sim.engine import simulate_replication

    rec = simulate_replication(setup, load, seed, 0, requests, requests // 5)
    return rec.blocked / max(rec.requests, 1)


def load_for_blocking(setup, target: float, requests: int) -> float:
    """Bisect (geometrically) the offered load that gives about ``target`` request blocking."""
    low, high = 10.0, 1e6
    for _ in range(18):
        mid = math.sqrt(low * high)
        if blocking_at(setup, mid, requests) < target:
            low = mid
        else:
            high = mid
    return math.sqrt(low * high)


def measure_region(n: int, requests: int, load: float | None, setup_file: str | None) -> dict:
    import resource

    import networkx  # noqa: F401  (imports are not preparation: loaded before the clock starts)

    import sdmnet.optics.pathtable  # noqa: F401
    from sdmnet.sim.engine import prepare, simulate_replication

    sc = region_scenario(n)
    started, cpu = time.perf_counter(), time.process_time()
    setup = prepare(sc, ARCH)
    cold, cold_cpu = time.perf_counter() - started, time.process_time() - cpu
    # What a copy with other fiber counts pays (a plan's cut or forecast year).
    other = replace(sc, topology=sc.topology.with_fiber_pairs({c.key: 2 for c in sc.topology.cables}))
    started, cpu = time.perf_counter(), time.process_time()
    prepare(other, ARCH)
    again, again_cpu = time.perf_counter() - started, time.process_time() - cpu
    if load is None:
        load = load_for_blocking(setup, TARGET_BLOCKING, 20_000)
    best = best_cpu = 0.0
    blocking = float("nan")
    warmup = requests // 10
    for r in range(3):
        started, cpu = time.perf_counter(), time.process_time()
        rec = simulate_replication(setup, load, 99, r, requests, warmup)
        rate = (requests + warmup) / (time.perf_counter() - started)
        best_cpu = max(best_cpu, (requests + warmup) / (time.process_time() - cpu))
        if rate > best:
            best, blocking = rate, rec.blocked / rec.requests
    if setup_file:
        with open(setup_file, "wb") as fh:
            pickle.dump((setup, load), fh)
    return {
        "sites": len(sc.topology.sites),
        "cables": len(sc.topology.cables),
        "pairs": len(setup.pairs),
        "routes": sum(len(r) for r in setup.routes),
        "prepare_s": cold,
        "prepare_cpu_s": cold_cpu,
        "prepare_again_s": again,
        "prepare_again_cpu_s": again_cpu,
        "load": load,
        "rate": best,
        "rate_cpu": best_cpu,
        "blocking": blocking,
        "maxrss_mib": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024,
    }


def region_in_child(n: int, requests: int, load: float | None, setup_file: str | None = None) -> dict:
    args = [sys.executable, __file__, "--child", str(n), "--requests", str(requests)]
    if load is not None:
        args += ["--load", repr(load)]
    if setup_file:
        args += ["--setup-file", setup_file]
    out = subprocess.run(args, capture_output=True, text=True, check=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


# ---- instructions per request: callgrind, difference of two run lengths ----

_COUNT_CHILD = """
import pickle
from sdmnet.sim.engine import simulate_replication
with open({path!r}, "rb") as fh:
    setup, load = pickle.load(fh)
simulate_replication(setup, load, 99, 0, {requests}, {requests} // 10)
"""


def instructions_per_request(setup_file: str) -> float:
    counts = []
    for requests in (5_000, 15_000):
        code = _COUNT_CHILD.format(path=setup_file, requests=requests)
        out = subprocess.run(["valgrind", "--tool=callgrind", "--callgrind-out-file=/dev/null", sys.executable,
                              "-c", code], capture_output=True, text=True, check=True)
        counts.append(int(re.search(r"Collected : (\d+)", out.stderr).group(1)))
    return (counts[1] - counts[0]) / (1.1 * 10_000)


# ---- the CLI and a plan ----


def _toml_value(v: object) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, str):
        return json.dumps(v)
    return repr(v)


def write_region_files(n: int, folder: Path, requests: int, replications: int, load: float) -> Path:
    """The ``n``-site region as a topology and a scenario file; returns the scenario's path."""
    topo = metro_region(n)
    lines = [f'name = "{topo.name}"', "", f"[fiber_types.{FIBER.name}]"]
    for key in ("cores", "coupling", "coupled_group", "channels", "attenuation_db_per_km", "crosstalk_db_per_km"):
        lines.append(f"{key} = {_toml_value(getattr(FIBER, key))}")
    for s in topo.sites:
        lines += ["", "[[sites]]", f'id = "{s.id}"', 'role = "datacenter"', f"x_km = {s.x_km}", f"y_km = {s.y_km}"]
    for c in topo.cables:
        lines += ["", "[[cables]]", f'a = "{c.a}"', f'b = "{c.b}"', f"length_km = {c.length_km}",
                  f'fiber_type = "{c.fiber_type}"', f"fiber_pairs = {c.fiber_pairs}"]
    (folder / "region.toml").write_text("\n".join(lines) + "\n")
    sizes = ", ".join(f'"{s:g}" = {p}' for s, p in DEMANDS)
    scenario = f"""name = "bench-scale-{n}"
topology = "region.toml"
seed = {SEED}

[traffic]
pattern = "uniform"
load_erlang = {load!r}
mean_holding = 1.0
sizes_gbps = {{ {sizes} }}

[transceiver]
lane_gbps = {LANE_GBPS}
reach_km = 600.0
power_budget_db = 200.0

[run]
requests = {requests}
warmup = {requests // 10}
replications = {replications}
k_paths = 3

[[architectures]]
name = "{ARCH.name}"
switching = "{ARCH.switching}"
lane_change = true
"""
    path = folder / "scenario.toml"
    path.write_text(scenario)
    return path


def cli_seconds(n: int, load: float, requests: int = 2_000) -> float:
    """Wall time of ``sdmnet simulate`` (2 replications of ``requests``, report included) on the region."""
    sdmnet = Path(sys.executable).with_name("sdmnet")
    with tempfile.TemporaryDirectory() as tmp:
        scenario = write_region_files(n, Path(tmp), requests, 2, load)
        started = time.perf_counter()
        subprocess.run([str(sdmnet), "simulate", str(scenario), "-o", str(Path(tmp) / "out"), "--quiet"],
                       check=True, capture_output=True, text=True)
        return time.perf_counter() - started


# One simulate of the region in a fresh process, stage by stage: each stage's function is wrapped
# by a timer (nothing else changes), and "the rest" is what the run's wall time leaves.
_CLI_STAGES_CHILD = """
import json, time
started = time.perf_counter()
from sdmnet import api
from sdmnet.inputs.loaders import load_scenario
import sdmnet.output.report, sdmnet.output.figures as figures
spent = {{"imports": time.perf_counter() - started}}

def timed(owner, name, label):
    inner = getattr(owner, name)
    def wrapper(*args, **kwargs):
        t = time.perf_counter()
        try:
            return inner(*args, **kwargs)
        finally:
            spent[label] = spent.get(label, 0.0) + time.perf_counter() - t
    setattr(owner, name, wrapper)

timed(api, "prepare", "prepare (routes, physics)")
timed(api, "estimate_scenario", "estimate")
timed(api, "report", "report (figures, page)")
for name in ("blocking_figure", "resources_figure", "topology_figure"):
    timed(figures, name, "  figure " + name.replace("_figure", ""))
t = time.perf_counter()
scenario = load_scenario({path!r})
spent["load the scenario"] = time.perf_counter() - t
t = time.perf_counter()
result = api.simulate(scenario, {out!r}, progress=False)
whole = time.perf_counter() - t
inside = ("prepare (routes, physics)", "estimate", "report (figures, page)")
spent["sweep, tables, task files"] = whole - sum(spent.get(k, 0.0) for k in inside)
spent["estimate method"] = ", ".join(sorted(set(result.summary["estimate_method"])))
print(json.dumps(spent))
"""


def cli_stages(n: int, load: float, requests: int = 2_000) -> dict:
    """Where the time of one ``simulate`` of the region goes (fresh process, seconds per stage)."""
    with tempfile.TemporaryDirectory() as tmp:
        scenario = write_region_files(n, Path(tmp), requests, 2, load)
        code = _CLI_STAGES_CHILD.format(path=str(scenario), out=str(Path(tmp) / "out"))
        done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
        return json.loads(done.stdout.strip().splitlines()[-1])


def plan_seconds(load: float, requests: int, max_candidates: int) -> tuple[float, int, bool]:
    """Wall time of a plan of the 30-site region at ``load`` (target 1 %): replications of
    ``requests`` each, at most ``max_candidates`` candidates; returns (seconds, candidates, met)."""
    import functools

    from sdmnet.planning import run, search

    sc = replace(
        region_scenario(30, load, RunSpec(requests, requests // 10, 2, 3)),
        plan=PlanSpec(target_blocking=0.01),
    )
    run.plan_architecture = functools.partial(search.plan_architecture, max_candidates=max_candidates)
    with tempfile.TemporaryDirectory() as tmp:
        started = time.perf_counter()
        result = run.run_plan(sc, Path(tmp), jobs=1, progress=False)
        wall = time.perf_counter() - started
    plan = result.plans[0]
    return wall, plan.candidates, plan.met


def print_cli_stages(n: int, load: float) -> None:
    stages = cli_stages(n, load)
    method = stages.pop("estimate method")
    print(f"  one simulate of it in a fresh process, stage by stage (estimate: {method}):")
    first = ("imports", "load the scenario", "prepare (routes, physics)", "estimate", "sweep, tables, task files",
             "report (figures, page)")  # fmt: skip
    for what in [*first, *sorted(k for k in stages if k not in first)]:
        print(f"    {what:<32} {stages.get(what, 0.0):6.2f} s", flush=True)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", type=int, nargs="+", default=list(SIZES))
    parser.add_argument("--requests", type=int, default=100_000, help="measured requests per engine run")
    parser.add_argument("--repeats", type=int, default=2, help="fresh processes per region; the best is kept")
    parser.add_argument("--skip-plan", action="store_true")
    parser.add_argument("--skip-cli", action="store_true")
    parser.add_argument("--instructions", action="store_true", help="callgrind instructions per request (slow)")
    parser.add_argument("--plan-requests", type=int, default=5_000)
    parser.add_argument("--plan-candidates", type=int, default=12)
    parser.add_argument("--child", type=int, help=argparse.SUPPRESS)
    parser.add_argument("--load", type=float, help=argparse.SUPPRESS)
    parser.add_argument("--setup-file", help=argparse.SUPPRESS)
    parser.add_argument("--cli-only", type=float, metavar="LOAD",
                        help="only the CLI step on the largest of --sizes, at LOAD Erlang (no table, no plan)")
    args = parser.parse_args(argv)
    if args.cli_only is not None:
        n = max(args.sizes)
        print(f"load average {os.getloadavg()[0]:.2f}")
        wall = min(cli_seconds(n, args.cli_only) for _ in range(args.repeats))
        print(f"sdmnet simulate through the CLI, {n} sites at {args.cli_only:,.0f} Erlang, 2 x 2,000 requests: "
              f"{wall:.1f} s (best of {args.repeats})", flush=True)
        print_cli_stages(n, args.cli_only)
        return 0
    if args.child:
        print(json.dumps(measure_region(args.child, args.requests, args.load, args.setup_file)))
        return 0

    print(f"python {sys.version.split()[0]}, cores {os.cpu_count()}, load average {os.getloadavg()[0]:.2f} "
          f"(shared machine: best of {args.repeats} fresh processes per region)")
    print("Times as wall (CPU of the process): on a shared machine the CPU figure is the steadier one.")
    print("| sites | cables | pairs | routes | prepare | prepare, other fiber counts | load (Erlang) | blocking | "
          "engine req/s | peak RSS |")
    print("|---|---|---|---|---|---|---|---|---|---|")
    loads: dict[int, float] = {}
    tmp = Path(tempfile.mkdtemp(prefix="bench-scale-"))
    try:
        for n in args.sizes:
            runs = []
            for i in range(args.repeats):
                setup_file = str(tmp / f"setup-{n}.pickle") if i == 0 else None
                runs.append(region_in_child(n, args.requests, loads.get(n), setup_file))
                loads[n] = runs[-1]["load"]
            r = runs[0]
            def best(key: str, pick=min, runs=runs) -> float:
                return pick(x[key] for x in runs)

            rss = best("maxrss_mib")
            print(f"| {r['sites']} | {r['cables']} | {r['pairs']:,} | {r['routes']:,} | "
                  f"{best('prepare_s'):.2f} s ({best('prepare_cpu_s'):.2f}) | "
                  f"{best('prepare_again_s'):.2f} s ({best('prepare_again_cpu_s'):.2f}) | {r['load']:,.0f} | "
                  f"{r['blocking']:.4f} | {best('rate', max):,.0f} ({best('rate_cpu', max):,.0f}) | {rss:.0f} MiB |",
                  flush=True)
        if args.instructions:
            if shutil.which("valgrind") is None:
                print("instructions: valgrind not found, skipped")
            for n in args.sizes:
                if shutil.which("valgrind"):
                    count = instructions_per_request(str(tmp / f"setup-{n}.pickle"))
                    print(f"instructions per request (callgrind), {n} sites: {count:,.0f}", flush=True)
        if not args.skip_cli:
            n = max(args.sizes)
            wall = min(cli_seconds(n, loads[n]) for _ in range(args.repeats))
            print(f"sdmnet simulate through the CLI, {n} sites, 2 x 2,000 requests: {wall:.1f} s "
                  f"(best of {args.repeats})", flush=True)
            print_cli_stages(n, loads[n])
        if not args.skip_plan:
            load = loads.get(30)
            if load is None:
                load = region_in_child(30, 20_000, None)["load"]
            wall, candidates, met = plan_seconds(load, args.plan_requests, args.plan_candidates)
            print(f"plan of the 30-site region at {load:,.0f} Erlang, target 1 %, 2 x {args.plan_requests:,} "
                  f"requests per candidate, at most {args.plan_candidates} candidates: {wall:.1f} s "
                  f"({candidates} candidates, {'met' if met else 'not met'})", flush=True)
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
