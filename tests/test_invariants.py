"""Engine invariants as property tests (hypothesis): whatever the network and traffic,
no unit is held by two demands, accepted + blocked = offered, released equals taken, and the
network ends empty after the last departure."""

from __future__ import annotations

from builders import chain, fiber_type, scenario, shortest_routes
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from sdmnet.inputs.model import Architecture
from sdmnet.sim.engine import prepare, simulate_replication

CORES_AND_ARCHS = st.sampled_from(
    [
        (1, Architecture("ind", "independent")),
        (4, Architecture("ind", "independent", lane_change=True)),
        (4, Architecture("ind-nolc", "independent", lane_change=False)),
        (4, Architecture("fj2", "fractional-joint", group=2)),
        (4, Architecture("fj2-nolc", "fractional-joint", group=2, lane_change=False)),
        (4, Architecture("joint", "joint")),
        (4, Architecture("fiber", "fiber")),
        (4, Architecture("fj2-share", "fractional-joint", group=2, share=True)),
        (4, Architecture("joint-share", "joint", share=True)),
        (4, Architecture("fiber-share", "fiber", share=True)),
    ]
)


@settings(max_examples=80, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    cores_arch=CORES_AND_ARCHS,
    hops=st.integers(1, 3),
    channels=st.integers(1, 6),
    pairs=st.integers(1, 3),
    sizes=st.lists(st.sampled_from([50.0, 100.0, 200.0, 300.0, 800.0]), min_size=1, max_size=3, unique=True),
    load=st.floats(0.5, 40.0),
    seed=st.integers(0, 2**31),
)
def test_engine_invariants(cores_arch, hops, channels, pairs, sizes, load, seed):
    cores, arch = cores_arch
    fiber = fiber_type(cores=cores, channels=channels)
    probs = [1.0 / len(sizes)] * len(sizes)
    sc = scenario(chain(fiber, hops, fiber_pairs=pairs), [arch], loads=(load,), sizes=tuple(zip(sizes, probs)))
    setup = prepare(sc, arch, shortest_routes)

    held: dict[tuple[int, int, int], int] = {}
    counts = {"book": 0, "release": 0, "block": 0}
    taken_units = released_units = 0

    def observe(kind, payload):
        nonlocal taken_units, released_units
        counts[kind] += 1
        if kind == "book" and payload.grant:
            taken_units += len(payload.grant)
            for unit in payload.grant:
                # No unit may be handed out while another demand holds it.
                assert unit not in held, f"unit {unit} held twice"
                held[unit] = id(payload)
        elif kind == "release" and payload.grant:
            released_units += len(payload.grant)
            for unit in payload.grant:
                assert held.pop(unit) == id(payload)

    requests = 400
    rec = simulate_replication(setup, load, seed, 0, requests, 0, drain=True, observer=observe)
    assert counts["book"] + counts["block"] == requests == rec.requests
    assert rec.blocked == counts["block"]
    assert counts["book"] == counts["release"]
    assert taken_units == released_units and not held
    assert rec.ended_empty is True
    assert 0 <= rec.blocked_gbps <= rec.offered_gbps
