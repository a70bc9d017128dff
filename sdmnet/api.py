"""The public Python API: one function per verb, each writing its files into an output folder.

The CLI only parses arguments and calls these.  Data flows one way:
files -> model (:mod:`sdmnet.inputs.loaders`) -> engine (:mod:`sdmnet.sim.engine`, run by
:mod:`sdmnet.sim.sweep`) -> statistics (:mod:`sdmnet.sim.stats`) -> tables (:mod:`sdmnet.output.tables`)
-> figures and report.
"""

from __future__ import annotations

import functools
import inspect
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, TypeVar

import pandas as pd

from .analysis.compare import attach_estimate
from .analysis.estimate import estimate as estimate_scenario
from .equipment.costs import unit_prices
from .equipment.resources import InstalledResources, installed_resources, module_figures
from .errors import InputError
from .inputs.model import Scenario
from .output.headline import load_point_text, plan_text
from .output.manifest import ensure_out_dir, out_dir_lock, run_manifest, software_versions
from .output.tables import (
    add_module_columns,
    cable_table,
    class_table,
    pair_table,
    site_table,
    summary_table,
    write_json,
    write_table,
)
from .sim.engine import ReplicationRecord, prepare
from .sim.memory import format_bytes, require_memory
from .sim.precision import more_replications, run_length, run_length_text
from .sim.progress import ProgressBar
from .sim.stats import PointSummary, summarize_point
from .sim.sweep import Task, TaskStore, plan_tasks, run_sweep, scenario_fingerprint

__all__ = [
    "SimulationResult",
    "simulate",
    "estimate",
    "paths",
    "plan",
    "forecast",
    "report",
    "demo",
    "starter",
    "summarize_records",
    "run_length_text",
    "DemoResult",
    "plan_text",
    "load_point_text",
    "software_versions",
    "ensure_out_dir",
]


_F = TypeVar("_F", bound=Callable[..., Any])


def _one_writer(func: _F) -> _F:
    """Hold the call's ``out_dir`` for the call: another process writing into it is refused
    (:func:`sdmnet.output.manifest.out_dir_lock`)."""
    signature = inspect.signature(func)

    @functools.wraps(func)
    def held(*args: Any, **kwargs: Any) -> Any:
        with out_dir_lock(signature.bind(*args, **kwargs).arguments["out_dir"]):
            return func(*args, **kwargs)

    return held  # type: ignore[return-value]


@dataclass
class SimulationResult:
    """What :func:`simulate` produced (the same tables it wrote), and what the user should know
    about it (``notes``: one sentence each)."""

    out_dir: Path
    summary: pd.DataFrame
    classes: pd.DataFrame
    pairs: pd.DataFrame
    sites: pd.DataFrame
    cables: pd.DataFrame
    points: list[PointSummary]
    wall_time_s: float
    notes: list[str] = field(default_factory=list)


def summarize_records(
    scenario: Scenario, records: dict[str, ReplicationRecord], tasks: list[Task] | None = None
) -> tuple[list[PointSummary], dict[str, InstalledResources]]:
    """Aggregate records by (architecture, load) in scenario order, with installed resources.

    ``tasks``: those run (default :func:`~sdmnet.sim.sweep.plan_tasks`; more with ``precision``).
    """
    resources = {a.name: installed_resources(scenario, a) for a in scenario.architectures}
    grouped: dict[tuple[int, int], list[ReplicationRecord]] = {}
    for task in plan_tasks(scenario) if tasks is None else tasks:
        if task.key in records:
            grouped.setdefault((task.arch_index, task.load_index), []).append(records[task.key])
    points = [summarize_point(grouped[k], scenario.run.confidence) for k in sorted(grouped)]
    return points, resources


