"""Occupancy of the cables: which units are free, first-fit search, exact release.

State is kept as bitmasks on Python integers, which are arbitrary-precision and whose
``&``, ``|`` and ``x & -x`` run in C: one integer per (cable, fiber, core group) holds the free
channels (bit w set = channel w free).  First fit over a path is an AND of the masks of its
hops followed by isolating the lowest set bit.

Two kinds of state:

* :class:`UnitState` for ``independent``, ``fractional-joint`` and ``joint`` switching: a unit is
  (fiber, core group, channel) on every hop, with the same channel end to end.
* :class:`FiberState` for ``fiber`` switching: a unit is a whole fiber on every hop.

Both return a *grant* from ``take`` (None when the demand does not fit) that ``give_back``
releases exactly.  A grant is a list of ``(cable, position, bit)`` triples.
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
    Position ``pos = fiber * groups + group`` indexes ``free[cable]``.  First fit takes the
    lowest channel, then the lowest core group, then the lowest fiber (MODEL.md section 3);
    ``_order[cable]`` lists positions in that order.
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
        self.fulls = [(1 << w) - 1 for w in self.channels]
        self.full = max(self.fulls, default=0)
        self.groups = list(groups_per_fiber)
        self.fibers = list(fiber_pairs)
        self.free: list[list[int]] = [[m] * (f * g) for m, f, g in zip(self.fulls, self.fibers, self.groups)]
        # Positions in first-fit order: group-major, then fiber.
        self._order = [[f * g + c for c in range(g) for f in range(nf)] for nf, g in zip(self.fibers, self.groups)]
        # OR over positions (lane change) or per group over fibers (no lane change), kept current
        # so that the path search never scans positions.
        self.any_free = [m if f * g else 0 for m, f, g in zip(self.fulls, self.fibers, self.groups)]
        self.group_free = [[m if nf else 0] * g for m, nf, g in zip(self.fulls, self.fibers, self.groups)]
        self.busy_units = [0] * len(self.fibers)

    def capacity_units(self, cable: int) -> int:
        """Unit positions on ``cable``."""
        return self.fibers[cable] * self.groups[cable] * self.channels[cable]

    def take(self, cables: Sequence[int], n: int) -> Grant | None:
        """Take ``n`` units on every hop of ``cables`` by first fit, or None (nothing taken)."""
        grant: Grant = []
        take_one = self._take_one_lane_change if self.lane_change else self._take_one_same_group
        for _ in range(n):
            if not take_one(cables, grant):
                self.give_back(grant)
                return None
        return grant

    def _take_one_lane_change(self, cables: Sequence[int], grant: Grant) -> bool:
        any_free = self.any_free
        avail = self.full
        for h in cables:
            avail &= any_free[h]
        if not avail:
            return False
        bit = avail & -avail
        for h in cables:
            fr = self.free[h]
            for pos in self._order[h]:
                if fr[pos] & bit:
                    fr[pos] ^= bit
                    break
            grant.append((h, pos, bit))
            self.busy_units[h] += 1
            # The channel stays available on this cable if any other position still has it.
            for mask in fr:
                if mask & bit:
                    break
            else:
                any_free[h] &= ~bit
        return True

    def _take_one_same_group(self, cables: Sequence[int], grant: Grant) -> bool:
        best_bit = 0
        best_group = -1
        groups = self.groups[cables[0]]
        for c in range(groups):
            avail = self.full
            for h in cables:
                avail &= self.group_free[h][c]
                if not avail:
                    break
            if avail:
                bit = avail & -avail
                if best_group < 0 or bit < best_bit:
                    best_bit, best_group = bit, c
        if best_group < 0:
            return False
        bit, c = best_bit, best_group
        for h in cables:
            fr = self.free[h]
            g = self.groups[h]
            for f in range(self.fibers[h]):
                pos = f * g + c
                if fr[pos] & bit:
                    fr[pos] ^= bit
                    break
            grant.append((h, pos, bit))
            self.busy_units[h] += 1
            for f in range(self.fibers[h]):
                if fr[f * g + c] & bit:
                    break
            else:
                self.group_free[h][c] &= ~bit
        return True

    def give_back(self, grant: Grant) -> None:
        """Release every unit of ``grant`` exactly."""
        for h, pos, bit in grant:
            fr = self.free[h]
            if fr[pos] & bit:
                raise AssertionError(f"unit released twice: cable {h} position {pos} bit {bit}")
            fr[pos] |= bit
            self.any_free[h] |= bit
            self.group_free[h][pos % self.groups[h]] |= bit
            self.busy_units[h] -= 1

    def is_empty(self) -> bool:
        """True when every unit of every cable is free."""
        return all(mask == full for fr, full in zip(self.free, self.fulls) for mask in fr)


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
            for _ in range(n):
                mask = free[h]
                bit = mask & -mask
                free[h] = mask ^ bit
                grant.append((h, 0, bit))
            self.busy_units[h] += n
        return grant

    def give_back(self, grant: Grant) -> None:
        """Release every fiber of ``grant`` exactly."""
        for h, _pos, bit in grant:
            if self.free[h] & bit:
                raise AssertionError(f"fiber released twice: cable {h} bit {bit}")
            self.free[h] |= bit
            self.busy_units[h] -= 1

    def is_empty(self) -> bool:
        """True when every fiber of every cable is free."""
        return all(mask == (1 << f) - 1 for mask, f in zip(self.free, self.fibers))
