"""How well an analytic estimate tracks a simulation, per architecture and load point.

Run with ``.venv/bin/python bench/track_estimate.py SUMMARY_CSV ESTIMATE_CSV`` (a simulated
``summary.csv`` from ``sdmnet simulate`` and an ``estimate.csv`` from ``sdmnet estimate``).  A
point is *tracked* when the estimate lies inside the simulated 95 % interval or within
``--tolerance`` (default 15 %) of the simulated blocking (docs/estimate.md, "Measured against the
simulation").  Prints, per architecture and load, the simulated blocking and interval, the
estimate, their ratio and yes/no; then per architecture and overall the share tracked.  Nothing
is asserted: the figures are for reading.  Simulate once, then run ``sdmnet estimate`` and this
script after each change of the estimate.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

import pandas as pd

KEYS = ["architecture", "load_erlang"]


def tracking(summary: pd.DataFrame, estimate: pd.DataFrame, tolerance: float = 0.15) -> pd.DataFrame:
    """One row per (architecture, load) present in both tables: simulated blocking and interval,
    the estimate, ``ratio`` = estimate / simulated and ``tracked``."""
    sim = summary[[*KEYS, "blocking", "blocking_ci_low", "blocking_ci_high"]]
    est = estimate[[*KEYS, "blocking"]].rename(columns={"blocking": "estimate"})
    both = sim.merge(est, on=KEYS, how="inner", sort=False)
    ratio = both["estimate"] / both["blocking"].where(both["blocking"] > 0)
    inside = (both["estimate"] >= both["blocking_ci_low"]) & (both["estimate"] <= both["blocking_ci_high"])
    near = (both["estimate"] - both["blocking"]).abs() <= tolerance * both["blocking"]
    return both.assign(ratio=ratio, tracked=inside | near)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("summary", type=Path, help="simulated summary.csv")
    parser.add_argument("estimate", type=Path, help="estimate.csv of sdmnet estimate")
    parser.add_argument("--tolerance", type=float, default=0.15, help="relative tolerance (default 0.15)")
    args = parser.parse_args(argv)
    table = tracking(pd.read_csv(args.summary), pd.read_csv(args.estimate), args.tolerance)
    if table.empty:
        print("no (architecture, load_erlang) in both tables", file=sys.stderr)
        return 1
    header = f"{'architecture':<16}{'load':>8}{'simulated':>11}{'95 % interval':>20}{'estimate':>11}{'est/sim':>9}"
    print(f"{header}  tracked")
    for row in table.itertuples():
        interval = f"{row.blocking_ci_low:.4f}-{row.blocking_ci_high:.4f}"
        print(f"{row.architecture:<16}{row.load_erlang:>8g}{row.blocking:>11.4f}{interval:>20}{row.estimate:>11.4f}"
              f"{row.ratio:>9.2f}  {'yes' if row.tracked else 'no'}")  # fmt: skip
    print()
    for arch, rows in table.groupby("architecture", sort=False):
        ratios = " / ".join(f"{r:.2f}" for r in rows["ratio"])
        print(f"{arch:<16}{int(rows['tracked'].sum())} / {len(rows)}   est/sim {ratios}")
    print(f"{'all':<16}{int(table['tracked'].sum())} / {len(table)}   ({table['tracked'].mean():.0%})")
    return 0


if __name__ == "__main__":
    sys.exit(main())
