"""Candidates: a setup with new fiber counts derived from one prepare, sequential replications."""

from __future__ import annotations

from dataclasses import replace

from builders import chain, fiber_type, scenario

from sdmnet.inputs.model import Architecture
from sdmnet.planning.acceptance import Targets
from sdmnet.planning.candidates import Evaluator, run_replications, with_fiber_pairs
from sdmnet.sim.engine import prepare
from sdmnet.sim.stats import summarize_point


def _chain():
    arch = Architecture("ind", "independent", lane_change=True)
    sc = scenario(chain(fiber_type(cores=2, channels=4), 3), [arch], loads=(6.0,), requests=1500, warmup=150,
                  replications=2)  # fmt: skip
    return sc, arch


def test_derived_setup_equals_a_fresh_prepare():
    sc, arch = _chain()
    setup = prepare(sc, arch)
    pairs = {"S0-S1": 2, "S1-S2": 3, "S2-S3": 1}
    fresh = prepare(replace(sc, topology=sc.topology.with_fiber_pairs(pairs)), arch)
    assert with_fiber_pairs(setup, [2, 3, 1]) == fresh


def test_sequential_replications_extend_the_same_streams():
    # Common random numbers: replications 0..1 of a longer run are the very records of a shorter one.
    sc, arch = _chain()
    setup = prepare(sc, arch)
    short = run_replications(setup, 6.0, sc.seed, range(2), sc.run)
    longer = run_replications(setup, 6.0, sc.seed, range(4), sc.run)
    assert [r.blocked for r in longer[:2]] == [r.blocked for r in short]


def test_undecided_candidates_get_more_replications_up_to_the_cap():
    sc, arch = _chain()
    setup = prepare(sc, arch)
    # A target at the highest point estimate the batches see (2, 4, 6, 8 replications) keeps every
    # mean at or under it while the interval holds it: it runs to the cap, undecided.
    probe = run_replications(setup, 6.0, sc.seed, range(8), sc.run)
    means = [summarize_point(probe[:n], 0.95).blocking.mean for n in (2, 4, 6, 8)]
    ev = Evaluator(setup, 6.0, sc.seed, sc.run, Targets(max(means)))([1, 1, 1])
    assert ev.verdict == "undecided" and ev.replications == 8
    # A target just under the first batch's point estimate stops there (futility), unaccepted.
    stop = Evaluator(setup, 6.0, sc.seed, sc.run, Targets(0.999 * means[0]))([1, 1, 1])
    assert stop.verdict == "unlikely" and stop.replications == 2 and not stop.meets
    # A target far above is met after the first batch.
    easy = Evaluator(setup, 6.0, sc.seed, sc.run, Targets(0.9))([1, 1, 1])
    assert easy.meets and easy.replications == 2
