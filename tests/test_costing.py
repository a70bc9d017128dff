"""What a plan costs: the price of one more fiber pair per cable, lanes priced per class."""

from __future__ import annotations

from dataclasses import replace

import pandas as pd
import pytest
from builders import chain, fiber_type, scenario

from sdmnet.equipment.costs import cost_and_power, equipment_counts
from sdmnet.equipment.installed import InstalledTransceivers
from sdmnet.equipment.resources import installed_resources
from sdmnet.inputs.model import Architecture, PlanSpec, TransceiverClass
from sdmnet.planning.costing import pair_prices, plan_prices
from sdmnet.planning.run import run_plan


def _chain():
    # Three datacenters S0 - S1 - S2, 50 km apart.
    arch = Architecture("ind", "independent", lane_change=True)
    topo = chain(fiber_type(cores=7, channels=8), 2, length_km=50.0)
    topo = replace(topo, sites=tuple(replace(s, role="datacenter") for s in topo.sites))
    sc = scenario(topo, [arch], loads=(4.0,), requests=2000, warmup=200, replications=3)
    return sc, arch


def test_pair_price_is_the_slope_of_the_plan_cost_in_each_cable():
    sc, arch = _chain()
    prices = plan_prices(sc, arch)
    nothing = InstalledTransceivers((), (), ())

    def cost(pairs):
        topo = sc.topology.with_fiber_pairs(dict(zip(("S0-S1", "S1-S2"), pairs)))
        return cost_and_power(equipment_counts(installed_resources(replace(sc, topology=topo), arch), nothing),
                              prices)[0]  # fmt: skip

    slope = pair_prices(sc, arch, prices)
    assert cost((3, 1)) - cost((2, 1)) == pytest.approx(slope[0])
    assert cost((1, 5)) - cost((1, 2)) == pytest.approx(3 * slope[1])
    # The fiber itself is part of it: fiber_pair_km x length at least.
    assert slope[0] >= prices["fiber_pair_km"].cost * 50.0


def test_lanes_are_priced_per_transceiver_class(tmp_path):
    # Two classes: a cheap one that reaches 60 km and a dearer one that reaches 500 km. The 50 km
    # pairs take the cheap one, the 100 km pair the dear one; cost.csv prices each at its own cost.
    sc, arch = _chain()
    classes = (
        TransceiverClass("short", 100.0, 32.0, 10.0, reach_km=60.0, cost=0.5),
        TransceiverClass("long", 100.0, 32.0, 10.0, reach_km=500.0, cost=1.0),
    )
    sc = replace(sc, transceivers=classes, plan=PlanSpec(0.01))
    run_plan(sc, tmp_path, progress=False)
    cost = pd.read_csv(tmp_path / "cost.csv").set_index("item")
    totals = pd.read_csv(tmp_path / "plan_totals.csv").iloc[0]
    short, long = cost.loc["transceiver_lane:short"], cost.loc["transceiver_lane:long"]
    assert short["unit_cost"] == 0.5 and long["unit_cost"] == 1.0
    assert short["count"] > 0 and long["count"] > 0
    lanes = short["count"] + long["count"] + cost.loc["transceiver_lane", "count"]
    assert lanes == totals["transceiver_lanes_installed"]
    # Two of the three pairs are short: the cheap class carries about twice the lanes.
    assert short["count"] > long["count"]
