"""Growth forecast: year 0 is the plan, fibers never decrease, notes and figures are written."""

from __future__ import annotations

from dataclasses import replace

import pandas as pd
import pytest
from builders import fiber_type, scenario, weighted_datacenter_chain

from sdmnet.inputs.model import Architecture, ForecastSpec, PlanSpec
from sdmnet.planning.dimensioning import run_plan
from sdmnet.planning.forecasting import run_forecast, year_scenario

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
