"""Growth: the plan year by year as the demand grows, never removing a fiber once planned.

Year 0 is the plan (:func:`sdmnet.planning.search.plan_architecture`).  Year ``y`` scales every load
point by ``ForecastSpec.factor(y)`` (relative to year 0), starts from year ``y - 1``'s fibers
and dimensions again with those fibers as the floor: it grows until the target holds at the
scaled dimensioning load, then trims only what it added this year.  Each year is simulated
with the scenario's seed (common random numbers across candidates and years).

``transceivers_peak``, ``switch_ports`` and ``transceiver_lanes_installed`` in forecast.csv are network totals of the
architecture, repeated on each cable row (the engine counts transceivers per site, not per
cable); ``forecast_totals.csv`` holds them once per year and architecture.
"""

from __future__ import annotations

import time
from collections.abc import Callable
from dataclasses import dataclass, replace
from pathlib import Path

import pandas as pd

from ..inputs.model import ForecastSpec, Scenario
from ..output.figures import forecast_figure
from ..output.tables import write_table
from ..sim.progress import ProgressBar
from .candidates import DEFAULT_MAX_CANDIDATES
from .run import finish_run, start_run
from .search import ArchitecturePlan, plan_architecture
from .tables import candidate_rows, totals_row

__all__ = [
    "FORECAST_COLUMNS",
    "YearPlan",
    "ForecastResult",
    "forecast_spec",
    "year_scenario",
    "forecast_architecture",
    "forecast_rows",
    "forecast_notes",
    "forecast_figures",
    "run_forecast",
]

FORECAST_COLUMNS = [
    "year",
    "architecture",
    "cable",
    "fiber_pairs",
    "transceivers_peak",
    "switch_ports",
    "transceiver_lanes_installed",
    "load_factor",
    "load_erlang",
    "added_pairs",
    "blocking",
    "blocking_ci_low",
    "blocking_ci_high",
    "met",
]


@dataclass
class YearPlan:
    """One architecture's plan in one year."""

    year: int
    load_factor: float
    plan: ArchitecturePlan
    previous: tuple[int, ...]

    @property
    def added(self) -> tuple[int, ...]:
        """Pairs added this year per cable (year 0: against the installed topology)."""
        return tuple(n - p for n, p in zip(self.plan.fiber_pairs, self.previous))


@dataclass
class ForecastResult:
    """What :func:`run_forecast` produced (the same tables it wrote)."""

    out_dir: Path
    years: list[YearPlan]
    forecast: pd.DataFrame
    totals: pd.DataFrame
    candidates: pd.DataFrame
    notes: str
    figures: list[Path]
    wall_time_s: float


def forecast_spec(scenario: Scenario) -> ForecastSpec:
    """The scenario's ``[forecast]``, or the documented defaults when it has none."""
    return scenario.forecast if scenario.forecast is not None else ForecastSpec()


def year_scenario(scenario: Scenario, factor: float) -> Scenario:
    """The scenario with every load point multiplied by ``factor``."""
    return replace(scenario, traffic=scenario.traffic.scaled(factor))


def forecast_architecture(
    scenario: Scenario,
    arch_index: int,
    *,
    jobs: int = 1,
    max_candidates: int = DEFAULT_MAX_CANDIDATES,
    log: Callable[[str], None] | None = None,
    year_done: Callable[[YearPlan], None] | None = None,
) -> list[YearPlan]:
    """Plans of one architecture for years 0..F, each year's fibers a floor for the next.

    Parameters
    ----------
    scenario : Scenario
        The scenario (its ``[forecast]`` or the defaults; its ``[plan]`` or the defaults).
    arch_index : int
        Which architecture.
    jobs : int
        Worker processes per candidate.
    max_candidates : int
        Simulation budget per year.
    log : callable, optional
        One line per simulated candidate.
    year_done : callable, optional
        Called with each year's plan as soon as it is made.
    """
    spec = forecast_spec(scenario)
    arch = scenario.architectures[arch_index]
    installed = tuple(c.fiber_pairs for c in scenario.topology.cables)
    years: list[YearPlan] = []
    plan = plan_architecture(scenario, arch, jobs=jobs, max_candidates=max_candidates, log=log)
    years.append(YearPlan(0, 1.0, plan, installed))
    if year_done is not None:
        year_done(years[-1])
    for year in range(1, spec.years + 1):
        factor = spec.factor(year)
        sc = year_scenario(scenario, factor)
        floor = plan.pairs_by_cable
        plan = plan_architecture(
            sc, arch, start=floor, lower=floor, jobs=jobs, max_candidates=max_candidates, log=log
        )
        years.append(YearPlan(year, factor, plan, tuple(floor[k] for k in plan.cables)))
        if year_done is not None:
            year_done(years[-1])
    return years


def forecast_rows(years: list[YearPlan]) -> list[dict]:
    """forecast.csv rows: one per year and cable."""
    rows = []
    for yp in years:
        p = yp.plan
        point = p.evaluation.point
        for i, cable in enumerate(p.cables):
            rows.append(
                {
                    "year": yp.year,
                    "architecture": p.architecture.name,
                    "cable": cable,
                    "fiber_pairs": p.fiber_pairs[i],
                    "transceivers_peak": point.transceivers_peak,
                    "switch_ports": p.switch_ports,
                    "transceiver_lanes_installed": p.installed.lanes,
                    "load_factor": yp.load_factor,
                    "load_erlang": p.load_erlang,
                    "added_pairs": yp.added[i],
                    "blocking": point.blocking.mean,
                    "blocking_ci_low": point.blocking.low,
                    "blocking_ci_high": point.blocking.high,
                    "met": p.met,
                }
            )
    return rows


