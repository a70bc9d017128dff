"""Sweeps: independent tasks (architecture x load x replication), who runs them, and where
their results are kept.

Every task is self-contained: it is one replication of a prepared setup (routes and physics of
one architecture, :func:`sdmnet.sim.engine.prepare`, done once per sweep by the caller), and its
random streams come from the scenario seed and the replication index alone
(:func:`sdmnet.sim.engine.replication_seed`), so a sweep gives the same records whether it runs
inline, in a local process pool or on a Dask cluster, in any order.  A worker receives each
setup once (a local worker when it starts, a Dask worker by one broadcast), and a task sends only
its indices.

Each finished task is written at once to ``OUT/tasks/<key>.json`` (write to a temporary file,
then rename, so a file is whole or absent).  ``resume=True`` reads the tasks already there
(refusing them if they came from a different scenario) and runs only the missing ones.
SIGINT or SIGTERM stops the sweep with :class:`~sdmnet.errors.RunInterrupted`; what finished is
on disk.
"""

from __future__ import annotations

import hashlib
import json
import os
import signal
import sys
from collections.abc import Callable, Iterable, Iterator, Mapping
from contextlib import contextmanager
from dataclasses import asdict, dataclass
from pathlib import Path
from typing import Any

from ..errors import InputError, RunInterrupted
from ..inputs.model import Scenario
from .engine import EngineSetup, ReplicationRecord, prepare, simulate_replication
from .progress import ProgressBar

__all__ = [
    "Task",
    "plan_tasks",
    "run_task",
    "scenario_fingerprint",
    "TaskStore",
    "run_sweep",
]


@dataclass(frozen=True)
class Task:
    """One replication of one architecture at one load point."""

    arch_index: int
    architecture: str
    load_index: int
    load_erlang: float
    replication: int

    @property
    def key(self) -> str:
        """File-name-safe identity of the task within its sweep."""
        return f"a{self.arch_index:02d}-l{self.load_index:03d}-r{self.replication:03d}"


def plan_tasks(scenario: Scenario) -> list[Task]:
    """All tasks of a scenario, architecture-major then load then replication."""
    return [
        Task(ai, arch.name, li, load, rep)
        for ai, arch in enumerate(scenario.architectures)
        for li, load in enumerate(scenario.traffic.loads_erlang)
        for rep in range(scenario.run.replications)
    ]


def _strip_sources(value: Any) -> Any:
    if isinstance(value, dict):
        return {k: _strip_sources(v) for k, v in value.items() if k not in ("source", "matrix_file")}
    if isinstance(value, (list, tuple)):
        return [_strip_sources(v) for v in value]
    return value


def scenario_fingerprint(scenario: Scenario) -> str:
    """A digest of everything that shapes the results (file locations left out, and the choice
    of analytic estimate, which is computed beside the tasks, not by them)."""
    data = _strip_sources(asdict(scenario))
    data["run"].pop("estimate", None)
    text = json.dumps(data, sort_keys=True, default=str)
    return hashlib.sha256(text.encode()).hexdigest()[:16]


def run_task(scenario: Scenario, task: Task, setup: EngineSetup | None = None) -> ReplicationRecord:
    """Run one task (what every executor runs), on ``setup`` when given (prepared once by the
    caller, :func:`prepare_setups`), else preparing its architecture here."""
    if setup is None:
        setup = prepare(scenario, scenario.architectures[task.arch_index])
    return replicate(setup, scenario.seed, task, scenario.run.requests, scenario.run.warmup)


def replicate(setup: EngineSetup, seed: int, task: Task, requests: int, warmup: int | str) -> ReplicationRecord:
    """One replication of a prepared setup: the only thing a worker does per task."""
    return simulate_replication(setup, task.load_erlang, seed, task.replication, requests, warmup)


def prepare_setups(
    scenario: Scenario, tasks: Iterable[Task], setups: Mapping[str, EngineSetup] | None = None
) -> dict[str, EngineSetup]:
    """The setup of every architecture ``tasks`` use: those given, the rest prepared here."""
    found = dict(setups or {})
    for task in tasks:
        if task.architecture not in found:
            found[task.architecture] = prepare(scenario, scenario.architectures[task.arch_index])
    return found


