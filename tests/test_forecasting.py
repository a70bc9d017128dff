"""Growth forecast: year 0 is the plan, fibers never decrease, notes and figures are written."""

from __future__ import annotations

from dataclasses import replace

import pandas as pd
import pytest
from builders import fiber_type, scenario, single_cable, weighted_datacenter_chain

from sdmnet.analysis.analytic import erlang_b
from sdmnet.inputs.model import Architecture, ForecastSpec, PlanSpec
from sdmnet.network.traffic import pair_weights
from sdmnet.planning.forecasting import forecast_year, run_forecast, year_scenario
from sdmnet.planning.run import run_plan

TARGET = 0.01


def _chain_scenario(factors=(1.4, 2.0)):
    topo = weighted_datacenter_chain(fiber_type(cores=1, channels=4))
    arch = Architecture("ind", "independent")
    sc = scenario(topo, [arch], loads=(6.0, 10.0), requests=2000, warmup=200, replications=3, pattern="gravity")
    return replace(sc, plan=PlanSpec(TARGET), forecast=ForecastSpec(years=len(factors), factors=tuple(factors)))


def test_year_scenario_scales_every_load_point():
    sc = _chain_scenario()
    assert year_scenario(sc, 1.5).traffic.loads_erlang == (9.0, 15.0)


def test_forecast_starts_at_the_plan_and_never_removes_fibers(tmp_path):
    sc = _chain_scenario()
    result = run_forecast(sc, tmp_path / "forecast", progress=False)
    plan = run_plan(sc, tmp_path / "plan", progress=False)
    fc = pd.read_csv(tmp_path / "forecast" / "forecast.csv")
    for col in ("year", "architecture", "cable", "fiber_pairs", "transceivers_peak", "switch_ports",
                "load_factor", "added_pairs", "blocking", "blocking_ci_low", "blocking_ci_high"):
        assert col in fc.columns
    assert sorted(fc["year"].unique()) == [0, 1, 2]
    year0 = fc[fc["year"] == 0].set_index("cable")["fiber_pairs"].to_dict()
    assert year0 == plan.plans[0].pairs_by_cable == result.years[0].plan.pairs_by_cable
    wide = fc.pivot(index="year", columns="cable", values="fiber_pairs").sort_index()
    assert (wide.diff().dropna() >= 0).all().all()
    # The load doubles by year 2: at least one cable must have grown.
    assert (wide.iloc[-1] > wide.iloc[0]).any()
    # added_pairs is the year-on-year difference from year 1 on.
    added = fc.pivot(index="year", columns="cable", values="added_pairs").sort_index()
    assert (added.iloc[1:] == wide.diff().iloc[1:]).all().all()
    # Every year meets the target at its own scaled load (point estimate).
    assert (fc["blocking"] <= TARGET).all()
    assert fc.loc[fc["year"] == 2, "load_factor"].iloc[0] == pytest.approx(2.0)


def test_forecast_writes_notes_and_figures(tmp_path):
    sc = _chain_scenario()
    result = run_forecast(sc, tmp_path, progress=False)
    notes = (tmp_path / "forecast_notes.txt").read_text()
    assert notes == result.notes
    grown = result.forecast[(result.forecast["year"] > 0) & (result.forecast["added_pairs"] > 0)]
    for row in grown.itertuples():
        assert f"+{row.added_pairs} on {row.cable}" in notes
    for name in ("forecast_fiber_pairs.png", "forecast_transceivers.png", "forecast_switch_ports.png"):
        assert (tmp_path / name).stat().st_size > 1000
    totals = pd.read_csv(tmp_path / "forecast_totals.csv")
    assert list(totals["year"]) == [0, 1, 2]
    assert (totals["switch_ports"].diff().dropna() >= 0).all()


# -- one cable against Erlang B ------------------------------------------------------------------

# "Erlang-B capacity table, voice channels needed to serve offered traffic load for 2 %
# blocking", WirelessU traffic-engineering course (Lucent Technologies), reproduced at
# garywagoner.tripod.com/traffic/ERLANG.HTML (the rows tests/test_analytic.py also checks):
# the most Erlang that N servers carry at 2 % blocking, three decimals.
TABLE_2PCT = {5: 1.657, 11: 5.842, 15: 9.010, 21: 14.036, 25: 17.505}
CHANNELS = 5  # servers per fiber pair: a single-core fiber of 5 channels, one-lane demands


