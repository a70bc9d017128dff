"""The physical layer of the candidate paths: GSNR against length, one panel per architecture."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pandas as pd

from .look import apply_look, architectures_in, footnote, new_figure, save_figure, style_for, suptitle, with_look

__all__ = ["gsnr_figure"]

_NO_CLASS = "none"


def _is_true(column: pd.Series) -> pd.Series:
    return column.astype(str).str.lower().isin(["true", "1", "yes"])


@with_look
def gsnr_figure(paths: pd.DataFrame, path: Path) -> Path:
    """GSNR (0.1 nm) of every candidate path against its length, one panel per architecture.

    Each transceiver class has its own marker and colour; filled markers are feasible paths,
    hollow ones refused.  A dotted line marks each class's required OSNR (GSNR minus the path's
    margin to that class), so a path's height above it is its margin.
    """
    rows = paths[np.isfinite(pd.to_numeric(paths["gsnr_db"], errors="coerce"))]
    names = architectures_in(rows)
    columns = min(3, max(1, len(names)))
    lines = math.ceil(len(names) / columns)
    size = (3.7 * columns + 1.6, 3.0 * lines + 0.6)  # + the legend on the right, title and note
    fig, axes = new_figure(lines, columns, figsize=size, sharex=True, sharey=True, squeeze=False)
    feasible = _is_true(rows["feasible"]) if "feasible" in rows.columns else pd.Series(True, index=rows.index)
    classes = rows["transceiver_class"].astype(str) if "transceiver_class" in rows.columns else None
    kinds = list(dict.fromkeys(classes)) if classes is not None else [""]
    kinds = [k for k in kinds if k != _NO_CLASS] + ([_NO_CLASS] if _NO_CLASS in kinds else [])
    for ax, name in zip(axes.flat, names):
        mine = rows["architecture"].astype(str) == name
        for k, kind in enumerate(kinds):
            pick = mine & (classes == kind) if classes is not None else mine
            style = style_for(k)
            for ok, face in ((True, style["color"]), (False, "none")):
                part = rows[pick & (feasible == ok)]
                if part.empty:
                    continue
                ax.scatter(
                    part["length_km"].astype(float),
                    part["gsnr_db"].astype(float),
                    marker=style["marker"],
                    s=22,
                    facecolors=face,
                    edgecolors=style["color"],
                    linewidths=0.9,
                    label=f"{kind or 'path'}{'' if ok else ' (refused)'}",
                )
            if kind and kind != _NO_CLASS and "margin_db" in rows.columns:
                needed = (rows.loc[pick, "gsnr_db"].astype(float) - rows.loc[pick, "margin_db"].astype(float)).median()
                if math.isfinite(needed):
                    ax.axhline(needed, color=style["color"], linestyle=":", linewidth=1.0)
        ax.set_title(name)
        apply_look(ax)
    for ax in axes.flat[len(names) :]:
        ax.set_visible(False)
    for i, ax in enumerate(axes.flat[: len(names)]):
        if i + columns >= len(names):  # nothing drawn below this panel
            ax.tick_params(labelbottom=True)
            ax.set_xlabel("path length (km)")
    for ax in axes[:, 0]:
        ax.set_ylabel("GSNR in 0.1 nm (dB)")
    handles, labels = axes.flat[0].get_legend_handles_labels()
    seen = dict(zip(labels, handles))
    for ax in axes.flat[1 : len(names)]:
        for h, lab in zip(*ax.get_legend_handles_labels()):
            seen.setdefault(lab, h)
    fig.legend(seen.values(), seen.keys(), loc="outside right upper", title="transceiver class")
    suptitle(fig, "GSNR of the candidate paths against their length")
    footnote(fig, "Filled: feasible; hollow: refused. Dotted: the OSNR each class needs (without the margin).")
    return save_figure(fig, path)
