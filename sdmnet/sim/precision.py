"""Replications until the network blocking is known well enough: ``[run] precision``.

The first round runs ``[run] replications`` at every (architecture, load) point.  Then, round by
round, every point whose interval on the network request blocking is still wider than asked
(relative half-width, half the interval over the point estimate, above ``precision``) gets
more replications, until it is narrow enough or has ``max_replications``.  How many more: the
count at which the half-width would reach the target if the spread between replications stays as
seen (the half-width goes as the Student t quantile over the square root of the replications),
at least one, at most up to the cap.  A point that blocked nothing in any replication has
nothing to narrow (its relative half-width is undefined, reported as NaN) and gets no more.

Replication ``r`` always draws the same demands (:func:`sdmnet.sim.engine.replication_seed`), so
a point given more replications keeps the ones it had, and the result for a given seed is fixed.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence

from ..inputs.model import RunSpec, Scenario
from .engine import ReplicationRecord
from .stats import Interval, PointSummary, ratio_interval, t_quantile
from .sweep import Task
from .warmup import AUTO

__all__ = ["relative_half_width", "replication_cap", "more_replications", "run_length", "run_length_text"]

#: Without ``max_replications``, a point stops at this many times ``replications``.
CAP_FACTOR = 10


def relative_half_width(interval: Interval) -> float:
    """Half the interval's width over its point estimate; NaN when the estimate is 0."""
    if interval.mean == 0:
        return math.nan
    return (interval.high - interval.low) / 2 / interval.mean


def replication_cap(run: RunSpec) -> int:
    """Most replications a point may get under ``precision``."""
    return run.max_replications if run.max_replications is not None else CAP_FACTOR * run.replications


def _projected(n: int, width: float, target: float, confidence: float, cap: int) -> int:
    """Fewest replications (at most ``cap``) whose interval would be ``target`` wide, if the
    spread between replications stays as seen: the half-width goes as t(n - 1) / sqrt(n)."""
    q = 0.5 + confidence / 2
    scale = width / t_quantile(q, n - 1) * math.sqrt(n)
    for m in range(n + 1, cap + 1):
        if scale * t_quantile(q, m - 1) / math.sqrt(m) <= target:
            return m
    return cap


def more_replications(
    scenario: Scenario, tasks: Sequence[Task], records: Mapping[str, ReplicationRecord]
) -> list[Task]:
    """The next round: new tasks for every point of ``tasks`` not yet at the precision asked.

    Empty without ``[run] precision``, or when every point has reached it or its cap.
    """
    run = scenario.run
    if run.precision is None:
        return []
    cap = replication_cap(run)
    points: dict[tuple[int, int], list[Task]] = {}
    for task in tasks:
        points.setdefault((task.arch_index, task.load_index), []).append(task)
    more = []
    for point in points.values():
        done = [records[t.key] for t in point if t.key in records]
        n = len(point)
        if n >= cap or len(done) < n:
            continue
        blocking = ratio_interval([r.blocked for r in done], [r.requests for r in done], run.confidence)
        width = relative_half_width(blocking)
        if blocking.mean == 0 or width <= run.precision:
            continue
        wanted = run.replications if math.isnan(width) else _projected(n, width, run.precision, run.confidence, cap) - n
        first = point[0]
        last = max(t.replication for t in point)
        for rep in range(last + 1, last + 1 + min(cap - n, max(1, wanted))):
            more.append(Task(first.arch_index, first.architecture, first.load_index, first.load_erlang, rep))
    return more


def run_length(run: RunSpec, points: Sequence[PointSummary]) -> dict:
    """The warm-up used and the precision reached, per load point (for run.json)."""
    return {
        "warmup": run.warmup,
        "warmup_rule": "MSER-5 on the demands in flight (sdmnet.sim.warmup)" if run.warmup == AUTO else "fixed",
        "precision": run.precision,
        "max_replications": replication_cap(run) if run.precision is not None else None,
        "points": [
            {
                "architecture": p.architecture,
                "load_erlang": p.load_erlang,
                "replications": p.replications,
                "warmup_mean": p.warmup,
                "warmup_settled": p.warmup_settled,
                "blocking_precision": relative_half_width(p.blocking),
            }
            for p in points
        ],
    }


def run_length_text(run: RunSpec, points: Sequence[PointSummary]) -> list[str]:
    """Terminal lines on the warm-up chosen and the precision reached (none for a plain run)."""
    lines = []
    if run.warmup == AUTO and points:
        warmups = [p.warmup for p in points]
        unsettled = sum(1 for p in points if p.warmup_settled is False)
        note = f"; not settled at {unsettled} load point(s) (cap reached)" if unsettled else ", all settled"
        lines.append(f"warm-up: auto (MSER-5), {min(warmups):,.0f} to {max(warmups):,.0f} arrivals per "
                     f"replication{note}")  # fmt: skip
    if run.precision is not None and points:
        widths = [relative_half_width(p.blocking) for p in points]
        reached = sum(1 for w in widths if math.isnan(w) or w <= run.precision)
        finite = [w for w in widths if not math.isnan(w)]
        widest = f", widest {max(finite):.3g}" if finite else ""
        counts = [p.replications for p in points]
        lines.append(f"precision {run.precision:g}: reached at {reached} of {len(points)} load points "
                     f"({min(counts)} to {max(counts)} replications{widest})")  # fmt: skip
    return lines
