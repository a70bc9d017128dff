"""The figures' look, shared by every figure: colours, markers, hatches, rc settings, saving.

Our look: one marker shape and one line style per architecture as well as one colour, so that
figures read in greyscale and for colour-blind readers; colours from the Okabe-Ito palette
(Okabe & Ito, "Color Universal Design", 2002; common practice for colour-blind-safe plots).
Bars carry a hatch per series for the same reason.  Titles sit on the left, grids are light, and
every axis names its unit.

Every figure is drawn inside matplotlib's defaults overlaid with :data:`LOOK` (:func:`with_look`),
so a user's matplotlibrc cannot change our output, and saved by :func:`save_figure` with fixed
metadata, so the same tables always give the same PNG bytes.  Figures are made by
:func:`new_figure` on the Agg canvas, without pyplot.

Every figure is laid out inside its own size (constrained layout; footnotes in a strip kept free
at the bottom, :func:`footnote`), so saving needs no "tight" bounding box: that would draw each
figure twice, once to measure it and once to paint it.
"""

from __future__ import annotations

import re
import struct
import textwrap
import zlib
from collections.abc import Callable
from functools import wraps
from pathlib import Path
from typing import Any, TypeVar

import matplotlib
import matplotlib.style
import numpy as np
import pandas as pd
from matplotlib.axes import Axes
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.colors import LinearSegmentedColormap
from matplotlib.figure import Figure
from matplotlib.layout_engine import ConstrainedLayoutEngine
from matplotlib.ticker import LogFormatterSciNotation, LogLocator

from ..tables import atomic_write

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
    # A fixed title height: matplotlib otherwise measures every tick label of every axis on each
    # draw to lift the title over them, the largest cost of a figure; nothing of ours is above
    # the axes (no top ticks, and no offset text: see below) for it to clear.
    "axes.titley": 1.0,
    "axes.formatter.useoffset": False,  # whole tick values, never "+5e3" over the axis
    "axes.labelsize": 9,
    "axes.labelcolor": INK,
    "axes.edgecolor": "#555555",
    "axes.linewidth": 0.8,
    "axes.facecolor": "white",
    "figure.facecolor": "white",
    # Figures are drawn at the resolution they are saved at, so the layout's text measures are
    # reused by the save.
    "figure.dpi": 120,
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
    # Glyphs drawn from their outlines, without running each font's hinting program: at 120 dpi
    # the text looks the same to the eye, and the hinting interpreter was about a twentieth of
    # a small run's instructions (callgrind).
    "text.hinting": "no_hinting",
}

# Greyscale-safe map for utilisation: cividis (monotonic lightness, designed for colour-vision
# deficiency; Nunez, Anderton & Renslow, PLOS ONE 13(7), 2018), reversed so busy cables are dark
# on the white page, and cut before its palest yellow so idle cables stay visible.
UTILISATION_CMAP = LinearSegmentedColormap.from_list(
    "sdmnet-utilisation", matplotlib.colormaps["cividis_r"](np.linspace(0.12, 1.0, 256))
)

DPI = LOOK["figure.dpi"]
_F = TypeVar("_F", bound=Callable[..., Path])


def style_for(index: int) -> dict:
    """Line style keywords for the ``index``-th series."""
    colour, marker, dash = STYLE_CYCLE[index % len(STYLE_CYCLE)]
    return {"color": colour, "marker": marker, "linestyle": dash, "markersize": 6, "linewidth": 1.6}


def bar_style_for(index: int) -> dict:
    """Bar keywords (fill colour, hatch, edge) for the ``index``-th series."""
    colour = STYLE_CYCLE[index % len(STYLE_CYCLE)][0]
    return {"color": colour, "hatch": HATCHES[index % len(HATCHES)], "edgecolor": INK, "linewidth": 0.6}


def with_look(func: _F) -> _F:
    """Draw ``func``'s figure inside matplotlib's defaults overlaid with :data:`LOOK`."""
    @wraps(func)
    def wrapper(*args: Any, **kwargs: Any) -> Path:
        with matplotlib.style.context(["default", LOOK]):
            return func(*args, **kwargs)

    return wrapper  # type: ignore[return-value]


# matplotlib's constrained-layout steps, run once by MeasuredOnceLayout (private names: where one
# is missing, the layout falls back to matplotlib's own two passes).
_LAYOUT_STEPS = ("make_layoutgrids", "make_layout_margins", "make_margin_suptitles", "match_submerged_margins",
                 "check_no_collapsed_axes", "reposition_axes", "reset_margins")  # fmt: skip


