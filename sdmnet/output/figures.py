"""Figures drawn from result tables (never from the engine directly).

Our look: one marker shape and one line style per architecture as well as one colour, so that
figures read in greyscale and for colour-blind readers; colours from the Okabe-Ito palette
(Okabe & Ito, "Color Universal Design", 2002; common practice for colour-blind-safe plots).
Bars carry a hatch per series for the same reason.  Titles sit on the left, grids are light, and
every axis names its unit.

Every figure is drawn inside matplotlib's defaults overlaid with :data:`LOOK`, so a user's
matplotlibrc cannot change our output, and saved by :func:`save_figure` with fixed metadata, so
the same tables always give the same PNG bytes.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from functools import wraps
from pathlib import Path
from typing import Any, TypeVar

import matplotlib

matplotlib.use("Agg")  # no screen: figures go to files only

import matplotlib.pyplot as plt  # noqa: E402
import networkx as nx  # noqa: E402
import numpy as np  # noqa: E402
import pandas as pd  # noqa: E402
from matplotlib.colors import LinearSegmentedColormap, Normalize  # noqa: E402
from matplotlib.lines import Line2D  # noqa: E402
from matplotlib.path import Path as PolyPath  # noqa: E402
from matplotlib.transforms import Bbox  # noqa: E402

__all__ = [
    "STYLE_CYCLE",
    "HATCHES",
    "LOOK",
    "UTILISATION_CMAP",
    "style_for",
    "bar_style_for",
    "save_figure",
    "blocking_figure",
    "resources_figure",
    "topology_figure",
    "forecast_figure",
    "estimate_figure",
    "plan_figure",
]

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

# One hatch per bar series, so bars stay apart in greyscale.
HATCHES = ["", "///", "\\\\\\", "xxx", "...", "++", "oo"]

INK = "#222222"
QUIET = "#5a5a5a"

# Our rc settings: fonts bundled with matplotlib (the same glyphs on every machine), left titles.
LOOK: dict[str, Any] = {
    "font.family": "DejaVu Sans",
    "font.size": 9,
    "axes.titlesize": 10,
    "axes.titleweight": "bold",
    "axes.titlelocation": "left",
    "axes.titlepad": 8,
    "axes.labelsize": 9,
    "axes.labelcolor": INK,
    "axes.edgecolor": "#555555",
    "axes.linewidth": 0.8,
    "axes.facecolor": "white",
    "figure.facecolor": "white",
    "savefig.facecolor": "white",
    "figure.titlesize": 11,
    "figure.titleweight": "bold",
    "xtick.color": "#555555",
    "ytick.color": "#555555",
    "xtick.labelcolor": INK,
    "ytick.labelcolor": INK,
    "xtick.labelsize": 8,
    "ytick.labelsize": 8,
    "legend.fontsize": 8,
    "legend.title_fontsize": 8,
    "legend.frameon": False,
    "hatch.linewidth": 0.7,
    "hatch.color": INK,
    "svg.hashsalt": "sdmnet",  # fixed ids if anyone saves SVG
    "text.color": INK,
}

# Greyscale-safe map for utilisation: cividis (monotonic lightness, designed for colour-vision
# deficiency; Nunez, Anderton & Renslow, PLOS ONE 13(7), 2018), reversed so busy cables are dark
# on the white page, and cut before its palest yellow so idle cables stay visible.
UTILISATION_CMAP = LinearSegmentedColormap.from_list(
    "sdmnet-utilisation", plt.get_cmap("cividis_r")(np.linspace(0.12, 1.0, 256))
)

DPI = 120
_F = TypeVar("_F", bound=Callable[..., Path])


def style_for(index: int) -> dict:
    """Line style keywords for the ``index``-th series."""
    colour, marker, dash = STYLE_CYCLE[index % len(STYLE_CYCLE)]
    return {"color": colour, "marker": marker, "linestyle": dash, "markersize": 6, "linewidth": 1.6}


def bar_style_for(index: int) -> dict:
    """Bar keywords (fill colour, hatch, edge) for the ``index``-th series."""
    colour = STYLE_CYCLE[index % len(STYLE_CYCLE)][0]
    return {"color": colour, "hatch": HATCHES[index % len(HATCHES)], "edgecolor": INK, "linewidth": 0.6}


def _with_look(func: _F) -> _F:
    @wraps(func)
    def wrapper(*args: Any, **kwargs: Any) -> Path:
        with plt.style.context(["default", LOOK]):
            return func(*args, **kwargs)

    return wrapper  # type: ignore[return-value]


def _apply_look(ax: plt.Axes) -> None:
    ax.grid(True, which="major", color="#d6d6d6", linewidth=0.6)
    ax.grid(True, which="minor", color="#eeeeee", linewidth=0.4)
    ax.set_axisbelow(True)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)


def _note(fig: plt.Figure, text: str) -> None:
    """A small grey footnote under the axes."""
    fig.text(0.01, -0.01, text, ha="left", va="top", fontsize=7, color=QUIET, wrap=True)


def save_figure(fig: plt.Figure, path: Path) -> Path:
    """Save as PNG with fixed metadata so identical figures give identical bytes."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    with plt.style.context(["default", LOOK]):
        fig.savefig(path, dpi=DPI, bbox_inches="tight", metadata={"Software": None})
    plt.close(fig)
    return path


