"""Replications until the network blocking's interval is as narrow as asked (``[run] precision``)."""

from __future__ import annotations

import math
from dataclasses import replace

from builders import fiber_type, scenario, single_cable

from sdmnet import api
from sdmnet.inputs.model import Architecture
from sdmnet.sim.precision import relative_half_width, replication_cap
from sdmnet.sim.stats import Interval
from sdmnet.sim.sweep import TaskStore, plan_tasks, run_sweep, scenario_fingerprint


def _scenario(precision, loads=(3.0, 5.0), replications=3, max_replications=None):
    arch = Architecture("ind", "independent")
    sc = scenario(single_cable(fiber_type(cores=1, channels=8)), [arch], loads=loads, requests=2000, warmup=200,
                  replications=replications)  # fmt: skip
    return replace(sc, run=replace(sc.run, precision=precision, max_replications=max_replications))


def test_relative_half_width():
    assert relative_half_width(Interval(0.02, 0.018, 0.023)) == (0.023 - 0.018) / 2 / 0.02
    assert math.isnan(relative_half_width(Interval(0.0, 0.0, 0.0)))


def test_points_get_replications_until_precise_or_capped(tmp_path):
    sc = _scenario(precision=0.08, max_replications=40)
    result = api.simulate(sc, tmp_path, progress=False, figures=False)
    summary = result.summary
    assert (summary["replications"] > 3).all()  # 3 replications are far too few for 8 %
    for _, row in summary.iterrows():
        assert row["blocking_precision"] <= 0.08 or row["replications"] == 40
    assert (summary["blocking_precision"] <= 0.08).any()
    # The first replications are those of a plain run (replication r draws the same demands).
    plain_sc = replace(sc, run=replace(sc.run, precision=None))
    plain = run_sweep(plain_sc, None)
    stored = TaskStore(tmp_path / "tasks", scenario_fingerprint(sc)).load(plan_tasks(plain_sc))
    assert stored == plain and len(plain) == 6
    run = (tmp_path / "run.json").read_text()
    assert '"precision": 0.08' in run and '"blocking_precision"' in run


def test_a_point_that_blocks_nothing_stops_at_the_first_round(tmp_path):
    sc = _scenario(precision=0.01, loads=(0.05,))
    result = api.simulate(sc, tmp_path, progress=False, figures=False)
    row = result.summary.iloc[0]
    assert row["blocked"] == 0 and row["replications"] == 3 and math.isnan(row["blocking_precision"])


def test_the_cap_defaults_to_ten_times_the_first_round():
    assert replication_cap(_scenario(0.05).run) == 30
    assert replication_cap(_scenario(0.05, max_replications=7).run) == 7