class MeasuredOnceLayout(ConstrainedLayoutEngine):
    """matplotlib's constrained layout with the axes' decorations measured once instead of twice.

    matplotlib measures every axes' tick labels, titles and legends, moves the axes to leave them
    room, then measures and moves everything again, in case tick labels changed with the axes'
    size.  Ours keep the room they need (log axes label whole decades; the pixel or so a second
    pass would move is within the padding), and each measure costs about a third of a figure.
    Not beside a colour bar, whose label is first measured before the bar has its length: the
    topology map keeps matplotlib's two passes.
    """

    def execute(self, fig: Figure) -> Any:
        from matplotlib import _constrained_layout as steps

        if not all(hasattr(steps, name) for name in _LAYOUT_STEPS):
            return super().execute(fig)
        try:
            return self._measured_once(fig, steps)
        except (TypeError, KeyError, AttributeError):
            # A matplotlib whose private steps take other arguments: its own two passes, which
            # lay every axes out afresh.
            return super().execute(fig)

    def _measured_once(self, fig: Figure, steps: Any) -> Any:
        width, height = fig.get_size_inches()
        w_pad, h_pad = self._params["w_pad"] / width, self._params["h_pad"] / height
        pads = {"h_pad": h_pad, "w_pad": w_pad, "hspace": self._params["hspace"], "wspace": self._params["wspace"]}
        renderer = fig._get_renderer()
        grids = steps.make_layoutgrids(fig, None, rect=self._params["rect"])
        if not grids["hasgrids"]:
            return super().execute(fig)
        steps.make_layout_margins(grids, fig, renderer, **pads)
        steps.make_margin_suptitles(grids, fig, renderer, h_pad=h_pad, w_pad=w_pad)
        steps.match_submerged_margins(grids, fig)
        grids[fig].update_variables()
        if not steps.check_no_collapsed_axes(grids, fig):
            steps.reset_margins(grids, fig)
            return super().execute(fig)  # with matplotlib's own warning
        steps.reposition_axes(grids, fig, renderer, **pads)
        title = fig._suptitle
        if title is not None and title.get_in_layout() and getattr(title, "_autopos", False):
            # above the axes, as matplotlib's own pass puts it
            title.set_position((title.get_position()[0], grids[fig].get_inner_bbox().y1 + h_pad))
            title.set_verticalalignment("bottom")
        steps.reset_margins(grids, fig)
        return grids


def new_figure(nrows: int = 1, ncols: int = 1, *, figsize: tuple[float, float], measure_twice: bool = False,
               **subplots: Any) -> tuple[Figure, Any]:  # fmt: skip
    """A figure of ``nrows`` x ``ncols`` axes (``Figure.subplots``' keywords) drawn on the Agg canvas.

    The figure is made directly, not through pyplot: it goes to a file only, so it needs none of
    pyplot's figure managers, and ``matplotlib.pyplot`` is not imported.  It is laid out by
    :class:`MeasuredOnceLayout`, or with ``measure_twice`` by matplotlib's constrained layout.
    """
    fig = Figure(figsize=figsize, layout="constrained" if measure_twice else MeasuredOnceLayout())
    FigureCanvasAgg(fig)  # attaches itself: text measures and the PNG come from Agg
    return fig, fig.subplots(nrows, ncols, **subplots)


def apply_look(ax: Axes) -> None:
    """Light grids behind the data, no top or right spine."""
    ax.grid(True, which="major", color="#d6d6d6", linewidth=0.6)
    ax.grid(True, which="minor", color="#eeeeee", linewidth=0.4)
    ax.set_axisbelow(True)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)


# Footnotes: 7 pt text, wrapped by character count (DejaVu Sans averages about 0.6 em a character
# in running text; common practice, no source), so the strip they need is known before any draw.
_NOTE_PT = 7.0
_NOTE_LINE = 1.2  # line height, in font sizes
_NOTE_CHAR_EM = 0.6
_NOTE_PAD_PT = 6.0


def footnote(fig: Figure, text: str) -> None:
    """A small grey footnote at the bottom of ``fig``, in a strip its constrained layout keeps free.

    The text is wrapped to the figure's width here (not by matplotlib at draw time), so the strip's
    height is known without drawing.  ``fig`` must have a constrained layout (:func:`new_figure`).
    """
    width_pt = (fig.get_figwidth() - 0.2) * 72
    lines = textwrap.wrap(text, max(20, int(width_pt / (_NOTE_PT * _NOTE_CHAR_EM))))
    strip = (len(lines) * _NOTE_PT * _NOTE_LINE + _NOTE_PAD_PT) / 72 / fig.get_figheight()
    fig.get_layout_engine().set(rect=(0.0, strip, 1.0, 1.0 - strip))
    top = strip - 0.5 * _NOTE_PAD_PT / 72 / fig.get_figheight()
    fig.text(0.01, top, "\n".join(lines), ha="left", va="top", fontsize=_NOTE_PT, color=QUIET,
             linespacing=_NOTE_LINE)  # fmt: skip


def suptitle(fig: Figure, text: str) -> None:
    """The figure's title on the left, wrapped to the figure's width (the figure is saved at its
    own size, so a longer line would be cut off)."""
    size = float(LOOK["figure.titlesize"])
    width_pt = (fig.get_figwidth() - 0.2) * 72
    fig.suptitle("\n".join(textwrap.wrap(text, max(20, int(width_pt / (size * _NOTE_CHAR_EM))))), x=0.01, ha="left")


