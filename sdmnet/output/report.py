"""A self-contained HTML report of whatever results a folder holds.

:func:`write_report` reads the tables that simulate, estimate, paths, plan and forecast write
(any subset), redraws the figures as PNG beside them, and writes ``report.html`` with the figures
embedded as data URIs, the tables, the inputs, seeds and software versions, and the cautions a
planner must pass on.  The page holds no script, no timestamp and no outside reference, and its
parts come in a fixed order, so the same folder always gives the same bytes.
"""

from __future__ import annotations

import base64
import html
import json
import math
import struct
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, field, fields
from pathlib import Path
from typing import Any

import pandas as pd

from ..errors import InputError
from ..inputs.model import Scenario
from . import figures
from .tables import SUMMARY_COLUMNS, write_text

__all__ = [
    "RESULT_TABLES",
    "CAUTIONS",
    "ResultFolder",
    "read_results",
    "forecast_totals",
    "html_table",
    "write_report",
]

# Every table a verb may leave in a folder, in the order the report shows them.
RESULT_TABLES = (
    "summary",
    "classes",
    "pairs",
    "sites",
    "cables",
    "estimate",
    "paths",
    "plan",
    "plan_totals",
    "forecast",
    "forecast_totals",
)

# Columns read as text whatever they hold (site ids may look like numbers).
_TEXT_COLUMNS = {
    c: str
    for c in ("architecture", "switching", "cable", "a", "b", "site", "path", "reason", "role", "fiber_type")
}

CAUTIONS = (
    "The figures in this report are planning estimates from a statistical model of the network: "
    "blocking comes from a finite number of simulated requests (see the confidence intervals), "
    "and equipment counts follow from the model's simplifications.  They are not a design for "
    "construction.  Deployment follows the equipment vendors' specifications, laser-safety rules "
    "for optical transmitters, local codes and permits, and licensed engineering practice."
)

# Longer tables are cut in the page (the CSV beside it is complete).
MAX_ROWS = 1000

# summary.csv's contract columns (docs/model.md, section 5: up to fiber_km) and the mean transceivers.
SUMMARY_SHOWN = SUMMARY_COLUMNS[: SUMMARY_COLUMNS.index("fiber_km") + 1] + ["transceivers_mean"]


@dataclass
class ResultFolder:
    """The tables and run record found in one output folder (absent ones are simply missing)."""

    path: Path
    tables: dict[str, pd.DataFrame] = field(default_factory=dict)
    run: dict[str, Any] | None = None

    def table(self, name: str) -> pd.DataFrame | None:
        """The table ``name`` if present and not empty."""
        frame = self.tables.get(name)
        return frame if frame is not None and not frame.empty else None


def _read_csv(path: Path) -> pd.DataFrame:
    try:
        return pd.read_csv(path, dtype=_TEXT_COLUMNS, keep_default_na=False, na_values=["", "nan", "NaN"])
    except (pd.errors.ParserError, pd.errors.EmptyDataError, UnicodeDecodeError, ValueError) as exc:
        raise InputError(path, "contents", f"not a readable CSV table ({exc})") from None


def read_results(folder: Path | str) -> ResultFolder:
    """Read every known CSV table and ``run.json`` present in ``folder``.

    Raises
    ------
    InputError
        The folder does not exist, holds none of the files, or a file cannot be parsed.
    """
    path = Path(folder)
    if not path.is_dir():
        raise InputError(path, "report", "no such folder")
    found = ResultFolder(path)
    for name in RESULT_TABLES:
        csv = path / f"{name}.csv"
        if csv.is_file():
            found.tables[name] = _read_csv(csv)
    run = path / "run.json"
    if run.is_file():
        try:
            found.run = json.loads(run.read_text(encoding="utf-8"))
        except (json.JSONDecodeError, UnicodeDecodeError) as exc:
            raise InputError(run, "contents", f"not valid JSON ({exc})") from None
        if not isinstance(found.run, dict):
            raise InputError(run, "contents", "expected a JSON object")
    if not found.tables and found.run is None:
        raise InputError(
            path,
            "report",
            "no result files here (summary.csv, estimate.csv, paths.csv, plan.csv, forecast.csv or run.json)",
        )
    return found


