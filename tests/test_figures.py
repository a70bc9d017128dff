"""Figures: every drawing writes a PNG, the same tables give the same bytes, and the look holds."""

from __future__ import annotations

import struct
import zlib
from pathlib import Path

import matplotlib.pyplot as plt
import numpy as np
import pandas as pd
import pytest

from sdmnet.output import figures
from sdmnet.output.figures.topology import _place_site_labels


def png_chunks(data: bytes) -> list[tuple[bytes, bytes]]:
    """(type, payload) of every chunk, checking each CRC (PNG specification, ISO/IEC 15948, section 5.3)."""
    assert data[:8] == b"\x89PNG\r\n\x1a\n", "not a PNG signature"
    out, pos = [], 8
    while pos < len(data):
        (length,) = struct.unpack(">I", data[pos : pos + 4])
        kind = data[pos + 4 : pos + 8]
        payload = data[pos + 8 : pos + 8 + length]
        (crc,) = struct.unpack(">I", data[pos + 8 + length : pos + 12 + length])
        assert zlib.crc32(kind + payload) == crc, f"bad CRC in {kind!r}"
        out.append((kind, payload))
        pos += 12 + length
    return out


def summary_frame() -> pd.DataFrame:
    """Invented results: two architectures, three loads, one point with no blocking."""
    rows = []
    for arch, switching, scale, ports in (("fine", "independent", 1.0, 40), ("coarse", "joint", 4.0, 8)):
        for load, b in ((10.0, 0.0), (20.0, 0.004), (30.0, 0.03)):
            value = b * scale
            rows.append(
                {
                    "architecture": arch,
                    "switching": switching,
                    "load_erlang": load,
                    "blocking": value,
                    "blocking_ci_low": max(value - 0.002, 0.0),
                    "blocking_ci_high": value + 0.002,
                    "bandwidth_blocking": value * 1.5,
                    "bandwidth_blocking_ci_low": value,
                    "bandwidth_blocking_ci_high": value * 2 + 0.001,
                    "transceivers_peak": 10 * load / scale,
                    "transceivers_mean": 7 * load / scale,
                    "switch_ports": ports,
                    "fiber_pairs": 3,
                }
            )
    return pd.DataFrame(rows)


SITES = [
    {"id": "A", "role": "datacenter", "x_km": 0.0, "y_km": 0.0},
    {"id": "B", "role": "datacenter", "x_km": 40.0, "y_km": 0.0},
    {"id": "H", "role": "hub", "x_km": 20.0, "y_km": 15.0},
]
CABLES = [
    {"a": "A", "b": "H", "fiber_pairs": 2},
    {"a": "H", "b": "B", "fiber_pairs": 1},
    {"a": "A", "b": "B", "fiber_pairs": 1},
]


def utilisation_frame() -> pd.DataFrame:
    rows = []
    for arch in ("fine", "coarse"):
        for load in (10.0, 30.0):
            for cable, u in (("A-H", 0.2), ("H-B", 0.5), ("A-B", 0.9)):
                rows.append(
                    {"architecture": arch, "load_erlang": load, "cable": cable, "utilisation": u * load / 30}
                )
    return pd.DataFrame(rows)


def forecast_totals_frame() -> pd.DataFrame:
    rows = []
    for arch in ("fine", "coarse"):
        for year in range(4):
            rows.append(
                {
                    "year": year,
                    "architecture": arch,
                    "fiber_pairs": 4 + year,
                    "transceivers_peak": 100 * 1.3**year,
                    "switch_ports": 20 + 4 * year,
                }
            )
    return pd.DataFrame(rows)


def estimate_frame() -> pd.DataFrame:
    return pd.DataFrame(
        [
            {"architecture": a, "load_erlang": load, "blocking": b, "bandwidth_blocking": b * 1.4}
            for a, k in (("fine", 1.0), ("coarse", 4.0))
            for load, b in ((10.0, 1e-4 * k), (20.0, 3e-3 * k), (30.0, 2e-2 * k))
        ]
    )


