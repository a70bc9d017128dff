"""Blocking against offered load: the simulation alone, or the analytic estimate beside it."""

from __future__ import annotations

import math
from collections.abc import Sequence
from pathlib import Path

import numpy as np
import pandas as pd
from matplotlib.axes import Axes
from matplotlib.lines import Line2D

from .look import (
    INK,
    apply_look,
    architectures_in,
    footnote,
    log_axis,
    new_figure,
    save_figure,
    style_for,
    suptitle,
    with_look,
)

__all__ = ["blocking_figure", "estimate_figure"]

def _log_floor(values: Sequence[float]) -> float:
    """Half the decade below the smallest positive value: where zeros are drawn on a log axis."""
    positive = [v for v in values if v > 0 and math.isfinite(v)]
    if not positive:
        return 1e-4
    return 10 ** math.floor(math.log10(min(positive))) / 2


def _dodge_step(loads: pd.Series, series: int) -> float:
    """Sideways offset between series so interval bars at one load do not hide one another."""
    values = sorted(set(float(x) for x in loads))
    span = values[-1] - values[0] if len(values) > 1 else max(abs(values[0]), 1.0)
    return 0.04 * span / max(series, 1) if series > 1 else 0.0


def _draw_blocking(
    ax: Axes, frame: pd.DataFrame, column: str, floor: float, order: list[str], lines: bool = True
) -> tuple[bool, bool]:
    """Points, intervals and (with ``lines``) lines of ``column`` per architecture.

    Returns (any zero, any dodge).
    """
    low_col, high_col = f"{column}_ci_low", f"{column}_ci_high"
    has_ci = low_col in frame.columns and high_col in frame.columns
    step = _dodge_step(frame["load_erlang"], len(order))
    any_zero = False
    for i, name in enumerate(order):
        part = frame[frame["architecture"].astype(str) == name].sort_values("load_erlang", kind="stable")
        if part.empty:
            continue
        style = style_for(i)
        x = part["load_erlang"].to_numpy(float) + (i - (len(order) - 1) / 2) * step
        value = part[column].to_numpy(float)
        y = np.clip(value, floor, None)
        if has_ci:
            low = np.clip(part[low_col].fillna(part[column]).to_numpy(float), floor, None)
            high = np.clip(part[high_col].fillna(part[column]).to_numpy(float), floor, None)
            err = np.vstack([np.clip(y - low, 0, None), np.clip(high - y, 0, None)])
            ax.errorbar(
                x, y, yerr=err, fmt="none", ecolor=style["color"], elinewidth=1.1, capsize=3, zorder=2
            )
        if lines:
            ax.plot(
                x, y, color=style["color"], linestyle=style["linestyle"], linewidth=style["linewidth"], zorder=3
            )
        zero = value <= 0
        any_zero = any_zero or bool(zero.any())
        marker = {
            "marker": style["marker"],
            "markersize": style["markersize"],
            "linestyle": "none",
            "zorder": 4,
        }
        ax.plot(x[~zero], y[~zero], color=style["color"], markeredgecolor=INK, markeredgewidth=0.5, **marker)
        ax.plot(
            x[zero],
            y[zero],
            markerfacecolor="white",
            markeredgecolor=style["color"],
            markeredgewidth=1.4,
            **marker,
        )
        ax.plot([], [], label=name, **style)
    return any_zero, step > 0


def _blocking_axes(ax: Axes, column: str) -> str:
    """Log blocking axis against offered load, labelled for ``column``; returns the title's noun."""
    request = column == "blocking"
    log_axis(ax.yaxis)
    ax.set_xlabel("offered load (Erlang)")
    ax.set_ylabel(
        "request blocking probability (share of requests)" if request else "bandwidth blocking ratio (share of Gb/s)"
    )
    return "Request blocking" if request else "Bandwidth blocking"