class TaskStore:
    """Finished tasks of one sweep, one JSON file each under ``folder``."""

    def __init__(self, folder: Path, fingerprint: str) -> None:
        self.folder = Path(folder)
        self.fingerprint = fingerprint

    def path(self, task: Task) -> Path:
        return self.folder / f"{task.key}.json"

    def load(self, tasks: Iterable[Task]) -> dict[str, ReplicationRecord]:
        """Records of the given tasks already on disk (from this very scenario)."""
        found: dict[str, ReplicationRecord] = {}
        for task in tasks:
            path = self.path(task)
            if not path.exists():
                continue
            try:
                data = json.loads(path.read_text())
            except (OSError, json.JSONDecodeError) as exc:
                raise InputError(path, "task file", f"unreadable ({exc}); delete it to rerun the task") from None
            if data.get("fingerprint") != self.fingerprint:
                raise InputError(
                    self.folder,
                    "--resume",
                    "the finished tasks here come from a different scenario or run length; "
                    "use another --out folder or run without --resume",
                )
            found[task.key] = ReplicationRecord.from_dict(data["record"])
        return found

    def save(self, task: Task, record: ReplicationRecord) -> None:
        """Write one finished task atomically."""
        self.folder.mkdir(parents=True, exist_ok=True)
        payload = {"fingerprint": self.fingerprint, "task": asdict(task), "record": record.to_dict()}
        # The temporary's name is known before it exists (one writer per task), so an interrupt
        # at any point, even while the file is being created, leaves nothing behind.
        tmp = self.folder / f".tmp-{task.key}.json"
        try:
            text = json.dumps(payload)  # one C call; json.dump writes piece by piece from Python
            with open(tmp, "w") as fh:
                fh.write(text)
            os.replace(tmp, self.path(task))
        except BaseException:
            # A failed or interrupted write leaves neither a partial task file nor its temporary.
            tmp.unlink(missing_ok=True)
            raise

    def clear(self) -> None:
        """Remove every task file (a fresh, non-resumed run)."""
        if self.folder.exists():
            for path in self.folder.glob("*.json"):
                path.unlink()


_Finished = tuple[Task, ReplicationRecord]


def _ignore_sigint() -> None:
    # Workers leave Ctrl-C to the parent, which stops the pool and keeps finished tasks.
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    # A forked worker inherits the parent's SIGTERM handler; the pool stops its workers with
    # SIGTERM, which must end them quietly rather than raise in them.
    signal.signal(signal.SIGTERM, signal.SIG_DFL)


# What a local worker process holds for the whole sweep: sent once per worker (inherited when
# forked), so that each task sends only its indices.
_WORKER: dict[str, object] = {}


def _start_worker(setups: dict[str, EngineSetup], seed: int, requests: int, warmup: int | str) -> None:
    _ignore_sigint()
    _WORKER.update(setups=setups, seed=seed, requests=requests, warmup=warmup)


def _worker_task(task: Task) -> tuple[Task, ReplicationRecord]:
    setups: dict[str, EngineSetup] = _WORKER["setups"]  # type: ignore[assignment]
    seed, requests, warmup = _WORKER["seed"], _WORKER["requests"], _WORKER["warmup"]
    return task, replicate(setups[task.architecture], seed, task, requests, warmup)  # type: ignore[arg-type]


def _local_results(
    scenario: Scenario, todo: list[Task], setups: dict[str, EngineSetup], jobs: int
) -> Iterator[_Finished]:
    run = scenario.run
    if jobs <= 1 or len(todo) <= 1:
        for task in todo:
            yield task, replicate(setups[task.architecture], scenario.seed, task, run.requests, run.warmup)
        return
    import multiprocessing as mp

    ctx = mp.get_context("fork" if sys.platform.startswith("linux") else "spawn")
    pool = ctx.Pool(processes=jobs, initializer=_start_worker, initargs=(setups, scenario.seed, run.requests,
                                                                            run.warmup))  # fmt: skip
    try:
        # Larger tasks first would balance better, but tasks of one sweep are alike in size.
        yield from pool.imap_unordered(_worker_task, todo, chunksize=1)
        pool.close()
    finally:
        pool.terminate()
        pool.join()


