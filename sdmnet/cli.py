"""Command line: ``sdmnet VERB ...``.  Parses arguments and calls :mod:`sdmnet.api`; nothing else.

Exit status: 0 done; 2 bad input (one line ``error: FILE: WHERE: what is wrong``);
130 interrupted (finished results are on disk).
"""

from __future__ import annotations

import argparse
import atexit
import gc
import importlib
import os
import sys
import threading
from collections.abc import Callable, Sequence
from pathlib import Path
from types import ModuleType

from . import __version__
from .errors import InputError, RunInterrupted

__all__ = ["main", "run", "build_parser"]

EXIT_OK, EXIT_INPUT, EXIT_INTERRUPTED = 0, 2, 130


def _positive_int(text: str) -> int:
    value = _int(text)
    if value < 1:
        raise argparse.ArgumentTypeError(f"must be at least 1, got {value}")
    return value


#: Most local worker processes: more than any machine has cores (each holds its own engine state).
MAX_JOBS = 256


def _jobs(text: str) -> int:
    value = _positive_int(text)
    if value > MAX_JOBS:
        raise argparse.ArgumentTypeError(f"must be at most {MAX_JOBS}, got {value}")
    return value


def _memory_size(text: str) -> float:
    from .sim.memory import parse_size

    try:
        return parse_size(text)
    except ValueError as exc:
        raise argparse.ArgumentTypeError(str(exc)) from None


def _int(text: str) -> int:
    try:
        return int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"not a whole number: {text!r}") from None


class _Parser(argparse.ArgumentParser):
    """argparse with our one-line error format and exit status 2."""

    def error(self, message: str) -> None:  # type: ignore[override]
        sys.stderr.write(f"error: <command line>: {self.prog}: {message}\n")
        raise SystemExit(EXIT_INPUT)


def _default_out(verb: str, source: str | None) -> Path:
    stem = Path(source).stem if source else verb
    return Path("results") / f"{stem}-{verb}"


def _load_scenario(args: argparse.Namespace):
    from .inputs.loaders import load_scenario

    overrides = {}
    if getattr(args, "seed", None) is not None:
        overrides["seed"] = args.seed
    if getattr(args, "requests", None) is not None:
        overrides["run.requests"] = args.requests
    if getattr(args, "estimate", None) is not None:
        overrides["run.estimate"] = args.estimate
    if getattr(args, "replications", None) is not None:
        overrides["run.replications"] = args.replications
    return load_scenario(Path(args.scenario), overrides=overrides or None)


def _out(args: argparse.Namespace, verb: str) -> Path:
    return Path(args.out) if args.out else _default_out(verb, getattr(args, "scenario", None))


def cmd_check(args: argparse.Namespace) -> int:
    from .inputs.describe import describe, warnings_for
    from .inputs.loaders import load_any

    checked = load_any(Path(args.file))
    text = describe(checked)
    print(text)
    for file, where, what in warnings_for(checked):
        print(f"warning: {file}: {where}: {what}", file=sys.stderr)
    if args.out:  # only on request: checking a file should not litter results/
        from .output.manifest import out_dir_lock
        from .output.tables import write_text

        with out_dir_lock(args.out) as out:
            write_text(text + "\n", out / "check.txt")
    return EXIT_OK


#: True in the command's own process (set by :func:`run`), where :func:`main` runs once.
_ONE_COMMAND = False


def _api(drawing: bool = True) -> ModuleType:
    """:mod:`sdmnet.api`, imported with the report's modules too when the verb draws figures.

    In the command's own process (:func:`run`) they are imported with the cyclic garbage collector
    paused, and what they made is then frozen (``gc.freeze``): the imports make a few hundred
    thousand objects that live until the process ends, yet each full collection would walk them
    all again (about 0.1 s of a small run).  Not where :func:`main` is called more than once (the
    tests), since freezing would keep earlier calls' garbage cycles for good.
    """
    names = ["sdmnet.api"] + (["sdmnet.output.report"] if drawing else [])
    if not _ONE_COMMAND or all(name in sys.modules for name in names):
        return importlib.import_module("sdmnet.api")
    gc.disable()
    try:
        for name in names:
            importlib.import_module(name)
    finally:
        gc.freeze()
        gc.enable()
    return sys.modules["sdmnet.api"]