@with_look
def blocking_figure(
    summary: pd.DataFrame, path: Path, column: str = "blocking", title: str | None = None
) -> Path:
    """Blocking (or bandwidth blocking) against offered load with interval bars, per architecture.

    Points with zero blocking cannot sit on a log axis; they are drawn at the axis floor with
    an open marker, and interval bars are cut at the floor.  Series are nudged sideways a little
    so intervals at one load stay apart; the footnote says so.

    Parameters
    ----------
    summary : DataFrame
        ``summary.csv``: ``architecture, load_erlang, COLUMN`` and optionally
        ``COLUMN_ci_low, COLUMN_ci_high``.
    path : path
        PNG to write.
    column : str
        ``"blocking"`` or ``"bandwidth_blocking"``.
    title : str, optional
        Figure title.
    """
    order = architectures_in(summary)
    fig, ax = new_figure(figsize=(7.2, 4.4))
    values = list(summary[column]) + [
        v for c in (f"{column}_ci_low", f"{column}_ci_high") if c in summary.columns for v in summary[c]
    ]
    floor = _log_floor(values)
    any_zero, dodged = _draw_blocking(ax, summary, column, floor, order)
    quantity = _blocking_axes(ax, column)
    ax.set_title(title or f"{quantity} vs offered load (95 % intervals)")
    apply_look(ax)
    ax.legend(title="architecture", loc="upper left", bbox_to_anchor=(1.01, 1.0))
    notes = ["Bars: confidence interval over replications."]
    if any_zero:
        notes.append(f"Open marker: no request blocked (drawn at the axis floor, {floor:.0e}).")
    if dodged:
        notes.append("Series are offset sideways by up to 2 % of the load range for legibility.")
    footnote(fig, " ".join(notes))
    return save_figure(fig, path)



@with_look
def estimate_figure(estimate: pd.DataFrame, summary: pd.DataFrame | None, path: Path) -> Path:
    """Analytic estimate (lines) against simulation (markers with intervals), per architecture.

    One panel for request blocking and one for bandwidth blocking (when both tables have it).
    """
    columns = [
        c
        for c in ("blocking", "bandwidth_blocking")
        if c in estimate.columns and (summary is None or c in summary.columns)
    ]
    order = list(
        dict.fromkeys(architectures_in(estimate) + ([] if summary is None else architectures_in(summary)))
    )
    fig, axes = new_figure(1, len(columns), figsize=(5.4 * len(columns) + 2.0, 4.2), squeeze=False)
    any_zero = any_dodge = False
    floors = []
    for ax, column in zip(axes[0], columns):
        values = list(estimate[column]) + ([] if summary is None else list(summary[column]))
        floor = _log_floor(values)
        floors.append(floor)
        if summary is not None:
            # the simulation as markers and intervals only: the lines are the estimate's
            zero, dodged = _draw_blocking(ax, summary, column, floor, order, lines=False)
            any_zero, any_dodge = any_zero or zero, any_dodge or dodged
        for i, name in enumerate(order):
            part = estimate[estimate["architecture"].astype(str) == name].sort_values(
                "load_erlang", kind="stable"
            )
            style = style_for(i)
            ax.plot(
                part["load_erlang"],
                np.clip(part[column].astype(float), floor, None),
                color=style["color"],
                linestyle=style["linestyle"],
                linewidth=1.4,
                zorder=3,
            )
        ax.set_title(_blocking_axes(ax, column))
        apply_look(ax)
    handles = [Line2D([], [], label=name, **style_for(i)) for i, name in enumerate(order)]
    handles += [
        Line2D([], [], color=INK, linestyle="-", label="line: analytic estimate"),
        Line2D([], [], color=INK, marker="o", linestyle="none", label="marker + bar: simulation (95 %)"),
    ]
    suptitle(fig, "Analytic estimate vs simulation")
    fig.legend(handles=handles, loc="outside right upper")
    notes = []
    if any_zero:
        notes.append(
            f"Open marker: no request blocked (drawn at the axis floor, {min(floors):.0e} or above)."
        )
    if any_dodge:
        notes.append("Simulated points are offset sideways by up to 2 % of the load range for legibility.")
    if notes:
        footnote(fig, " ".join(notes))
    return save_figure(fig, path)
