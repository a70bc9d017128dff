"""What one architecture's equipment costs and draws: counts per catalogue item, unit prices
and watts, and the rows of cost.csv.

Counts (docs/model.md, section 6): installed lanes (:mod:`sdmnet.equipment.installed`), of which
those of MIMO modules also pay ``mimo_premium``; line-side switch ports by kind, fan-in/fan-out
devices, amplifiers, fiber-pair-km and cable-km (:mod:`sdmnet.equipment.resources`); one add/drop
port per installed module (assumption: every module's line side plugs into its own add/drop port
of the site's switch), with a fan-in/fan-out device each where those ports are multicore;
regenerator lanes 0 here: a plan adds those it installs (:func:`sdmnet.planning.tables.plan_counts`).

Prices: the catalogue's defaults (:mod:`sdmnet.equipment.catalogue`), then an older scenario's
``[plan.unit_costs]`` (``fiber_pair_km``, ``transceiver_lane``, and ``switch_port`` for every
kind of switch port), then ``[costs]``; watts: the defaults, the transceiver's own figures for
lanes and MIMO, then ``[power]``.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

from ..inputs.model import Scenario
from ..sim.stats import PointSummary
from .catalogue import ITEMS, LEGACY_UNIT_COSTS, item
from .installed import InstalledTransceivers
from .resources import InstalledResources, ModuleFigures

__all__ = [
    "Price",
    "equipment_counts",
    "site_switch_ports",
    "unit_prices",
    "carried_tbps",
    "cost_and_power",
    "equipment_columns",
    "cost_rows",
]


@dataclass(frozen=True)
class Price:
    """Relative cost and watts of one unit of an item."""

    cost: float
    power_w: float


def equipment_counts(resources: InstalledResources, installed: InstalledTransceivers) -> dict[str, float]:
    """Count of every catalogue item (0 for what the architecture does not use), in catalogue order."""
    counts: dict[str, float] = {entry.name: 0 for entry in ITEMS}
    counts["transceiver_lane"] = installed.lanes
    counts["mimo_premium"] = installed.mimo_lanes
    for kind, n in resources.line_ports.items():
        counts[kind] += n
    counts["add_drop_port"] = installed.modules
    counts["fan_in_fan_out"] = resources.fan_in_fan_out + (installed.modules if resources.multicore_add_drop else 0)
    counts[resources.amplifier_item] = resources.amplifiers
    counts["fiber_pair_km"] = resources.fiber_pair_km
    counts["cable_km"] = resources.cable_km
    return counts


def site_switch_ports(
    resources: InstalledResources, installed: InstalledTransceivers, sites: tuple[str, ...]
) -> list[tuple[int, int]]:
    """Per site (in ``sites`` order): line-side ports and add/drop ports (one per installed module)."""
    return [(resources.site_line_ports[s], installed.site_modules[i]) for i, s in enumerate(sites)]


def unit_prices(scenario: Scenario, module: ModuleFigures | None = None) -> dict[str, Price]:
    """Cost and watts of one unit of every item for one architecture.

    ``module`` (:func:`sdmnet.equipment.resources.module_figures`) gives the MIMO equalizer's
    extra watts per lane; without it, or without MIMO, ``mimo_premium`` draws 0 W unless
    ``[power]`` says otherwise.
    """
    costs = {entry.name: entry.cost for entry in ITEMS}
    legacy = scenario.plan.unit_costs if scenario.plan is not None else {}
    for key, value in legacy.items():
        for name in LEGACY_UNIT_COSTS[key]:
            costs[name] = value
    costs.update(scenario.costs)
    lane_w = scenario.transceiver.module_power_w
    mimo_w = 0.0
    if module is not None and module.lanes > 1:
        mimo_w = max(0.0, module.power_w / module.lanes - lane_w)
    watts = {entry.name: entry.power_w for entry in ITEMS}
    watts.update({"transceiver_lane": lane_w, "mimo_premium": mimo_w})
    watts["regenerator_lane"] = 2 * watts["transceiver_lane"]
    watts.update(scenario.power)
    return {name: Price(costs[name], float(watts[name] or 0.0)) for name in costs}


def carried_tbps(scenario: Scenario, point: PointSummary) -> float:
    """Traffic carried at a point, in Tb/s: offered Erlang x mean size x (1 - bandwidth blocking)."""
    mean_gbps = sum(size * prob for size, prob in scenario.traffic.sizes_gbps)
    return point.load_erlang * mean_gbps * (1.0 - point.bandwidth_blocking.mean) / 1000.0


def cost_and_power(counts: Mapping[str, float], prices: Mapping[str, Price]) -> tuple[float, float]:
    """Total relative cost and watts of ``counts``."""
    cost = sum(n * prices[name].cost for name, n in counts.items())
    power = sum(n * prices[name].power_w for name, n in counts.items())
    return float(cost), float(power)


def equipment_columns(
    scenario: Scenario,
    point: PointSummary,
    resources: InstalledResources,
    installed: InstalledTransceivers,
    prices: Mapping[str, Price] | None,
) -> dict[str, float]:
    """The equipment columns summary.csv and plan_totals.csv share: installed transceivers,
    switch ports (line side plus add/drop), cost and watts (NaN without ``prices``), carried
    Tb/s and cost per carried Tb/s."""
    cost = power = math.nan
    if prices is not None:
        cost, power = cost_and_power(equipment_counts(resources, installed), prices)
    carried = carried_tbps(scenario, point)
    return {
        "transceiver_lanes_installed": installed.lanes,
        "transceivers_installed": installed.modules,
        "transceiver_mimo_lanes_installed": installed.mimo_lanes,
        "switch_ports": resources.line_port_count + installed.modules,
        "switch_ports_line": resources.line_port_count,
        "switch_ports_add_drop": installed.modules,
        "cost": cost,
        "power_w": power,
        "carried_tbps": carried,
        "cost_per_carried_tbps": cost / carried if carried > 0 else math.nan,
    }


def cost_rows(
    architecture: str, counts: Mapping[str, float], prices: Mapping[str, Price], carried: float
) -> list[dict]:
    """cost.csv rows of one architecture: one per item, then ``item = "total"``.

    Columns: ``architecture, item, count, unit_cost, cost, power_w, unit_power_w, unit,
    carried_tbps, cost_per_carried_tbps`` (the last two on the total row only).
    """
    rows = []
    for name, n in counts.items():
        price = prices[name]
        rows.append(
            {
                "architecture": architecture,
                "item": name,
                "count": n,
                "unit_cost": price.cost,
                "cost": n * price.cost,
                "power_w": n * price.power_w,
                "unit_power_w": price.power_w,
                "unit": item(name).unit,
                "carried_tbps": math.nan,
                "cost_per_carried_tbps": math.nan,
            }
        )
    cost, power = cost_and_power(counts, prices)
    rows.append(
        {
            "architecture": architecture,
            "item": "total",
            "count": math.nan,
            "unit_cost": math.nan,
            "cost": cost,
            "power_w": power,
            "unit_power_w": math.nan,
            "unit": "",
            "carried_tbps": carried,
            "cost_per_carried_tbps": cost / carried if carried > 0 else math.nan,
        }
    )
    return rows