def forecast_totals(forecast: pd.DataFrame) -> pd.DataFrame:
    """Network totals per (year, architecture) from the per-cable forecast table.

    ``fiber_pairs`` (and ``added_pairs``) are summed over cables.  ``transceivers_peak`` and
    ``switch_ports`` are network figures when they repeat unchanged on every cable row of a year;
    otherwise they are per-cable figures and are summed too.
    """
    per_cable_sums = [c for c in ("fiber_pairs", "added_pairs") if c in forecast.columns]
    network = [c for c in ("transceivers_peak", "switch_ports") if c in forecast.columns]
    rows = []
    for (year, arch), part in forecast.groupby(["year", "architecture"], sort=False):
        row: dict[str, Any] = {"year": year, "architecture": arch}
        for c in per_cable_sums:
            row[c] = part[c].astype(float).sum()
        for c in network:
            values = part[c].astype(float)
            row[c] = values.iloc[0] if values.nunique(dropna=False) == 1 else values.sum()
        if "blocking" in forecast.columns:
            row["blocking"] = part["blocking"].astype(float).max()
        rows.append(row)
    totals = pd.DataFrame(rows)
    order = {name: i for i, name in enumerate(dict.fromkeys(forecast["architecture"]))}
    return totals.sort_values(
        ["architecture", "year"], key=lambda s: s.map(order) if s.name == "architecture" else s, kind="stable"
    ).reset_index(drop=True)


# --- HTML pieces ---------------------------------------------------------------------------------


def _esc(value: Any) -> str:
    return html.escape(str(value), quote=True)


def _cell(value: Any) -> str:
    if value is None:
        return ""
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float):
        if math.isnan(value):
            return ""
        if math.isinf(value):
            return "inf" if value > 0 else "-inf"
        if value == int(value) and abs(value) < 1e15:
            return str(int(value))
        return f"{value:.4g}"
    if isinstance(value, (list, tuple)):
        return ", ".join(_cell(v) for v in value)
    if isinstance(value, dict):
        return "; ".join(f"{k}: {_cell(v)}" for k, v in value.items())
    if hasattr(value, "item"):  # numpy scalar
        return _cell(value.item())
    return str(value)


def _is_number(value: Any) -> bool:
    return (
        isinstance(value, (int, float))
        and not isinstance(value, bool)
        or (hasattr(value, "dtype") and getattr(value.dtype, "kind", "") in "iuf")
    )


def html_table(
    frame: pd.DataFrame,
    columns: Sequence[str] | None = None,
    caption: str | None = None,
    limit: int = MAX_ROWS,
) -> str:
    """``frame`` (or its ``columns`` that exist) as an HTML table; numbers right-aligned.

    Only the first ``limit`` rows are shown, with a note saying so.
    """
    cols = [c for c in (columns or list(frame.columns)) if c in frame.columns]
    head = "".join(f"<th>{_esc(c)}</th>" for c in cols)
    body = []
    if len(frame) > limit:
        note = f"first {limit} of {len(frame)} rows; the file holds them all"
        caption = f"{caption} ({note})" if caption else note.capitalize()
    for row in frame[cols].head(limit).itertuples(index=False, name=None):
        cells = "".join(
            f'<td class="num">{_esc(_cell(v))}</td>' if _is_number(v) else f"<td>{_esc(_cell(v))}</td>"
            for v in row
        )
        body.append(f"<tr>{cells}</tr>")
    cap = f"<caption>{_esc(caption)}</caption>" if caption else ""
    return (
        f'<div class="table-wrap"><table>{cap}<thead><tr>{head}</tr></thead><tbody>'
        + "\n".join(body)
        + "</tbody></table></div>"
    )