def _fmt_number(value: float) -> str:
    return f"{value:g}" if float(value) != int(value) else f"{int(value)}"


def _architectures(frame: pd.DataFrame) -> list[str]:
    """Architecture names in order of first appearance (the scenario's order)."""
    return list(dict.fromkeys(str(a) for a in frame["architecture"]))


# --- blocking ------------------------------------------------------------------------------------


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
    ax: plt.Axes, frame: pd.DataFrame, column: str, floor: float, order: list[str], lines: bool = True
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


def _blocking_axes(ax: plt.Axes, column: str) -> str:
    """Log blocking axis against offered load, labelled for ``column``; returns the title's noun."""
    request = column == "blocking"
    ax.set_yscale("log")
    ax.set_xlabel("offered load (Erlang)")
    ax.set_ylabel(
        "request blocking probability (share of requests)" if request else "bandwidth blocking ratio (share of Gb/s)"
    )
    return "Request blocking" if request else "Bandwidth blocking"


@_with_look
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
    order = _architectures(summary)
    fig, ax = plt.subplots(figsize=(7.2, 4.4))
    values = list(summary[column]) + [
        v for c in (f"{column}_ci_low", f"{column}_ci_high") if c in summary.columns for v in summary[c]
    ]
    floor = _log_floor(values)
    any_zero, dodged = _draw_blocking(ax, summary, column, floor, order)
    quantity = _blocking_axes(ax, column)
    ax.set_title(title or f"{quantity} vs offered load (95 % intervals)")
    _apply_look(ax)
    ax.legend(title="architecture", loc="upper left", bbox_to_anchor=(1.01, 1.0))
    notes = ["Bars: confidence interval over replications."]
    if any_zero:
        notes.append(f"Open marker: no request blocked (drawn at the axis floor, {floor:.0e}).")
    if dodged:
        notes.append("Series are offset sideways by up to 2 % of the load range for legibility.")
    _note(fig, " ".join(notes))
    return save_figure(fig, path)


# --- resources -----------------------------------------------------------------------------------


def _at_highest_load(summary: pd.DataFrame) -> tuple[pd.DataFrame, str]:
    """Each architecture's row at its highest load, and how to say which load that is."""
    rows = []
    for name in _architectures(summary):
        part = summary[summary["architecture"].astype(str) == name]
        rows.append(part.loc[part["load_erlang"].astype(float).idxmax()])
    top = pd.DataFrame(rows)
    loads = sorted(set(float(x) for x in top["load_erlang"]))
    when = f"{_fmt_number(loads[0])} Erlang" if len(loads) == 1 else "each architecture's highest load"
    return top, when


def _bar_labels(ax: plt.Axes, bars, fmt: str = "{:,.0f}") -> None:
    ax.bar_label(bars, labels=[fmt.format(b.get_height()) for b in bars], padding=2, fontsize=7, color=INK)