def forecast_notes(years: list[YearPlan]) -> str:
    """A short text: which cable needs more fibers in which year, per architecture."""
    lines = []
    by_arch: dict[str, list[YearPlan]] = {}
    for yp in years:
        by_arch.setdefault(yp.plan.architecture.name, []).append(yp)
    for name, plans in by_arch.items():
        lines.append(f"{name}:")
        for yp in plans:
            p = yp.plan
            iv = p.evaluation.point.blocking
            head = (
                f"  year {yp.year} (load x{yp.load_factor:.3g}, {p.load_erlang:.4g} Erlang): "
                f"{sum(p.fiber_pairs)} fiber pairs, blocking {iv.mean:.3g} [{iv.low:.3g}, {iv.high:.3g}]"
            )
            if yp.year == 0:
                changes = [f"{k} {n}" for k, n in zip(p.cables, p.fiber_pairs)]
                body = "plan: " + ", ".join(changes)
            else:
                added = [f"+{d} on {k}" for k, d in zip(p.cables, yp.added) if d > 0]
                body = "adds " + ", ".join(added) if added else "no new fibers"
            lines.append(f"{head}; {body}")
            if not p.met:
                lines.append(f"    target {p.target:g} NOT met: {p.note}")
            elif p.note:
                lines.append(f"    note: {p.note}")
    return "\n".join(lines) + "\n"


def forecast_figures(totals: pd.DataFrame, out_dir: Path) -> list[Path]:
    """Fiber pairs, peak transceivers and switch ports per architecture over the years (PNG each)."""
    panels = [
        ("fiber_pairs", "forecast_fiber_pairs.png"),
        ("transceivers_peak", "forecast_transceivers.png"),
        ("switch_ports", "forecast_switch_ports.png"),
    ]
    return [
        forecast_figure(totals[["year", "architecture", column]], Path(out_dir) / name) for column, name in panels
    ]


def run_forecast(scenario: Scenario, out_dir: Path | str, *, jobs: int = 1, progress: bool = True) -> ForecastResult:
    """Plan every architecture for years 0..F of growth and write the forecast.

    Files written into ``out_dir``: ``forecast.csv`` (year x architecture x cable: pairs,
    network peak transceivers and switch ports repeated per row, load factor, pairs added that
    year, blocking with its interval), ``forecast_totals.csv`` (year x architecture totals,
    the columns of plan_totals.csv), ``forecast_candidates.csv``, ``forecast_notes.txt``
    (which cable needs more fibers in which year), ``forecast_fiber_pairs.png``,
    ``forecast_transceivers.png``, ``forecast_switch_ports.png`` and ``run.json``.  Tables are
    rewritten after each architecture.

    Parameters
    ----------
    scenario : Scenario
        From :func:`sdmnet.inputs.loaders.load_scenario`; ``[forecast]`` and ``[plan]`` defaults apply
        when absent.
    out_dir : path
        Output folder (created).
    jobs : int
        Worker processes for the replications of each candidate.
    progress : bool
        A progress bar of the years planned on stderr (on a terminal; elsewhere one summary
        line at the end).

    Raises
    ------
    InputError
        Bad input, an architecture that cannot run, or an unwritable folder.
    RunInterrupted
        SIGINT/SIGTERM; finished architectures are on disk.
    """
    started = time.perf_counter()
    out = start_run(scenario, out_dir)
    spec = forecast_spec(scenario)
    # One step per year planned (every architecture); the latest candidate shows beside the bar.
    bar = ProgressBar("forecast", "years", len(scenario.architectures) * (spec.years + 1), enabled=progress)
    all_years: list[YearPlan] = []
    rows, totals, cands = [], [], []
    for ai in range(len(scenario.architectures)):
        years = forecast_architecture(
            scenario, ai, jobs=jobs, log=bar.note, year_done=lambda yp: bar.step(f"year {yp.year} planned")
        )
        all_years += years
        rows += forecast_rows(years)
        for yp in years:
            # totals_row reads only the topology and [plan] of the scenario, the same every year.
            totals.append({"year": yp.year, "load_factor": yp.load_factor, **totals_row(scenario, yp.plan)})
            cands += candidate_rows(yp.plan, year=yp.year)
        write_table(pd.DataFrame(rows, columns=FORECAST_COLUMNS), out / "forecast.csv")
        write_table(pd.DataFrame(totals), out / "forecast_totals.csv")
        write_table(pd.DataFrame(cands), out / "forecast_candidates.csv")
        (out / "forecast_notes.txt").write_text(forecast_notes(all_years))
    bar.close()
    totals_frame = pd.DataFrame(totals)
    figures = forecast_figures(totals_frame, out) if len(totals_frame) else []
    notes = forecast_notes(all_years)
    wall = finish_run(
        scenario, out, "forecast", started, jobs=jobs, years=spec.years,
        factors=[spec.factor(y) for y in range(spec.years + 1)],
        forecast_section="scenario" if scenario.forecast is not None else "defaults",
        max_candidates_per_year=DEFAULT_MAX_CANDIDATES,
    )
    return ForecastResult(
        out, all_years, pd.DataFrame(rows, columns=FORECAST_COLUMNS), totals_frame, pd.DataFrame(cands),
        notes, figures, wall,
    )
