"""Start-up: how long the command takes before and around the real work.

Run: ``.venv/bin/python bench/bench_startup.py`` (``--repeats R``, default 5).  Prints, each as the
best and the median of R fresh processes:

- ``sdmnet --help`` and ``sdmnet check`` on the bundled demo scenario (target: under 0.5 s);
  each as wall time (best and median) and CPU time (best; less moved by other load);
- ``sdmnet simulate`` on a tiny scenario (the bundled single-cable Erlang case cut to 2
  replications of 1,000 requests at each of its 3 loads), and its fixed overhead: the wall time
  less the engine's own time for the same tasks, measured in this process (target: 1.5 s);
- where the time of one ``simulate`` goes, in one process: imports, loading, the sweep, tables,
  the report (figures included), and how long the command takes to end once its work is done;
- which heavy libraries each light command imports (none is the aim).

When ``PYTHONDONTWRITEBYTECODE`` is set and sdmnet's modules are not compiled (``make bytecode``
compiles them, and ``make demo``/``make test``/``make bench`` call it), every process compiles
them from source (about 0.1 s of a tiny ``simulate``), which an installed copy does not; ``--bytecode`` also
measures ``simulate`` with compiled modules cached (in a temporary ``PYTHONPYCACHEPREFIX``).

Figures only, no assertion: timings depend on the machine and on what else runs on it.
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
SDMNET = [sys.executable, "-m", "sdmnet"]
DEMO = ROOT / "scenarios" / "demo.toml"
TINY = ROOT / "scenarios" / "single-cable-erlang.toml"
TINY_OPTIONS = ["--requests", "1000", "--replications", "2"]
HEAVY = ("pandas", "matplotlib", "scipy", "pyarrow", "networkx", "dask", "distributed", "simpy", "numpy", "jinja2")


def wall(args: list[str], repeats: int, env: dict[str, str] | None = None) -> list[tuple[float, float]]:
    """(wall, CPU) seconds of ``repeats`` fresh processes; CPU time (user + system) moves less
    than wall time when other work shares the machine."""
    times = []
    for _ in range(repeats):
        before = resource.getrusage(resource.RUSAGE_CHILDREN)
        started = time.perf_counter()
        subprocess.run(args, check=True, capture_output=True, cwd=ROOT, env=env)
        elapsed = time.perf_counter() - started
        after = resource.getrusage(resource.RUSAGE_CHILDREN)
        times.append((elapsed, after.ru_utime - before.ru_utime + after.ru_stime - before.ru_stime))
    return times


def sources_compiled() -> bool:
    """Whether every sdmnet module has a compiled copy at least as new as its source (what
    ``make bytecode`` and a non-editable install leave)."""
    from importlib.util import cache_from_source

    for source in (ROOT / "sdmnet").rglob("*.py"):
        compiled = Path(cache_from_source(str(source)))
        if not compiled.exists() or compiled.stat().st_mtime < source.stat().st_mtime:
            return False
    return True


def line(what: str, times: list[tuple[float, float]], target: float | None = None) -> None:
    walls, cpus = [t[0] for t in times], [t[1] for t in times]
    best, median = min(walls), statistics.median(walls)
    goal = f"  target {target:.1f} s: {'met' if best < target else 'NOT met'} (best wall)" if target else ""
    print(f"{what:<50} wall best {best:6.3f} median {median:6.3f}   CPU best {min(cpus):6.3f} s{goal}")


def heavy_imports(code: str) -> list[str]:
    probe = code + "\nimport sys, json\nprint(json.dumps(sorted({m.split('.')[0] for m in sys.modules})))"
    done = subprocess.run([sys.executable, "-c", probe], check=True, capture_output=True, text=True, cwd=ROOT)
    loaded = set(json.loads(done.stdout.strip().splitlines()[-1]))
    return [m for m in HEAVY if m in loaded]


def engine_seconds() -> float:
    """The engine's own time for the tiny scenario's tasks, in this process (best of 3)."""
    from sdmnet.inputs.loaders import load_scenario
    from sdmnet.sim.engine import prepare, simulate_replication
    from sdmnet.sim.sweep import plan_tasks

    scenario = load_scenario(TINY, overrides={"run.requests": 1000, "run.replications": 2})
    setups = {a.name: prepare(scenario, a) for a in scenario.architectures}
    run = scenario.run
    best = float("inf")
    for _ in range(3):
        started = time.perf_counter()
        for task in plan_tasks(scenario):
            setup = setups[task.architecture]
            simulate_replication(setup, task.load_erlang, scenario.seed, task.replication, run.requests, run.warmup)
        best = min(best, time.perf_counter() - started)
    return best


def stages() -> None:
    """One simulate, stage by stage, in a fresh process."""
    code = f"""
