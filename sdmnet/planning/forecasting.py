"""Growth: the plan year by year as the demand grows, never removing a fiber once planned.

Year 0 is the plan (:func:`sdmnet.planning.search.plan_architecture`).  Year ``y`` scales every load
point by ``ForecastSpec.factor(y)`` (relative to year 0), multiplies each pair's share by the
geometric mean of its ends' ``(1 + site_growth) ** y`` (so sites may grow faster or slower than
the whole), and gives the transceivers the year's lane rate (``lane_gbps_by_year``); it starts
from year ``y - 1``'s fibers and dimensions again with those fibers as the floor: it grows until
the target holds at the year's dimensioning load, then trims only what it added this year.
Each year is simulated with the scenario's seed (common random numbers across candidates and
years).  Routes and physics are found once per architecture and lane rate, not per year.

With ``growth_band = [low, high]`` the low and high growth rates are planned the same way
beside the base case; ``forecast_band.csv`` holds the three cases' yearly cost, watts and fibers.

``transceivers_peak``, ``switch_ports`` and ``transceiver_lanes_installed`` in forecast.csv are
network totals of the architecture, repeated on each cable row (the engine counts transceivers
per site, not per cable); ``forecast_totals.csv`` holds them once per year and architecture.
"""

from __future__ import annotations

import math
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass, replace
from pathlib import Path

import pandas as pd

from ..inputs.model import Architecture, ForecastSpec, Scenario
from ..network.routing import Route
from ..network.traffic import pair_weights
from ..optics.pathtable import feasible_routes
from ..output.figures import forecast_figure
from ..output.tables import write_table, write_text
from ..sim.engine import EngineSetup, prepare
from ..sim.progress import ProgressBar
from .candidates import DEFAULT_MAX_CANDIDATES
from .run import finish_run, start_run
from .search import ArchitecturePlan, plan_architecture, route_finder
from .tables import candidate_rows, totals_row

__all__ = [
    "FORECAST_COLUMNS",
    "YearPlan",
    "ForecastResult",
    "forecast_spec",
    "year_scenario",
    "forecast_year",
    "forecast_architecture",
    "forecast_rows",
    "forecast_notes",
    "forecast_figures",
    "run_forecast",
]

# Columns of forecast_band.csv besides ``case`` and ``growth_per_year``.
BAND_COLUMNS = ("year", "architecture", "load_factor", "lane_gbps", "cost", "power_w", "fiber_pairs",
                "transceiver_lanes_installed", "met")  # fmt: skip

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
    scenario: Scenario

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


def forecast_year(scenario: Scenario, year: int, growth: float | None = None) -> tuple[Scenario, float]:
    """The scenario of ``year`` and its total load factor relative to year 0.

    ``growth`` replaces ``growth_per_year`` (the low and high cases of a band).  With
    ``site_growth`` the traffic becomes a matrix of the year-0 pair shares times each pair's
    site multiplier, and the total load grows by the overall factor times the load-weighted
    mean of those multipliers.
    """
    spec = forecast_spec(scenario)
    factor = spec.factor(year, growth)
    sc = scenario
    if spec.site_growth and year > 0:
        topo = scenario.topology
        shares = pair_weights(topo, scenario.traffic)
        site = {s.id: (1.0 + spec.site_growth.get(s.id, 0.0)) ** year for s in topo.datacenters}
        grown = {p: w * math.sqrt(site[p[0]] * site[p[1]]) for p, w in shares.items()}
        factor *= sum(grown.values())
        matrix = tuple((a, b, w) for (a, b), w in grown.items())
        sc = replace(sc, traffic=replace(sc.traffic, pattern="matrix", matrix=matrix))
    lane = spec.lane_gbps(year, scenario.transceiver.lane_gbps)
    if lane != scenario.transceiver.lane_gbps:
        # Every class moves up the roadmap in proportion, keeping its required OSNR (docs/planning.md).
        ratio = lane / scenario.transceiver.lane_gbps
        classes = tuple(replace(c, lane_gbps=c.lane_gbps * ratio) for c in sc.transceivers)
        sc = replace(sc, transceiver=replace(sc.transceiver, lane_gbps=lane), transceivers=classes)
    return year_scenario(sc, factor), factor


class _Routes:
    """Feasible routes per (architecture, lane rate): found once, handed to every year's prepare."""

    def __init__(self) -> None:
        self._found: dict[tuple[str, float], dict[tuple[str, str], list[Route]]] = {}

    def setup(self, scenario: Scenario, arch: Architecture) -> EngineSetup:
        key = (arch.name, scenario.transceiver.lane_gbps)
        if key not in self._found:
            self._found[key] = (route_finder(scenario) or feasible_routes)(scenario, arch)
        found = self._found[key]
        return prepare(scenario, arch, route_finder=lambda _s, _a: found)


