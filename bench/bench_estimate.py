"""Wall time of the analytic estimate on NSFNET (14 sites, 21 cables, 91 pairs).

Run with ``.venv/bin/python bench/bench_estimate.py``.  Prints, per architecture, the time to
find the routes (the physical path table) and the time of the estimate itself (unit geometry,
streams, Erlang fixed point with Kaufman-Roberts links over every load point), then the same
with every cable given more fiber pairs, so that a cable holds thousands of units.
No assertions: the figures are for reading.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

from sdmnet.analysis.estimate import estimate_architecture
from sdmnet.inputs.loaders import load_scenario
from sdmnet.inputs.model import Architecture, Scenario
from sdmnet.network.architectures import cable_geometries
from sdmnet.optics.pathtable import feasible_routes

ROOT = Path(__file__).resolve().parent.parent
SCENARIO = ROOT / "scenarios" / "nsfnet.toml"


def _bench(scenario: Scenario, label: str) -> None:
    print(f"\n{label}: {len(scenario.topology.cables)} cables, {len(scenario.topology.datacenters)} datacenters, "
          f"{len(scenario.traffic.loads_erlang)} load points, routes: feasible routes (path table)")  # fmt: skip
    print(f"{'architecture':<22}{'units/cable':>14}{'routes s':>10}{'estimate s':>12}{'iter':>6}  blocking")
    total = 0.0
    for arch in scenario.architectures:
        t0 = time.perf_counter()
        found = feasible_routes(scenario, arch)
        t1 = time.perf_counter()
        net, _ = estimate_architecture(scenario, arch, lambda _s, _a, found=found: found)
        t2 = time.perf_counter()
        total += t2 - t1
        topo = scenario.topology_for(arch)
        units = _max_units(scenario, arch)
        blocking = " ".join(f"{b:.4f}" for b in net["blocking"])
        print(f"{arch.name:<22}{units:>14}{t1 - t0:>10.3f}{t2 - t1:>12.3f}{int(net['iterations'].iloc[0]):>6}  "
              f"{blocking}  ({topo.name})")  # fmt: skip
    print(f"estimate total (all architectures, routes excluded): {total:.3f} s")


def _max_units(scenario: Scenario, arch: Architecture) -> int:
    """Units on the largest cable (fiber pairs x unit positions per fiber)."""
    cables = scenario.topology_for(arch).cables
    return max(c.fiber_pairs * g.units_per_fiber for c, g in zip(cables, cable_geometries(scenario, arch)))


def _with_fiber_pairs(scenario: Scenario, pairs: int, load_factor: float) -> Scenario:
    from dataclasses import replace

    topo = scenario.topology.with_fiber_pairs({c.key: pairs for c in scenario.topology.cables})
    return replace(scenario, topology=topo, traffic=scenario.traffic.scaled(load_factor))


def main() -> int:
    if not SCENARIO.exists():
        print(f"skipped: {SCENARIO} is missing")
        return 0
    scenario = load_scenario(SCENARIO)
    _bench(scenario, f"{SCENARIO.name} as written")
    _bench(_with_fiber_pairs(scenario, 8, 8.0), f"{SCENARIO.name}, 8 fiber pairs per cable, 8x load")
    return 0


if __name__ == "__main__":
    sys.exit(main())