@_with_look
def resources_figure(summary: pd.DataFrame, path: Path) -> Path:
    """Transceiver modules (peak and mean), switch ports and fiber pairs per architecture.

    Grouped bars at the highest offered load point (resources that grow with load, the
    transceivers, are largest there; switch ports and fiber pairs are installed equipment and do
    not depend on load).  The title names the load.
    """
    top, when = _at_highest_load(summary)
    names = [str(a) for a in top["architecture"]]
    x = np.arange(len(names))
    fig, axes = plt.subplots(1, 3, figsize=(11.0, 3.9), gridspec_kw={"width_ratios": [1.5, 1, 1]})
    ax = axes[0]
    width = 0.38
    peak = ax.bar(
        x - width / 2,
        top["transceivers_peak"].astype(float),
        width,
        color="#3b3b3b",
        edgecolor=INK,
        linewidth=0.6,
        label="peak",
    )
    has_mean = "transceivers_mean" in top.columns
    if has_mean:
        mean = ax.bar(
            x + width / 2,
            top["transceivers_mean"].astype(float),
            width,
            color="white",
            hatch="////",
            edgecolor=INK,
            linewidth=0.6,
            label="mean",
        )
        _bar_labels(ax, mean)
    _bar_labels(ax, peak)
    ax.set_ylabel("transceiver modules in use (modules)")
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
        _apply_look(ax)
        ax.grid(False, axis="x")
    fig.suptitle(f"Resources per architecture at the highest offered load ({when})", x=0.01, ha="left")
    fig.tight_layout()
    return save_figure(fig, path)


# --- topology ------------------------------------------------------------------------------------


def _site_positions(
    sites: Sequence[dict], cables: Sequence[dict]
) -> tuple[dict[str, tuple[float, float]], bool]:
    """Positions in km from the sites' coordinates, or a seeded spring layout when any is missing."""
    if sites and all(s.get("x_km") is not None and s.get("y_km") is not None for s in sites):
        return {str(s["id"]): (float(s["x_km"]), float(s["y_km"])) for s in sites}, True
    graph = nx.Graph()
    graph.add_nodes_from(str(s["id"]) for s in sites)
    graph.add_edges_from((str(c["a"]), str(c["b"])) for c in cables)
    layout = nx.spring_layout(graph, seed=20240601)  # fixed seed: the same drawing every time
    return {node: (float(p[0]), float(p[1])) for node, p in sorted(layout.items())}, False


def _panel_loads(utilisation: pd.DataFrame, order: list[str]) -> dict[str, tuple[float, dict[str, float]]]:
    out = {}
    for name in order:
        part = utilisation[utilisation["architecture"].astype(str) == name]
        load = float(part["load_erlang"].astype(float).max())
        at = part[part["load_erlang"].astype(float) == load]
        out[name] = (load, {str(c): float(u) for c, u in zip(at["cable"], at["utilisation"])})
    return out


# Label positions tried around a site, in points: (dx, dy, horizontal, vertical alignment).
_LABEL_SPOTS = (
    (5, 5, "left", "bottom"),
    (5, -5, "left", "top"),
    (-5, 5, "right", "bottom"),
    (-5, -5, "right", "top"),
    (0, 8, "center", "bottom"),
    (0, -8, "center", "top"),
    (8, 0, "left", "center"),
    (-8, 0, "right", "center"),
)


def _overlap(a: Bbox, b: Bbox) -> float:
    """Area shared by two display-space boxes."""
    w = min(a.x1, b.x1) - max(a.x0, b.x0)
    h = min(a.y1, b.y1) - max(a.y0, b.y0)
    return w * h if w > 0 and h > 0 else 0.0


