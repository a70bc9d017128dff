"""The estimate beside the simulation: gaps are flagged, and the broken assumption named."""

from __future__ import annotations

from builders import chain, fiber_type, scenario, single_cable

from sdmnet import api
from sdmnet.inputs.model import Architecture


def erlang_b(servers: int, load: float) -> float:
    # Erlang B recursion (Iversen, Teletraffic Engineering and Network Planning, ch. 4).
    b = 1.0
    for n in range(1, servers + 1):
        b = load * b / (n + load * b)
    return b


def test_cables_in_series_flag_the_fixed_point_overestimate(tmp_path):
    # One stream over three equal cables in series: the exact blocking is Erlang B of one cable
    # (the stream sees one resource), which the fixed point overestimates (Kelly, Ann. Appl.
    # Probab. 1(3), 1991).
    arch = Architecture("ind", "independent")
    sc = scenario(chain(fiber_type(cores=1, channels=10), 3), [arch], loads=(6.0,), requests=20_000, replications=6)
    row = api.simulate(sc, tmp_path, progress=False, figures=False).summary.iloc[0]
    exact = erlang_b(10, 6.0)
    assert row.blocking_ci_low <= exact <= row.blocking_ci_high
    assert row.estimate_blocking > row.blocking_ci_high
    assert row.estimate_outside_interval
    assert row.estimate_gap.startswith("estimate above the interval: cables assumed to block independently")


def test_one_cable_estimate_sits_inside_the_interval(tmp_path):
    # Kaufman-Roberts is exact on one cable with no contiguity (Kaufman, IEEE Trans. Commun. 1981).
    arch = Architecture("ind", "independent")
    sizes = ((100.0, 0.6), (300.0, 0.4))
    sc = scenario(single_cable(fiber_type(cores=2, channels=8)), [arch], loads=(5.0,), sizes=sizes,
                  requests=20_000, replications=6)
    row = api.simulate(sc, tmp_path, progress=False, figures=False).summary.iloc[0]
    assert row.blocking_ci_low <= row.estimate_blocking <= row.blocking_ci_high
    assert not row.estimate_outside_interval and row.estimate_gap == ""


def test_simulate_says_which_estimate_filled_its_columns(tmp_path, monkeypatch):
    # [run] estimate = "auto": routed on a small network; past the size limit the plain Erlang
    # fixed point, with a note; "none" leaves the columns empty.
    from dataclasses import replace

    from sdmnet.analysis import estimate as estimate_module

    arch = Architecture("ind", "independent")
    sc = scenario(chain(fiber_type(cores=1, channels=10), 2), [arch], loads=(6.0,), requests=500, replications=2)
    small = api.simulate(sc, tmp_path / "small", progress=False, figures=False)
    assert small.summary["estimate_method"].tolist() == ["routed"] and small.notes == []

    monkeypatch.setattr(estimate_module, "ROUTED_WORK_LIMIT", 1)  # the two-hop route is over it
    large = api.simulate(sc, tmp_path / "large", progress=False, figures=False)
    assert large.summary["estimate_method"].tolist() == ["fixed-point"]
    assert any("plain Erlang fixed point" in note for note in large.notes)
    # One route and one stream: the plain fixed point is the routed one without continuity,
    # which a single stream does not feel, so both give the same figure here.
    assert large.summary["estimate_blocking"].iloc[0] == small.summary["estimate_blocking"].iloc[0]

    routed = api.simulate(replace(sc, run=replace(sc.run, estimate="routed")), tmp_path / "routed", progress=False,
                          figures=False)  # fmt: skip
    assert routed.summary["estimate_method"].tolist() == ["routed"]

    nothing = api.simulate(replace(sc, run=replace(sc.run, estimate="none")), tmp_path / "none", progress=False,
                           figures=False)  # fmt: skip
    assert nothing.summary["estimate_method"].tolist() == ["none"]
    assert nothing.summary["estimate_blocking"].isna().all()


def test_simulate_reuses_an_estimate_already_made(tmp_path, monkeypatch):
    # demo writes estimate.csv first and hands its table to simulate: not solved a second time.
    arch = Architecture("ind", "independent")
    sc = scenario(chain(fiber_type(cores=1, channels=10), 2), [arch], loads=(6.0,), requests=500, replications=2)
    network, _ = api.estimate(sc, tmp_path / "est")

    def refuse(*args, **kwargs):
        raise AssertionError("the estimate was solved again")

    monkeypatch.setattr(api, "estimate_scenario", refuse)
    row = api.simulate(sc, tmp_path / "sim", progress=False, figures=False, estimate_made=network).summary.iloc[0]
    assert row.estimate_blocking == network["blocking"].iloc[0]
    assert row.estimate_method == "routed"
