"""Acceptance of a candidate: the interval's upper bound against the target, sequentially."""

from __future__ import annotations

import math
from dataclasses import replace

from sdmnet.planning.acceptance import (
    MET,
    MISSED,
    UNDECIDED,
    UNLIKELY,
    Targets,
    next_batch,
    verdict,
    worst_pair,
)
from sdmnet.sim.stats import Interval, PointSummary


def _point(network: Interval, pairs=(), offered=None) -> PointSummary:
    n = len(pairs)
    return PointSummary(
        architecture="a", load_erlang=1.0, replications=5, requests=100, blocked=1, blocking=network,
        bandwidth_blocking=network, class_blocking=(), class_offered=(), class_blocked=(),
        pair_blocking=tuple(pairs), pair_offered=tuple(offered if offered is not None else [10] * n),
        pair_blocked=(0,) * n, transceivers_peak=0, transceivers_mean=0.0, lanes_peak=0, lanes_mean=0.0,
        site_transceivers_peak=(), site_transceivers_mean=(), site_lanes_mean=(), site_transceivers_histogram=(),
        site_lanes_histogram=(), site_mimo_lanes_histogram=(), cable_utilisation=(),
    )  # fmt: skip


def test_upper_bound_decides_not_the_point_estimate():
    # A point estimate under the target with an upper bound above it is not accepted.
    assert verdict(_point(Interval(0.009, 0.007, 0.011)), Targets(0.01)) == UNDECIDED
    assert verdict(_point(Interval(0.008, 0.007, 0.01)), Targets(0.01)) == MET
    assert verdict(_point(Interval(0.012, 0.0101, 0.014)), Targets(0.01)) == MISSED
    # Holding the target with the point estimate above it: dropped without more replications.
    assert verdict(_point(Interval(0.0105, 0.008, 0.013)), Targets(0.01)) == UNLIKELY


def test_one_replication_never_decides():
    assert verdict(_point(Interval(0.0, math.nan, math.nan)), Targets(0.01)) == UNDECIDED


def test_pair_target_is_enforced_on_every_offered_pair():
    good = Interval(0.001, 0.0, 0.002)
    pairs = [good, Interval(0.04, 0.03, 0.05), Interval(0.5, 0.4, 0.6)]
    # The third pair was offered nothing: it does not count.
    point = _point(good, pairs, offered=[10, 10, 0])
    assert verdict(point, Targets(0.01)) == MET
    assert verdict(point, Targets(0.01, pair=0.06)) == MET
    assert verdict(point, Targets(0.01, pair=0.045)) == UNDECIDED
    assert verdict(point, Targets(0.01, pair=0.035)) == UNLIKELY
    assert verdict(point, Targets(0.01, pair=0.02)) == MISSED
    assert worst_pair(point, (("A", "B"), ("A", "C"), ("B", "C"))) == ("A-C", 0.04)
    assert worst_pair(replace(point, pair_offered=(0, 0, 0)), (("A", "B"), ("A", "C"), ("B", "C")))[0] == ""


def test_batches_stop_at_the_cap():
    assert next_batch(0, 5, 20) == 5
    assert next_batch(15, 5, 20) == 5
    assert next_batch(18, 5, 20) == 2
    assert next_batch(20, 5, 20) == 0