def _value_html(value: Any) -> str:
    """Any JSON value as HTML: mappings and lists of records as tables, the rest as text."""
    if isinstance(value, dict):
        if value and all(isinstance(v, dict) for v in value.values()):
            frame = pd.DataFrame([{"name": k, **v} for k, v in value.items()])
            return html_table(frame)
        if not value:
            return '<span class="quiet">none</span>'
        rows = "".join(f"<tr><th>{_esc(k)}</th><td>{_value_html(v)}</td></tr>" for k, v in value.items())
        return f'<table class="kv">{rows}</table>'
    if isinstance(value, list):
        if value and all(isinstance(v, dict) for v in value):
            frame = pd.DataFrame(value)
            first = [c for c in ("name", "id") if c in frame.columns]
            return html_table(frame, first + [c for c in frame.columns if c not in first])
        if not value:
            return '<span class="quiet">none</span>'
        if all(
            isinstance(v, (list, tuple)) and all(not isinstance(x, (dict, list)) for x in v) for v in value
        ):
            return "<br>".join(_esc(" → ".join(_cell(x) for x in v)) for v in value)
        return _esc(", ".join(_cell(v) for v in value))
    if value is None:
        return '<span class="quiet">not set</span>'
    return _esc(_cell(value))


def _png_size(data: bytes) -> tuple[int, int]:
    """Width and height from a PNG's IHDR chunk."""
    return struct.unpack(">II", data[16:24])


def _figure_html(png: Path, alt: str, caption: str) -> str:
    """The figure just drawn to ``png``, embedded as a data URI with its caption and file name."""
    data = png.read_bytes()
    width, height = _png_size(data)
    uri = "data:image/png;base64," + base64.b64encode(data).decode("ascii")
    return (
        f'<figure><img src="{uri}" width="{width}" height="{height}" alt="{_esc(alt)}">'
        f'<figcaption>{caption} <span class="file">({_esc(png.name)})</span></figcaption></figure>'
    )


def _missing(frame: pd.DataFrame, columns: Iterable[str]) -> list[str]:
    return [c for c in columns if c not in frame.columns]


def _skip_note(file: str, missing: list[str]) -> str:
    return (
        f'<p class="quiet">Figure skipped: {_esc(file)} lacks the column(s) {_esc(", ".join(missing))}.</p>'
    )


def _highest_load_rows(frame: pd.DataFrame) -> pd.DataFrame:
    """Rows at each architecture's highest load, in table order."""
    if "load_erlang" not in frame.columns or "architecture" not in frame.columns:
        return frame
    top = frame.groupby("architecture", sort=False)["load_erlang"].transform("max")
    return frame[frame["load_erlang"] == top]


def _loads_text(frame: pd.DataFrame) -> str:
    loads = sorted(set(float(x) for x in frame["load_erlang"]))
    return ", ".join(_cell(x) for x in loads) + " Erlang"


def _names_list(names: Sequence[str]) -> str:
    quoted = [f"<strong>{_esc(n)}</strong>" for n in names]
    return quoted[0] if len(quoted) == 1 else ", ".join(quoted[:-1]) + " and " + quoted[-1]


def _percent(x: float) -> str:
    return f"{100 * x:.3g} %"


