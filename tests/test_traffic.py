"""Load per datacenter pair and the size distribution, against hand-computed shares."""

from __future__ import annotations

import pytest
from builders import fiber_type

from sdmnet.inputs.model import Cable, Site, Topology, TrafficSpec
from sdmnet.network.traffic import pair_loads, pair_weights, size_classes


def _triangle(weights=(1.0, 2.0, 3.0)) -> Topology:
    f = fiber_type()
    sites = tuple(Site(s, "datacenter", w) for s, w in zip("ABC", weights)) + (Site("H", "hub"),)
    cables = tuple(Cable(s, "H", 10.0, f.name, 1) for s in "ABC")
    return Topology("tri", {f.name: f}, sites, cables)


def test_uniform_spreads_evenly_over_datacenter_pairs_only():
    shares = pair_weights(_triangle(), TrafficSpec("uniform", (6.0,)))
    assert set(shares) == {("A", "B"), ("A", "C"), ("B", "C")}  # the hub offers nothing
    assert all(v == pytest.approx(1 / 3) for v in shares.values())


def test_gravity_is_proportional_to_weight_products():
    # Products: AB = 2, AC = 3, BC = 6 -> shares 2/11, 3/11, 6/11 (hand computed).
    loads = pair_loads(_triangle(), TrafficSpec("gravity", (11.0,)), 11.0)
    assert loads[("A", "B")] == pytest.approx(2.0)
    assert loads[("A", "C")] == pytest.approx(3.0)
    assert loads[("B", "C")] == pytest.approx(6.0)


def test_matrix_weights_scale_to_the_total_and_merge_orientations():
    traffic = TrafficSpec("matrix", (10.0,), matrix=(("A", "B", 1.0), ("C", "A", 3.0), ("A", "C", 1.0)))
    loads = pair_loads(_triangle(), traffic, 10.0)
    assert loads == {("A", "B"): pytest.approx(2.0), ("A", "C"): pytest.approx(8.0)}
    assert sum(loads.values()) == pytest.approx(10.0)


def test_size_classes_are_sorted_with_their_probabilities():
    sizes, probs = size_classes(TrafficSpec("uniform", (1.0,), sizes_gbps=((400.0, 0.25), (100.0, 0.75))))
    assert sizes.tolist() == [100.0, 400.0]
    assert probs.tolist() == [0.75, 0.25]
