"""The ``plan`` verb: dimension every architecture of a scenario and write the plan's files.

Method: :mod:`sdmnet.planning.search`; tables: :mod:`sdmnet.planning.tables`; docs/planning.md.
"""

from __future__ import annotations

import time
from dataclasses import dataclass
from pathlib import Path

import pandas as pd

from ..equipment.resources import module_figures
from ..inputs.model import Scenario
from ..network.architectures import cable_geometries
from ..output.manifest import ensure_out_dir, run_manifest
from ..output.tables import write_json, write_table
from ..sim.progress import ProgressBar
from .candidates import DEFAULT_MAX_CANDIDATES, REPLICATION_CAP_FACTOR
from .costing import plan_prices
from .cuts import cut_rows
from .first_guess import dimensioning_load, plan_spec
from .search import ArchitecturePlan, plan_architecture
from .tables import candidate_rows, plan_cost_rows, plan_rows, site_rows, totals_row

__all__ = ["PlanResult", "start_run", "finish_run", "run_plan", "summary_lines"]


@dataclass
class PlanResult:
    """What :func:`run_plan` produced (the same tables it wrote)."""

    out_dir: Path
    plans: list[ArchitecturePlan]
    plan: pd.DataFrame
    totals: pd.DataFrame
    sites: pd.DataFrame
    candidates: pd.DataFrame
    cuts: pd.DataFrame | None
    wall_time_s: float


def start_run(scenario: Scenario, out_dir: Path | str) -> Path:
    """The start shared by ``plan`` and ``forecast``: the output folder.

    Every architecture is checked against every cable first, so an impossible one is refused
    (ConfigurationError) before any simulation; an unwritable folder raises InputError.
    """
    out = ensure_out_dir(out_dir)
    for arch in scenario.architectures:
        cable_geometries(scenario, arch)
    return out


def finish_run(
    scenario: Scenario, out: Path, verb: str, started: float, setups: dict | None = None, **options: object
) -> float:
    """Write ``run.json`` of a ``plan`` or ``forecast`` run (with the plan settings used).

    ``setups`` (architecture name -> the prepared setup its plan used) spares preparing routes
    again for run.json; an architecture missing from it (an interrupted run) is prepared.
    Returns the wall time since ``started`` (a :func:`time.perf_counter` reading).
    """
    wall = time.perf_counter() - started
    known = setups or {}
    if any(a.name not in known for a in scenario.architectures):
        known = None
    manifest = run_manifest(
        scenario, verb, wall, setups=known, **options,
        target_blocking=plan_spec(scenario).target_blocking,
        plan_section="scenario" if scenario.plan is not None else "defaults",
    )
    write_json(manifest, out / "run.json")
    return wall


