"""Analytic estimate beside the simulation: where they disagree and which assumption breaks.

The estimate (:mod:`sdmnet.analysis.estimate`) treats every cable as a complete-sharing group of units
that blocks independently of the others (save pairs of cables that the same calls cross, for
pairs with alternate routes), offers overflow to later routes as Pascal traffic of its
peakedness (as Poisson traffic under grooming), takes free channels as spread at random for
the continuity rule and packs each pair's lit units tight under grooming.
When the estimate falls outside the simulated interval, :func:`explain_gap` names the
assumptions that can move it in the direction of the gap (see docs/estimate.md).
"""

from __future__ import annotations

import math

import pandas as pd

from ..sim.engine import EngineSetup

__all__ = ["attach_estimate", "explain_gap"]


def explain_gap(setup: EngineSetup, estimate: float, low: float, high: float, method: str = "routed") -> str:
    """Why the estimate may lie above or below the simulated interval ``[low, high]``.

    ``method``: the estimate's (``"routed"`` or ``"fixed-point"``, which puts every pair on its
    first route with no continuity rule).  Returns an empty string when the estimate lies inside
    the interval (or no interval exists).
    """
    plain = method == "fixed-point"
    if math.isnan(low) or math.isnan(high) or low <= estimate <= high:
        return ""
    arch = setup.architecture
    multi_hop = any(len(r[0]) > 1 for r in setup.routes if r)
    alternates = any(len(r) > 1 for r in setup.routes)
    reasons = []
    if estimate > high:
        direction = "estimate above the interval"
        if multi_hop:
            reasons.append("cables assumed to block independently (overestimates on cables in series)")
        if multi_hop and not setup.whole_fiber and not plain:
            reasons.append("free channels taken as spread at random (first fit packs them, so routes clash less)")
        if alternates and plain:
            reasons.append("alternate routes left out (the plain fixed point puts each pair on its first route)")
        if arch.share and not setup.whole_fiber and plain:
            reasons.append("grooming approximated (spare capacity of lit units taken as uniform)")
    else:
        direction = "estimate below the interval"
        if alternates and not plain:
            reasons.append("overflow between routes approximated (peakedness by two moments, Poisson under grooming; "
                           "cables correlated only pairwise, jointly only where the same calls dominate both: "
                           "low where all routes of a pair fill together)")
        if multi_hop and not setup.whole_fiber and plain:
            reasons.append("no channel continuity (the plain fixed point takes any free units on each hop)")
        if arch.share and not setup.whole_fiber and plain:
            reasons.append("grooming approximated (spare capacity of lit units taken as uniform)")
        elif arch.share and not setup.whole_fiber:
            reasons.append("lit units taken as packed tight (the engine keeps a unit lit until its last demand "
                           "leaves, so pairs hold more units: low at light load)")
    if not reasons:
        reasons.append("no modelling assumption identified: sampling error or a too short warm-up")
    return f"{direction}: " + "; ".join(reasons)


def attach_estimate(
    summary: pd.DataFrame, estimate: pd.DataFrame, setups: dict[str, EngineSetup]
) -> pd.DataFrame:
    """``summary`` with ``estimate_blocking``, ``estimate_bandwidth_blocking``,
    ``estimate_outside_interval``, ``estimate_gap`` and ``estimate_method`` columns (matched on
    architecture and load; the method is ``"none"`` where the estimate has no row)."""
    est = estimate.set_index(["architecture", "load_erlang"])
    out = summary.copy()
    blocking, bandwidth, outside, notes, methods = [], [], [], [], []
    for row in summary.itertuples(index=False):
        key = (row.architecture, row.load_erlang)
        if key in est.index:
            b = float(est.loc[key, "blocking"])
            bw = float(est.loc[key, "bandwidth_blocking"])
            method = str(est.loc[key, "method"]) if "method" in est.columns else "routed"
        else:
            b = bw = math.nan
            method = "none"
        setup = setups[row.architecture]
        note = "" if math.isnan(b) else explain_gap(setup, b, row.blocking_ci_low, row.blocking_ci_high, method)
        methods.append(method)
        blocking.append(b)
        bandwidth.append(bw)
        outside.append(bool(note))
        notes.append(note)
    out["estimate_blocking"] = blocking
    out["estimate_bandwidth_blocking"] = bandwidth
    out["estimate_outside_interval"] = outside
    out["estimate_gap"] = notes
    out["estimate_method"] = methods
    return out