def cmd_simulate(args: argparse.Namespace) -> int:
    scenario = _load_scenario(args)  # first: a bad file is refused before the heavier imports
    api = _api()

    result = api.simulate(
        scenario,
        _out(args, "simulate"),
        jobs=args.jobs,
        scheduler=args.scheduler,
        resume=args.resume,
        progress=not args.quiet,
        memory_limit=args.memory_limit,
    )
    print(api.load_point_text(result.summary))
    for line in api.run_length_text(scenario.run, result.points):
        print(line)
    _warn_unrouted(result.summary)
    _warn_unsteady(result.summary)
    _note_intervals(scenario)
    for note in result.notes:
        sys.stderr.write(f"note: {note}\n")
    print(f"results in {result.out_dir}/ ({result.wall_time_s:.1f} s), report.html")
    return EXIT_OK


def _note_intervals(scenario) -> None:
    # Blank interval columns are no estimate of precision: say why they are blank.
    if scenario.run.replications < 2:
        sys.stderr.write(
            "note: one replication per point, so no confidence interval can be made (the blocking_ci "
            "columns are empty); give --replications 2 or more\n"
        )


def _warn_unrouted(summary) -> None:
    # A pair with no feasible path is blocked outright; say so rather than let it hide in a mean.
    for name, count in summary.groupby("architecture", sort=False)["unrouted_pairs"].first().items():
        if count:
            sys.stderr.write(
                f"note: {name}: {count} datacenter pair(s) have no feasible path and lose all their "
                f"demand (see pairs.csv, run.json and `sdmnet paths`)\n"
            )


def _warn_unsteady(summary) -> None:
    # Replications that disagree far beyond their own spread sample different states, not one
    # steady state: their mean and interval describe the start, not the network.
    if "steady_state" not in summary:
        return
    for row in summary[summary["steady_state"] == "no"].itertuples(index=False):
        sys.stderr.write(
            f"warning: {row.architecture} at {row.load_erlang:g} Erlang: replications disagree far more than "
            f"their own batches allow (p = {row.steady_state_p:.1e}); the result depends on the start "
            f"(steady_state = no in summary.csv)\n"
        )


def cmd_estimate(args: argparse.Namespace) -> int:
    scenario = _load_scenario(args)
    api = _api(drawing=False)

    out = _out(args, "estimate")
    network, _pairs = api.estimate(scenario, out, memory_limit=args.memory_limit, method=args.method)
    cols = ["architecture", "load_erlang", "blocking", "bandwidth_blocking"]
    print(network[cols].to_string(index=False, float_format=lambda x: f"{x:.4g}"))
    print(f"results in {out}/")
    return EXIT_OK


def cmd_paths(args: argparse.Namespace) -> int:
    scenario = _load_scenario(args)
    api = _api(drawing=False)

    out = _out(args, "paths")
    table = api.paths(scenario, out, memory_limit=args.memory_limit)
    feasible = int(table["feasible"].sum())
    print(f"{len(table)} candidate paths, {feasible} feasible, {len(table) - feasible} not")
    for (arch, a, b), part in table.groupby(["architecture", "a", "b"], sort=False):
        if not part["feasible"].any():
            print(f"  {arch}: no feasible path {a}-{b}: {part['reason'].iloc[0]}")
    print(f"results in {out}/")
    return EXIT_OK