def _place_site_labels(ax: plt.Axes, pos: dict[str, tuple[float, float]], segments: list) -> None:
    """Label every site at the spot around it that covers the fewest labels, sites and cables.

    Greedy, crowded sites first: each candidate box is scored by the area it shares with labels
    already placed and with site markers, the area it sticks out of the axes, and a share of
    its own area for every cable it crosses.  The first spot in :data:`_LABEL_SPOTS` wins ties.
    """
    renderer = ax.figure.canvas.get_renderer()
    to_display = ax.transData.transform
    points = {s: to_display(xy) for s, xy in pos.items()}
    scale = ax.figure.dpi / 72.0  # display units per point
    half = 5.0 * scale  # half a site marker
    markers = [Bbox.from_extents(x - half, y - half, x + half, y + half) for x, y in points.values()]
    lines = [PolyPath(to_display([a, b])) for a, b in segments]
    frame = ax.bbox

    def crowding(site: str) -> int:
        x, y = points[site]
        return sum(math.hypot(x - u, y - v) < 60 * scale for u, v in points.values())

    placed: list[Bbox] = []
    for site in sorted(pos, key=lambda s: (-crowding(s), s)):
        label = ax.annotate(
            site,
            pos[site],
            xytext=(5, 5),
            textcoords="offset points",
            fontsize=7,
            color=INK,
            zorder=5,
            bbox={"boxstyle": "round,pad=0.1", "fc": "white", "ec": "none", "alpha": 0.75},
        )
        best = None
        for dx, dy, ha, va in _LABEL_SPOTS:
            label.set_position((dx, dy))
            label.set_ha(ha)
            label.set_va(va)
            box = label.get_window_extent(renderer)
            area = box.width * box.height
            outside = area - _overlap(box, frame)
            score = sum(_overlap(box, other) for other in placed + markers) + outside
            score += 0.15 * area * sum(line.intersects_bbox(box, filled=False) for line in lines)
            if best is None or score < best[0] - 1e-9:
                best = (score, dx, dy, ha, va, box)
        _, dx, dy, ha, va, box = best
        label.set_position((dx, dy))
        label.set_ha(ha)
        label.set_va(va)
        placed.append(box)


