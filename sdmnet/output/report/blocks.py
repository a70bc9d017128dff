"""The pieces a report section hands to the page template: tables, figures, values, texts.

Everything here is plain data (text is never escaped here: the template escapes it all).
"""

from __future__ import annotations

import base64
import math
import struct
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pandas as pd

__all__ = [
    "MAX_ROWS",
    "Cell",
    "Table",
    "Figure",
    "Value",
    "SkipNote",
    "number_text",
    "percent_text",
    "table",
    "figure",
    "value",
    "skip_note",
]

# Longer tables are cut in the page (the CSV beside it is complete).
MAX_ROWS = 1000


@dataclass(frozen=True)
class Cell:
    """One table cell: its text and whether it is a number (right-aligned)."""

    text: str
    numeric: bool


@dataclass(frozen=True)
class Table:
    """A table as the page shows it; ``caption`` may say that rows were cut."""

    columns: list[str]
    rows: list[list[Cell]]
    caption: str | None = None


@dataclass(frozen=True)
class Figure:
    """A PNG just drawn, embedded as a data URI, with its caption and file name."""

    uri: str
    width: int
    height: int
    alt: str
    caption: str
    file: str


@dataclass(frozen=True)
class Value:
    """A JSON value of ``run.json`` as the page shows it.

    ``kind`` is ``"table"`` (``content`` a :class:`Table`), ``"fields"`` (a list of
    ``(key, Value)``), ``"lines"`` (a list of texts), ``"text"``, ``"none"`` (an empty list or
    mapping) or ``"unset"`` (null).
    """

    kind: str
    content: Any = None


@dataclass(frozen=True)
class SkipNote:
    """Why a figure is missing: ``file`` lacks the ``missing`` columns."""

    file: str
    missing: list[str]


def number_text(value: Any) -> str:
    """Any table value as text: integral floats without ``.0``, others to 4 significant digits."""
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
        return ", ".join(number_text(v) for v in value)
    if isinstance(value, dict):
        return "; ".join(f"{k}: {number_text(v)}" for k, v in value.items())
    if hasattr(value, "item"):  # numpy scalar
        return number_text(value.item())
    return str(value)


def percent_text(share: float) -> str:
    """A share as a percentage to 3 significant digits."""
    return f"{100 * share:.3g} %"


def _is_number(value: Any) -> bool:
    return (
        isinstance(value, (int, float))
        and not isinstance(value, bool)
        or (hasattr(value, "dtype") and getattr(value.dtype, "kind", "") in "iuf")
    )


def table(
    frame: pd.DataFrame,
    columns: Sequence[str] | None = None,
    caption: str | None = None,
    limit: int = MAX_ROWS,
) -> Table:
    """``frame`` (or its ``columns`` that exist) as a page table, cut to ``limit`` rows with a note."""
    cols = [c for c in (columns or list(frame.columns)) if c in frame.columns]
    if len(frame) > limit:
        note = f"first {limit} of {len(frame)} rows; the file holds them all"
        caption = f"{caption} ({note})" if caption else note.capitalize()
    rows = [
        [Cell(number_text(v), _is_number(v)) for v in row]
        for row in frame[cols].head(limit).itertuples(index=False, name=None)
    ]
    return Table([str(c) for c in cols], rows, caption)


def figure(png: Path, alt: str, caption: str) -> Figure:
    """The figure just drawn to ``png``, read back for embedding."""
    data = png.read_bytes()
    width, height = struct.unpack(">II", data[16:24])  # the IHDR chunk
    uri = "data:image/png;base64," + base64.b64encode(data).decode("ascii")
    return Figure(uri, width, height, alt, caption, png.name)


def value(data: Any) -> Value:
    """Any JSON value as a :class:`Value`: mappings and lists of records as tables."""
    if isinstance(data, dict):
        if data and all(isinstance(v, dict) for v in data.values()):
            return Value("table", table(pd.DataFrame([{"name": k, **v} for k, v in data.items()])))
        if not data:
            return Value("none")
        return Value("fields", [(str(k), value(v)) for k, v in data.items()])
    if isinstance(data, list):
        if data and all(isinstance(v, dict) for v in data):
            frame = pd.DataFrame(data)
            first = [c for c in ("name", "id") if c in frame.columns]
            return Value("table", table(frame, first + [c for c in frame.columns if c not in first]))
        if not data:
            return Value("none")
        if all(isinstance(v, (list, tuple)) and all(not isinstance(x, (dict, list)) for x in v) for v in data):
            return Value("lines", [" → ".join(number_text(x) for x in v) for v in data])
        return Value("text", ", ".join(number_text(v) for v in data))
    if data is None:
        return Value("unset")
    return Value("text", number_text(data))


def skip_note(file: str, frame: pd.DataFrame, needed: Sequence[str]) -> SkipNote | None:
    """A :class:`SkipNote` when ``frame`` lacks any of the ``needed`` columns, else None."""
    missing = [c for c in needed if c not in frame.columns]
    return SkipNote(file, missing) if missing else None