def plan_frame() -> pd.DataFrame:
    return pd.DataFrame(
        [
            {"architecture": a, "cable": c, "fiber_pairs": p + extra}
            for a, extra in (("fine", 0), ("coarse", 2))
            for c, p in (("A-H", 2), ("H-B", 1), ("A-B", 1))
        ]
    )


def paths_frame() -> pd.DataFrame:
    return pd.DataFrame(
        [
            {"architecture": a, "length_km": km, "gsnr_db": 40.0 - km / 20 - shift,
             "margin_db": 40.0 - km / 20 - shift - need, "transceiver_class": cls, "feasible": cls != "none"}
            for a, shift in (("fine", 0.0), ("coarse", 1.0))
            for km, cls, need in ((40.0, "short", 26.0), (120.0, "long", 24.0), (300.0, "none", 24.0))
        ]
    )  # fmt: skip


DRAWINGS = {
    "blocking": lambda path: figures.blocking_figure(summary_frame(), path),
    "bandwidth": lambda path: figures.blocking_figure(summary_frame(), path, column="bandwidth_blocking"),
    "resources": lambda path: figures.resources_figure(summary_frame(), path),
    "topology": lambda path: figures.topology_figure(SITES, CABLES, path, utilisation_frame()),
    "topology-plain": lambda path: figures.topology_figure(SITES, CABLES, path),
    "topology-schematic": lambda path: figures.topology_figure(
        [{"id": s["id"], "role": s["role"]} for s in SITES], CABLES, path, utilisation_frame()
    ),
    "forecast": lambda path: figures.forecast_figure(forecast_totals_frame(), path),
    "estimate": lambda path: figures.estimate_figure(estimate_frame(), summary_frame(), path),
    "estimate-alone": lambda path: figures.estimate_figure(estimate_frame(), None, path),
    "plan": lambda path: figures.plan_figure(plan_frame(), path),
    "paths-gsnr": lambda path: figures.gsnr_figure(paths_frame(), path),
}


@pytest.mark.parametrize("name", sorted(DRAWINGS))
def test_each_figure_is_a_stable_png_without_varying_metadata(name: str, tmp_path: Path) -> None:
    first = DRAWINGS[name](tmp_path / "one.png").read_bytes()
    second = DRAWINGS[name](tmp_path / "two.png").read_bytes()
    assert first == second, "same tables must give the same PNG bytes"
    chunks = png_chunks(first)
    kinds = [k for k, _ in chunks]
    assert kinds[0] == b"IHDR" and kinds[-1] == b"IEND"
    # tIME is a modification time (ISO/IEC 15948, section 11.3.6.1): it must never appear.
    assert b"tIME" not in kinds
    texts = [payload.split(b"\0", 1)[0] for k, payload in chunks if k in (b"tEXt", b"iTXt", b"zTXt")]
    assert b"Software" not in texts and b"Creation Time" not in texts
    width, height = struct.unpack(">II", chunks[0][1][:8])
    assert width > 300 and height > 200


def test_png_bytes_decode_to_the_same_pixels_at_the_stated_resolution(tmp_path: Path) -> None:
    from PIL import Image

    from sdmnet.output.figures.look import png_bytes

    rng = np.random.default_rng(7)
    rgb = rng.integers(0, 256, size=(5, 7, 3), dtype=np.uint8)
    rgb[2] = 255  # a white row, as most of a figure is
    path = tmp_path / "x.png"
    path.write_bytes(png_bytes(rgb, 120))
    with Image.open(path) as image:
        assert image.mode == "RGB" and image.size == (7, 5)
        assert np.array_equal(np.asarray(image), rgb)
        assert image.info["dpi"] == pytest.approx((120, 120), abs=0.05)  # whole pixels per metre
    with pytest.raises(ValueError, match="8-bit RGB"):
        png_bytes(np.zeros((2, 2, 4), dtype=np.uint8), 120)


def test_a_users_rc_settings_do_not_change_the_figure(tmp_path: Path) -> None:
    plain = figures.blocking_figure(summary_frame(), tmp_path / "plain.png").read_bytes()
    with plt.rc_context(
        {"font.size": 20, "axes.facecolor": "red", "lines.linewidth": 9, "errorbar.capsize": 12}
    ):
        styled = figures.blocking_figure(summary_frame(), tmp_path / "styled.png").read_bytes()
    assert plain == styled