def _dask_results(
    scenario: Scenario, todo: list[Task], setups: dict[str, EngineSetup], fp: str, address: str
) -> Iterator[_Finished]:
    try:
        from distributed import Client, as_completed
    except ImportError:
        raise InputError(
            "<command line>", "--scheduler", "Dask distributed is not installed: pip install 'sdmnet[cluster]'"
        ) from None
    try:
        client = Client(address, timeout="10s")
    except (OSError, TimeoutError) as exc:
        raise InputError("<command line>", "--scheduler", f"cannot reach scheduler {address}: {exc}") from None
    try:
        # Each prepared setup goes to every worker once; a task sends its indices and a
        # reference to the setup, which the worker already holds.
        shared = client.scatter(setups, broadcast=True, hash=False)
        run = scenario.run
        futures = [
            client.submit(replicate, shared[t.architecture], scenario.seed, t, run.requests, run.warmup,
                          key=f"sdmnet-{fp}-{t.key}", pure=False)
            for t in todo
        ]  # fmt: skip
        by_future = dict(zip(futures, todo))
        for fut in as_completed(futures):
            yield by_future[fut], fut.result()
    finally:
        client.close()


def run_sweep(
    scenario: Scenario,
    store: TaskStore | None,
    *,
    tasks: list[Task] | None = None,
    jobs: int = 1,
    scheduler: str | None = None,
    resume: bool = False,
    progress: ProgressBar | None = None,
    on_record: Callable[[Task, ReplicationRecord], None] | None = None,
    setups: Mapping[str, EngineSetup] | None = None,
) -> dict[str, ReplicationRecord]:
    """Run every task of ``scenario`` (or ``tasks``) and return records by task key.

    Parameters
    ----------
    scenario : Scenario
        What to simulate.
    store : TaskStore or None
        Where finished tasks go; None keeps them in memory only.
    tasks : list of Task, optional
        Defaults to :func:`plan_tasks`.
    jobs : int
        Local worker processes (1 runs inline).
    scheduler : str, optional
        Address of a Dask scheduler (``tcp://host:port``); overrides ``jobs``.
    resume : bool
        Reuse finished tasks found in ``store``.
    progress : ProgressBar, optional
        Told of each finished task (and of those resumed); closed when the sweep ends.
    on_record : callable, optional
        Called with each newly finished task and record.
    setups : mapping, optional
        Prepared setups by architecture name (:func:`sdmnet.sim.engine.prepare`); the missing
        ones are prepared here, once, before any task runs.

    Raises
    ------
    RunInterrupted
        On SIGINT/SIGTERM, after every finished task is saved.
    """
    tasks = plan_tasks(scenario) if tasks is None else tasks
    fp = scenario_fingerprint(scenario)
    records: dict[str, ReplicationRecord] = {}
    if store is not None:
        if resume:
            records.update(store.load(tasks))
        else:
            store.clear()
    todo = [t for t in tasks if t.key not in records]
    if progress is not None:
        progress.start_at(len(records))

    # Routes and physics once per architecture, here; workers receive the setups, not the work.
    setups = prepare_setups(scenario, todo, setups)
    if scheduler:
        results = _dask_results(scenario, todo, setups, fp, scheduler)
    else:
        results = _local_results(scenario, todo, setups, jobs)
    with _stop_on_signals() as signalled:
        try:
            for task, record in results:
                if store is not None:
                    store.save(task, record)
                records[task.key] = record
                if on_record is not None:
                    on_record(task, record)
                if progress is not None:
                    progress.step()
                if signalled:
                    raise KeyboardInterrupt
        except KeyboardInterrupt:
            raise RunInterrupted(f"interrupted after {len(records)} of {len(tasks)} tasks") from None
        finally:
            results.close()  # stops a worker pool even when the loop body raised
            if progress is not None:
                progress.close()
    return records


@contextmanager
def _stop_on_signals() -> Iterator[list[int]]:
    """SIGINT and SIGTERM raise KeyboardInterrupt inside the block and are also listed in what it
    yields: Python drops a KeyboardInterrupt raised while a finalizer runs ("Exception ignored
    in ..."), and the caller must stop all the same.  The handlers before are put back after.

    SIGINT stays ignored when the process started with it ignored (a background job of a shell
    without job control), and nothing changes outside the main thread (signals are not allowed).
    """
    signalled: list[int] = []

    def _interrupt(signum: int, frame: object) -> None:
        signalled.append(signum)
        raise KeyboardInterrupt

    before: dict[int, Any] = {}
    for signum in (signal.SIGINT, signal.SIGTERM):
        if signum == signal.SIGINT and signal.getsignal(signum) == signal.SIG_IGN:
            continue
        try:
            before[signum] = signal.signal(signum, _interrupt)
        except ValueError:  # not the main thread
            break
    try:
        yield signalled
    finally:
        for signum, handler in before.items():
            if handler is not None:  # None: a handler not set from Python, which cannot be put back
                signal.signal(signum, handler)
