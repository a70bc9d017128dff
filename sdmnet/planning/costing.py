"""What a plan costs: unit prices of an architecture's items, and the price of one fiber pair per cable.

The search minimises the total cost of :func:`sdmnet.equipment.costs.cost_and_power`.  Of that
total, the part that follows the fibers (line-side switch ports, fan-in/fan-out devices,
amplifiers, fiber-pair-km) grows linearly with each cable's pairs (:mod:`sdmnet.equipment.resources`);
:func:`pair_prices` gives that slope per cable, the price the search weighs a move by.  Installed
transceivers follow the carried traffic, nearly the same for every candidate that meets the
target, and are counted in the plan's total, not in the moves.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np

from ..equipment.costs import Price, cost_and_power, equipment_counts, unit_prices
from ..equipment.installed import InstalledTransceivers
from ..equipment.resources import installed_resources, module_figures
from ..inputs.model import Architecture, Scenario
from ..network.traffic import pair_loads, size_classes
from ..sim.engine import EngineSetup
from ..sim.stats import PointSummary

__all__ = ["CLASS_LANE", "plan_prices", "pair_prices", "class_lanes"]

# Item of one installed lane of a transceiver class: ``transceiver_lane:NAME``.
CLASS_LANE = "transceiver_lane:{}"


def plan_prices(scenario: Scenario, arch: Architecture) -> dict[str, Price]:
    """Unit prices and watts of the items of ``arch`` (:func:`sdmnet.equipment.costs.unit_prices`),
    plus a lane of each ``[[transceivers]]`` class at its own ``cost`` and ``power_w`` (the
    ``transceiver_lane`` figures where the class gives none)."""
    prices = unit_prices(scenario, module_figures(scenario, arch))
    lane = prices["transceiver_lane"]
    for c in scenario.transceivers:
        prices[CLASS_LANE.format(c.name)] = Price(
            lane.cost if c.cost is None else c.cost, lane.power_w if c.power_w is None else c.power_w
        )
    return prices


def class_lanes(scenario: Scenario, setup: EngineSetup, point: PointSummary, lanes: int, load: float) -> dict[str, int]:
    """Installed lanes split over transceiver classes, in proportion to the lane-Erlang each class
    carries (each pair's carried load on its first route's class), rounded to keep the total.

    Empty when the routes name no class (a scenario without ``[[transceivers]]``): the lanes stay
    ``transceiver_lane``.  An approximation: installed counts are per site, not per class.
    """
    if not scenario.transceivers or not setup.route_classes or lanes <= 0:
        return {}
    loads = pair_loads(scenario.topology_for(setup.architecture), scenario.traffic, load)
    sizes, probs = size_classes(scenario.traffic)
    weight: dict[str, float] = {}
    for p, (names, rates) in enumerate(zip(setup.route_classes, setup.route_lane_gbps)):
        if not names or not names[0]:
            continue
        blocked = point.pair_blocking[p].mean
        carried = loads.get(setup.pairs[p], 0.0) * (1.0 - (0.0 if math.isnan(blocked) else blocked))
        mean_lanes = float(sum(q * max(1, math.ceil(s / rates[0] - 1e-9)) for s, q in zip(sizes, probs)))
        weight[names[0]] = weight.get(names[0], 0.0) + carried * mean_lanes
    total = sum(weight.values())
    if total <= 0:
        return {}
    exact = {name: lanes * w / total for name, w in weight.items()}
    out = {name: int(x) for name, x in exact.items()}
    # Largest remainders get the lanes left over by rounding down.
    for name in sorted(exact, key=lambda n: exact[n] - out[n], reverse=True)[: lanes - sum(out.values())]:
        out[name] += 1
    return out


def pair_prices(scenario: Scenario, arch: Architecture, prices: dict[str, Price] | None = None) -> np.ndarray:
    """Per cable (topology order): the cost of one more fiber pair on it.

    Computed as the cost of the fiber-bound equipment with one pair on that cable alone, less the
    cost with no pair anywhere (cable-km and other fixed items cancel).
    """
    prices = prices if prices is not None else plan_prices(scenario, arch)
    topo = scenario.topology
    nothing = InstalledTransceivers((), (), ())

    def cost_with(pairs: dict[str, int]) -> float:
        sc = replace(scenario, topology=topo.with_fiber_pairs(pairs))
        return cost_and_power(equipment_counts(installed_resources(sc, arch), nothing), prices)[0]

    zero = {c.key: 0 for c in topo.cables}
    base = cost_with(zero)
    return np.array([cost_with({**zero, c.key: 1}) - base for c in topo.cables], dtype=float)