def run_plan(
    scenario: Scenario, out_dir: Path | str, *, jobs: int = 1, progress: bool = True, cable_cuts: bool = False
) -> PlanResult:
    """Dimension every architecture of ``scenario`` and write the plan.

    Files written into ``out_dir``: ``plan.csv`` (architecture x cable: planned pairs and the
    network request blocking of the plan at the dimensioning load, with its interval),
    ``plan_totals.csv`` (per architecture: fibers, fiber-km, installed transceiver lanes and
    modules, switch ports, cost and watts, blocking), ``cost.csv`` (per architecture and item:
    count, unit cost, cost, watts, and a total row), ``plan_sites.csv`` (per architecture x
    site), ``plan_candidates.csv`` (every simulated candidate), ``cuts.csv``
    (with ``cable_cuts``) and ``run.json``.  Tables are rewritten after each architecture, so an
    interrupted run leaves the finished architectures on disk.

    Parameters
    ----------
    scenario : Scenario
        From :func:`sdmnet.inputs.loaders.load_scenario`; ``[plan]`` defaults apply when absent.
    out_dir : path
        Output folder (created).
    jobs : int
        Worker processes for the replications of each candidate.
    progress : bool
        A progress bar of simulated candidates on stderr (on a terminal; elsewhere one summary
        line at the end).
    cable_cuts : bool
        Also simulate the plan with each cable cut in turn.

    Raises
    ------
    InputError
        Bad input, an architecture that cannot run, or an unwritable folder.
    RunInterrupted
        SIGINT/SIGTERM; finished architectures are on disk.
    """
    started = time.perf_counter()
    out = start_run(scenario, out_dir)
    bar = ProgressBar("plan", "candidates", enabled=progress)  # one step per simulated candidate
    spec = plan_spec(scenario)
    plans: list[ArchitecturePlan] = []
    plan_part, totals_part, site_part, cand_part, cost_part, cut_part = [], [], [], [], [], []
    with_cuts = cable_cuts or spec.survive == "cable-cut"
    for arch in scenario.architectures:
        ap = plan_architecture(scenario, arch, jobs=jobs, log=bar.step, with_cuts=with_cuts)
        plans.append(ap)
        plan_part += plan_rows(scenario, ap)
        module = module_figures(scenario, arch)
        prices = plan_prices(scenario, arch)
        totals_part.append(totals_row(scenario, ap, prices, module))
        cost_part += plan_cost_rows(scenario, ap, prices)
        site_part += site_rows(scenario, ap)
        cand_part += candidate_rows(ap)
        write_table(pd.DataFrame(plan_part), out / "plan.csv")
        write_table(pd.DataFrame(totals_part), out / "plan_totals.csv")
        write_table(pd.DataFrame(site_part), out / "plan_sites.csv")
        write_table(pd.DataFrame(cand_part), out / "plan_candidates.csv")
        write_table(pd.DataFrame(cost_part), out / "cost.csv")
        if with_cuts:
            cut_part += cut_rows(arch.name, ap.cables, ap.cuts)
            write_table(pd.DataFrame(cut_part), out / "cuts.csv")
    bar.close()
    wall = finish_run(
        scenario, out, "plan", started, jobs=jobs, cable_cuts=with_cuts,
        dimensioning_load_erlang=dimensioning_load(scenario), confidence=spec.confidence,
        pair_target=spec.pair_target, per_pair=spec.per_pair, survive=spec.survive, cut_target=spec.cut_target,
        max_candidates=DEFAULT_MAX_CANDIDATES, replication_cap_factor=REPLICATION_CAP_FACTOR,
        setups={p.architecture.name: p.setup for p in plans if p.setup is not None},
    )
    cuts = pd.DataFrame(cut_part) if with_cuts else None
    return PlanResult(
        out, plans, pd.DataFrame(plan_part), pd.DataFrame(totals_part), pd.DataFrame(site_part),
        pd.DataFrame(cand_part), cuts, wall,
    )


def summary_lines(plans: list[ArchitecturePlan]) -> list[str]:
    """One line per architecture for the terminal: verdict, blocking with its interval, the worst
    pair, cost and fiber pairs (and the worst cut when cuts were simulated)."""
    lines = []
    for p in plans:
        iv = p.evaluation.point.blocking
        name, worst = p.worst_pair
        state = "met" if p.met else ("UNDECIDED at cap" if p.verdict == "undecided" else "NOT met")
        line = (f"{p.architecture.name}: {state}, blocking {iv.mean:.4g} [{iv.low:.4g}, {iv.high:.4g}] "
                f"({p.confidence:.0%}, {p.evaluation.replications} replications), worst pair {name} {worst:.4g}, "
                f"{sum(p.fiber_pairs)} fiber pairs")  # fmt: skip
        if p.cuts:
            cut = max(p.cuts, key=lambda o: o.evaluation.point.blocking.mean)
            line += f", worst cut {cut.cut.name} {cut.evaluation.point.blocking.mean:.4g}"
        lines.append(line)
        if p.note:
            lines.append(f"  note: {p.note}")
    return lines
