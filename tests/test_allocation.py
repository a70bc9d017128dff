"""First-fit allocation of units and fibers, and exact release.

The first-fit order (lowest channel, then lowest core group, then lowest fiber) is the model's
rule (docs/model.md, section 3); first fit itself is common practice in spectrum assignment, no source.
Positions in grants are ``group * fibers + fiber`` and bits are ``1 << channel`` (the documented
grant format of sdmnet.sim.allocation).
"""

from __future__ import annotations

import random

import pytest

from sdmnet.sim.allocation import FiberState, UnitState


def _units(state, grant):
    """Grant triples as (cable, fiber, group, channel)."""
    return [
        (h, pos % state.fibers[h], pos // state.fibers[h], bit.bit_length() - 1) for h, pos, bit in grant
    ]


def test_first_fit_takes_lowest_channel_then_group_then_fiber():
    # One cable, 2 fibers x 2 groups x 2 channels: 8 units, taken one by one.
    state = UnitState([2], [2], [2], lane_change=True)
    order = [_units(state, state.take([0], 1))[0][1:] for _ in range(8)]
    # (fiber, group, channel): channel 0 everywhere first, group-major then fiber.
    assert order == [
        (0, 0, 0), (1, 0, 0), (0, 1, 0), (1, 1, 0),
        (0, 0, 1), (1, 0, 1), (0, 1, 1), (1, 1, 1),
    ]  # fmt: skip
    assert state.take([0], 1) is None
    assert state.busy_units == [8]


def test_a_demand_of_several_units_takes_them_in_first_fit_order_on_every_hop():
    state = UnitState([1, 1], [2, 2], [3, 3], lane_change=True)
    grant = state.take([0, 1], 3)
    units = _units(state, grant)
    # Every unit on both hops, same channel end to end; the third unit moves to channel 1.
    assert [(h, g, w) for h, _f, g, w in units] == [(0, 0, 0), (1, 0, 0), (0, 1, 0), (1, 1, 0), (0, 0, 1), (1, 0, 1)]
    assert state.busy_units == [3, 3]


def test_path_search_skips_channels_busy_on_any_hop():
    state = UnitState([1, 1], [1, 1], [4, 4], lane_change=True)
    state.take([0], 1)  # channel 0 on cable 0
    state.take([1], 2)  # channels 0 and 1 on cable 1
    grant = state.take([0, 1], 1)
    assert {bit for _h, _p, bit in grant} == {1 << 2}


def test_lane_change_lets_a_unit_take_another_group_on_the_next_hop():
    # Cable 0 has group 0 busy on channel 0, cable 1 has group 1 busy on channel 0.
    for lane_change, expected_channel in ((True, 0), (False, 1)):
        state = UnitState([1, 1], [2, 2], [2, 2], lane_change=lane_change)
        first = state.take([0], 1)
        assert _units(state, first) == [(0, 0, 0, 0)]
        state.take([1], 2)  # groups 0 and 1 of channel 0 on cable 1 ...
        state.give_back([(1, 0, 1)])  # ... then group 0 freed again: only group 1 busy there
        grant = state.take([0, 1], 1)
        units = _units(state, grant)
        assert {w for *_x, w in units} == {expected_channel}
        if lane_change:
            # Group 1 on the first hop, group 0 on the second: a change of core at the switch.
            assert [(h, g) for h, _f, g, _w in units] == [(0, 1), (1, 0)]
        else:
            # Same group index on both hops: channel 0 has no common free group, so channel 1.
            assert len({g for _h, _f, g, _w in units}) == 1


def test_same_group_prefers_the_lowest_channel_over_the_lowest_group():
    state = UnitState([1], [2], [2], lane_change=False)
    state.take([0], 1)  # group 0, channel 0
    grant = state.take([0], 1)
    assert _units(state, grant) == [(0, 0, 1, 0)]  # group 1 on channel 0 beats group 0 on channel 1


def test_release_is_exact_and_double_release_raises():
    for lane_change in (True, False):
        state = UnitState([2, 1], [2, 2], [3, 3], lane_change=lane_change)
        a = state.take([0, 1], 2)
        b = state.take([0], 3)
        assert not state.is_empty()
        state.give_back(a)
        # What `a` held is free again: the same demand gets the very same units back.
        assert state.take([0, 1], 2) == a
        state.give_back(a)
        state.give_back(b)
        assert state.is_empty()
        assert state.busy_units == [0, 0]
        with pytest.raises(AssertionError, match="released twice"):
            state.give_back(b)


def test_a_failed_take_leaves_nothing_taken():
    state = UnitState([1], [1], [3], lane_change=True)
    assert state.take([0], 4) is None
    assert state.is_empty() and state.busy_units == [0]
    state = UnitState([1], [2], [1], lane_change=False)
    assert state.take([0], 3) is None
    assert state.is_empty()


def test_channels_may_differ_per_cable():
    # A unit keeps its channel end to end: on a path, only the channels both cables have count.
    state = UnitState([1, 1], [1, 1], [2, 5], lane_change=True)
    assert state.capacity_units(0) == 2 and state.capacity_units(1) == 5
    assert state.take([0, 1], 2) is not None
    assert state.take([0, 1], 1) is None  # cable 0 is full
    grant = state.take([1], 3)  # cable 1 alone still has channels 2, 3, 4
    assert [bit.bit_length() - 1 for _h, _p, bit in grant] == [2, 3, 4]
    assert state.take([1], 1) is None


def test_random_take_and_release_keeps_the_summaries_consistent():
    # Property: after any sequence of takes and releases, the fast path search agrees with a
    # brute-force search over every (fiber, group, channel).
    rng = random.Random(4)
    for lane_change in (True, False):
        fibers, groups, channels = [2, 3, 1], [2, 2, 2], [4, 3, 4]
        state = UnitState(fibers, groups, channels, lane_change=lane_change)
        held = []
        taken: set[tuple[int, int, int]] = set()
        for _ in range(400):
            if held and rng.random() < 0.45:
                grant = held.pop(rng.randrange(len(held)))
                state.give_back(grant)
                taken -= {(h, p, b) for h, p, b in grant}
                continue
            path = rng.choice([[0], [1], [0, 1], [1, 2], [0, 1, 2]])
            grant = state.take(path, 1)
            expected = _brute_force(path, fibers, groups, channels, taken, lane_change)
            if expected is None:
                assert grant is None
            else:
                assert grant == expected
                held.append(grant)
                taken |= set(grant)
        assert state.busy_units == [sum(1 for h, _p, _b in taken if h == c) for c in range(3)]


def _brute_force(path, fibers, groups, channels, taken, lane_change):
    """The first-fit unit by exhaustive search (channel, then group, then fiber)."""

    def free_on(h, w, group_set):
        for g in group_set:
            for f in range(fibers[h]):
                pos = g * fibers[h] + f
                if (h, pos, 1 << w) not in taken:
                    return pos
        return None

    for w in range(max(channels)):
        if any(w >= channels[h] for h in path):
            continue
        if lane_change:
            picks = [free_on(h, w, range(groups[h])) for h in path]
            if all(p is not None for p in picks):
                return [(h, p, 1 << w) for h, p in zip(path, picks)]
        else:
            for g in range(groups[path[0]]):
                picks = [free_on(h, w, [g]) for h in path]
                if all(p is not None for p in picks):
                    return [(h, p, 1 << w) for h, p in zip(path, picks)]
    return None


def test_fiber_state_takes_lowest_fibers_and_releases_exactly():
    state = FiberState([3, 2])
    assert state.capacity_units(0) == 3
    a = state.take([0, 1], 1)
    assert a == [(0, 0, 1), (1, 0, 1)]
    b = state.take([0], 2)
    assert [bit for _h, _p, bit in b] == [2, 4]
    assert state.take([0, 1], 1) is None  # cable 0 full
    assert state.busy_units == [3, 1]
    state.give_back(a)
    assert state.take([1], 2) == [(1, 0, 1), (1, 0, 2)]
    with pytest.raises(AssertionError, match="released twice"):
        state.give_back(a[:1] + a[:1])


def _snapshot(state: UnitState):
    return [list(row) for row in state._slots], list(state.any_free), [list(g) for g in state.group_free]


@pytest.mark.parametrize("seed", range(40))
def test_a_demand_of_several_units_is_first_fit_unit_by_unit_or_refused_untouched(seed):
    # Reference: the same demand taken one unit at a time (first fit after each unit).  A demand
    # that fits gets exactly those units; one that does not leaves the state as it was.
    rng = random.Random(seed)
    fibers, groups, channels = rng.randint(1, 2), rng.randint(1, 3), rng.randint(1, 4)
    state = UnitState([fibers] * 3, [groups] * 3, [channels] * 3, lane_change=True)
    for _ in range(rng.randint(0, 3 * fibers * groups * channels)):
        state.take(rng.sample([0, 1, 2], rng.randint(1, 3)), 1)
    cables, n = rng.sample([0, 1, 2], rng.randint(1, 3)), rng.randint(1, 4)
    before = _snapshot(state)
    reference = UnitState([fibers] * 3, [groups] * 3, [channels] * 3, lane_change=True)
    reference._slots, reference.any_free = [list(r) for r in state._slots], list(state.any_free)
    one_by_one = []
    for _ in range(n):
        unit = reference.take(cables, 1)
        if unit is None:
            one_by_one = None
            break
        one_by_one += unit
    grant = state.take(cables, n)
    if one_by_one is None:
        assert grant is None and _snapshot(state) == before
    else:
        assert grant == one_by_one