def forecast_architecture(
    scenario: Scenario,
    arch_index: int,
    *,
    jobs: int = 1,
    max_candidates: int = DEFAULT_MAX_CANDIDATES,
    log: Callable[[str], None] | None = None,
    growth: float | None = None,
    year_done: Callable[[YearPlan], None] | None = None,
    year0: ArchitecturePlan | None = None,
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
    growth : float, optional
        Yearly growth replacing ``growth_per_year`` (a case of the band).
    year_done : callable, optional
        Called with each year's plan as soon as it is made.
    year0 : ArchitecturePlan, optional
        The architecture's plan of the scenario as given, already made (by ``sdmnet plan``, or
        by another growth case): year 0 is that very plan, so it is not searched again.
    """
    spec = forecast_spec(scenario)
    arch = scenario.architectures[arch_index]
    installed = tuple(c.fiber_pairs for c in scenario.topology.cables)
    routes = _Routes()
    years: list[YearPlan] = []
    if year0 is not None and year0.architecture == arch:
        plan = year0
    else:
        plan = plan_architecture(scenario, arch, jobs=jobs, max_candidates=max_candidates, log=log,
                                 setup=routes.setup(scenario, arch))  # fmt: skip
    years.append(YearPlan(0, 1.0, plan, installed, scenario))
    if year_done is not None:
        year_done(years[-1])
    for year in range(1, spec.years + 1):
        sc, factor = forecast_year(scenario, year, growth)
        floor = plan.pairs_by_cable
        plan = plan_architecture(sc, arch, start=floor, lower=floor, jobs=jobs, max_candidates=max_candidates,
                                 log=log, setup=routes.setup(sc, arch))  # fmt: skip
        years.append(YearPlan(year, factor, plan, tuple(floor[k] for k in plan.cables), sc))
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


def forecast_figures(totals: pd.DataFrame, out_dir: Path, band: pd.DataFrame | None = None) -> list[Path]:
    """Fiber pairs, peak transceivers, switch ports, cost and watts per architecture over the
    years (PNG each); cost and watts with the low/high growth band when there is one."""
    panels = [
        ("fiber_pairs", "forecast_fiber_pairs.png"),
        ("transceivers_peak", "forecast_transceivers.png"),
        ("switch_ports", "forecast_switch_ports.png"),
        ("cost", "forecast_cost.png"),
        ("power_w", "forecast_power.png"),
    ]
    return [
        forecast_figure(totals[["year", "architecture", column]], Path(out_dir) / name, band=band)
        for column, name in panels
        if column in totals.columns
    ]


def run_forecast(
    scenario: Scenario,
    out_dir: Path | str,
    *,
    jobs: int = 1,
    progress: bool = True,
    year0: Sequence[ArchitecturePlan] = (),
) -> ForecastResult:
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
    year0 : sequence of ArchitecturePlan
        Plans of this very scenario already made (:func:`sdmnet.planning.run.run_plan`): an
        architecture found here is not planned again for year 0.  Every growth case shares its
        year 0 either way.

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
    all_years: list[YearPlan] = []
    rows, totals, cands, band = [], [], [], []
    cases = [("base", None)]
    if spec.growth_band:
        cases += [("low", spec.growth_band[0]), ("high", spec.growth_band[1])]
    # One step per year planned (every architecture and case); the latest candidate shows beside the bar.
    steps = len(scenario.architectures) * len(cases) * (spec.years + 1)
    bar = ProgressBar("forecast", "years", steps, enabled=progress)
    known = {p.architecture.name: p for p in year0}
    for ai, arch in enumerate(scenario.architectures):
        first = known.get(arch.name)
        for case, growth in cases:
            years = forecast_architecture(scenario, ai, jobs=jobs, log=bar.note, growth=growth, year0=first,
                                          year_done=lambda yp, c=case: bar.step(f"{c} year {yp.year} planned"))
            first = years[0].plan
            year_totals = _year_totals(years)
            band += [{"case": case, "growth_per_year": spec.growth_per_year if growth is None else growth,
                      **{k: t[k] for k in BAND_COLUMNS if k in t}} for t in year_totals]  # fmt: skip
            if case != "base":
                continue
            all_years += years
            rows += forecast_rows(years)
            totals += year_totals
            for yp in years:
                cands += candidate_rows(yp.plan, year=yp.year)
        write_table(pd.DataFrame(rows, columns=FORECAST_COLUMNS), out / "forecast.csv")
        write_table(pd.DataFrame(totals), out / "forecast_totals.csv")
        write_table(pd.DataFrame(cands), out / "forecast_candidates.csv")
        write_table(pd.DataFrame(band), out / "forecast_band.csv")
        write_text(forecast_notes(all_years), out / "forecast_notes.txt")
    bar.close()
    totals_frame = pd.DataFrame(totals)
    band_frame = pd.DataFrame(band)
    figures = forecast_figures(totals_frame, out, band_frame) if len(totals_frame) else []
    notes = forecast_notes(all_years)
    wall = finish_run(
        scenario, out, "forecast", started, jobs=jobs, years=spec.years,
        factors=[spec.factor(y) for y in range(spec.years + 1)],
        lane_gbps=[spec.lane_gbps(y, scenario.transceiver.lane_gbps) for y in range(spec.years + 1)],
        site_growth=spec.site_growth, growth_band=list(spec.growth_band),
        forecast_section="scenario" if scenario.forecast is not None else "defaults",
        max_candidates_per_year=DEFAULT_MAX_CANDIDATES,
        setups={yp.plan.architecture.name: yp.plan.setup for yp in all_years if yp.year == 0 and yp.plan.setup},
    )
    return ForecastResult(
        out, all_years, pd.DataFrame(rows, columns=FORECAST_COLUMNS), totals_frame, pd.DataFrame(cands),
        notes, figures, wall,
    )


def _year_totals(years: list[YearPlan]) -> list[dict]:
    """forecast_totals.csv rows of one architecture: plan totals per year (priced with that
    year's transceivers), the lane rate, and the cost and watts added since the year before."""
    out: list[dict] = []
    for yp in years:
        row = {"year": yp.year, "load_factor": yp.load_factor,
               "lane_gbps": yp.scenario.transceiver.lane_gbps, **totals_row(yp.scenario, yp.plan)}  # fmt: skip
        before = out[-1] if out else None
        row["cost_added"] = row["cost"] - (before["cost"] if before else 0.0)
        row["power_added_w"] = row["power_w"] - (before["power_w"] if before else 0.0)
        out.append(row)
    return out
