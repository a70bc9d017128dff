"""The cost model on hand-built counts: every row is count x unit price, and the total adds up."""

from __future__ import annotations

import math
from dataclasses import replace

import pytest
from builders import fiber_type, scenario, single_cable

from sdmnet.equipment.catalogue import ITEM_NAMES, SWITCH_PORT_ITEMS
from sdmnet.equipment.costs import cost_and_power, cost_rows, equipment_counts, unit_prices
from sdmnet.equipment.installed import InstalledTransceivers
from sdmnet.equipment.resources import InstalledResources, ModuleFigures
from sdmnet.inputs.model import Architecture, PlanSpec


def _hand_built():
    resources = InstalledResources(
        site_line_ports={"A": 14, "B": 14},
        line_ports={"wss_port_core": 28},
        fiber_pairs=2,
        fiber_km=40.0,
        fiber_pair_km=20.0,
        cable_km=10.0,
        fan_in_fan_out=8,
        multicore_add_drop=False,
        amplifiers=14,
        amplifier_item="amplifier_core",
    )
    installed = InstalledTransceivers(site_modules=(5, 3), site_lanes=(20, 12), site_mimo_lanes=(20, 12))
    return resources, installed


def test_counts_come_from_the_installed_equipment():
    counts = equipment_counts(*_hand_built())
    assert list(counts) == list(ITEM_NAMES)
    assert counts["transceiver_lane"] == 32 and counts["mimo_premium"] == 32
    assert counts["wss_port_core"] == 28 and counts["add_drop_port"] == 8  # one per installed module
    assert counts["wss_port_group"] == counts["fiber_xc_port"] == 0
    assert (counts["fan_in_fan_out"], counts["amplifier_core"], counts["amplifier_multicore"]) == (8, 14, 0)
    assert (counts["fiber_pair_km"], counts["cable_km"], counts["regenerator_lane"]) == (20.0, 10.0, 0)
    # Multicore add/drop ports: a fan-in/fan-out device for each (one per installed module).
    resources, installed = _hand_built()
    multicore = equipment_counts(replace(resources, multicore_add_drop=True), installed)
    assert multicore["fan_in_fan_out"] == 8 + 8


def test_cost_rows_are_count_times_unit_price_and_the_total_adds_up():
    sc = scenario(single_cable(fiber_type()), [Architecture("ind", "independent")])
    sc = replace(
        sc,
        costs={"transceiver_lane": 2.0, "mimo_premium": 0.5, "wss_port_core": 0.25, "add_drop_port": 0.125,
               "fan_in_fan_out": 1.0, "amplifier_core": 3.0, "fiber_pair_km": 0.5, "cable_km": 4.0},
        power={"transceiver_lane": 10.0, "mimo_premium": 2.0, "wss_port_core": 1.0, "add_drop_port": 1.0,
               "fan_in_fan_out": 0.0, "amplifier_core": 20.0},
    )
    counts = equipment_counts(*_hand_built())
    rows = cost_rows("ind", counts, unit_prices(sc), carried=4.0)
    by_item = {r["item"]: r for r in rows}
    for name in ITEM_NAMES:
        row = by_item[name]
        assert row["cost"] == row["count"] * row["unit_cost"]
        assert row["power_w"] == row["count"] * row["unit_power_w"]
    # By hand: 32 x 2 + 32 x 0.5 + 28 x 0.25 + 8 x 0.125 + 8 x 1 + 14 x 3 + 20 x 0.5 + 10 x 4 = 188.
    total = by_item["total"]
    assert total["cost"] == pytest.approx(188.0)
    # Watts: 32 x 10 + 32 x 2 + 28 x 1 + 8 x 1 + 14 x 20 = 700 (fiber and cable draw nothing).
    assert total["power_w"] == pytest.approx(700.0)
    assert total["cost"] == pytest.approx(sum(r["cost"] for r in rows if r["item"] != "total"))
    assert total["cost_per_carried_tbps"] == pytest.approx(188.0 / 4.0)
    assert math.isnan(total["count"])
    assert [r["item"] for r in rows][-1] == "total" and len(rows) == len(ITEM_NAMES) + 1
    assert cost_and_power(counts, unit_prices(sc)) == pytest.approx((188.0, 700.0))


def test_old_plan_unit_costs_price_the_new_items_and_costs_win():
    sc = scenario(single_cable(fiber_type()), [Architecture("ind", "independent")])
    sc = replace(sc, plan=PlanSpec(unit_costs={"switch_port": 0.4, "transceiver_lane": 3.0, "fiber_pair_km": 0.7}))
    prices = unit_prices(sc)
    assert all(prices[name].cost == 0.4 for name in SWITCH_PORT_ITEMS)
    assert prices["transceiver_lane"].cost == 3.0 and prices["fiber_pair_km"].cost == 0.7
    prices = unit_prices(replace(sc, costs={"add_drop_port": 0.05}))
    assert prices["add_drop_port"].cost == 0.05 and prices["wss_port_core"].cost == 0.4


def test_lane_watts_follow_the_transceiver_and_mimo_watts_its_equalizer():
    sc = scenario(single_cable(fiber_type()), [Architecture("ind", "independent")])
    sc = replace(sc, transceiver=replace(sc.transceiver, module_power_w=12.0))
    # A 4-lane MIMO module of 60 W: 48 W for the lanes, 3 W per lane for the MIMO equalizer.
    prices = unit_prices(sc, ModuleFigures(4, 8, 40, 60.0, 1.0, 2.0))
    assert prices["transceiver_lane"].power_w == 12.0
    assert prices["mimo_premium"].power_w == pytest.approx(3.0)
    assert prices["regenerator_lane"].power_w == 24.0
    assert unit_prices(sc, ModuleFigures(1, 0, 0, 12.0, 0.0, 0.0))["mimo_premium"].power_w == 0.0
