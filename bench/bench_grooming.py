"""CPU time of the grooming estimate on generated regions, against the work figure ``auto`` uses.

Run: ``.venv/bin/python bench/bench_grooming.py`` (or ``SITES:LOAD:FIBER_PAIRS ...`` to choose the
cases).  Prints figures only; nothing here asserts a time.

Each case is the metro region of ``bench_scale.py`` (``SITES`` datacenters, k = 3 routes, demands
of 1, 2 and 4 lanes) with ``FIBER_PAIRS`` fiber pairs per cable, under joint switching with
grooming (``share = true``: units of 7 lanes, 64 units per fiber pair), at one load point of
``LOAD`` Erlang.  Per case: the hops over every pair's routes, the route-hop work of the routed
estimate and the grooming work (:func:`sdmnet.analysis.estimate.groomed_work`), the fixed point's
iterations and the estimate's CPU time, and the CPU per unit of grooming work.
"""

from __future__ import annotations

import sys
import time
from dataclasses import replace
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))

from bench_scale import region_scenario  # noqa: E402

from sdmnet.analysis import estimate as est  # noqa: E402
from sdmnet.inputs.model import Architecture  # noqa: E402
from sdmnet.optics.pathtable import feasible_routes  # noqa: E402

ARCH = Architecture("joint-7", "joint", share=True)
# Loads that give 15-70 % blocking (where the fixed point works hardest), our choice.
CASES = ("6:1500:1", "6:6000:2", "6:12000:4", "10:3000:1", "10:6000:2", "14:4000:1", "20:8000:1")


def measure(sites: int, load: float, fiber_pairs: int) -> str:
    """One case, as a line of figures."""
    sc = region_scenario(sites, load)
    cables = tuple(replace(c, fiber_pairs=fiber_pairs) for c in sc.topology.cables)
    sc = replace(sc, topology=replace(sc.topology, cables=cables), architectures=(ARCH,))
    found = feasible_routes(sc, ARCH)
    model = est._build(sc, ARCH, lambda _s, _a: found)
    work = est.groomed_work(model, 1)
    started = time.process_time()
    net, _ = est.estimate_architecture(sc, ARCH, lambda _s, _a: found)
    cpu = time.process_time() - started
    hops = sum(len(g.option.links) for g in model.groups)
    iterations, blocking = int(net["iterations"][0]), float(net["blocking"][0])
    return (f"{sites:>5}{fiber_pairs:>4}{load:>8.0f}{hops:>7}{est.routed_work(model, 1):>9}{work:>9}"
            f"{iterations:>6}{blocking:>9.3f}{cpu:>8.2f}{cpu / work * 1e6:>9.0f}")  # fmt: skip


def main(argv: list[str]) -> int:
    print(f"{'sites':>5}{'fp':>4}{'load':>8}{'hops':>7}{'routed':>9}{'groomed':>9}{'iter':>6}{'blocking':>9}"
          f"{'cpu s':>8}{'us/work':>9}")  # fmt: skip
    for case in argv or CASES:
        sites, load, fiber_pairs = case.split(":")
        print(measure(int(sites), float(load), int(fiber_pairs)), flush=True)
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