def test_series_differ_in_marker_and_dash_not_only_colour() -> None:
    # Greyscale and colour-blind readers need a second cue (common practice, no source).
    styles = [figures.style_for(i) for i in range(len(figures.STYLE_CYCLE))]
    assert len({s["marker"] for s in styles}) == len(styles)
    assert len({str(s["linestyle"]) for s in styles}) == len(styles)
    assert len({s["color"] for s in styles}) == len(styles)
    hatches = [figures.bar_style_for(i)["hatch"] for i in range(len(figures.HATCHES))]
    assert len(set(hatches)) == len(hatches)


def test_utilisation_map_darkens_monotonically() -> None:
    # Greyscale safety: perceived lightness must fall as utilisation rises.  Luma weights from
    # ITU-R BT.601 (Y' = 0.299 R' + 0.587 G' + 0.114 B').
    lumas = []
    for i in range(11):
        r, g, b, _ = figures.UTILISATION_CMAP(i / 10)
        lumas.append(0.299 * r + 0.587 * g + 0.114 * b)
    assert all(a > b for a, b in zip(lumas, lumas[1:]))
    assert lumas[0] < 0.9, "the idle end must stay visible on a white page"


def test_blocking_figure_copes_with_no_blocking_and_missing_intervals(tmp_path: Path) -> None:
    frame = summary_frame().assign(blocking=0.0, blocking_ci_low=float("nan"), blocking_ci_high=float("nan"))
    path = figures.blocking_figure(frame, tmp_path / "zero.png")
    assert png_chunks(path.read_bytes())[0][0] == b"IHDR"


def test_blocking_figure_keeps_the_public_signature(tmp_path: Path) -> None:
    path = figures.blocking_figure(
        summary_frame(),
        tmp_path / "b.png",
        column="bandwidth_blocking",
        title="Bandwidth blocking vs offered load (95 % intervals)",
    )
    assert path == tmp_path / "b.png" and path.stat().st_size > 10_000
    assert not plt.get_fignums(), "figures must be closed after saving"


def _label_boxes(ax):
    renderer = ax.figure.canvas.get_renderer()
    return [t.get_window_extent(renderer) for t in ax.texts]


def _overlapping(boxes):
    return [(i, j) for i in range(len(boxes)) for j in range(i + 1, len(boxes)) if boxes[i].overlaps(boxes[j])]


def test_site_labels_of_a_crowded_cluster_do_not_cover_each_other():
    # Five sites in a row, closer together than a label is wide: labelled all to the upper
    # right, every label covers its neighbour's; placed, none may.
    pos = {f"site-{i}": (0.6 * i, 0.02 * i) for i in range(5)}
    segments = [(pos[f"site-{i}"], pos[f"site-{i + 1}"]) for i in range(4)]
    fig, ax = plt.subplots(figsize=(3.0, 2.0))
    ax.set_xlim(-1.5, 4.5)
    ax.set_ylim(-2.0, 2.0)
    fig.draw_without_rendering()
    naive = [ax.annotate(s, xy, xytext=(5, 5), textcoords="offset points", fontsize=7) for s, xy in pos.items()]
    assert _overlapping(_label_boxes(ax)), "the case is not crowded enough to test anything"
    for text in naive:
        text.remove()
    _place_site_labels(ax, pos, segments)
    assert len(ax.texts) == 5
    assert _overlapping(_label_boxes(ax)) == []
    plt.close(fig)


