"""The network map: sites at their coordinates (or a seeded layout), cables shaded by utilisation."""

from __future__ import annotations

import math
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
from matplotlib.axes import Axes
from matplotlib.cm import ScalarMappable
from matplotlib.colors import Normalize
from matplotlib.lines import Line2D
from matplotlib.ticker import PercentFormatter

from .look import (
    INK,
    UTILISATION_CMAP,
    apply_look,
    architectures_in,
    fmt_number,
    new_figure,
    save_figure,
    suptitle,
    with_look,
)

__all__ = ["topology_figure"]

def _site_positions(
    sites: Sequence[dict], cables: Sequence[dict]
) -> tuple[dict[str, tuple[float, float]], bool]:
    """Positions in km from the sites' coordinates, or a seeded spring layout when any is missing."""
    if sites and all(s.get("x_km") is not None and s.get("y_km") is not None for s in sites):
        return {str(s["id"]): (float(s["x_km"]), float(s["y_km"])) for s in sites}, True
    import networkx as nx  # only a map without coordinates needs a layout

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


def _overlaps(box: np.ndarray, others: np.ndarray) -> np.ndarray:
    """Area ``box`` (x0, y0, x1, y1) shares with each row of ``others`` (n, 4), display space."""
    w = np.minimum(box[2], others[:, 2]) - np.maximum(box[0], others[:, 0])
    h = np.minimum(box[3], others[:, 3]) - np.maximum(box[1], others[:, 1])
    return np.where((w > 0) & (h > 0), w * h, 0.0)


def _crossings(box: np.ndarray, segments: np.ndarray) -> int:
    """How many ``segments`` (n, 4: x0, y0, x1, y1) cross the box: matplotlib's own test
    (``Path.intersects_bbox(filled=False)`` on a two-point path, a separating-axis test), for all
    segments at once."""
    cx, cy = (box[0] + box[2]) / 2, (box[1] + box[3]) / 2
    w, h = abs(box[2] - box[0]), abs(box[3] - box[1])
    x1, y1, x2, y2 = segments.T
    dx, dy = np.abs(x1 - x2), np.abs(y1 - y2)
    hit = (
        (np.abs(x1 + x2 - 2 * cx) < dx + w)
        & (np.abs(y1 + y2 - 2 * cy) < dy + h)
        & (2 * np.abs((x1 - cx) * (y1 - y2) - (y1 - cy) * (x1 - x2)) < w * dy + h * dx)
    )
    return int(hit.sum())


def _spot_boxes(label: Any, point: np.ndarray, scale: float, renderer: Any) -> np.ndarray:
    """The display box (x0, y0, x1, y1) of ``label`` at each of :data:`_LABEL_SPOTS` around ``point``.

    The label is measured once, where it stands (it must stand at the first spot); every other spot is the same
    box moved to its anchor and alignment (the box's margin around the text is the same on each
    side), which spares a text layout per spot: most of the time of a map of a hundred sites.
    """
    first = label.get_window_extent(renderer)
    width, height = first.width, first.height
    x, y = float(point[0]), float(point[1])
    margin_x = first.x0 - (x + _LABEL_SPOTS[0][0] * scale)
    margin_y = first.y0 - (y + _LABEL_SPOTS[0][1] * scale)
    boxes = []
    for dx, dy, ha, va in _LABEL_SPOTS:
        ax, ay = x + dx * scale, y + dy * scale
        x0 = {"left": ax + margin_x, "right": ax - margin_x - width, "center": ax - width / 2}[ha]
        y0 = {"bottom": ay + margin_y, "top": ay - margin_y - height, "center": ay - height / 2}[va]
        boxes.append((x0, y0, x0 + width, y0 + height))
    return np.array(boxes)


