"""Figures drawn from result tables (never from the engine directly).

Our look: one marker shape and one line style per architecture as well as one colour, so that
figures read in greyscale and for colour-blind readers; colours from the Okabe-Ito palette
(Okabe & Ito, "Color Universal Design", 2002; common practice for colour-blind-safe plots).
"""

from __future__ import annotations

import math
from pathlib import Path

import matplotlib

matplotlib.use("Agg")  # no screen: figures go to files only

import matplotlib.pyplot as plt  # noqa: E402
import pandas as pd  # noqa: E402

__all__ = ["STYLE_CYCLE", "style_for", "blocking_figure", "save_figure"]

# Okabe-Ito colours; markers and dashes differ too.
STYLE_CYCLE = [
    ("#0072B2", "o", "-"),
    ("#D55E00", "s", "--"),
    ("#009E73", "^", "-."),
    ("#CC79A7", "D", ":"),
    ("#E69F00", "v", (0, (5, 1, 1, 1))),
    ("#56B4E9", "P", (0, (3, 1, 1, 1, 1, 1))),
    ("#000000", "X", (0, (1, 1))),
]


def style_for(index: int) -> dict:
    """Line style keywords for the ``index``-th series."""
    colour, marker, dash = STYLE_CYCLE[index % len(STYLE_CYCLE)]
    return {"color": colour, "marker": marker, "linestyle": dash, "markersize": 6, "linewidth": 1.6}


def _apply_look(ax: plt.Axes) -> None:
    ax.grid(True, which="major", color="#d0d0d0", linewidth=0.6)
    ax.grid(True, which="minor", color="#ececec", linewidth=0.4)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)


def save_figure(fig: plt.Figure, path: Path) -> Path:
    """Save as PNG with fixed metadata so identical figures give identical bytes."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    fig.savefig(path, dpi=120, bbox_inches="tight", metadata={"Software": None})
    plt.close(fig)
    return path


def blocking_figure(summary: pd.DataFrame, path: Path, column: str = "blocking", title: str | None = None) -> Path:
    """Blocking (or bandwidth blocking) against offered load with interval bars, per architecture.

    Points with zero blocking cannot sit on a log axis; they are drawn at the axis floor with
    an open marker.
    """
    fig, ax = plt.subplots(figsize=(7.0, 4.5))
    low_col, high_col = f"{column}_ci_low", f"{column}_ci_high"
    positive = summary.loc[summary[column] > 0, column]
    floor = 10 ** math.floor(math.log10(positive.min())) / 2 if len(positive) else 1e-4
    for i, (name, part) in enumerate(summary.groupby("architecture", sort=False)):
        part = part.sort_values("load_erlang")
        y = part[column].clip(lower=floor)
        lo = (part[column] - part[low_col]).clip(lower=0).fillna(0)
        hi = (part[high_col] - part[column]).clip(lower=0).fillna(0)
        style = style_for(i)
        ax.errorbar(part["load_erlang"], y, yerr=[lo.where(part[column] - lo > floor, 0), hi], capsize=3,
                    label=str(name), **style)
        zero = part[column] <= 0
        if zero.any():
            ax.plot(part.loc[zero, "load_erlang"], [floor] * int(zero.sum()), linestyle="none",
                    marker=style["marker"], markerfacecolor="white", markeredgecolor=style["color"])
    ax.set_yscale("log")
    ax.set_xlabel("offered load (Erlang)")
    ax.set_ylabel("request blocking probability" if column == "blocking" else "bandwidth blocking ratio")
    ax.set_title(title or ("Blocking vs offered load (95 % intervals)"))
    _apply_look(ax)
    ax.legend(title="architecture", fontsize=8, frameon=False)
    return save_figure(fig, path)
