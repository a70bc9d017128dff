"""The comparison headlines rank architectures only where their grade of service is the same."""

from __future__ import annotations

import pandas as pd

from sdmnet.output.headline import load_point_headline, plan_comparison, plan_headline, plan_text


def _totals():
    return pd.DataFrame(
        {
            "architecture": ["a", "b", "c"],
            "load_erlang": [120.0] * 3,
            "target_blocking": [0.01] * 3,
            "met": [True, False, True],
            "blocking": [0.008, 0.03, 0.009],
            "transceiver_lanes_installed": [1000, 500, 900],
            "transceivers_installed": [1000, 125, 900],
            "switch_ports": [1200, 300, 1100],
            "fiber_pairs": [17, 9, 20],
            "cost": [3000.0, 1000.0, 2400.0],
            "power_w": [21000.0, 9000.0, 19500.0],
        }
    )


def test_plan_headline_ranks_only_the_architectures_that_met_the_target():
    lines = plan_headline(_totals())
    # b is cheapest but missed the target: not ranked, named apart.
    assert lines[0].startswith("At the plan for 1 % request blocking at 120 Erlang, c costs least: 2,400")
    assert "900 transceiver lanes installed, 1,100 switch ports, 20 fiber pairs, 19.5 kW" in lines[0]
    assert lines[1] == "Then, at the same target: a +25 % (1,000 lanes, 21.0 kW)."
    assert lines[2] == "Not ranked (target not met, so their blocking differs): b."
    assert list(plan_comparison(_totals())["architecture"]) == ["c", "a", "b"]
    assert plan_text(_totals()).splitlines()[-3:] == lines


def test_plan_headline_says_so_when_nothing_met_the_target():
    lines = plan_headline(_totals().assign(met=False))
    assert lines[0].endswith("no architecture met the target: nothing is ranked.")
    assert plan_headline(_totals().drop(columns="cost")) == []


def test_load_point_headline_ranks_lanes_only_among_overlapping_intervals():
    summary = pd.DataFrame(
        {
            "architecture": ["a", "b", "c", "a", "b", "c"],
            "load_erlang": [60.0, 60.0, 60.0, 120.0, 120.0, 120.0],
            "blocking": [0.001, 0.002, 0.1, 0.02, 0.025, 0.3],
            "blocking_ci_low": [0.0, 0.001, 0.09, 0.015, 0.019, 0.28],
            "blocking_ci_high": [0.002, 0.003, 0.11, 0.024, 0.03, 0.32],
            "transceiver_lanes_installed": [400, 300, 100, 800, 700, 200],
        }
    )
    # At 120 Erlang, c blocks far more (and installs fewest lanes): it is left out of the ranking.
    assert load_point_headline(summary) == [
        "At 120 Erlang, a and b block alike (intervals overlap); installed transceiver lanes: b 700, a 800."
    ]
    apart = summary.assign(blocking_ci_high=summary["blocking"], blocking_ci_low=summary["blocking"])
    assert load_point_headline(apart) == []