def _findings(summary: pd.DataFrame) -> str:
    """A few plain sentences on the summary at the highest load."""
    if _missing(summary, ["architecture", "load_erlang", "blocking"]):
        return ""
    top = _highest_load_rows(summary)
    at = f"At {_loads_text(top)}" if top["load_erlang"].nunique() == 1 else "At each architecture's highest load"
    items = []
    best = top["blocking"].min()
    best_rows = top[top["blocking"] == best]
    winners = [str(a) for a in best_rows["architecture"]]
    interval = ""
    if len(winners) == 1 and not _missing(top, ["blocking_ci_low", "blocking_ci_high"]):
        row = best_rows.iloc[0]
        interval = (
            f" (95 % interval {_percent(row['blocking_ci_low'])} to {_percent(row['blocking_ci_high'])})"
        )
    items.append(
        f"<li>{at}, the lowest request blocking is {_percent(best)}{interval}: {_names_list(winners)}.</li>"
    )
    worst = top["blocking"].max()
    losers = [str(a) for a in top.loc[top["blocking"] == worst, "architecture"]]
    if worst > best:
        items.append(f"<li>The highest is {_percent(worst)}: {_names_list(losers)}.</li>")
    for column, what in (
        ("transceivers_peak", "the fewest transceiver modules at peak"),
        ("switch_ports", "the fewest switch ports"),
    ):
        if column in top.columns:
            low = top[column].min()
            names = [str(a) for a in top.loc[top[column] == low, "architecture"]]
            items.append(
                f"<li>{_names_list(names)} need{'s' if len(names) == 1 else ''} {what} "
                f"({_cell(float(low))}).</li>"
            )
    return '<ul class="findings">' + "".join(items) + "</ul>"


# --- sections ------------------------------------------------------------------------------------


@dataclass
class _Section:
    anchor: str
    title: str
    body: str


def _details(summary_text: str, inner: str) -> str:
    return f"<details><summary>{_esc(summary_text)}</summary>{inner}</details>"