def cmd_plan_or_forecast(args: argparse.Namespace) -> int:
    scenario = _load_scenario(args)
    api = _api()

    out = _out(args, args.verb)
    limit = args.memory_limit
    if args.verb == "plan":
        from .planning.run import summary_lines

        result = api.plan(
            scenario, out, jobs=args.jobs, progress=not args.quiet, cable_cuts=args.cuts, memory_limit=limit
        )
        print("\n".join(summary_lines(result.plans)))
        print(api.plan_text(result.totals))
    else:
        api.forecast(scenario, out, jobs=args.jobs, progress=not args.quiet, memory_limit=limit)
    _note_intervals(scenario)
    print(f"results in {out}/ (report.html)")
    return EXIT_OK


def cmd_report(args: argparse.Namespace) -> int:
    api = _api()

    path = api.report(Path(args.folder), Path(args.out) if args.out else None)
    print(f"report in {path}")
    return EXIT_OK


def cmd_demo(args: argparse.Namespace) -> int:
    api = _api()
    from .inputs.bundled import bundled_scenario
    from .inputs.loaders import load_scenario

    try:
        path = bundled_scenario("demo")
    except FileNotFoundError as exc:
        raise InputError(exc.args[0], "demo", "the bundled data is missing from this installation") from None
    if not path.exists():
        raise InputError(path, "demo", "the bundled demo scenario is missing from this installation")
    scenario = load_scenario(path)
    out = Path(args.out) if args.out else Path("results") / "demo"
    result = api.demo(scenario, out, jobs=args.jobs, progress=not args.quiet)
    if result.plan_totals is not None:
        print(api.plan_text(result.plan_totals))
    else:
        print(api.load_point_text(result.simulation.summary))
    print(f"demo results in {out}/ ({result.wall_time_s:.1f} s): open {out / 'report.html'}")
    return EXIT_OK


def cmd_starter(args: argparse.Namespace) -> int:
    api = _api(drawing=False)

    scenario, topology = api.starter(Path(args.folder))
    print(f"wrote {scenario} and {topology}; edit them, then: sdmnet check {scenario}")
    return EXIT_OK


def _add_out(p: argparse.ArgumentParser) -> None:
    p.add_argument("-o", "--out", metavar="DIR", help="output folder (default: under results/)")


def _add_memory(p: argparse.ArgumentParser) -> None:
    p.add_argument(
        "--memory-limit",
        metavar="SIZE",
        type=_memory_size,
        help="refuse a run estimated to need more memory than SIZE (8G, 500M; default: what the machine "
        "has available now; none: never refuse)",
    )


def _add_run_options(p: argparse.ArgumentParser) -> None:
    p.add_argument("--seed", type=_int, help="override the scenario's seed")
    p.add_argument("--requests", type=_positive_int, help="measured requests per replication")
    p.add_argument("--replications", type=_positive_int, help="replications per point")
    p.add_argument("--jobs", type=_jobs, default=1, help="local worker processes (default 1)")
    p.add_argument("--quiet", action="store_true", help="no progress on stderr")


