"""The report's sections: each is a function of the results folder returning its data, or None.

A section's data is drawn by the template macro of the same name in ``report.html.j2``
(anchor ``other-tables`` -> macro ``other_tables``).  To add a section: write a function here
returning a :class:`Section`, list it in :data:`SECTIONS`, and add its macro to the template.
Figures are drawn here, once, as PNG files beside the tables.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, fields
from typing import Any

import pandas as pd

from ...inputs.model import Scenario
from .. import figures
from ..headline import load_point_headline, plan_comparison, plan_headline
from ..tables import SUMMARY_COLUMNS
from .blocks import Table, figure, number_text, percent_text, skip_note, table, value
from .results import RESULT_TABLES, ResultFolder, forecast_totals, read_csv

__all__ = ["Section", "SECTIONS", "build_sections"]

# summary.csv's contract columns (docs/model.md, section 5: up to fiber_km), then the installed
# transceivers (lanes first), carried traffic and cost (section 6), the mean transceivers and
# the steady-state test.
SUMMARY_SHOWN = SUMMARY_COLUMNS[: SUMMARY_COLUMNS.index("fiber_km") + 1] + [
    "transceiver_lanes_installed",
    "transceivers_installed",
    "carried_erlang",
    "cost",
    "power_w",
    "transceivers_mean",
    "steady_state",
]

# run.json's scenario is the Scenario dataclass written with sorted keys: show it in field order.
_SCENARIO_ORDER = tuple(f.name for f in fields(Scenario))

_BLOCKING_COLUMNS = ["architecture", "load_erlang", "blocking"]


@dataclass(frozen=True)
class Section:
    """One part of the page: its anchor (also its macro's name), heading and data for the macro."""

    anchor: str
    title: str
    data: dict[str, Any]

    @property
    def macro(self) -> str:
        return self.anchor.replace("-", "_")


def _highest_load_rows(frame: pd.DataFrame) -> pd.DataFrame:
    """Rows at each architecture's highest load, in table order."""
    if "load_erlang" not in frame.columns or "architecture" not in frame.columns:
        return frame
    top = frame.groupby("architecture", sort=False)["load_erlang"].transform("max")
    return frame[frame["load_erlang"] == top]


def _loads_text(frame: pd.DataFrame) -> str:
    loads = sorted(set(float(x) for x in frame["load_erlang"]))
    return ", ".join(number_text(x) for x in loads) + " Erlang"


def _findings(summary: pd.DataFrame) -> dict[str, Any] | None:
    """The lowest and highest blocking at the highest load, and installed lanes among the
    architectures whose blocking intervals overlap there."""
    if skip_note("", summary, _BLOCKING_COLUMNS):
        return None
    top = _highest_load_rows(summary)
    best, worst = top["blocking"].min(), top["blocking"].max()
    best_rows = top[top["blocking"] == best]
    interval = None
    if len(best_rows) == 1 and {"blocking_ci_low", "blocking_ci_high"} <= set(top.columns):
        row = best_rows.iloc[0]
        if pd.notna(row["blocking_ci_low"]) and pd.notna(row["blocking_ci_high"]):
            interval = (percent_text(row["blocking_ci_low"]), percent_text(row["blocking_ci_high"]))
    return {
        "at": _loads_text(top) if top["load_erlang"].nunique() == 1 else None,
        "best": percent_text(best),
        "interval": interval,
        "winners": [str(a) for a in best_rows["architecture"]],
        "worst": percent_text(worst) if worst > best else None,
        "losers": [str(a) for a in top.loc[top["blocking"] == worst, "architecture"]],
        # Equipment is ranked only where blocking is alike (output/headline.py).
        "alike": load_point_headline(summary),
    }


def _no_interval(frame: pd.DataFrame, file: str) -> dict[str, Any] | None:
    """Why the interval columns of ``file`` are empty, when some are: a blank is no precision."""
    if "blocking_ci_low" not in frame.columns or not frame["blocking_ci_low"].isna().any():
        return None
    blank = frame[frame["blocking_ci_low"].isna()]
    if "replications" in frame.columns and (blank["replications"] < 2).all():
        why = "they rest on a single replication, and an interval needs two or more"
    elif "replications" in frame.columns:
        why = "too few of their replications offered any request"
    else:
        why = "the run had too few replications (an interval needs two or more)"
    return {"file": file, "blank": len(blank), "rows": len(frame), "why": why}


def _unsteady(summary: pd.DataFrame) -> list[str]:
    """``architecture at load`` of every point whose replications disagree beyond their batches."""
    if "steady_state" not in summary.columns:
        return []
    rows = summary[summary["steady_state"].astype(str) == "no"]
    return [f"{a} at {number_text(float(x))} Erlang" for a, x in zip(rows["architecture"], rows["load_erlang"])]


def comparison(res: ResultFolder) -> Section | None:
    """The architectures at their plan for the target blocking: cost, lanes, ports, fibers, watts."""
    totals = res.table("plan_totals")
    if totals is None or "cost" not in totals.columns:
        return None
    costs = res.table("cost")
    breakdown = None
    if costs is not None and not skip_note("", costs, ["architecture", "item", "cost"]):
        pivot = costs.pivot_table(index="item", columns="architecture", values="cost", aggfunc="sum", sort=False)
        pivot = pivot.reset_index()
        pivot.columns.name = None
        breakdown = table(pivot, caption="Relative cost per item (rows) and architecture (columns), from cost.csv")
    return Section(
        "comparison",
        "At equal blocking",
        {
            "lines": plan_headline(totals),
            "table": table(plan_comparison(totals), caption="Each architecture at its plan (plan_totals.csv)"),
            "breakdown": breakdown,
            "costs": None if costs is None else table(costs, caption="Counts, prices and watts per item (cost.csv)"),
        },
    )


def simulation(res: ResultFolder) -> Section | None:
    """Blocking per architecture and load: findings, the blocking figures, summary.csv."""
    summary = res.table("summary")
    if summary is None:
        return None
    skipped = skip_note("summary.csv", summary, _BLOCKING_COLUMNS)
    drawn = []
    if skipped is None:
        png = figures.blocking_figure(
            summary, res.path / "blocking.png", title="Request blocking vs offered load (95 % intervals)"
        )
        drawn.append(
            figure(
                png,
                "Request blocking probability against offered load, one line per architecture",
                "Request blocking against offered load.  Log scale; bars are 95 % confidence intervals.",
            )
        )
        if "bandwidth_blocking" in summary.columns:
            png = figures.blocking_figure(
                summary,
                res.path / "bandwidth_blocking.png",
                column="bandwidth_blocking",
                title="Bandwidth blocking vs offered load (95 % intervals)",
            )
            drawn.append(
                figure(
                    png,
                    "Bandwidth blocking ratio against offered load, one line per architecture",
                    "Bandwidth blocking (refused Gb/s over requested Gb/s) against offered load.",
                )
            )
    return Section(
        "simulation",
        "Blocking",
        {
            "loads": _loads_text(summary),
            "findings": _findings(summary),
            "skipped": skipped,
            "figures": drawn,
            "unsteady": _unsteady(summary),
            "no_interval": _no_interval(summary, "summary.csv"),
            "table": table(summary, SUMMARY_SHOWN, caption="Results per architecture and load (summary.csv)"),
        },
    )


def resources(res: ResultFolder) -> Section | None:
    """Equipment per architecture at the highest load, with the per-site, class and pair tables."""
    summary = res.table("summary")
    if summary is None:
        return None
    need = ["architecture", "load_erlang", "transceivers_peak", "switch_ports", "fiber_pairs"]
    skipped = skip_note("summary.csv", summary, need)
    if skipped is not None:
        return Section("resources", "Equipment", {"skipped": skipped, "figure": None, "details": []})
    drawn = figure(
        figures.resources_figure(summary, res.path / "resources.png"),
        "Bar charts of transceiver modules, switch ports and fiber pairs per architecture",
        "Equipment per architecture at the highest offered load.",
    )
    details = []
    for name, caption in (
        ("sites", "Transceivers and switch ports per site at the highest load (sites.csv)"),
        ("classes", "Blocking per demand size at the highest load (classes.csv)"),
        ("pairs", "Blocking per datacenter pair at the highest load (pairs.csv)"),
    ):
        frame = res.table(name)
        if frame is not None:
            details.append((caption, table(_highest_load_rows(frame))))
    return Section("resources", "Equipment", {"skipped": None, "figure": drawn, "details": details})


def network(res: ResultFolder) -> Section | None:
    """The network map, shaded by cable utilisation when cables.csv has it."""
    topology = res.scenario().get("topology")
    cables = res.table("cables")
    if not isinstance(topology, dict) or not topology.get("sites") or not topology.get("cables"):
        if cables is None:
            return None
        return Section(
            "network",
            "Network",
            {"figure": None, "table": table(_highest_load_rows(cables), caption="Cable utilisation (cables.csv)")},
        )
    shaded = cables is not None and not skip_note("", cables, ["architecture", "load_erlang", "cable", "utilisation"])
    use = cables if shaded else None
    png = figures.topology_figure(topology["sites"], topology["cables"], res.path / "topology.png", use)
    located = all(s.get("x_km") is not None and s.get("y_km") is not None for s in topology["sites"])
    where = (
        "Sites are drawn at their coordinates (km)."
        if located
        else "The topology gives no site coordinates, so the drawing is a schematic layout."
    )
    if use is not None:
        caption = (
            f"Mean utilisation of every cable at the highest offered load, one panel per architecture: "
            f"the wider and darker the line, the busier the cable.  {where}"
        )
    else:
        caption = f"The network with its installed fiber pairs per cable.  {where}"
    return Section(
        "network",
        "Network",
        {
            "figure": figure(png, "Map of the network's sites and cables", caption),
            "table": None if cables is None else table(_highest_load_rows(cables)),
        },
    )


def _estimate_gaps(summary: pd.DataFrame | None) -> dict[str, Any] | None:
    """The load points where the estimate falls outside the simulated interval, and why."""
    if summary is None or "estimate_gap" not in summary.columns:
        return None
    gaps = summary[summary["estimate_gap"].fillna("").astype(str) != ""]
    rows = [
        {
            "architecture": str(r.architecture),
            "load": f"{r.load_erlang:g}",
            "estimate": f"{r.estimate_blocking:.3g}",
            "simulated": f"{r.blocking:.3g}",
            "low": f"{r.blocking_ci_low:.3g}",
            "high": f"{r.blocking_ci_high:.3g}",
            "why": str(r.estimate_gap),
        }
        for r in gaps.itertuples(index=False)
    ]
    return {"points": len(summary), "rows": rows}


def estimate(res: ResultFolder) -> Section | None:
    """The analytic estimate beside the simulation, with the points where they part."""
    estimated = res.table("estimate")
    if estimated is None:
        return None
    summary = res.table("summary")
    if summary is not None and skip_note("", summary, _BLOCKING_COLUMNS):
        summary = None
    skipped = skip_note("estimate.csv", estimated, _BLOCKING_COLUMNS)
    drawn = None
    if skipped is None:
        drawn = figure(
            figures.estimate_figure(estimated, summary, res.path / "estimate.png"),
            "Estimated blocking against offered load",
            "Analytic estimate (lines) and simulation (markers with 95 % intervals)."
            if summary is not None
            else "Analytic estimate (no simulation results in this folder).",
        )
    return Section(
        "estimate",
        "Estimate",
        {
            "skipped": skipped,
            "figure": drawn,
            "gaps": _estimate_gaps(summary),
            "table": table(estimated, caption="Analytic estimate (estimate.csv)"),
        },
    )


def paths(res: ResultFolder) -> Section | None:
    """Candidate paths: how many are feasible, pairs left without one, refused paths and why."""
    candidates = res.table("paths")
    if candidates is None:
        return None
    data: dict[str, Any] = {"count": len(candidates), "feasible": None, "stranded": [], "refused": None}
    data["figure"] = None
    if {"architecture", "length_km", "gsnr_db"} <= set(candidates.columns) and candidates["gsnr_db"].notna().any():
        data["figure"] = figure(
            figures.gsnr_figure(candidates, res.path / "paths_gsnr.png"),
            "Scatter plots of GSNR against path length, one panel per architecture",
            "GSNR of every candidate path against its length, per architecture; markers by transceiver class.",
        )
    if "feasible" in candidates.columns:
        feasible = candidates["feasible"].astype(str).str.lower().isin(["true", "1", "yes"])
        data["feasible"] = int(feasible.sum())
        keys = [c for c in ("architecture", "a", "b") if c in candidates.columns]
        if {"a", "b"} <= set(keys):
            ok = feasible.groupby([candidates[k] for k in keys], sort=False).any()
            data["stranded"] = [
                (f"{key[0]}: " if len(key) == 3 else "") + f"{key[-2]}-{key[-1]}"
                for key, good in ok.items()
                if not good
            ]
        if "reason" in candidates.columns and not feasible.all():
            refused = candidates.loc[~feasible]
            columns = ["architecture", "a", "b", "rank", "path", "length_km", "gsnr_db", "reason"]
            data["refused"] = (len(refused), table(refused, columns))
    data["table"] = table(candidates)
    return Section("paths", "Paths", data)


def plan(res: ResultFolder) -> Section | None:
    """Fiber pairs per cable meeting the target blocking, per architecture, and the totals."""
    planned, totals = res.table("plan"), res.table("plan_totals")
    if planned is None and totals is None:
        return None
    data: dict[str, Any] = {"skipped": None, "figure": None, "pivot": None, "table": None, "totals": None}
    data["no_interval"] = _no_interval(planned, "plan.csv") if planned is not None else None
    if planned is not None:
        data["skipped"] = skip_note("plan.csv", planned, ["architecture", "cable", "fiber_pairs"])
        if data["skipped"] is None:
            data["figure"] = figure(
                figures.plan_figure(planned, res.path / "plan.png"),
                "Bar chart of planned fiber pairs per cable and architecture",
                "Fiber pairs per cable that meet the target blocking, per architecture.",
            )
            pivot = planned.pivot_table(
                index="cable", columns="architecture", values="fiber_pairs", aggfunc="max", sort=False
            ).reset_index()
            pivot.columns.name = None
            data["pivot"] = table(pivot, caption="Planned fiber pairs per cable (rows) and architecture (columns)")
        data["table"] = table(planned)
    if totals is not None:
        data["totals"] = table(totals, caption="Plan totals (plan_totals.csv)")
    return Section("plan", "Plan", data)


def forecast(res: ResultFolder) -> Section | None:
    """Network totals year by year, the forecast's notes and the per-cable table."""
    per_cable, given = res.table("forecast"), res.table("forecast_totals")
    if per_cable is None and given is None:
        return None
    data: dict[str, Any] = {"skipped": None, "figure": None, "totals": None, "notes": None, "table": None}
    if given is not None and not skip_note("", given, ["year", "architecture"]):
        totals, source = given, "forecast_totals.csv"
    elif per_cable is not None and not skip_note("", per_cable, ["year", "architecture"]):
        totals, source = forecast_totals(per_cable), "summed over cables from forecast.csv"
    else:
        totals, source = None, ""
        data["skipped"] = skip_note("forecast.csv", pd.DataFrame(), ["year", "architecture"])
    if totals is not None:
        if any(c in totals.columns for c in ("fiber_pairs", "transceivers_peak", "switch_ports")):
            data["figure"] = figure(
                figures.forecast_figure(totals, res.path / "forecast.png", band=res.table("forecast_band")),
                "Line charts of fiber pairs, transceivers, switch ports, cost and power by year",
                "Network totals year by year under the forecast growth (shaded: low to high growth, where given).",
            )
        data["totals"] = table(totals, caption=f"Network totals per year and architecture ({source})")
    notes = res.path / "forecast_notes.txt"
    if notes.is_file():
        data["notes"] = notes.read_text(encoding="utf-8", errors="replace")
    if per_cable is not None:
        data["table"] = (len(per_cable), table(per_cable))
    return Section("forecast", "Forecast", data)


def other_tables(res: ResultFolder) -> Section | None:
    """Any other CSV table in the folder (from verbs or options this module does not know), as is."""
    known = {f"{n}.csv" for n in RESULT_TABLES}
    others = sorted(p for p in res.path.glob("*.csv") if p.name not in known and not p.name.startswith("."))
    shown: list[tuple[str, int, Table]] = []
    for path in others:
        frame = read_csv(path)
        shown.append((path.name, len(frame), table(frame)))
    return Section("other-tables", "Other tables", {"tables": shown}) if shown else None


def inputs(res: ResultFolder) -> Section | None:
    """The scenario as run.json records it: files, plain settings, nested settings, the topology."""
    scenario = res.scenario()
    if not scenario:
        return None
    run = res.run or {}
    files = {k: run.get(k) for k in ("scenario_file", "topology_file") if run.get(k)}
    # The topology has its own part below.
    keys = [k for k in _SCENARIO_ORDER if k in scenario and k != "topology"] + sorted(
        k for k in scenario if k not in _SCENARIO_ORDER
    )
    general = {k: scenario[k] for k in keys if not isinstance(scenario[k], (dict, list))}
    nested = [(k, value(scenario[k])) for k in keys if isinstance(scenario[k], (dict, list))]
    topology = scenario.get("topology")
    network_parts = None
    if isinstance(topology, dict):
        rest = {k: v for k, v in topology.items() if k not in ("name", "fiber_types", "sites", "cables")}
        network_parts = {
            "name": str(topology.get("name", "")),
            "parts": [(k, value(topology[k])) for k in ("fiber_types", "sites", "cables") if k in topology],
            "rest": value(rest) if rest else None,
        }
    return Section(
        "inputs",
        "Inputs",
        {
            "files": value(files) if files else None,
            "general": value(general) if general else None,
            "nested": nested,
            "topology": network_parts,
        },
    )


def run_record(res: ResultFolder) -> Section | None:
    """How the results were made: verb, wall time, command, seeds, versions, options."""
    run = res.run
    if run is None:
        return None
    facts = {k: run[k] for k in ("verb", "wall_time_s", "fingerprint", "command") if k in run}
    if "command" in facts and isinstance(facts["command"], list):
        facts["command"] = " ".join(str(a) for a in facts["command"])
    parts = [
        (title, value(run[key]))
        for key, title in (
            ("seeds", "Seeds"),
            ("versions", "Software versions"),
            ("options", "Options"),
            ("pairs_without_feasible_route", "Datacenter pairs without a feasible route"),
        )
        if key in run
    ]
    return Section("run", "Run, seeds and versions", {"facts": value(facts), "parts": parts})


# The page's order; "Other tables" comes after the results, before the inputs and the run record.
SECTIONS: tuple[Callable[[ResultFolder], Section | None], ...] = (
    comparison,
    simulation,
    resources,
    network,
    estimate,
    paths,
    plan,
    forecast,
    other_tables,
    inputs,
    run_record,
)


def build_sections(res: ResultFolder) -> list[Section]:
    """Every section that has something to show, in page order (figures drawn on the way)."""
    return [s for s in (build(res) for build in SECTIONS) if s is not None]
