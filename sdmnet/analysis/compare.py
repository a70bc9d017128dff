"""Analytic estimate beside the simulation: where they disagree and which assumption breaks.

The estimate (:mod:`sdmnet.analysis.estimate`) treats every cable as a complete-sharing group of units,
offers each pair one route, ignores grooming, and couples cables by the Erlang fixed point,
which assumes that cables block independently.  When the estimate falls outside the simulated
interval, :func:`explain_gap` names the assumptions that the scenario violates in the direction
of the gap (see docs/estimate.md).
"""

from __future__ import annotations

import math

import pandas as pd

from ..sim.engine import EngineSetup

__all__ = ["attach_estimate", "explain_gap"]


def explain_gap(setup: EngineSetup, estimate: float, low: float, high: float) -> str:
    """Why the estimate may lie above or below the simulated interval ``[low, high]``.

    Returns an empty string when the estimate lies inside the interval (or no interval exists).
    """
    if math.isnan(low) or math.isnan(high) or low <= estimate <= high:
        return ""
    arch = setup.architecture
    multi_hop = any(len(r[0]) > 1 for r in setup.routes if r)
    alternates = any(len(r) > 1 for r in setup.routes)
    reasons = []
    if estimate > high:
        direction = "estimate above the interval"
        if alternates:
            reasons.append("alternate routes ignored (the estimate offers each pair its first route only)")
        if multi_hop:
            reasons.append("cables assumed to block independently (overestimates on cables in series)")
        if arch.share:
            reasons.append("grooming ignored (lit units carry later demands in the simulation)")
    else:
        direction = "estimate below the interval"
        if multi_hop and not setup.whole_fiber:
            what = "channel" if arch.lane_change else "channel and core-group"
            reasons.append(f"{what} continuity ignored (the estimate lets a unit take any free position per cable)")
        if multi_hop and setup.whole_fiber:
            reasons.append("fiber continuity ignored (a fiber must be free on every cable of the route)")
    if not reasons:
        reasons.append("no modelling assumption identified: sampling error or a too short warm-up")
    return f"{direction}: " + "; ".join(reasons)


def attach_estimate(
    summary: pd.DataFrame, estimate: pd.DataFrame, setups: dict[str, EngineSetup]
) -> pd.DataFrame:
    """``summary`` with ``estimate_blocking``, ``estimate_bandwidth_blocking``,
    ``estimate_outside_interval`` and ``estimate_gap`` columns (matched on architecture and load)."""
    est = estimate.set_index(["architecture", "load_erlang"])
    out = summary.copy()
    blocking, bandwidth, outside, notes = [], [], [], []
    for row in summary.itertuples(index=False):
        key = (row.architecture, row.load_erlang)
        if key in est.index:
            b = float(est.loc[key, "blocking"])
            bw = float(est.loc[key, "bandwidth_blocking"])
        else:
            b = bw = math.nan
        setup = setups[row.architecture]
        note = "" if math.isnan(b) else explain_gap(setup, b, row.blocking_ci_low, row.blocking_ci_high)
        blocking.append(b)
        bandwidth.append(bw)
        outside.append(bool(note))
        notes.append(note)
    out["estimate_blocking"] = blocking
    out["estimate_bandwidth_blocking"] = bandwidth
    out["estimate_outside_interval"] = outside
    out["estimate_gap"] = notes
    return out
