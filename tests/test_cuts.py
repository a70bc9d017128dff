"""Cable cuts: the cuts of a topology, routes that avoid them, and plans that survive them."""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pandas as pd
import pytest
from builders import fiber_type, scenario
from scipy import stats

from sdmnet.inputs.model import Architecture, Cable, PlanSpec, Site, Topology
from sdmnet.planning.candidates import run_replications, with_fiber_pairs
from sdmnet.planning.cuts import cut_setup, single_cuts
from sdmnet.planning.run import run_plan


def _ring(groups=(None, None, None, None, None)):
    # Four datacenters on a ring A-B-C-D-A plus a chord A-C: every single cut leaves a detour.
    fiber = fiber_type(cores=1, channels=6)
    ends = (("A", "B"), ("B", "C"), ("C", "D"), ("D", "A"), ("A", "C"))
    cables = tuple(Cable(a, b, 10.0, fiber.name, 1, risk_group=g) for (a, b), g in zip(ends, groups))
    sites = tuple(Site(s, "datacenter") for s in "ABCD")
    return Topology("ring", {fiber.name: fiber}, sites, cables)


def test_cuts_are_every_cable_then_every_risk_group_of_several_cables():
    arch = Architecture("ind", "independent")
    sc = scenario(_ring(("duct", "duct", None, "bridge", None)), [arch])
    cuts = single_cuts(sc)
    assert [c.name for c in cuts] == ["A-B", "B-C", "C-D", "D-A", "A-C", "group:duct"]
    assert cuts[-1].cables == (0, 1) and cuts[-1].kind == "risk group"


def test_routes_after_a_cut_avoid_it_and_keep_cable_indices():
    arch = Architecture("ind", "independent")
    sc = scenario(_ring(("duct", "duct", None, None, None)), [arch], k_paths=3)
    group = single_cuts(sc)[-1]
    setup = cut_setup(sc, arch, group)
    assert setup.cables == tuple(c.key for c in sc.topology.cables)
    for routes in setup.routes:
        for route in routes:
            assert not set(route) & set(group.cables)
    # B hangs on A-B and B-C only: cutting the duct disconnects every pair of B.
    assert set(setup.unrouted_pairs) == {("A", "B"), ("B", "C"), ("B", "D")}


@pytest.mark.slow
def test_cable_cut_plan_meets_cut_target_under_every_cut_on_fresh_seeds(tmp_path):
    arch = Architecture("ind", "independent")
    sc = scenario(_ring(), [arch], loads=(6.0,), requests=3000, warmup=300, replications=4, k_paths=3)
    cut_target = 0.03
    sc = replace(sc, plan=PlanSpec(0.01, survive="cable-cut", cut_target=cut_target))
    result = run_plan(sc, tmp_path, progress=False)
    plan = result.plans[0]
    assert plan.met, plan.note
    cuts = pd.read_csv(tmp_path / "cuts.csv")
    assert list(cuts["cut"]) == ["A-B", "B-C", "C-D", "D-A", "A-C"]
    assert cuts["met"].all() and (cuts["blocking_ci_high"] <= cut_target).all()
    assert (cuts["pairs_without_route"] == 0).all()
    # Re-simulated with a fresh seed under each cut: not significantly above the cut target.
    fresh_run = replace(sc.run, requests=6000, replications=10)
    for cut in single_cuts(sc):
        setup = with_fiber_pairs(cut_setup(sc, arch, cut), plan.fiber_pairs)
        records = run_replications(setup, 6.0, sc.seed + 1000, range(10), fresh_run)
        ratios = np.array([r.blocked / r.requests for r in records])
        se = ratios.std(ddof=1) / np.sqrt(len(ratios))
        assert ratios.mean() - stats.t.ppf(0.95, len(ratios) - 1) * se <= cut_target, (cut.name, ratios.mean())
    totals = pd.read_csv(tmp_path / "plan_totals.csv").iloc[0]
    assert totals["worst_cut_blocking"] <= cut_target
