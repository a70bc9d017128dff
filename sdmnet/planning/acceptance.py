"""When a simulated candidate meets its target: the interval's upper bound, sequentially.

A candidate is *met* when the upper bound of its confidence interval (independent replications,
Student t, :func:`sdmnet.sim.stats.ratio_interval`) is at or below the target; *missed* when the
lower bound is above it; otherwise *undecided*, and replications are added in batches until the
interval clears the target either way or the cap is reached.  This is the sequential procedure
of Law, *Simulation Modeling and Analysis* (5th ed., section 9.4.1, number from memory: add
replications until the interval is narrow enough), with "narrow enough" read as "does not
contain the target".  An
interval that still holds the target at the cap is reported as ``undecided`` and is not accepted:
the plan then carries more capacity, never less.

A candidate whose point estimate already lies above its target is *unlikely* and gets no more
replications (a futility stop): it could only be accepted if further replications pulled the
mean below the target by a whole half-width.  It is dropped, not claimed missed; dropping it can
only make the plan larger, so the guarantee on accepted plans is unchanged, and it saves the
replications that trim trials near the boundary would otherwise spend running to the cap.

Checking the interval after every batch is repeated testing: the chance that some look accepts
a candidate whose true blocking is just above the target is larger than ``1 - confidence``
(docs/planning.md, limits).  Per-pair intervals are individual, not simultaneous.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Literal

from ..sim.stats import Interval, PointSummary

__all__ = [
    "Verdict", "Targets", "MET", "MISSED", "UNDECIDED", "UNLIKELY", "FINAL", "verdict", "next_batch", "worst_pair",
]

Verdict = Literal["met", "missed", "undecided", "unlikely"]
MET: Verdict = "met"
MISSED: Verdict = "missed"
UNDECIDED: Verdict = "undecided"
UNLIKELY: Verdict = "unlikely"
# Verdicts after which no more replications are run.
FINAL: frozenset[str] = frozenset((MET, MISSED, UNLIKELY))


@dataclass(frozen=True)
class Targets:
    """What a candidate must keep at or below.

    Attributes
    ----------
    blocking : float
        Network request blocking.
    pair : float or None
        Every datacenter pair's request blocking (None: not enforced).
    """

    blocking: float
    pair: float | None = None


def _side(iv: Interval, target: float) -> Verdict:
    if math.isnan(iv.high):
        # One replication gives no spread: only certainty counts.
        return UNDECIDED
    if iv.high <= target:
        return MET
    if iv.low > target:
        return MISSED
    if iv.mean > target:
        return UNLIKELY
    return UNDECIDED


def verdict(point: PointSummary, targets: Targets) -> Verdict:
    """``met`` when every interval's upper bound is at or below its target, ``missed`` when some
    lower bound is above its target, ``unlikely`` when some point estimate is above its target
    (the interval still holding it), else ``undecided``.

    The network interval is tested against ``targets.blocking``; with ``targets.pair``, the
    interval of every pair that was offered demands is tested against it too.
    """
    sides = [_side(point.blocking, targets.blocking)]
    if targets.pair is not None:
        sides += [_side(iv, targets.pair) for iv, n in zip(point.pair_blocking, point.pair_offered) if n > 0]
    if MISSED in sides:
        return MISSED
    if UNLIKELY in sides:
        return UNLIKELY
    if UNDECIDED in sides:
        return UNDECIDED
    return MET


def next_batch(done: int, first: int, cap: int) -> int:
    """Replications to add after ``done`` (0 when the cap is reached): batches of ``first``."""
    return max(0, min(first, cap - done))


def worst_pair(point: PointSummary, pairs: tuple[tuple[str, str], ...]) -> tuple[str, float]:
    """The pair with the highest point estimate of blocking (``a-b``) and that blocking.

    Pairs offered nothing are left out; ``("", nan)`` when none was offered anything.
    """
    best, name = -1.0, ""
    for (a, b), iv, n in zip(pairs, point.pair_blocking, point.pair_offered):
        if n > 0 and iv.mean > best:
            best, name = iv.mean, f"{a}-{b}"
    return (name, best) if name else ("", math.nan)
