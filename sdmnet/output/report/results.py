"""What a results folder holds: the tables the verbs write and ``run.json``, read for the report."""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pandas as pd

from ...errors import InputError

__all__ = ["RESULT_TABLES", "ResultFolder", "read_csv", "read_results", "forecast_totals"]

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
    "cost",
    "forecast",
    "forecast_totals",
    "forecast_band",
)

# Columns read as text whatever they hold (site ids may look like numbers).
_TEXT_COLUMNS = {
    c: str
    for c in ("architecture", "switching", "cable", "a", "b", "site", "path", "reason", "role", "fiber_type")
}


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

    def scenario(self) -> dict[str, Any]:
        """The scenario as ``run.json`` records it (empty when there is none)."""
        scenario = (self.run or {}).get("scenario")
        return scenario if isinstance(scenario, dict) else {}

    def files_read(self) -> list[str]:
        """The file names found, in the report's order."""
        return [f"{n}.csv" for n in RESULT_TABLES if n in self.tables] + (
            ["run.json"] if self.run is not None else []
        )


def read_csv(path: Path) -> pd.DataFrame:
    """One result table; a file that is not a CSV table is an :class:`InputError`."""
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
            found.tables[name] = read_csv(csv)
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