@pytest.mark.parametrize("name", sorted(DRAWINGS))
def test_everything_drawn_lies_inside_the_figure(name: str, tmp_path: Path, monkeypatch) -> None:
    # Figures are saved at their own size (no "tight" bounding box), so a legend, label or note
    # outside the figure would be cut off the PNG.  Measured when the PNG is painted.
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    painted = []
    original = FigureCanvasAgg.draw

    def measure_then_draw(canvas):
        fig = canvas.figure
        assert fig.get_layout_engine() is None, "laid out before painting, not while"
        monkeypatch.setattr(FigureCanvasAgg, "draw", original)  # matplotlib's measures may draw too
        fig.draw_without_rendering()
        box = fig.get_tightbbox()  # inches
        width, height = fig.get_size_inches()
        painted.append((box.x0, box.y0, box.x1 - width, box.y1 - height))
        return original(canvas)

    monkeypatch.setattr(FigureCanvasAgg, "draw", measure_then_draw)
    DRAWINGS[name](tmp_path / "fig.png")
    assert len(painted) == 1
    slack = 0.01  # inches: anti-aliasing of an edge
    left, bottom, right_over, top_over = painted[0]
    assert left >= -slack and bottom >= -slack, f"drawn left of or below the figure: {painted[0]}"
    assert right_over <= slack and top_over <= slack, f"drawn right of or above the figure: {painted[0]}"


def test_log_tick_labels_are_plain_text_powers_of_ten() -> None:
    from sdmnet.output.figures.look import PlainLogFormatter

    fig, ax = plt.subplots()
    ax.set_yscale("log")
    ax.set_ylim(1e-4, 0.5)
    major = PlainLogFormatter(10.0)
    major.set_axis(ax.yaxis)
    major.set_locs([1e-4, 1e-3, 1e-2, 1e-1])
    assert [major(v) for v in (1e-4, 1e-2, 1.0)] == ["10\u207b\u2074", "10\u207b\u00b2", "10\u2070"]
    ax.set_ylim(0.01, 0.05)  # less than a decade: minor ticks are labelled too
    minor = PlainLogFormatter(10.0, labelOnlyBase=False)
    minor.set_axis(ax.yaxis)
    minor.set_locs([0.02, 0.03])
    assert minor(0.03) == "3\u00d710\u207b\u00b2"
    assert "$" not in major(1e-3) + minor(0.02), "no mathtext: its parser is slow to build"
    plt.close(fig)


def test_label_boxes_at_every_spot_are_the_measured_ones():
    # _spot_boxes measures a label once and moves the box to each spot; a label moved there and
    # measured by matplotlib must give the same box (to a tenth of a pixel).
    from sdmnet.output.figures.topology import _LABEL_SPOTS, _spot_boxes

    fig, ax = plt.subplots(figsize=(3.0, 2.0))
    fig.draw_without_rendering()
    renderer = fig.canvas.get_renderer()
    dx, dy, ha, va = _LABEL_SPOTS[0]
    label = ax.annotate("s042", (0.5, 0.5), xytext=(dx, dy), ha=ha, va=va, textcoords="offset points", fontsize=7,
                        bbox={"boxstyle": "round,pad=0.1", "fc": "white", "ec": "none"})  # fmt: skip
    point = ax.transData.transform((0.5, 0.5))
    boxes = _spot_boxes(label, point, fig.dpi / 72.0, renderer)
    for (dx, dy, ha, va), box in zip(_LABEL_SPOTS, boxes):
        label.set_position((dx, dy))
        label.set_ha(ha)
        label.set_va(va)
        real = label.get_window_extent(renderer)
        assert box == pytest.approx([real.x0, real.y0, real.x1, real.y1], abs=0.1), (ha, va)
    plt.close(fig)


def test_layout_falls_back_to_matplotlibs_own_when_its_private_steps_change(tmp_path: Path, monkeypatch) -> None:
    # MeasuredOnceLayout runs matplotlib's private layout steps; a matplotlib whose steps take
    # other arguments must still give a laid-out figure, by matplotlib's own two passes.
    from sdmnet.output.figures import look

    tried = []

    def changed_steps(self, fig, steps):
        tried.append(fig)
        raise TypeError("make_layout_margins() got an unexpected keyword argument")

    monkeypatch.setattr(look.MeasuredOnceLayout, "_measured_once", changed_steps)
    fallback = DRAWINGS["blocking"](tmp_path / "fallback.png").read_bytes()
    assert len(tried) == 1
    monkeypatch.undo()
    once = DRAWINGS["blocking"](tmp_path / "once.png").read_bytes()
    # The same figure either way (matplotlib's second pass moves things by a pixel at most).
    assert png_chunks(fallback)[0] == png_chunks(once)[0]
    assert abs(len(fallback) - len(once)) < 0.05 * len(once)