@_with_look
def topology_figure(
    sites: Sequence[dict],
    cables: Sequence[dict],
    path: Path,
    utilisation: pd.DataFrame | None = None,
) -> Path:
    """The network drawn from site coordinates, with cable utilisation as line width and shade.

    One panel per architecture, each at that architecture's highest load in ``utilisation``
    (``cables.csv``).  Without ``utilisation`` a single panel shows the installed fiber pairs
    instead.  Sites without ``x_km``/``y_km`` are placed by a spring layout with a fixed seed (a
    schematic: distances then mean nothing, and the axes say so).

    Parameters
    ----------
    sites : list of dict
        ``id``, ``role`` and optionally ``x_km``, ``y_km`` (run.json's ``scenario.topology.sites``).
    cables : list of dict
        ``a``, ``b``, ``fiber_pairs`` (run.json's ``scenario.topology.cables``).
    path : path
        PNG to write.
    utilisation : DataFrame, optional
        ``architecture, load_erlang, cable, utilisation``.
    """
    pos, in_km = _site_positions(sites, cables)
    roles = {str(s["id"]): str(s.get("role", "datacenter")) for s in sites}
    by_utilisation = utilisation is not None and not utilisation.empty
    order = _architectures(utilisation) if by_utilisation else [""]
    panels = _panel_loads(utilisation, order) if by_utilisation else {}
    xs = [p[0] for p in pos.values()]
    ys = [p[1] for p in pos.values()]
    pad_x = 0.12 * (max(xs) - min(xs) or 1.0)
    pad_y = 0.12 * (max(ys) - min(ys) or 1.0)
    # Panels take the shape of the map (within limits) so that equal-aspect drawings fill them;
    # a wide map gets two wider columns at most, so that its sites stay apart.
    shape = (max(ys) - min(ys) + 2 * pad_y) / (max(xs) - min(xs) + 2 * pad_x) if in_km else 0.85
    wide = shape < 0.7
    ncols = min(len(order), 2 if wide else 3)
    nrows = math.ceil(len(order) / ncols)
    panel_w = 6.4 if wide else 4.6
    panel_h = min(max((panel_w - 0.9) * shape, 1.8), 6.0) + 1.0  # + title and axis label
    fig, axes = plt.subplots(
        nrows,
        ncols,
        figsize=(panel_w * ncols + 1.0, panel_h * nrows + 1.0),
        squeeze=False,
        layout="constrained",
    )
    norm = Normalize(0.0, 1.0)
    max_pairs = max([int(c.get("fiber_pairs", 1)) for c in cables] + [1])
    for k, name in enumerate(order):
        ax = axes[k // ncols][k % ncols]
        load, util = panels.get(name, (math.nan, {}))
        for c in cables:
            a, b = str(c["a"]), str(c["b"])
            (xa, ya), (xb, yb) = pos[a], pos[b]
            key = f"{a}-{b}"
            if by_utilisation and key in util and math.isfinite(util[key]):
                u = min(max(util[key], 0.0), 1.0)
                ax.plot(
                    [xa, xb],
                    [ya, yb],
                    color=UTILISATION_CMAP(norm(u)),
                    linewidth=1.0 + 6.0 * u,
                    solid_capstyle="round",
                    zorder=1,
                )
            elif by_utilisation:  # a cable this architecture does not report
                ax.plot([xa, xb], [ya, yb], color="#9a9a9a", linewidth=1.0, linestyle=(0, (2, 2)), zorder=1)
            else:
                pairs = int(c.get("fiber_pairs", 1))
                ax.plot(
                    [xa, xb], [ya, yb], color="#4a4a4a", linewidth=1.0 + 5.0 * pairs / max_pairs, zorder=1
                )
                ax.text(
                    (xa + xb) / 2,
                    (ya + yb) / 2,
                    str(pairs),
                    fontsize=7,
                    ha="center",
                    va="center",
                    color=INK,
                    bbox={"boxstyle": "round,pad=0.15", "fc": "white", "ec": "none"},
                    zorder=3,
                )
        for site_id in sorted(pos):
            x, y = pos[site_id]
            if roles.get(site_id) == "hub":
                ax.plot(
                    x,
                    y,
                    marker="o",
                    markersize=8,
                    markerfacecolor="white",
                    markeredgecolor=INK,
                    markeredgewidth=1.4,
                    zorder=4,
                )
            else:
                ax.plot(x, y, marker="s", markersize=8, markerfacecolor=INK, markeredgecolor=INK, zorder=4)
        ax.set_xlim(min(xs) - pad_x, max(xs) + pad_x)
        ax.set_ylim(min(ys) - pad_y, max(ys) + pad_y)
        if in_km:
            ax.set_aspect("equal", adjustable="box")
            ax.set_xlabel("x (km)")
            ax.set_ylabel("y (km)")
        else:
            ax.set_xticks([])
            ax.set_yticks([])
            ax.set_xlabel("schematic layout (no distance scale)")
            ax.set_ylabel("schematic layout (no distance scale)")
        if by_utilisation:
            ax.set_title(f"{name} at {_fmt_number(load)} Erlang")
        _apply_look(ax)
    for k in range(len(order), nrows * ncols):
        axes[k // ncols][k % ncols].set_visible(False)
    handles = [
        Line2D(
            [], [], marker="s", linestyle="none", markerfacecolor=INK, markeredgecolor=INK, label="datacenter"
        ),
        Line2D(
            [], [], marker="o", linestyle="none", markerfacecolor="white", markeredgecolor=INK, label="hub"
        ),
    ]
    if by_utilisation:
        handles += [
            Line2D([], [], color=UTILISATION_CMAP(norm(u)), linewidth=1.0 + 6.0 * u, label=f"{u:.0%} busy")
            for u in (0.1, 0.5, 0.9)
        ]
        fig.suptitle(
            "Mean cable utilisation at the highest offered load (line width and shade)", x=0.01, ha="left"
        )
    else:
        handles.append(Line2D([], [], color="#4a4a4a", linewidth=3, label="width: fiber pairs"))
        fig.suptitle("Network: installed fiber pairs per cable", x=0.01, ha="left")
    fig.legend(handles=handles, loc="outside lower center", ncols=len(handles))
    if by_utilisation:
        mappable = plt.cm.ScalarMappable(norm=norm, cmap=UTILISATION_CMAP)
        bar = fig.colorbar(
            mappable, ax=axes, fraction=0.03, pad=0.02, shrink=0.85 if nrows == 1 else 0.6, aspect=25
        )
        bar.set_label("mean utilisation (share of unit positions busy)")
        bar.ax.yaxis.set_major_formatter(matplotlib.ticker.PercentFormatter(1.0))
    # Labels last, once legend and colour bar have taken their room: they are placed in
    # display space, so the layout must be settled first.
    segments = [(pos[str(c["a"])], pos[str(c["b"])]) for c in cables]
    fig.draw_without_rendering()
    for k in range(len(order)):
        _place_site_labels(axes[k // ncols][k % ncols], pos, segments)
    return save_figure(fig, path)


# --- forecast, estimate, plan --------------------------------------------------------------------


@_with_look
def forecast_figure(totals: pd.DataFrame, path: Path) -> Path:
    """Fiber pairs, transceiver modules and switch ports year by year, per architecture.

    Parameters
    ----------
    totals : DataFrame
        One row per (year, architecture): ``year, architecture`` and any of ``fiber_pairs``,
        ``transceivers_peak``, ``switch_ports`` (network totals).
    path : path
        PNG to write.
    """
    wanted = [
        ("fiber_pairs", "fiber pairs installed (pairs)", "Fiber pairs"),
        ("transceivers_peak", "peak transceiver modules (modules)", "Transceivers"),
        ("switch_ports", "switch ports installed (ports)", "Switch ports"),
    ]
    panels = [w for w in wanted if w[0] in totals.columns]
    order = _architectures(totals)
    fig, axes = plt.subplots(1, len(panels), figsize=(3.8 * len(panels), 3.7), squeeze=False)
    for ax, (column, label, title) in zip(axes[0], panels):
        for i, name in enumerate(order):
            part = totals[totals["architecture"].astype(str) == name].sort_values("year", kind="stable")
            ax.plot(part["year"], part[column].astype(float), label=name, **style_for(i))
        ax.set_xlabel("year of the forecast")
        ax.set_ylabel(label)
        ax.set_title(title)
        ax.xaxis.set_major_locator(matplotlib.ticker.MaxNLocator(integer=True))
        _apply_look(ax)
    fig.suptitle("Forecast: equipment needed year by year", x=0.01, ha="left")
    fig.tight_layout()
    handles, labels = axes[0][0].get_legend_handles_labels()
    fig.legend(
        handles,
        labels,
        title="architecture",
        loc="lower center",
        ncols=min(len(order), 5),
        bbox_to_anchor=(0.5, -0.1),
    )
    return save_figure(fig, path)


@_with_look
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
        dict.fromkeys(_architectures(estimate) + ([] if summary is None else _architectures(summary)))
    )
    fig, axes = plt.subplots(1, len(columns), figsize=(5.4 * len(columns), 4.2), squeeze=False)
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
        _apply_look(ax)
    handles = [Line2D([], [], label=name, **style_for(i)) for i, name in enumerate(order)]
    handles += [
        Line2D([], [], color=INK, linestyle="-", label="line: analytic estimate"),
        Line2D([], [], color=INK, marker="o", linestyle="none", label="marker + bar: simulation (95 %)"),
    ]
    fig.suptitle("Analytic estimate vs simulation", x=0.01, ha="left")
    fig.tight_layout()
    fig.legend(handles=handles, loc="lower center", ncols=min(len(handles), 4), bbox_to_anchor=(0.5, -0.12))
    notes = []
    if any_zero:
        notes.append(
            f"Open marker: no request blocked (drawn at the axis floor, {min(floors):.0e} or above)."
        )
    if any_dodge:
        notes.append("Simulated points are offset sideways by up to 2 % of the load range for legibility.")
    if notes:
        fig.text(0.01, -0.16, " ".join(notes), ha="left", va="top", fontsize=7, color=QUIET)
    return save_figure(fig, path)


@_with_look
def plan_figure(plan: pd.DataFrame, path: Path) -> Path:
    """Fiber pairs per cable that meet the target blocking, one bar series per architecture."""
    order = _architectures(plan)
    cables = list(dict.fromkeys(str(c) for c in plan["cable"]))
    height = 0.8 / max(len(order), 1)
    fig, ax = plt.subplots(
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
    ax.xaxis.set_major_locator(matplotlib.ticker.MaxNLocator(integer=True))
    ax.set_title("Planned fiber pairs per cable")
    _apply_look(ax)
    ax.grid(False, axis="y")
    ax.legend(title="architecture", loc="upper left", bbox_to_anchor=(1.01, 1.0))
    return save_figure(fig, path)
