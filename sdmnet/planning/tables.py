"""The plan's tables: plan.csv, plan_totals.csv, cost.csv, plan_sites.csv, plan_candidates.csv.

Columns are in docs/planning.md; the contract's (MODEL.md, sections 5 and 6) come first.
"""

from __future__ import annotations

import math

from ..equipment.costs import (
    Price,
    carried_tbps,
    cost_and_power,
    cost_rows,
    equipment_columns,
    equipment_counts,
    site_switch_ports,
)
from ..equipment.resources import ModuleFigures, module_figures
from ..inputs.model import Scenario
from .costing import CLASS_LANE, plan_prices
from .search import ArchitecturePlan

__all__ = ["plan_counts", "plan_rows", "totals_row", "plan_cost_rows", "site_rows", "candidate_rows"]


def plan_counts(plan: ArchitecturePlan) -> dict[str, float]:
    """Count of every catalogue item of the plan, regenerator lanes included; installed lanes of
    named transceiver classes as ``transceiver_lane:NAME`` (priced per class)."""
    counts = equipment_counts(plan.resources, plan.installed)
    counts["regenerator_lane"] = sum(plan.regenerators.values())
    for name, n in plan.class_lanes.items():
        counts[CLASS_LANE.format(name)] = n
        counts["transceiver_lane"] -= n
    return counts


def plan_rows(scenario: Scenario, plan: ArchitecturePlan) -> list[dict]:
    """Rows of plan.csv for one architecture: one per cable."""
    topo = scenario.topology_for(plan.architecture)
    point = plan.evaluation.point
    rows = []
    for i, cable in enumerate(topo.cables):
        rows.append(
            {
                "architecture": plan.architecture.name,
                "cable": cable.key,
                "fiber_pairs": plan.fiber_pairs[i],
                "blocking": point.blocking.mean,
                "blocking_ci_low": point.blocking.low,
                "blocking_ci_high": point.blocking.high,
                "length_km": cable.length_km,
                "fiber_type": cable.fiber_type,
                "installed_pairs": cable.fiber_pairs,
                "added_pairs": plan.fiber_pairs[i] - cable.fiber_pairs,
                "first_guess": plan.first_guess[i],
                "utilisation": point.cable_utilisation[i],
                "load_erlang": plan.load_erlang,
                "target_blocking": plan.target,
                "met": plan.met,
                "confidence": plan.confidence,
                "replications": point.replications,
            }
        )
    return rows


def totals_row(
    scenario: Scenario,
    plan: ArchitecturePlan,
    prices: dict[str, Price] | None = None,
    module: ModuleFigures | None = None,
) -> dict:
    """One row of plan_totals.csv: network totals of one architecture's plan, with its cost and watts.

    ``prices`` default to :func:`plan_prices`; ``module`` (the transceiver module beside the lane
    counts: its lanes and MIMO size) to :func:`sdmnet.equipment.resources.module_figures`.
    """
    module = module if module is not None else module_figures(scenario, plan.architecture)
    point = plan.evaluation.point
    res = plan.resources
    installed = plan.installed
    worst_name, worst_blocking = plan.worst_pair
    prices = prices if prices is not None else plan_prices(scenario, plan.architecture)
    # The columns shared with summary.csv, placed in the contract's order below; cost and watts
    # of the plan's own counts (regenerator lanes, lanes per class).
    equipment = equipment_columns(scenario, point, res, installed, prices)
    equipment["cost"], equipment["power_w"] = cost_and_power(plan_counts(plan), prices)
    carried = equipment["carried_tbps"]
    equipment["cost_per_carried_tbps"] = equipment["cost"] / carried if carried > 0 else math.nan
    worst_cut = max(plan.cuts, key=lambda o: o.evaluation.point.blocking.mean, default=None)
    return {
        "architecture": plan.architecture.name,
        "met": plan.met,
        "blocking": point.blocking.mean,
        "blocking_ci_low": point.blocking.low,
        "blocking_ci_high": point.blocking.high,
        "worst_pair_blocking": worst_blocking,
        "cost": equipment.pop("cost"),
        "power_w": equipment.pop("power_w"),
        "fiber_pairs": res.fiber_pairs,
        "transceiver_lanes_installed": equipment.pop("transceiver_lanes_installed"),
        "confidence": plan.confidence,
        "replications": point.replications,
        "verdict": plan.verdict,
        "worst_pair": worst_name,
        "worst_cut": worst_cut.cut.name if worst_cut is not None else "",
        "worst_cut_blocking": worst_cut.evaluation.point.blocking.mean if worst_cut is not None else math.nan,
        "regenerated_pairs": " ".join(plan.regenerated),
        "regenerator_lanes": sum(plan.regenerators.values()),
        "switching": plan.architecture.switching,
        "load_erlang": plan.load_erlang,
        "target_blocking": plan.target,
        "fiber_strands": res.fiber_strands,
        "fiber_km": res.fiber_km,
        "fiber_pair_km": res.fiber_pair_km,
        "module_lanes": module.lanes,
        "mimo_size": module.mimo_size,
        "transceivers_peak": point.transceivers_peak,
        "transceiver_lanes_peak": point.lanes_peak,
        **equipment,
        "bandwidth_blocking": point.bandwidth_blocking.mean,
        "locally_minimal": plan.locally_minimal,
        "candidates": plan.candidates,
        "note": plan.note,
    }


def plan_cost_rows(scenario: Scenario, plan: ArchitecturePlan, prices: dict[str, Price] | None = None) -> list[dict]:
    """Rows of cost.csv for one architecture's plan (:func:`sdmnet.equipment.costs.cost_rows`)."""
    counts = plan_counts(plan)
    prices = prices if prices is not None else plan_prices(scenario, plan.architecture)
    return cost_rows(plan.architecture.name, counts, prices, carried_tbps(scenario, plan.evaluation.point))


def site_rows(scenario: Scenario, plan: ArchitecturePlan) -> list[dict]:
    """Rows of plan_sites.csv: installed transceivers and switch ports per site."""
    point = plan.evaluation.point
    sites = scenario.topology_for(plan.architecture).sites
    ports = site_switch_ports(plan.resources, plan.installed, tuple(s.id for s in sites))
    return [
        {
            "architecture": plan.architecture.name,
            "site": s.id,
            "role": s.role,
            "transceiver_lanes_installed": plan.installed.site_lanes[i],
            "transceivers_installed": plan.installed.site_modules[i],
            "transceivers_peak": point.site_transceivers_peak[i],
            "switch_ports": sum(ports[i]),
            "switch_ports_line": ports[i][0],
            "switch_ports_add_drop": ports[i][1],
        }
        for i, s in enumerate(sites)
    ]


def candidate_rows(plan: ArchitecturePlan, **extra: object) -> list[dict]:
    """Every simulated candidate of a plan (plan_candidates.csv), for inspection."""
    return [
        {
            **extra,
            "architecture": plan.architecture.name,
            "candidate": ev.index,
            "phase": ev.phase,
            "fiber_pairs": " ".join(f"{k}:{n}" for k, n in zip(plan.cables, ev.fiber_pairs)),
            "total_pairs": sum(ev.fiber_pairs),
            "blocking": ev.point.blocking.mean,
            "blocking_ci_low": ev.point.blocking.low,
            "blocking_ci_high": ev.point.blocking.high,
            "replications": ev.replications,
            "verdict": ev.verdict,
            "meets": ev.meets,
        }
        for ev in plan.history
    ]