# Minus (hyphen or U+2212) and digits to their superscript forms (DejaVu Sans has every one).
_SUPERSCRIPTS = str.maketrans(
    "-\u22120123456789", "\u207b\u207b\u2070\u00b9\u00b2\u00b3\u2074\u2075\u2076\u2077\u2078\u2079"
)
# What LogFormatterSciNotation writes: $\mathdefault{10^{-3}}$ or $\mathdefault{2\times10^{-3}}$.
_MATH_POWER = re.compile(
    r"^\$\\mathdefault\{(?:(?P<mantissa>[0-9.]+)\\times)?(?P<base>[0-9]+)\^\{(?P<exponent>[-\u22120-9]+)\}\}\$$"
)


class PlainLogFormatter(LogFormatterSciNotation):
    """Log-axis tick labels such as ``10⁻³`` or ``2×10⁻³`` in plain text (superscript digits).

    matplotlib's own formatter writes the same labels in mathtext, whose parser takes a tenth of
    a second or more to build in every process; anything it writes that is not a power of ten
    is passed through unchanged.
    """

    def __call__(self, x: float, pos: int | None = None) -> str:
        label = super().__call__(x, pos)
        match = _MATH_POWER.match(label)
        if match is None:
            return label
        power = match["base"] + match["exponent"].translate(_SUPERSCRIPTS)
        return f"{match['mantissa']}\u00d7{power}" if match["mantissa"] else power


def log_axis(axis: Any) -> None:
    """Put ``axis`` (``ax.yaxis`` or ``ax.xaxis``) on a log scale with plain-text tick labels and
    minor ticks (and grid lines) at 2 and 5 times each power of ten: enough to read a value
    between two decades, and a third of matplotlib's eight per decade, each of which costs a
    tick, a grid line and a label to lay out."""
    if axis.axis_name == "y":
        axis.axes.set_yscale("log")
    else:
        axis.axes.set_xscale("log")
    axis.set_minor_locator(LogLocator(10.0, subs=(2.0, 5.0)))
    axis.set_major_formatter(PlainLogFormatter(10.0))
    axis.set_minor_formatter(PlainLogFormatter(10.0, labelOnlyBase=False))


def save_figure(fig: Figure, path: Path) -> Path:
    """Save as PNG with fixed metadata so identical figures give identical bytes; written whole
    (through a temporary file) or not at all."""
    path = Path(path)

    def draw(tmp: str) -> None:
        fig.canvas.draw()  # at the figure's own resolution, DPI (LOOK)
        with open(tmp, "wb") as out:
            out.write(png_bytes(np.asarray(fig.canvas.buffer_rgba())[..., :3], DPI))

    with matplotlib.style.context(["default", LOOK]):
        engine = fig.get_layout_engine()
        if engine is not None:
            # Lay the figure out once, then drop the engine: with one, savefig first runs a
            # whole draw (painting switched off) only to lay the figure out.
            engine.execute(fig)
            fig.set_layout_engine(None)  # with the rc of LOOK: no engine at all
        atomic_write(path, draw)
    return path


def _png_chunk(kind: bytes, payload: bytes) -> bytes:
    return struct.pack(">I", len(payload)) + kind + payload + struct.pack(">I", zlib.crc32(kind + payload))


def png_bytes(rgb: np.ndarray, dpi: float) -> bytes:
    """A PNG of the ``(height, width, 3)`` 8-bit image ``rgb`` at ``dpi``, and nothing else.

    The figures are opaque, so they are written as RGB (no alpha channel to compress), and every
    row unfiltered: on our flat plot colours that deflates 7-10 % smaller, in half to two thirds
    of the time, than trying the five PNG filters on each row (measured on the test figures).
    No text or time chunk, so the same pixels give the same bytes (PNG, ISO/IEC 15948: IHDR
    11.2.2, IDAT 11.2.4, pHYs 11.3.5.3, filter type 0 section 9.2).
    """
    height, width, channels = rgb.shape
    if channels != 3 or rgb.dtype != np.uint8:
        raise ValueError(f"need an 8-bit RGB image, got {channels} channels of {rgb.dtype}")
    rows = np.zeros((height, 1 + 3 * width), dtype=np.uint8)  # a filter-type byte (0) per row
    rows[:, 1:] = rgb.reshape(height, 3 * width)
    per_metre = int(dpi / 0.0254 + 0.5)
    return b"".join((
        b"\x89PNG\r\n\x1a\n",
        _png_chunk(b"IHDR", struct.pack(">IIBBBBB", width, height, 8, 2, 0, 0, 0)),
        _png_chunk(b"pHYs", struct.pack(">IIB", per_metre, per_metre, 1)),
        _png_chunk(b"IDAT", zlib.compress(rows.tobytes(), 6)),
        _png_chunk(b"IEND", b""),
    ))  # fmt: skip


def fmt_number(value: float) -> str:
    """A number without a trailing ``.0``."""
    return f"{value:g}" if float(value) != int(value) else f"{int(value)}"


def architectures_in(frame: pd.DataFrame) -> list[str]:
    """Architecture names in order of first appearance (the scenario's order)."""
    return list(dict.fromkeys(str(a) for a in frame["architecture"]))