@_one_writer
def simulate(
    scenario: Scenario,
    out_dir: Path | str,
    *,
    jobs: int = 1,
    scheduler: str | None = None,
    resume: bool = False,
    progress: bool = True,
    figures: bool = True,
    memory_limit: float | None = None,
    estimate_made: pd.DataFrame | None = None,
) -> SimulationResult:
    """Simulate every architecture at every load point and write the results.

    Files written into ``out_dir``: ``summary.csv``, ``classes.csv`` (per size class),
    ``pairs.csv`` (per datacenter pair), ``sites.csv`` (transceivers and ports per site),
    ``cables.csv`` (utilisation), ``run.json`` (inputs, seeds, versions, wall time),
    ``report.html`` with its figures (``blocking.png``, ``bandwidth_blocking.png``, ...), and
    ``tasks/`` (one file per finished replication, used by ``resume``).

    Parameters
    ----------
    scenario : Scenario
        From :func:`sdmnet.inputs.loaders.load_scenario`.
    out_dir : path
        Output folder (created).
    jobs : int
        Local worker processes.
    scheduler : str, optional
        Dask scheduler address; the sweep runs there instead.
    resume : bool
        Keep finished tasks already in ``out_dir/tasks`` and run only the missing ones.
    progress : bool
        A progress bar on stderr (on a terminal; elsewhere one summary line at the end).
    figures : bool
        Write ``report.html`` and its figures (each drawn once, by :func:`report`).
    memory_limit : float, optional
        Bytes the run may use (:func:`sdmnet.sim.memory.require_memory`); default: what the
        machine has available; ``math.inf``: no check.
    estimate_made : DataFrame, optional
        The routed estimate of this scenario already made (:func:`estimate`'s network table),
        used for the estimate columns instead of solving it again when ``[run] estimate`` is
        ``"auto"`` or ``"routed"`` (``demo`` makes it for estimate.csv first).

    Raises
    ------
    InputError
        Bad input, a run too large for the memory, an unwritable folder, or a folder another
        run is writing into.
    RunInterrupted
        SIGINT/SIGTERM; finished tasks are on disk.
    """
    started = time.perf_counter()
    memory, room = require_memory(scenario, "simulate", jobs=jobs, limit=memory_limit)
    out = ensure_out_dir(out_dir)
    # Refuse an impossible architecture before any work starts.
    setups = {a.name: prepare(scenario, a) for a in scenario.architectures}
    tasks = plan_tasks(scenario)
    store = TaskStore(out / "tasks", scenario_fingerprint(scenario))
    bar = ProgressBar("simulate", "tasks", len(tasks), enabled=progress)
    records = run_sweep(scenario, store, tasks=tasks, jobs=jobs, scheduler=scheduler, resume=resume, progress=bar,
                        setups=setups)  # fmt: skip
    # [run] precision: more replications, round by round, where the blocking is still too wide.
    while more := more_replications(scenario, tasks, records):
        tasks += more
        bar = ProgressBar("simulate", "more replications", len(more), enabled=progress)
        records.update(run_sweep(scenario, store, tasks=more, jobs=jobs, scheduler=scheduler, resume=True,
                                 progress=bar, setups=setups))  # fmt: skip
    points, resources = summarize_records(scenario, records, tasks)
    modules = {a.name: module_figures(scenario, a) for a in scenario.architectures}
    prices = {name: unit_prices(scenario, module) for name, module in modules.items()}
    summary = summary_table(scenario, points, setups, resources, prices)
    summary = add_module_columns(summary, modules)
    if estimate_made is not None and scenario.run.estimate in ("auto", "routed"):
        estimate_net, notes = estimate_made, []
    else:
        estimate_net, notes = _estimate_beside(scenario, memory, room)
    summary = attach_estimate(summary, estimate_net, setups)
    classes = class_table(points, setups)
    pairs = pair_table(points, setups)
    sites = site_table(scenario, points, setups, resources)
    cables = cable_table(scenario, points)
    for name, frame in (
        ("summary", summary),
        ("classes", classes),
        ("pairs", pairs),
        ("sites", sites),
        ("cables", cables),
    ):
        write_table(frame, out / f"{name}.csv")
    wall = time.perf_counter() - started
    manifest = run_manifest(scenario, "simulate", wall, setups=setups, jobs=jobs, scheduler=scheduler,
                            run_length=run_length(scenario.run, points))  # fmt: skip
    write_json(manifest, out / "run.json")
    if figures:
        report(out)
    return SimulationResult(out, summary, classes, pairs, sites, cables, points, wall, notes)


def _estimate_beside(scenario: Scenario, memory: Any, room: float) -> tuple[pd.DataFrame, list[str]]:
    """The analytic estimate simulate writes beside its results (``[run] estimate``), and what
    the user should know about it (notes, one sentence each)."""
    choice = scenario.run.estimate
    empty = pd.DataFrame(columns=["architecture", "load_erlang", "blocking", "bandwidth_blocking", "method"])
    if choice == "none":
        return empty, []
    if memory.optional is not None and memory.optional.nbytes > room:
        # The simulation fits but the estimate beside it does not: leave its columns empty.
        return empty, [
            f"the analytic estimate is left out (its columns are empty): {memory.optional.what} would need "
            f"about {format_bytes(memory.optional.nbytes)} of memory"
        ]
    network, _ = estimate_scenario(scenario, method=choice)
    notes = []
    if choice == "auto" and (network["method"] == "fixed-point").any():
        names = ", ".join(dict.fromkeys(network.loc[network["method"] == "fixed-point", "architecture"]))
        notes.append(
            f"the estimate columns of {names} come from the plain Erlang fixed point (first route only, no "
            f"channel continuity): the routed estimate would be slow on a network this large "
            f'(docs/estimate.md); [run] estimate = "routed" or --estimate routed asks for it'
        )
    return network, notes