def _place_site_labels(ax: Axes, pos: dict[str, tuple[float, float]], segments: list) -> None:
    """Label every site at the spot around it that covers the fewest labels, sites and cables.

    Greedy, crowded sites first: each candidate box is scored by the area it shares with labels
    already placed and with site markers, the area it sticks out of the axes, and a share of
    its own area for every cable it crosses.  The first spot in :data:`_LABEL_SPOTS` wins ties.
    Boxes and cables are numpy arrays, so a map of a hundred sites costs a fraction of a second.
    """
    renderer = ax.figure.canvas.get_renderer()
    names = list(pos)
    points = ax.transData.transform(np.array([pos[s] for s in names], dtype=float).reshape(-1, 2))
    scale = ax.figure.dpi / 72.0  # display units per point
    half = 5.0 * scale  # half a site marker
    markers = np.hstack([points - half, points + half])
    lines = ax.transData.transform(np.array(segments, dtype=float).reshape(-1, 2)).reshape(-1, 4)
    frame = np.array([ax.bbox.x0, ax.bbox.y0, ax.bbox.x1, ax.bbox.y1])
    distance = np.hypot(points[:, None, 0] - points[None, :, 0], points[:, None, 1] - points[None, :, 1])
    crowding = (distance < 60 * scale).sum(axis=1)

    placed = np.empty((0, 4))
    for i in sorted(range(len(names)), key=lambda i: (-crowding[i], names[i])):
        dx, dy, ha, va = _LABEL_SPOTS[0]  # where _spot_boxes measures it
        label = ax.annotate(
            names[i],
            pos[names[i]],
            xytext=(dx, dy),
            ha=ha,
            va=va,
            textcoords="offset points",
            fontsize=7,
            color=INK,
            zorder=5,
            bbox={"boxstyle": "round,pad=0.1", "fc": "white", "ec": "none", "alpha": 0.75},
        )
        covered = np.vstack([placed, markers])
        boxes = _spot_boxes(label, points[i], scale, renderer)
        best = None
        for (dx, dy, ha, va), box in zip(_LABEL_SPOTS, boxes):
            area = (box[2] - box[0]) * (box[3] - box[1])
            outside = area - float(_overlaps(box, frame[None, :])[0])
            score = float(_overlaps(box, covered).sum()) + outside
            score += 0.15 * area * _crossings(box, lines)
            if best is None or score < best[0] - 1e-9:
                best = (score, dx, dy, ha, va, box)
        _, dx, dy, ha, va, box = best
        label.set_position((dx, dy))
        label.set_ha(ha)
        label.set_va(va)
        placed = np.vstack([placed, box[None, :]])


@with_look
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
    order = architectures_in(utilisation) if by_utilisation else [""]
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
    fig, axes = new_figure(
        nrows,
        ncols,
        figsize=(panel_w * ncols + 1.0, panel_h * nrows + 1.0),
        squeeze=False,
        measure_twice=True,  # a colour bar: see MeasuredOnceLayout
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
            ax.set_title(f"{name} at {fmt_number(load)} Erlang")
        apply_look(ax)
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
        suptitle(fig, "Mean cable utilisation at the highest offered load (line width and shade)")
    else:
        handles.append(Line2D([], [], color="#4a4a4a", linewidth=3, label="width: fiber pairs"))
        suptitle(fig, "Network: installed fiber pairs per cable")
    fig.legend(handles=handles, loc="outside lower center", ncols=len(handles))
    if by_utilisation:
        mappable = ScalarMappable(norm=norm, cmap=UTILISATION_CMAP)
        bar = fig.colorbar(
            mappable, ax=axes, fraction=0.03, pad=0.02, shrink=0.85 if nrows == 1 else 0.6, aspect=25
        )
        bar.set_label("mean utilisation (share of unit positions busy)")
        bar.ax.yaxis.set_major_formatter(PercentFormatter(1.0))
    # Labels last, once legend and colour bar have taken their room: they are placed in
    # display space, so the layout must be settled first (the layout and the equal aspect
    # alone: a whole draw here would draw every cable and site twice).
    segments = [(pos[str(c["a"])], pos[str(c["b"])]) for c in cables]
    fig.get_layout_engine().execute(fig)
    for k in range(len(order)):
        axes[k // ncols][k % ncols].apply_aspect()
        _place_site_labels(axes[k // ncols][k % ncols], pos, segments)
    return save_figure(fig, path)