def test_one_cable_forecast_adds_the_fiber_pairs_erlang_b_asks_for_each_year(tmp_path):
    # Year loads 1.0, 7.3 and 15.5 Erlang at a 2 % target.  The table fixes the answer: 5
    # servers carry 1.657 E, so year 0 needs 1 pair; 11 servers carry only 5.842 E (so 10 do
    # not carry 7.3) and 15 carry 9.010, so year 1 needs 3 pairs; 21 carry 14.036 (20 do not
    # carry 15.5) and 25 carry 17.505, so year 2 needs 5 pairs.
    loads = (1.0, 7.3, 15.5)
    expected_pairs = [1, 3, 5]
    for pairs, load in zip(expected_pairs, loads):
        assert TABLE_2PCT[CHANNELS * pairs] >= load
        smaller = CHANNELS * (pairs - 1)
        assert smaller == 0 or TABLE_2PCT[smaller + 1] < load
    # Erlang B by its recursion (sdmnet.analysis.analytic.erlang_b, itself checked against printed
    # tables in tests/test_analytic.py) agrees with the printed rows (three decimals) and, with
    # margin on both sides of the target (so that simulation noise cannot tip a year), with the
    # answer.
    for servers, printed in TABLE_2PCT.items():
        low, high = printed - 0.0015, printed + 0.0015
        assert erlang_b(servers, low) <= 0.02 <= erlang_b(servers, high), servers
    for pairs, load in zip(expected_pairs, loads):
        assert erlang_b(CHANNELS * pairs, load) < 0.02 / 2
        assert erlang_b(CHANNELS * (pairs - 1), load) > 0.02 * 2

    arch = Architecture("ind", "independent")
    sc = scenario(single_cable(fiber_type(cores=1, channels=CHANNELS)), [arch], loads=(loads[0],),
                  requests=10_000, warmup=1000, replications=3)
    factors = tuple(load / loads[0] for load in loads[1:])
    sc = replace(sc, plan=PlanSpec(0.02), forecast=ForecastSpec(years=len(factors), factors=factors))
    result = run_forecast(sc, tmp_path, progress=False)
    assert result.forecast.sort_values("year")["fiber_pairs"].tolist() == expected_pairs


def test_site_growth_and_lane_roadmap_shape_each_year():
    # Site C grows 50 % a year on top of the overall 10 %: pairs at C gain share, the total grows
    # by the overall factor times the load-weighted mean of the pairs' site multipliers.
    sc = _chain_scenario()
    spec = ForecastSpec(years=2, growth_per_year=0.1, site_growth={"C": 0.5}, lane_gbps_by_year=(100.0, 200.0))
    sc = replace(sc, forecast=spec)
    year2, factor = forecast_year(sc, 2)
    shares = pair_weights(sc.topology, sc.traffic)  # gravity 3 : 1 : 2 -> AB 3, AC 6, BC 2 of 11
    multiplier = {p: (1.5**2 if "C" in p else 1.0) ** 0.5 for p in shares}
    assert factor == pytest.approx(1.1**2 * sum(w * multiplier[p] for p, w in shares.items()))
    assert year2.traffic.loads_erlang == pytest.approx(tuple(x * factor for x in sc.traffic.loads_erlang))
    grown = pair_weights(sc.topology, year2.traffic)
    assert grown[("A", "C")] / grown[("A", "B")] == pytest.approx(2.0 * 1.5)
    assert year2.transceiver.lane_gbps == 200.0
    assert forecast_year(sc, 0) == (sc, 1.0)


def test_forecast_in_money_with_a_growth_band(tmp_path):
    sc = _chain_scenario()
    sc = replace(sc, forecast=ForecastSpec(years=2, growth_per_year=0.3, growth_band=(0.1, 0.6)))
    run_forecast(sc, tmp_path, progress=False)
    totals = pd.read_csv(tmp_path / "forecast_totals.csv")
    for column in ("cost", "power_w", "cost_added", "power_added_w", "lane_gbps"):
        assert column in totals.columns
    assert (totals["cost"].diff().dropna() >= 0).all()
    assert totals["cost_added"].sum() == pytest.approx(totals["cost"].iloc[-1])
    band = pd.read_csv(tmp_path / "forecast_band.csv")
    assert set(band["case"]) == {"low", "base", "high"}
    wide = band.pivot(index="year", columns="case", values="load_factor")
    assert wide.loc[2, "low"] == pytest.approx(1.1**2) and wide.loc[2, "high"] == pytest.approx(1.6**2)
    cost = band.pivot(index="year", columns="case", values="cost")
    # More growth never needs less: fibers are only ever added, and each case meets its target.
    assert (cost["low"] <= cost["high"] + 1e-9).all()
    assert (tmp_path / "forecast_cost.png").stat().st_size > 1000


def test_a_plan_already_made_is_year_0_and_the_forecast_is_unchanged(tmp_path):
    # Reusing `sdmnet plan`'s result as year 0 (as the demo does) must give the very forecast that
    # planning year 0 again gives: the plan search is deterministic for a seed.
    sc = _chain_scenario()
    fresh = run_forecast(sc, tmp_path / "fresh", progress=False)
    plan = run_plan(sc, tmp_path / "plan", progress=False)
    reused = run_forecast(sc, tmp_path / "reused", progress=False, year0=plan.plans)
    assert reused.years[0].plan is plan.plans[0]
    pd.testing.assert_frame_equal(reused.forecast, fresh.forecast)
