"""The comparison a planner reads first, for the CLI summary and the report.

Architectures are ranked only where they give the same grade of service:

- **At the plan** (plan_totals.csv): every architecture was dimensioned for the same target
  blocking, so those that met it are ranked by cost, with their installed lanes, switch ports,
  fibers and watts beside; those that did not are named apart, never ranked.
- **At one load point** (summary.csv): blocking differs between architectures, so equipment is
  ranked only among those whose blocking intervals overlap the lowest one's.

Built from the tables alone (docs: DEVELOPERS.md, data flow).
"""

from __future__ import annotations

import math

import pandas as pd

__all__ = [
    "PLAN_COLUMNS",
    "LOAD_COLUMNS",
    "plan_comparison",
    "plan_headline",
    "load_point_headline",
    "plan_text",
    "load_point_text",
]

#: plan_totals.csv columns shown side by side, lanes first among the transceiver counts.
PLAN_COLUMNS = [
    "architecture",
    "met",
    "blocking",
    "blocking_ci_low",
    "blocking_ci_high",
    "transceiver_lanes_installed",
    "transceivers_installed",
    "mimo_size",
    "switch_ports",
    "fiber_pairs",
    "cost",
    "power_w",
    "cost_per_carried_tbps",
]


def _count(x: float) -> str:
    return f"{x:,.0f}"


def _percent(x: float) -> str:
    return f"{100 * x:.3g} %"


def _watts(x: float) -> str:
    return f"{x / 1000:,.1f} kW" if x >= 1000 else f"{x:,.0f} W"


def _met(totals: pd.DataFrame) -> pd.Series:
    if "met" not in totals.columns:
        return pd.Series(True, index=totals.index)
    return totals["met"].astype(str).str.lower().isin(("true", "1", "yes"))


def plan_comparison(totals: pd.DataFrame) -> pd.DataFrame:
    """plan_totals.csv's comparison columns: architectures that met the target by cost, then the rest."""
    shown = [c for c in PLAN_COLUMNS if c in totals.columns]
    if "cost" not in totals.columns:
        return totals[shown]
    order = totals.assign(_missed=~_met(totals)).sort_values(["_missed", "cost"], kind="stable")
    return order[shown]


def plan_headline(totals: pd.DataFrame) -> list[str]:
    """Sentences comparing the architectures at their plan (empty without costs).

    The first names the cheapest architecture that met the target, with its lanes, switch
    ports, fiber pairs and watts; the next ranks the others that met it by cost; the last names
    those that did not meet it (not ranked: their blocking is not the target's).
    """
    needed = {"architecture", "cost", "transceiver_lanes_installed", "switch_ports", "fiber_pairs", "power_w"}
    if totals is None or totals.empty or not needed <= set(totals.columns):
        return []
    met = totals[_met(totals)].sort_values("cost", kind="stable")
    missed = totals[~_met(totals)]
    target = totals["target_blocking"].iloc[0] if "target_blocking" in totals.columns else math.nan
    load = totals["load_erlang"].iloc[0] if "load_erlang" in totals.columns else math.nan
    at = "At the plan"
    if not math.isnan(target):
        at += f" for {_percent(float(target))} request blocking"
    if not math.isnan(load):
        at += f" at {load:g} Erlang"
    lines = []
    if len(met):
        best = met.iloc[0]
        lines.append(
            f"{at}, {best['architecture']} costs least: {best['cost']:,.0f} (relative units; "
            f"{_count(best['transceiver_lanes_installed'])} transceiver lanes installed, "
            f"{_count(best['switch_ports'])} switch ports, {_count(best['fiber_pairs'])} fiber pairs, "
            f"{_watts(best['power_w'])})."
        )
        if len(met) > 1:
            others = [
                f"{row['architecture']} {100 * (row['cost'] / best['cost'] - 1):+.0f} % "
                f"({_count(row['transceiver_lanes_installed'])} lanes, {_watts(row['power_w'])})"
                for _, row in met.iloc[1:].iterrows()
            ]
            lines.append("Then, at the same target: " + "; ".join(others) + ".")
    else:
        lines.append(f"{at}, no architecture met the target: nothing is ranked.")
    if len(missed):
        names = ", ".join(str(a) for a in missed["architecture"])
        lines.append(f"Not ranked (target not met, so their blocking differs): {names}.")
    return lines


def load_point_headline(summary: pd.DataFrame) -> list[str]:
    """At each architecture's highest load point: installed lanes ranked among the architectures
    whose blocking interval overlaps the lowest-blocking one's (empty when fewer than two do)."""
    needed = {"architecture", "load_erlang", "blocking", "blocking_ci_low", "blocking_ci_high",
              "transceiver_lanes_installed"}
    if summary is None or summary.empty or not needed <= set(summary.columns):
        return []
    top = summary[summary["load_erlang"] == summary.groupby("architecture", sort=False)["load_erlang"].transform("max")]
    if top["load_erlang"].nunique() != 1:
        return []
    best = top.loc[top["blocking"].idxmin()]
    low = best["blocking_ci_low"] if not math.isnan(best["blocking_ci_low"]) else best["blocking"]
    high = best["blocking_ci_high"] if not math.isnan(best["blocking_ci_high"]) else best["blocking"]
    lows = top["blocking_ci_low"].fillna(top["blocking"])
    highs = top["blocking_ci_high"].fillna(top["blocking"])
    alike = top[(lows <= high) & (highs >= low)]
    if len(alike) < 2:
        return []
    names = [str(a) for a in alike["architecture"]]
    ranked = ", ".join(
        f"{row['architecture']} {_count(row['transceiver_lanes_installed'])}"
        for _, row in alike.sort_values("transceiver_lanes_installed", kind="stable").iterrows()
    )
    return [
        f"At {best['load_erlang']:g} Erlang, {', '.join(names[:-1])} and {names[-1]} block alike "
        f"(intervals overlap); installed transceiver lanes: {ranked}."
    ]


def _table_text(frame: pd.DataFrame) -> str:
    return frame.to_string(index=False, float_format=lambda x: f"{x:.4g}")


#: summary.csv columns the CLI prints per load point (lanes first among the transceiver counts).
LOAD_COLUMNS = [
    "architecture",
    "load_erlang",
    "blocking",
    "blocking_ci_low",
    "blocking_ci_high",
    "transceiver_lanes_installed",
    "transceivers_installed",
    "switch_ports",
    "fiber_pairs",
    "cost",
]


def plan_text(totals: pd.DataFrame) -> str:
    """The plan comparison as text: the table of :func:`plan_comparison`, then :func:`plan_headline`."""
    return "\n".join([_table_text(plan_comparison(totals)), *plan_headline(totals)])


def load_point_text(summary: pd.DataFrame) -> str:
    """Per load point figures as text, then :func:`load_point_headline` and where to compare at
    equal blocking."""
    shown = [c for c in LOAD_COLUMNS if c in summary.columns]
    lines = [_table_text(summary[shown]), *load_point_headline(summary)]
    lines.append("Blocking differs between architectures here; `sdmnet plan` compares them at equal blocking.")
    return "\n".join(lines)
