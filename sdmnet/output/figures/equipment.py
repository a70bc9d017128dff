"""Equipment figures: resources per architecture, planned fiber pairs per cable, the forecast by year."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
from matplotlib.axes import Axes
from matplotlib.ticker import MaxNLocator

from .look import (
    INK,
    apply_look,
    architectures_in,
    bar_style_for,
    fmt_number,
    new_figure,
    save_figure,
    style_for,
    suptitle,
    with_look,
)

__all__ = ["resources_figure", "forecast_figure", "plan_figure"]

def _at_highest_load(summary: pd.DataFrame) -> tuple[pd.DataFrame, str]:
    """Each architecture's row at its highest load, and how to say which load that is."""
    rows = []
    for name in architectures_in(summary):
        part = summary[summary["architecture"].astype(str) == name]
        rows.append(part.loc[part["load_erlang"].astype(float).idxmax()])
    top = pd.DataFrame(rows)
    loads = sorted(set(float(x) for x in top["load_erlang"]))
    when = f"{fmt_number(loads[0])} Erlang" if len(loads) == 1 else "each architecture's highest load"
    return top, when


def _bar_labels(ax: Axes, bars, fmt: str = "{:,.0f}") -> None:
    ax.bar_label(bars, labels=[fmt.format(b.get_height()) for b in bars], padding=2, fontsize=7, color=INK)


@with_look
def resources_figure(summary: pd.DataFrame, path: Path) -> Path:
    """Transceiver lanes (installed and mean in use), switch ports and fiber pairs per architecture.

    Grouped bars at the highest offered load point (resources that grow with load, the
    transceivers, are largest there).  Folders written before installed counts existed show
    modules (peak and mean in use) instead.  The title names the load.
    """
    top, when = _at_highest_load(summary)
    names = [str(a) for a in top["architecture"]]
    x = np.arange(len(names))
    fig, axes = new_figure(1, 3, figsize=(11.0, 3.9), gridspec_kw={"width_ratios": [1.5, 1, 1]})
    ax = axes[0]
    width = 0.38
    if "transceiver_lanes_installed" in top.columns:
        first, second = ("transceiver_lanes_installed", "installed"), ("transceiver_lanes_mean", "mean in use")
        unit = "lanes"
    else:
        first, second = ("transceivers_peak", "peak"), ("transceivers_mean", "mean")
        unit = "modules in use"
    solid = ax.bar(
        x - width / 2,
        top[first[0]].astype(float),
        width,
        color="#3b3b3b",
        edgecolor=INK,
        linewidth=0.6,
        label=first[1],
    )
    if second[0] in top.columns:
        hatched = ax.bar(
            x + width / 2,
            top[second[0]].astype(float),
            width,
            color="white",
            hatch="////",
            edgecolor=INK,
            linewidth=0.6,
            label=second[1],
        )
        _bar_labels(ax, hatched)
    _bar_labels(ax, solid)
    ax.set_ylabel(f"transceiver {unit} ({unit.split()[0]})")
    ax.set_title("Transceivers")
    ax.legend(loc="upper right", ncols=2)
    for ax, column, label, title in (
        (axes[1], "switch_ports", "switch ports installed (ports)", "Switch ports"),
        (axes[2], "fiber_pairs", "fiber pairs installed (pairs)", "Fiber pairs"),
    ):
        styles = [bar_style_for(i) for i in range(len(names))]
        bars = ax.bar(
            x,
            top[column].astype(float),
            0.6,
            color=[s["color"] for s in styles],
            hatch=[s["hatch"] for s in styles],
            edgecolor=INK,
            linewidth=0.6,
        )
        _bar_labels(ax, bars)
        ax.set_ylabel(label)
        ax.set_title(title)
    for ax in axes:
        ax.set_xticks(
            x, names, rotation=30 if len(names) > 3 else 0, ha="right" if len(names) > 3 else "center"
        )
        ax.set_xlabel("architecture")
        ax.margins(y=0.15)
        apply_look(ax)
        ax.grid(False, axis="x")
    suptitle(fig, f"Resources per architecture at the highest offered load ({when})")
    return save_figure(fig, path)


