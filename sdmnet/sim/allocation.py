"""Occupancy of the cables: which units are free, first-fit search, exact release.

State is kept as bitmasks on Python integers, whose ``&``, ``|`` and ``x & -x`` run in C.

Two kinds of state:

* :class:`UnitState` for ``independent``, ``fractional-joint`` and ``joint`` switching: a unit is
  (fiber, core group, channel) on every hop, with the same channel end to end.
* :class:`FiberState` for ``fiber`` switching: a unit is a whole fiber on every hop.

Both return a *grant* from ``take`` (None when the demand does not fit) that ``give_back``
releases exactly.  A grant is a list of ``(cable, position, bit)`` triples: ``position`` is
``group * fibers + fiber`` (0 for fiber switching) and ``bit`` is ``1 << channel`` (``1 << fiber``
for fiber switching).

Memory is one bit per unit plus a few integers per cable: nothing is kept per position (no
lookup tables over fiber pairs x core groups), so a cable of many fiber pairs costs its bits and
no more (docs/model.md, limits).
"""

from __future__ import annotations

from collections.abc import Sequence

__all__ = ["UnitState", "FiberState", "Grant"]

Grant = list[tuple[int, int, int]]


class UnitState:
    """Free (fiber, core group, channel) units of every cable.

    Parameters
    ----------
    fiber_pairs : sequence of int
        Fiber pairs per cable.
    groups_per_fiber : sequence of int
        Unit positions across the cores of one fiber, per cable.
    channels : sequence of int
        Channels per core, per cable (a unit keeps its channel index end to end, so a channel
        that a cable lacks is never free there).
    lane_change : bool
        A unit may take a different core group on each hop; otherwise it keeps its group index.

    Notes
    -----
    First fit takes the lowest channel, then the lowest core group, then the lowest fiber
    (docs/model.md, section 3).  For each cable and channel one integer holds the free positions as
    bits in that very order (bit ``group * fibers + fiber``, which is also the position a grant
    names), so the first free position on a hop is its lowest set bit: no scan over positions,
    and no table from bits to positions.  Two summaries are kept current so that
    the path search never looks at positions either: ``any_free[cable]``, the channels free at
    some position (used with lane change), and ``group_free[cable][group]``, the channels free
    in that core group on some fiber (used without).
    """

    def __init__(
        self,
        fiber_pairs: Sequence[int],
        groups_per_fiber: Sequence[int],
        channels: Sequence[int],
        lane_change: bool,
    ) -> None:
        self.channels = list(channels)
        self.lane_change = lane_change
        self.fibers = list(fiber_pairs)
        self.groups = list(groups_per_fiber)
        fulls = [(1 << w) - 1 if f * g else 0 for w, f, g in zip(self.channels, self.fibers, self.groups)]
        self.full = max(fulls, default=0)
        # Per cable: all positions free, as bits (bit i is position i = group * fibers + fiber).
        self._all_slots = [(1 << (f * g)) - 1 for f, g in zip(self.fibers, self.groups)]
        self._slots: list[list[int]] = [[m] * w for m, w in zip(self._all_slots, self.channels)]
        # The bits of core group 0 (its `fibers` lowest bits); group c's are these shifted by c * fibers.
        self._group0_bits = [(1 << f) - 1 for f in self.fibers]
        self.any_free = list(fulls)
        self.group_free = [[m] * g for m, g in zip(fulls, self.groups)]
        # Bound once here, so the engine's calls skip a dispatch on `lane_change`.
        self.take = self._take_lane_change if lane_change else self._take_same_group
        self.give_back = self._give_back_lane_change if lane_change else self._give_back_same_group

    def capacity_units(self, cable: int) -> int:
        """Unit positions on ``cable``."""
        return self.fibers[cable] * self.groups[cable] * self.channels[cable]

    @property
    def busy_units(self) -> list[int]:
        """Units in use per cable, counted from the free bits (kept by no take or release: only
        the end of a run asks)."""
        return [
            self.capacity_units(h) - sum(row.bit_count() for row in self._slots[h]) for h in range(len(self.fibers))
        ]

    def take(self, cables: Sequence[int], n: int) -> Grant | None:  # replaced per instance in __init__
        """Take ``n`` units on every hop of ``cables`` by first fit, or None (nothing taken)."""
        if self.lane_change:
            return self._take_lane_change(cables, n)
        return self._take_same_group(cables, n)

    def _take_lane_change(self, cables: Sequence[int], n: int) -> Grant | None:
        any_free, slots = self.any_free, self._slots
        # The channels free on every hop: computed once; taking a unit on channel w can only
        # take w out of it (when a hop has no position left on w), so it is kept, not redone.
        avail = self.full
        for h in cables:
            avail &= any_free[h]
        if not avail or (n > 1 and avail.bit_count() < n and not self._room(cables, avail, n)):
            return None  # refused before anything is taken: a blocked demand builds nothing
        grant: Grant = []
        for _ in range(n):
            bit = avail & -avail
            w = bit.bit_length() - 1
            emptied = False
            for h in cables:
                row = slots[h]
                free = row[w]
                low = free & -free
                free ^= low
                row[w] = free
                if not free:
                    any_free[h] ^= bit
                    emptied = True
                grant.append((h, low.bit_length() - 1, bit))
            if emptied:
                avail ^= bit
        return grant

    def _room(self, cables: Sequence[int], avail: int, n: int) -> bool:
        """Whether ``n`` units fit on ``cables`` with lane change, when fewer than ``n`` channels
        are free on every hop: each such channel holds as many units as its fullest hop allows."""
        slots = self._slots
        units = 0
        while avail and units < n:
            bit = avail & -avail
            avail ^= bit
            w = bit.bit_length() - 1
            units += min(slots[h][w].bit_count() for h in cables)
        return units >= n

    def _take_same_group(self, cables: Sequence[int], n: int) -> Grant | None:
        any_free, group_free, slots = self.any_free, self.group_free, self._slots
        fibers, group0_bits = self.fibers, self._group0_bits
        groups = range(self.groups[cables[0]])
        grant: Grant = []
        for _ in range(n):
            best_bit, best_group = 0, -1
            for c in groups:
                avail = self.full
                for h in cables:
                    avail &= group_free[h][c]
                    if not avail:
                        break
                if avail:
                    bit = avail & -avail
                    if best_group < 0 or bit < best_bit:
                        best_bit, best_group = bit, c
                        if bit == 1:  # channel 0 in the lowest group with it: nothing beats it
                            break
            if best_group < 0:
                if grant:
                    self._give_back_same_group(grant)
                return None
            bit, c = best_bit, best_group
            w = bit.bit_length() - 1
            for h in cables:
                row = slots[h]
                free = row[w]
                in_group = group0_bits[h] << (c * fibers[h])
                low = free & in_group
                low &= -low
                free ^= low
                row[w] = free
                if not free & in_group:
                    group_free[h][c] ^= bit
                if not free:
                    any_free[h] ^= bit
                grant.append((h, low.bit_length() - 1, bit))
        return grant

    def give_back(self, grant: Grant) -> None:  # replaced per instance in __init__
        """Release every unit of ``grant`` exactly.

        Raises
        ------
        AssertionError
            If a unit of the grant is already free (released twice).
        """
        if self.lane_change:
            self._give_back_lane_change(grant)
        else:
            self._give_back_same_group(grant)

    def _give_back_lane_change(self, grant: Grant) -> None:
        slots, any_free = self._slots, self.any_free
        for h, pos, bit in grant:
            row = slots[h]
            w = bit.bit_length() - 1
            own = 1 << pos
            if row[w] & own:
                raise AssertionError(f"unit released twice: cable {h} position {pos} bit {bit}")
            row[w] |= own
            any_free[h] |= bit

    def _give_back_same_group(self, grant: Grant) -> None:
        # The positions are released as with lane change; only the group summaries differ.
        self._give_back_lane_change(grant)
        group_free, fibers = self.group_free, self.fibers
        for h, pos, bit in grant:
            group_free[h][pos // fibers[h]] |= bit

    def is_empty(self) -> bool:
        """True when every unit of every cable is free."""
        return all(free == full for row, full in zip(self._slots, self._all_slots) for free in row)


class FiberState:
    """Free fibers of every cable (``fiber`` switching: a fiber cross-connect at each switch).

    Parameters
    ----------
    fiber_pairs : sequence of int
        Fiber pairs per cable.
    """

    def __init__(self, fiber_pairs: Sequence[int]) -> None:
        self.fibers = list(fiber_pairs)
        self.free = [(1 << f) - 1 for f in self.fibers]
        self.busy_units = [0] * len(self.fibers)

    def capacity_units(self, cable: int) -> int:
        """Fibers on ``cable``."""
        return self.fibers[cable]

    def take(self, cables: Sequence[int], n: int) -> Grant | None:
        """Take the ``n`` lowest free fibers on every hop, or None (nothing taken)."""
        free = self.free
        for h in cables:
            if free[h].bit_count() < n:
                return None
        grant: Grant = []
        for h in cables:
            mask = free[h]
            for _ in range(n):
                bit = mask & -mask
                mask ^= bit
                grant.append((h, 0, bit))
            free[h] = mask
            self.busy_units[h] += n
        return grant

    def give_back(self, grant: Grant) -> None:
        """Release every fiber of ``grant`` exactly.

        Raises
        ------
        AssertionError
            If a fiber of the grant is already free (released twice).
        """
        free, busy = self.free, self.busy_units
        for h, _pos, bit in grant:
            if free[h] & bit:
                raise AssertionError(f"fiber released twice: cable {h} bit {bit}")
            free[h] |= bit
            busy[h] -= 1

    def is_empty(self) -> bool:
        """True when every fiber of every cable is free."""
        return all(mask == (1 << f) - 1 for mask, f in zip(self.free, self.fibers))
