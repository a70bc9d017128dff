"""What a plan costs: unit prices of an architecture's items, and the price of one fiber pair per cable.

The search minimises the total cost of :func:`sdmnet.equipment.costs.cost_and_power`.  Of that
total, the part that follows the fibers (line-side switch ports, fan-in/fan-out devices,
amplifiers, fiber-pair-km) grows linearly with each cable's pairs (:mod:`sdmnet.equipment.resources`);
:func:`pair_prices` gives that slope per cable, the price the search weighs a move by.  Installed
transceivers follow the carried traffic, nearly the same for every candidate that meets the
target, and are counted in the plan's total, not in the moves.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from ..equipment.costs import Price, cost_and_power, equipment_counts, unit_prices
from ..equipment.installed import InstalledTransceivers
from ..equipment.resources import installed_resources, module_figures
from ..inputs.model import Architecture, Scenario

__all__ = ["plan_prices", "pair_prices"]


def plan_prices(scenario: Scenario, arch: Architecture) -> dict[str, Price]:
    """Unit prices and watts of the items of ``arch`` (:func:`sdmnet.equipment.costs.unit_prices`)."""
    return unit_prices(scenario, module_figures(scenario, arch))


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