def build_parser() -> argparse.ArgumentParser:
    """The argument parser of every verb."""
    parser = _Parser(prog="sdmnet", description="Planning simulator for data-center interconnect on multicore fiber.")
    parser.add_argument("--version", action="version", version=f"sdmnet {__version__}")
    verbs = parser.add_subparsers(dest="verb", metavar="VERB", parser_class=_Parser)
    verbs.required = True

    p = verbs.add_parser("check", help="validate a topology or scenario and print what it holds")
    p.add_argument("file", metavar="FILE")
    p.add_argument("-o", "--out", metavar="DIR", help="also write what it holds to DIR/check.txt")
    p.set_defaults(func=cmd_check)

    p = verbs.add_parser("simulate", help="simulate every architecture at every load point")
    p.add_argument("scenario", metavar="SCENARIO")
    _add_out(p)
    _add_memory(p)
    _add_run_options(p)
    p.add_argument("--scheduler", metavar="ADDRESS", help="run the sweep on a Dask scheduler (tcp://host:port)")
    p.add_argument("--resume", action="store_true", help="keep finished tasks in the output folder, run the rest")
    p.add_argument(
        "--estimate",
        choices=("auto", "routed", "fixed-point", "none"),
        help="the analytic estimate beside the results (overrides [run] estimate; default auto: routed "
        "while cheap, the plain Erlang fixed point on large networks)",
    )
    p.set_defaults(func=cmd_simulate)

    p = verbs.add_parser("estimate", help="analytic blocking estimate (Erlang B / Kaufman-Roberts / fixed point)")
    p.add_argument("scenario", metavar="SCENARIO")
    _add_out(p)
    _add_memory(p)
    p.add_argument(
        "--method",
        choices=("routed", "fixed-point", "auto"),
        default="routed",
        help="routed reduced-load fixed point (default), the plain Erlang fixed point (fast on large "
        "networks), or auto (routed while cheap)",
    )
    p.set_defaults(func=cmd_estimate)

    p = verbs.add_parser("paths", help="candidate paths with their physics and feasibility")
    p.add_argument("scenario", metavar="SCENARIO")
    _add_out(p)
    _add_memory(p)
    p.set_defaults(func=cmd_paths)

    p = verbs.add_parser("plan", help="fiber pairs per cable that meet the target blocking")
    p.add_argument("scenario", metavar="SCENARIO")
    _add_out(p)
    _add_memory(p)
    _add_run_options(p)
    p.add_argument("--cuts", action="store_true", help="also simulate every single cable cut on the plan")
    p.set_defaults(func=cmd_plan_or_forecast)

    p = verbs.add_parser("forecast", help="the plan year by year under demand growth")
    p.add_argument("scenario", metavar="SCENARIO")
    _add_out(p)
    _add_memory(p)
    _add_run_options(p)
    p.set_defaults(func=cmd_plan_or_forecast)

    p = verbs.add_parser("report", help="(re)write report.html and figures for a results folder")
    p.add_argument("folder", metavar="DIR")
    _add_out(p)
    p.set_defaults(func=cmd_report)

    p = verbs.add_parser("demo", help="run the bundled scenario end to end")
    _add_out(p)
    p.add_argument("--jobs", type=_jobs, default=2, help="local worker processes (default 2)")
    p.add_argument("--quiet", action="store_true", help="no progress on stderr")
    p.set_defaults(func=cmd_demo)

    p = verbs.add_parser("starter", help="copy a starter scenario and topology into a folder to edit")
    p.add_argument("folder", metavar="DIR", help="where to write scenario.toml and topology.toml (created)")
    p.set_defaults(func=cmd_starter)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the ``sdmnet`` command; returns the exit status."""
    parser = build_parser()
    args = parser.parse_args(argv)
    func: Callable[[argparse.Namespace], int] = args.func
    try:
        return func(args)
    except InputError as exc:
        sys.stderr.write(f"error: {exc}\n")
        return EXIT_INPUT
    except (RunInterrupted, KeyboardInterrupt) as exc:
        detail = str(exc) or "interrupted"
        sys.stderr.write(f"interrupted: {detail}; finished tasks are kept (rerun with --resume)\n")
        return EXIT_INTERRUPTED


def run() -> None:
    """The installed ``sdmnet`` command: :func:`main`, then leave without tearing the interpreter down.

    Freeing every object of numpy, pandas and matplotlib one by one at exit takes about 0.2 s,
    longer than a small command's own work, and serves nothing: every file is written and closed
    by then.  So once the output is flushed and the exit handlers have run, the process ends at
    once with ``main``'s status.  When anything could still need the normal exit (a thread still
    running, output that cannot be flushed), it takes the normal exit.
    """
    global _ONE_COMMAND
    _ONE_COMMAND = True
    status = main()
    others = [t for t in threading.enumerate() if t is not threading.main_thread() and not t.daemon]
    if not others:
        try:
            sys.stdout.flush()
            sys.stderr.flush()
        except (OSError, ValueError):  # a closed pipe or stream: let the normal exit report it
            pass
        else:
            atexit._run_exitfuncs()  # what the normal exit runs first (temporary folders, logging)
            os._exit(status)
    sys.exit(status)


if __name__ == "__main__":  # pragma: no cover
    run()
