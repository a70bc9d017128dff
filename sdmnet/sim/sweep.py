"""Sweeps: independent tasks (architecture x load x replication), who runs them, and where
their results are kept.

Every task is self-contained: it carries the scenario and its indices, and its random streams
come from the scenario seed and the replication index alone (:func:`sdmnet.sim.engine.replication_seed`),
so a sweep gives the same records whether it runs inline, in a local process pool or on a Dask
cluster, in any order.

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
from collections.abc import Callable, Iterable, Iterator
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
    """A digest of everything that shapes the results (file locations left out)."""
    text = json.dumps(_strip_sources(asdict(scenario)), sort_keys=True, default=str)
    return hashlib.sha256(text.encode()).hexdigest()[:16]


# One prepared setup per (scenario, architecture) per process: preparing routes once per
# architecture, not once per replication.
_SETUP_CACHE: dict[tuple[str, str], EngineSetup] = {}


def run_task(scenario: Scenario, task: Task, fingerprint: str | None = None) -> ReplicationRecord:
    """Run one task (the entry point of every executor)."""
    fp = fingerprint or scenario_fingerprint(scenario)
    key = (fp, task.architecture)
    setup = _SETUP_CACHE.get(key)
    if setup is None:
        if len(_SETUP_CACHE) > 64:
            _SETUP_CACHE.clear()
        setup = prepare(scenario, scenario.architectures[task.arch_index])
        _SETUP_CACHE[key] = setup
    return simulate_replication(
        setup, task.load_erlang, scenario.seed, task.replication, scenario.run.requests, scenario.run.warmup
    )


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
            with open(tmp, "w") as fh:
                json.dump(payload, fh)
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


def _run_task_args(args: tuple[Scenario, Task, str]) -> tuple[Task, ReplicationRecord]:
    scenario, task, fp = args
    return task, run_task(scenario, task, fp)


def _local_results(scenario: Scenario, todo: list[Task], fp: str, jobs: int) -> Iterator[_Finished]:
    if jobs <= 1 or len(todo) <= 1:
        for task in todo:
            yield task, run_task(scenario, task, fp)
        return
    import multiprocessing as mp

    ctx = mp.get_context("fork" if sys.platform.startswith("linux") else "spawn")
    pool = ctx.Pool(processes=jobs, initializer=_ignore_sigint)
    try:
        # Larger tasks first would balance better, but tasks of one sweep are alike in size.
        yield from pool.imap_unordered(_run_task_args, [(scenario, t, fp) for t in todo], chunksize=1)
        pool.close()
    finally:
        pool.terminate()
        pool.join()


def _dask_results(scenario: Scenario, todo: list[Task], fp: str, address: str) -> Iterator[_Finished]:
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
        scattered = client.scatter(scenario, broadcast=True)
        futures = [client.submit(run_task, scattered, t, fp, key=f"sdmnet-{fp}-{t.key}", pure=False) for t in todo]
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

    def _terminate(signum: int, frame: object) -> None:
        raise KeyboardInterrupt

    old_term = signal.getsignal(signal.SIGTERM)
    try:
        signal.signal(signal.SIGTERM, _terminate)
    except ValueError:  # not the main thread: leave SIGTERM alone
        old_term = None
    results = _dask_results(scenario, todo, fp, scheduler) if scheduler else _local_results(scenario, todo, fp, jobs)
    try:
        for task, record in results:
            if store is not None:
                store.save(task, record)
            records[task.key] = record
            if on_record is not None:
                on_record(task, record)
            if progress is not None:
                progress.step()
    except KeyboardInterrupt:
        raise RunInterrupted(f"interrupted after {len(records)} of {len(tasks)} tasks") from None
    finally:
        results.close()  # stops a worker pool even when the loop body raised
        if progress is not None:
            progress.close()
        if old_term is not None:
            signal.signal(signal.SIGTERM, old_term)
    return records