def _simulation_section(res: ResultFolder) -> _Section | None:
    summary = res.table("summary")
    if summary is None:
        return None
    parts = [
        f"<p>Simulated offered loads: {_esc(_loads_text(summary))}.  Blocking is the share of requests "
        "refused; bandwidth blocking the share of requested Gb/s refused.  Intervals are 95 % "
        "confidence intervals over independent replications.</p>",
        _findings(summary),
    ]
    missing = _missing(summary, ["architecture", "load_erlang", "blocking"])
    if missing:
        parts.append(_skip_note("summary.csv", missing))
    else:
        png = figures.blocking_figure(
            summary, res.path / "blocking.png", title="Request blocking vs offered load (95 % intervals)"
        )
        parts.append(
            _figure_html(
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
            parts.append(
                _figure_html(
                    png,
                    "Bandwidth blocking ratio against offered load, one line per architecture",
                    "Bandwidth blocking (refused Gb/s over requested Gb/s) against offered load.",
                )
            )
    parts.append(
        html_table(summary, SUMMARY_SHOWN, caption="Results per architecture and load (summary.csv)")
    )
    return _Section("simulation", "Blocking", "\n".join(parts))


def _resources_section(res: ResultFolder) -> _Section | None:
    summary = res.table("summary")
    if summary is None:
        return None
    need = ["architecture", "load_erlang", "transceivers_peak", "switch_ports", "fiber_pairs"]
    missing = _missing(summary, need)
    if missing:
        return _Section("resources", "Equipment", _skip_note("summary.csv", missing))
    parts = [
        "<p>Transceiver modules in use vary with load and are shown at the highest load point; "
        "switch ports and fiber pairs are the installed equipment and do not depend on load.</p>",
        _figure_html(
            figures.resources_figure(summary, res.path / "resources.png"),
            "Bar charts of transceiver modules, switch ports and fiber pairs per architecture",
            "Equipment per architecture at the highest offered load.",
        ),
    ]
    for name, caption in (
        ("sites", "Transceivers and switch ports per site at the highest load (sites.csv)"),
        ("classes", "Blocking per demand size at the highest load (classes.csv)"),
        ("pairs", "Blocking per datacenter pair at the highest load (pairs.csv)"),
    ):
        frame = res.table(name)
        if frame is not None:
            parts.append(_details(caption, html_table(_highest_load_rows(frame))))
    return _Section("resources", "Equipment", "\n".join(parts))


def _scenario(res: ResultFolder) -> dict[str, Any]:
    scenario = (res.run or {}).get("scenario")
    return scenario if isinstance(scenario, dict) else {}


def _network_section(res: ResultFolder) -> _Section | None:
    topology = _scenario(res).get("topology")
    cables = res.table("cables")
    if not isinstance(topology, dict) or not topology.get("sites") or not topology.get("cables"):
        if cables is None:
            return None
        return _Section(
            "network",
            "Network",
            '<p class="quiet">Figure skipped: run.json holds no topology.</p>'
            + html_table(_highest_load_rows(cables), caption="Cable utilisation (cables.csv)"),
        )
    use = (
        cables
        if cables is not None
        and not _missing(cables, ["architecture", "load_erlang", "cable", "utilisation"])
        else None
    )
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
    parts = [_figure_html(png, "Map of the network's sites and cables", caption)]
    if cables is not None:
        parts.append(
            _details(
                "Cable utilisation at the highest load (cables.csv)", html_table(_highest_load_rows(cables))
            )
        )
    return _Section("network", "Network", "\n".join(parts))


def _estimate_section(res: ResultFolder) -> _Section | None:
    estimate = res.table("estimate")
    if estimate is None:
        return None
    parts = [
        "<p>The analytic estimate needs no simulation; where both exist, the figure sets it beside the "
        "simulated results.  Large gaps point at effects the estimate leaves out.</p>"
    ]
    summary = res.table("summary")
    if summary is not None and _missing(summary, ["architecture", "load_erlang", "blocking"]):
        summary = None
    missing = _missing(estimate, ["architecture", "load_erlang", "blocking"])
    if missing:
        parts.append(_skip_note("estimate.csv", missing))
    else:
        png = figures.estimate_figure(estimate, summary, res.path / "estimate.png")
        caption = (
            "Analytic estimate (lines) and simulation (markers with 95 % intervals)."
            if summary is not None
            else "Analytic estimate (no simulation results in this folder)."
        )
        parts.append(_figure_html(png, "Estimated blocking against offered load", caption))
    parts.append(_estimate_gaps_html(summary))
    parts.append(html_table(estimate, caption="Analytic estimate (estimate.csv)"))
    return _Section("estimate", "Estimate", "\n".join(parts))


def _estimate_gaps_html(summary: pd.DataFrame | None) -> str:
    """The load points where the estimate falls outside the simulated interval, and why."""
    if summary is None or "estimate_gap" not in summary.columns:
        return ""
    gaps = summary[summary["estimate_gap"].fillna("").astype(str) != ""]
    if gaps.empty:
        return "<p>At every simulated load point the estimate lies inside the simulated 95 % interval.</p>"
    items = "".join(
        f"<li><b>{_esc(r.architecture)}</b> at {_esc(f'{r.load_erlang:g}')} Erlang: estimate "
        f"{_esc(f'{r.estimate_blocking:.3g}')}, simulated {_esc(f'{r.blocking:.3g}')} "
        f"[{_esc(f'{r.blocking_ci_low:.3g}')}, {_esc(f'{r.blocking_ci_high:.3g}')}]: {_esc(r.estimate_gap)}</li>"
        for r in gaps.itertuples(index=False)
    )
    return (
        f"<p>The estimate falls outside the simulated interval at {len(gaps)} of {len(summary)} load points; "
        f"the assumption that breaks there is named (see docs/estimate.md):</p><ul class=\"gaps\">{items}</ul>"
    )


def _paths_section(res: ResultFolder) -> _Section | None:
    paths = res.table("paths")
    if paths is None:
        return None
    parts = []
    if "feasible" in paths.columns:
        feasible = paths["feasible"].astype(str).str.lower().isin(["true", "1", "yes"])
        parts.append(f"<p>{len(paths)} candidate paths, {int(feasible.sum())} physically feasible.</p>")
        keys = [c for c in ("architecture", "a", "b") if c in paths.columns]
        if {"a", "b"} <= set(keys):
            ok = feasible.groupby([paths[k] for k in keys], sort=False).any()
            stranded = [
                (f"{key[0]}: " if len(key) == 3 else "") + f"{key[-2]}-{key[-1]}"
                for key, good in ok.items()
                if not good
            ]
            if stranded:
                parts.append(
                    "<p><strong>No feasible path</strong> for: " + _esc("; ".join(stranded)) + ".</p>"
                )
        if "reason" in paths.columns and not feasible.all():
            refused = paths.loc[~feasible]
            parts.append(
                _details(
                    f"Refused paths and why ({len(refused)} rows)",
                    html_table(
                        refused, ["architecture", "a", "b", "rank", "path", "length_km", "loss_db", "reason"]
                    ),
                )
            )
    parts.append(_details(f"Candidate paths ({len(paths)} rows, paths.csv)", html_table(paths)))
    return _Section("paths", "Paths", "\n".join(parts))


def _plan_section(res: ResultFolder) -> _Section | None:
    plan, totals = res.table("plan"), res.table("plan_totals")
    if plan is None and totals is None:
        return None
    parts = []
    if plan is not None:
        missing = _missing(plan, ["architecture", "cable", "fiber_pairs"])
        if missing:
            parts.append(_skip_note("plan.csv", missing))
        else:
            parts.append(
                _figure_html(
                    figures.plan_figure(plan, res.path / "plan.png"),
                    "Bar chart of planned fiber pairs per cable and architecture",
                    "Fiber pairs per cable that meet the target blocking, per architecture.",
                )
            )
            pivot = plan.pivot_table(
                index="cable", columns="architecture", values="fiber_pairs", aggfunc="max", sort=False
            ).reset_index()
            pivot.columns.name = None
            parts.append(
                html_table(pivot, caption="Planned fiber pairs per cable (rows) and architecture (columns)")
            )
        parts.append(_details("Plan with blocking per cable (plan.csv)", html_table(plan)))
    if totals is not None:
        parts.append(html_table(totals, caption="Plan totals (plan_totals.csv)"))
    return _Section("plan", "Plan", "\n".join(parts))


def _forecast_section(res: ResultFolder) -> _Section | None:
    forecast, given = res.table("forecast"), res.table("forecast_totals")
    if forecast is None and given is None:
        return None
    parts = []
    if given is not None and not _missing(given, ["year", "architecture"]):
        totals, source = given, "forecast_totals.csv"
    elif forecast is not None and not _missing(forecast, ["year", "architecture"]):
        totals, source = forecast_totals(forecast), "summed over cables from forecast.csv"
    else:
        totals, source = None, ""
        parts.append(_skip_note("forecast.csv", ["year", "architecture"]))
    if totals is not None:
        if any(c in totals.columns for c in ("fiber_pairs", "transceivers_peak", "switch_ports")):
            parts.append(
                _figure_html(
                    figures.forecast_figure(totals, res.path / "forecast.png"),
                    "Line charts of fiber pairs, transceivers and switch ports by year",
                    "Network totals year by year under the forecast growth.",
                )
            )
        parts.append(html_table(totals, caption=f"Network totals per year and architecture ({source})"))
    notes = res.path / "forecast_notes.txt"
    if notes.is_file():
        parts.append(
            _details(
                "Forecast notes (forecast_notes.txt)",
                f"<pre>{_esc(notes.read_text(encoding='utf-8', errors='replace'))}</pre>",
            )
        )
    if forecast is not None:
        parts.append(
            _details(f"Forecast per cable ({len(forecast)} rows, forecast.csv)", html_table(forecast))
        )
    return _Section("forecast", "Forecast", "\n".join(parts))


def _other_tables_section(folder: Path) -> _Section | None:
    """Any other CSV table in the folder (from verbs or options this module does not know), as is."""
    known = {f"{n}.csv" for n in RESULT_TABLES}
    others = sorted(p for p in folder.glob("*.csv") if p.name not in known and not p.name.startswith("."))
    parts = []
    for path in others:
        frame = _read_csv(path)
        parts.append(_details(f"{path.name} ({len(frame)} rows)", html_table(frame)))
    if not parts:
        return None
    return _Section("other-tables", "Other tables", "\n".join(parts))


# run.json's scenario is the Scenario dataclass written with sorted keys: show it in field order.
_SCENARIO_ORDER = tuple(f.name for f in fields(Scenario))


def _inputs_section(res: ResultFolder) -> _Section | None:
    scenario = _scenario(res)
    if not scenario:
        return None
    run = res.run or {}
    parts = []
    files = {k: run.get(k) for k in ("scenario_file", "topology_file") if run.get(k)}
    if files:
        parts.append(_value_html(files))
    # The topology has its own part below.
    keys = [k for k in _SCENARIO_ORDER if k in scenario and k != "topology"] + sorted(
        k for k in scenario if k not in _SCENARIO_ORDER
    )
    general = {k: scenario[k] for k in keys if not isinstance(scenario[k], (dict, list))}
    if general:
        parts.append(_value_html(general))
    for k in keys:
        if isinstance(scenario[k], (dict, list)):
            parts.append(f"<h3>{_esc(k)}</h3>{_value_html(scenario[k])}")
    topology = scenario.get("topology")
    if isinstance(topology, dict):
        parts.append(f"<h3>topology: {_esc(topology.get('name', ''))}</h3>")
        for k in ("fiber_types", "sites", "cables"):
            if k in topology:
                parts.append(f"<h4>{_esc(k)}</h4>{_value_html(topology[k])}")
        rest = {k: v for k, v in topology.items() if k not in ("name", "fiber_types", "sites", "cables")}
        if rest:
            parts.append(_value_html(rest))
    return _Section("inputs", "Inputs", "\n".join(parts))


def _run_section(res: ResultFolder) -> _Section | None:
    run = res.run
    if run is None:
        return None
    parts = []
    facts = {k: run[k] for k in ("verb", "wall_time_s", "fingerprint", "command") if k in run}
    if "command" in facts and isinstance(facts["command"], list):
        facts["command"] = " ".join(str(a) for a in facts["command"])
    parts.append(_value_html(facts))
    for key, title in (
        ("seeds", "Seeds"),
        ("versions", "Software versions"),
        ("options", "Options"),
        ("pairs_without_feasible_route", "Datacenter pairs without a feasible route"),
    ):
        if key in run:
            parts.append(f"<h3>{title}</h3>{_value_html(run[key])}")
    return _Section("run", "Run, seeds and versions", "\n".join(parts))


_STYLE = """
:root { --ink: #222; --quiet: #5a5a5a; --rule: #d6d6d6; --accent: #0072B2; --band: #f4f6f8; }
* { box-sizing: border-box; }
body { font-family: "DejaVu Sans", "Helvetica Neue", Arial, sans-serif; color: var(--ink); margin: 0;
       line-height: 1.45; font-size: 15px; background: #fff; }
main { max-width: 1180px; margin: 0 auto; padding: 24px 28px 64px; }
h1 { font-size: 1.7em; margin: 0 0 4px; }
h2 { font-size: 1.3em; margin: 36px 0 10px; padding-bottom: 4px; border-bottom: 2px solid var(--accent); }
h3 { font-size: 1.05em; margin: 20px 0 6px; }
h4 { font-size: 0.95em; margin: 14px 0 4px; color: var(--quiet); }
.sub { color: var(--quiet); margin: 0 0 16px; }
nav ol { margin: 6px 0 0; padding-left: 22px; columns: 2; }
.caution { border-left: 5px solid #D55E00; background: #fbf3ee; padding: 10px 14px; margin: 16px 0; }
figure { margin: 18px 0; }
figure img { display: block; max-width: 100%; height: auto; border: 1px solid var(--rule); }
figcaption { color: var(--quiet); font-size: 0.9em; margin-top: 6px; }
.file, .quiet { color: var(--quiet); }
.table-wrap { overflow-x: auto; margin: 10px 0 16px; }
table { border-collapse: collapse; font-size: 0.85em; }
caption { text-align: left; font-weight: bold; padding: 4px 0; white-space: nowrap; }
th, td { border-bottom: 1px solid var(--rule); padding: 3px 9px; text-align: left; vertical-align: top;
         white-space: nowrap; }
table.kv td { white-space: normal; }
thead th { background: var(--band); border-bottom: 2px solid #999; white-space: nowrap; }
tbody tr:nth-child(even) { background: #fafafa; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
table.kv th { background: none; white-space: nowrap; font-weight: bold; }
details { margin: 8px 0 14px; }
summary { cursor: pointer; color: var(--accent); }
pre { white-space: pre-wrap; font-size: 0.85em; background: var(--band); padding: 8px; }
ul.findings { background: var(--band); padding: 10px 14px 10px 32px; }
@media print { details { display: block; } nav { display: none; } figure { break-inside: avoid; } }
"""


def _render(res: ResultFolder, sections: list[_Section]) -> str:
    scenario = _scenario(res)
    name = scenario.get("name") or res.path.name
    present = [f"{n}.csv" for n in RESULT_TABLES if n in res.tables] + (
        ["run.json"] if res.run is not None else []
    )
    nav = "".join(f'<li><a href="#{s.anchor}">{_esc(s.title)}</a></li>' for s in sections)
    body = "\n".join(
        f'<section id="{s.anchor}"><h2>{_esc(s.title)}</h2>\n{s.body}\n</section>' for s in sections
    )
    sub = f"Planning report for the scenario <strong>{_esc(name)}</strong>"
    return (
        '<!DOCTYPE html>\n<html lang="en">\n<head>\n<meta charset="utf-8">\n'
        '<meta name="viewport" content="width=device-width, initial-scale=1">\n'
        f"<title>sdmnet report: {_esc(name)}</title>\n<style>{_STYLE}</style>\n</head>\n<body>\n<main>\n"
        f"<h1>Network plan: {_esc(name)}</h1>\n"
        f'<p class="sub">{sub}.  Files read: {_esc(", ".join(present))}.</p>\n'
        f'<div class="caution" id="cautions"><strong>Cautions.</strong> {_esc(CAUTIONS)}</div>\n'
        f"<nav><strong>Contents</strong><ol>{nav}</ol></nav>\n{body}\n</main>\n</body>\n</html>\n"
    )


_SECTIONS: tuple[Callable[[ResultFolder], _Section | None], ...] = (
    _simulation_section,
    _resources_section,
    _network_section,
    _estimate_section,
    _paths_section,
    _plan_section,
    _forecast_section,
    _inputs_section,
    _run_section,
)


def write_report(folder: Path | str) -> Path:
    """Draw the figures and write a self-contained ``report.html`` for the results in ``folder``.

    Reads whichever of ``summary.csv``, ``classes.csv``, ``pairs.csv``, ``sites.csv``,
    ``cables.csv``, ``estimate.csv``, ``paths.csv``, ``plan.csv``, ``plan_totals.csv``,
    ``forecast.csv`` and ``run.json`` exist, and skips the rest.  Figures are written as PNG into
    the folder (``blocking.png``, ``bandwidth_blocking.png``, ``resources.png``, ``topology.png``,
    ``estimate.png``, ``plan.png``, ``forecast.png``, each only when its tables exist) and embedded
    in the page as data URIs.  The same folder always gives byte-identical files.

    Parameters
    ----------
    folder : path
        An output folder of ``sdmnet simulate``, ``estimate``, ``paths``, ``plan`` or ``forecast``.

    Returns
    -------
    Path
        The ``report.html`` written.

    Raises
    ------
    InputError
        No such folder, no result file in it, or a file that cannot be read.
    """
    res = read_results(folder)
    sections = [s for s in (build(res) for build in _SECTIONS) if s is not None]
    extra = _other_tables_section(res.path)
    if extra is not None:  # after the results, before the inputs and the run record
        tail = [i for i, s in enumerate(sections) if s.anchor in ("inputs", "run")]
        sections.insert(tail[0] if tail else len(sections), extra)
    out = res.path / "report.html"
    write_text(_render(res, sections), out)
    return out