def _draw_band(ax, band: pd.DataFrame | None, name: str, column: str, color: object) -> None:
    """Shade the low-high growth range of ``column`` for one architecture, if the band has it."""
    if band is None or band.empty or column not in band.columns or "case" not in band.columns:
        return
    mine = band[band["architecture"].astype(str) == name]
    low = mine[mine["case"] == "low"].sort_values("year", kind="stable")
    high = mine[mine["case"] == "high"].sort_values("year", kind="stable")
    if len(low) and len(low) == len(high):
        ax.fill_between(low["year"], low[column].astype(float), high[column].astype(float), color=color,
                        alpha=0.18, linewidth=0, label=f"{name}: low-high growth")  # fmt: skip


@with_look
def forecast_figure(totals: pd.DataFrame, path: Path, band: pd.DataFrame | None = None) -> Path:
    """Fiber pairs, transceiver modules, switch ports, cost and watts year by year, per architecture.

    Parameters
    ----------
    totals : DataFrame
        One row per (year, architecture): ``year, architecture`` and any of ``fiber_pairs``,
        ``transceiver_lanes_installed`` (else ``transceivers_peak``), ``switch_ports``, ``cost``,
        ``power_w`` (network totals).
    path : path
        PNG to write.
    band : DataFrame, optional
        ``forecast_band.csv``: rows of ``case`` low/base/high per (year, architecture); a panel
        whose column it holds is drawn with the low-high range shaded around the line.
    """
    lanes = "transceiver_lanes_installed" in totals.columns
    wanted = [
        ("fiber_pairs", "fiber pairs installed (pairs)", "Fiber pairs"),
        ("transceiver_lanes_installed", "transceiver lanes installed (lanes)", "Transceivers")
        if lanes
        else ("transceivers_peak", "peak transceiver modules (modules)", "Transceivers"),
        ("switch_ports", "switch ports installed (ports)", "Switch ports"),
        ("cost", "total cost (relative units)", "Cost"),
        ("power_w", "power drawn (W)", "Power"),
    ]
    panels = [w for w in wanted if w[0] in totals.columns]
    order = architectures_in(totals)
    fig, axes = new_figure(1, len(panels), figsize=(3.8 * len(panels), 4.0), squeeze=False)
    for ax, (column, label, title) in zip(axes[0], panels):
        for i, name in enumerate(order):
            part = totals[totals["architecture"].astype(str) == name].sort_values("year", kind="stable")
            style = style_for(i)
            ax.plot(part["year"], part[column].astype(float), label=name, **style)
            _draw_band(ax, band, name, column, style.get("color"))
        ax.set_xlabel("year of the forecast")
        ax.set_ylabel(label)
        ax.set_title(title)
        ax.xaxis.set_major_locator(MaxNLocator(integer=True))
        apply_look(ax)
    suptitle(fig, "Forecast: equipment needed year by year")
    handles, labels = axes[0][0].get_legend_handles_labels()
    fig.legend(handles, labels, title="architecture", loc="outside lower center", ncols=min(len(order), 5))
    return save_figure(fig, path)



@with_look
def plan_figure(plan: pd.DataFrame, path: Path) -> Path:
    """Fiber pairs per cable that meet the target blocking, one bar series per architecture."""
    order = architectures_in(plan)
    cables = list(dict.fromkeys(str(c) for c in plan["cable"]))
    height = 0.8 / max(len(order), 1)
    fig, ax = new_figure(
        figsize=(7.2, 1.2 + 0.22 * len(cables) * max(len(order), 1) ** 0.5 + 0.3 * len(cables))
    )
    y = np.arange(len(cables))
    for i, name in enumerate(order):
        part = plan[plan["architecture"].astype(str) == name]
        pairs = dict(zip((str(c) for c in part["cable"]), part["fiber_pairs"].astype(float)))
        values = [pairs.get(c, 0.0) for c in cables]
        ax.barh(y - 0.4 + height * (i + 0.5), values, height, label=name, **bar_style_for(i))
    ax.set_yticks(y, cables)
    ax.invert_yaxis()
    ax.set_xlabel("fiber pairs (pairs)")
    ax.set_ylabel("cable (site-site)")
    ax.xaxis.set_major_locator(MaxNLocator(integer=True))
    ax.set_title("Planned fiber pairs per cable")
    apply_look(ax)
    ax.grid(False, axis="y")
    ax.legend(title="architecture", loc="upper left", bbox_to_anchor=(1.01, 1.0))
    return save_figure(fig, path)