@_one_writer
def estimate(
    scenario: Scenario, out_dir: Path | str, *, memory_limit: float | None = None, method: str = "routed"
) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Analytic estimate, no simulation: writes ``estimate.csv`` and ``estimate_pairs.csv``.

    Erlang B / Kaufman-Roberts per cable, coupled by the routed reduced-load fixed point, or with
    ``method="fixed-point"`` the plain Erlang fixed point (docs/estimate.md).
    """
    started = time.perf_counter()
    require_memory(scenario, "estimate", limit=memory_limit)
    out = ensure_out_dir(out_dir)
    network, pairs = estimate_scenario(scenario, method=method)
    write_table(network, out / "estimate.csv")
    write_table(pairs, out / "estimate_pairs.csv")
    write_json(run_manifest(scenario, "estimate", time.perf_counter() - started), out / "run.json")
    return network, pairs


@_one_writer
def paths(scenario: Scenario, out_dir: Path | str, *, memory_limit: float | None = None) -> pd.DataFrame:
    """Candidate paths with their physics and feasibility: writes ``paths.csv``."""
    from .optics.pathtable import path_table

    started = time.perf_counter()
    require_memory(scenario, "paths", limit=memory_limit)
    out = ensure_out_dir(out_dir)
    table = path_table(scenario)
    write_table(table, out / "paths.csv")
    write_json(run_manifest(scenario, "paths", time.perf_counter() - started), out / "run.json")
    return table


@_one_writer
def plan(
    scenario: Scenario,
    out_dir: Path | str,
    *,
    jobs: int = 1,
    progress: bool = True,
    cable_cuts: bool = False,
    figures: bool = True,
    memory_limit: float | None = None,
):
    """Least-cost fiber pairs per cable meeting the target blocking: writes ``plan.csv``, its
    totals, run.json (:func:`sdmnet.planning.run.run_plan`) and, with ``figures``,
    ``report.html`` and its figures."""
    from .planning.run import run_plan

    require_memory(scenario, "plan", jobs=jobs, limit=memory_limit)
    result = run_plan(scenario, out_dir, jobs=jobs, progress=progress, cable_cuts=cable_cuts)
    if figures:
        report(out_dir)
    return result


@_one_writer
def forecast(
    scenario: Scenario,
    out_dir: Path | str,
    *,
    jobs: int = 1,
    progress: bool = True,
    figures: bool = True,
    memory_limit: float | None = None,
    year0: Sequence[Any] = (),
):
    """The plan year by year under growth: writes ``forecast.csv``, its figures and run.json
    (:func:`sdmnet.planning.forecasting.run_forecast`) and, with ``figures``, ``report.html``.

    ``year0``: plans of this scenario already made (``plan(...).plans``), reused as year 0."""
    from .planning.forecasting import run_forecast

    require_memory(scenario, "forecast", jobs=jobs, limit=memory_limit)
    result = run_forecast(scenario, out_dir, jobs=jobs, progress=progress, year0=year0)
    if figures:
        report(out_dir)
    return result


def report(folder: Path | str, out_dir: Path | str | None = None) -> Path:
    """Write ``report.html`` (self-contained) and figures for a results folder.

    With ``out_dir``, the folder's tables are copied there first and the report is written
    there, leaving ``folder`` untouched.
    """
    import shutil

    from .output.report import write_report

    path = Path(folder)
    if not path.is_dir():
        raise InputError(path, "report", "no such results folder")
    elsewhere = out_dir is not None and Path(out_dir).resolve() != path.resolve()
    with out_dir_lock(out_dir if elsewhere else path) as target:
        if elsewhere:
            for item in sorted(path.iterdir()):
                if item.is_file() and item.suffix in (".csv", ".json", ".txt", ".parquet"):
                    shutil.copy2(item, target / item.name)
        return write_report(target)


def starter(folder: Path | str) -> list[Path]:
    """Copy a starter scenario and topology (the demo's) into ``folder`` for the user to edit;
    refuses to overwrite (:func:`sdmnet.inputs.bundled.copy_starter`)."""
    from .inputs.bundled import copy_starter

    return copy_starter(folder)


@dataclass
class DemoResult:
    """What :func:`demo` produced: the simulation and, with a ``[plan]``, the plan's totals."""

    out_dir: Path
    simulation: SimulationResult
    plan_totals: pd.DataFrame | None
    wall_time_s: float


@_one_writer
def demo(scenario: Scenario, out_dir: Path | str, *, jobs: int = 2, progress: bool = True) -> DemoResult:
    """The bundled scenario end to end into one folder: paths, estimate, simulation,
    plan, forecast and the report."""
    started = time.perf_counter()
    require_memory(scenario, "demo", jobs=jobs)
    out = ensure_out_dir(out_dir)
    paths(scenario, out)
    network, _ = estimate(scenario, out)
    # The report (and every figure in it) is written once, at the end; the estimate beside the
    # simulation is the one just made, not solved a second time.
    result = simulate(scenario, out, jobs=jobs, progress=progress, figures=False, estimate_made=network)
    totals, planned = None, ()
    if scenario.plan is not None:
        made = plan(scenario, out, jobs=jobs, progress=progress, figures=False)
        totals, planned = made.totals, made.plans
    if scenario.forecast is not None:
        # Year 0 of the forecast is the plan just made: not searched a second time.
        forecast(scenario, out, jobs=jobs, progress=progress, figures=False, year0=planned)
    wall = time.perf_counter() - started
    write_json(run_manifest(scenario, "demo", wall, jobs=jobs), out / "run.json")
    report(out)
    return DemoResult(out, result, totals, wall)