import time, tempfile
t0 = time.perf_counter()
from sdmnet import api
from sdmnet.inputs.loaders import load_scenario
t1 = time.perf_counter()
scenario = load_scenario({str(TINY)!r}, overrides={{"run.requests": 1000, "run.replications": 2}})
t2 = time.perf_counter()
out = tempfile.mkdtemp()
api.simulate(scenario, out, progress=False, figures=False)
t3 = time.perf_counter()
api.report(out)
t4 = time.perf_counter()
print(t1 - t0, t2 - t1, t3 - t2, t4 - t3)
"""
    done = subprocess.run([sys.executable, "-c", code], check=True, capture_output=True, text=True, cwd=ROOT)
    imports, load, simulate, report = (float(x) for x in done.stdout.split())
    print(f"  import sdmnet.api and the loaders   {imports:6.3f} s")
    print(f"  load the scenario                   {load:6.3f} s")
    print(f"  simulate (sweep, tables, run.json)  {simulate:6.3f} s")
    print(f"  report (figures drawn, page)        {report:6.3f} s")


def instructions() -> int:
    """Instructions of one tiny ``simulate``, the whole process, counted by callgrind."""
    with tempfile.TemporaryDirectory() as work:
        out, log = Path(work) / "out", Path(work) / "callgrind.out"
        run = ["valgrind", "--tool=callgrind", f"--callgrind-out-file={log}", *SDMNET, "simulate", str(TINY),
               *TINY_OPTIONS, "--quiet", "-o", str(out)]  # fmt: skip
        done = subprocess.run(run, check=True, capture_output=True, text=True, cwd=ROOT)
    found = [ln for ln in done.stderr.splitlines() if "Collected :" in ln]
    return int(found[-1].split(":")[-1].replace(",", "").strip())


def ending(repeats: int) -> float:
    """Seconds from the end of the command's work (``main`` returning) to the process's end, as
    the installed command (``sdmnet.cli.run``) ends it; the best of ``repeats``."""
    code = f"""
import sys, time
import sdmnet.cli as cli
work = cli.main
def timed(argv=None):
    status = work(argv)
    sys.stderr.write(repr(time.time()))
    return status
cli.main = timed
sys.argv = ["sdmnet", "simulate", {str(TINY)!r}, *{TINY_OPTIONS!r}, "--quiet", "-o", sys.argv[1]]
cli.run()
"""
    best = float("inf")
    for _ in range(repeats):
        with tempfile.TemporaryDirectory() as out:
            run = [sys.executable, "-c", code, out]
            done = subprocess.run(run, check=True, capture_output=True, text=True, cwd=ROOT)
            best = min(best, time.time() - float(done.stderr.strip().splitlines()[-1]))
    return best


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=5)
    parser.add_argument("--bytecode", action="store_true", help="also simulate with compiled modules cached")
    parser.add_argument("--instructions", action="store_true", help="count one tiny simulate's instructions")
    args = parser.parse_args()
    r = args.repeats
    line("python -c pass (the interpreter alone)", wall([sys.executable, "-c", "pass"], r))
    line("sdmnet --help", wall([*SDMNET, "--help"], r), 0.5)
    line("sdmnet check scenarios/demo.toml", wall([*SDMNET, "check", str(DEMO)], r), 0.5)
    line("sdmnet check topologies/nsfnet.graphml", wall([*SDMNET, "check", str(ROOT / "topologies/nsfnet.graphml")], r))
    with tempfile.TemporaryDirectory() as out:
        simulate = wall([*SDMNET, "simulate", str(TINY), *TINY_OPTIONS, "--quiet", "-o", out], r)
    engine = engine_seconds()
    line("sdmnet simulate (tiny scenario, report included)", simulate)
    line("  of which fixed overhead (less the engine)", [(w - engine, c - engine) for w, c in simulate], 1.5)
    print(f"  engine alone for the same 6 tasks     {engine:6.3f} s")
    if args.bytecode:
        with tempfile.TemporaryDirectory() as cache, tempfile.TemporaryDirectory() as out:
            env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
            env["PYTHONPYCACHEPREFIX"] = cache
            run = [*SDMNET, "simulate", str(TINY), *TINY_OPTIONS, "--quiet", "-o", out]
            wall(run, 1, env)  # compiles every module into the cache
            cached = wall(run, r, env)
        line("  the same with compiled modules cached", [(w - engine, c - engine) for w, c in cached], 1.5)
    elif sys.flags.dont_write_bytecode and not sources_compiled():
        print("  note: PYTHONDONTWRITEBYTECODE is set and sdmnet's modules are not compiled, so every process"
              " compiles them (`make bytecode`, or --bytecode)")
    print("one simulate, stage by stage:")
    stages()
    print(f"  the command's end after its work    {ending(r):6.3f} s")
    if args.instructions:
        print(f"instructions of one tiny simulate (callgrind, whole process): {instructions() / 1e9:.3f} G")
    print("heavy libraries imported:")
    for what, code in (
        ("sdmnet --help", "import sdmnet.cli as c\ntry:\n    c.main(['--help'])\nexcept SystemExit:\n    pass"),
        ("sdmnet check (TOML)", f"import sdmnet.cli as c\nc.main(['check', {str(DEMO)!r}])"),
        ("import sdmnet.sim.sweep (a spawned worker)", "import sdmnet.sim.sweep"),
        ("import sdmnet.api", "import sdmnet.api"),
    ):
        print(f"  {what:<44} {', '.join(heavy_imports(code)) or 'none'}")


if __name__ == "__main__":
    main()
