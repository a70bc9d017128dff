"""Sweeps: the same results whoever runs the tasks (inline, a local pool, a Dask cluster),
determinism by seed, resume, and atomic task files.

These are properties of sdmnet's own design (results depend on the scenario and seed alone),
checked by comparing runs with each other; no outside values are involved.
"""

from __future__ import annotations

import json
import os
import signal
from dataclasses import replace

import pytest
from builders import chain, fiber_type, scenario

from sdmnet import api
from sdmnet.errors import InputError, RunInterrupted
from sdmnet.inputs.model import Architecture
from sdmnet.sim.engine import ReplicationRecord
from sdmnet.sim.sweep import Task, TaskStore, plan_tasks, run_sweep, scenario_fingerprint


def _scenario(seed: int = 7):
    # 2 architectures x 2 loads x 2 replications = 8 small tasks.
    fiber = fiber_type(cores=4, channels=8)
    archs = [Architecture("ind", "independent"), Architecture("joint", "joint")]
    return scenario(
        chain(fiber, 2, fiber_pairs=2),
        archs,
        loads=(10.0, 20.0),
        sizes=((100.0, 0.6), (300.0, 0.4)),
        requests=1500,
        warmup=200,
        replications=2,
        k_paths=2,
        seed=seed,
    )


def _summary_bytes(sc, out, **options) -> bytes:
    api.simulate(sc, out, progress=False, figures=False, **options)
    return (out / "summary.csv").read_bytes()


def test_same_seed_same_summary_and_another_seed_another(tmp_path):
    sc = _scenario()
    first = _summary_bytes(sc, tmp_path / "a")
    again = _summary_bytes(sc, tmp_path / "b")
    other = _summary_bytes(replace(sc, seed=8), tmp_path / "c")
    assert first == again
    assert first != other


def test_local_pool_gives_the_inline_summary(tmp_path):
    sc = _scenario()
    assert _summary_bytes(sc, tmp_path / "inline", jobs=1) == _summary_bytes(sc, tmp_path / "pool", jobs=2)


@pytest.mark.slow
def test_dask_cluster_gives_the_local_summary(tmp_path):
    distributed = pytest.importorskip("distributed")
    sc = _scenario()
    inline = _summary_bytes(sc, tmp_path / "inline", jobs=1)
    pool = _summary_bytes(sc, tmp_path / "pool", jobs=2)
    # Worker processes (not threads): records cross a process boundary as on a real cluster.
    with distributed.LocalCluster(
        n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None
    ) as cluster:
        on_dask = _summary_bytes(sc, tmp_path / "dask", scheduler=cluster.scheduler_address)
    assert on_dask == inline == pool
    assert len(list((tmp_path / "dask" / "tasks").glob("*.json"))) == len(plan_tasks(sc))


def test_resume_reruns_only_missing_tasks_and_gives_the_same_summary(tmp_path):
    sc = _scenario()
    out = tmp_path / "run"
    full = _summary_bytes(sc, out)
    tasks_dir = out / "tasks"
    kept = {p.name: p.read_bytes() for p in sorted(tasks_dir.glob("*.json"))}
    removed = sorted(kept)[::3]
    for name in removed:
        (tasks_dir / name).unlink()
    store = TaskStore(tasks_dir, scenario_fingerprint(sc))
    rerun: list[str] = []
    run_sweep(sc, store, resume=True, on_record=lambda task, _rec: rerun.append(f"{task.key}.json"))
    assert sorted(rerun) == removed
    for name, data in kept.items():
        assert (tasks_dir / name).read_bytes() == data or name in removed
    assert _summary_bytes(sc, out, resume=True) == full


def test_resume_refuses_tasks_of_another_scenario(tmp_path):
    sc = _scenario()
    out = tmp_path / "run"
    _summary_bytes(sc, out)
    other = replace(sc, seed=99)
    with pytest.raises(InputError, match="different scenario"):
        api.simulate(other, out, resume=True, progress=False, figures=False)


def _record() -> ReplicationRecord:
    histogram = [[[0, 5], [1, 5]], [[0, 5], [1, 5]]]
    return ReplicationRecord("ind", 1.0, 0, 10, 1, 10.0, 1.0, [10], [1], [10], [1], 2, 1.0, 2, 1.0,
                             [1, 1], [0.5, 0.5], [0.5, 0.5], histogram, histogram, [[[0, 10]], [[0, 10]]],
                             [0.1], 10.0)


def test_task_store_leaves_no_temporary_file(tmp_path):
    store = TaskStore(tmp_path / "tasks", "fp")
    task = Task(0, "ind", 0, 1.0, 0)
    store.save(task, _record())
    names = [p.name for p in (tmp_path / "tasks").iterdir()]
    assert names == [f"{task.key}.json"]
    assert json.loads((tmp_path / "tasks" / names[0]).read_text())["fingerprint"] == "fp"
    assert store.load([task])[task.key] == _record()


def test_a_failed_task_write_leaves_neither_a_partial_file_nor_a_temporary(tmp_path):
    store = TaskStore(tmp_path / "tasks", "fp")
    task = Task(0, "ind", 0, 1.0, 0)
    bad = _record()
    bad.class_offered = [object()]  # not JSON-serialisable: json.dump fails half way
    with pytest.raises(TypeError):
        store.save(task, bad)
    assert list((tmp_path / "tasks").iterdir()) == []


class _Future:
    def __init__(self, value):
        self.value = value

    def result(self):
        return self.value


class _RecordingClient:
    """A stand-in for distributed.Client that runs tasks at once and records what is sent."""

    made: list[_RecordingClient] = []

    def __init__(self, address, timeout=None):
        self.scattered, self.submitted = [], []
        _RecordingClient.made.append(self)

    def scatter(self, data, broadcast=False, hash=True):
        self.scattered.append((dict(data), broadcast))
        return {k: _Future(v) for k, v in data.items()}

    def submit(self, fn, *args, key=None, pure=True):
        self.submitted.append(args)
        values = [a.value if isinstance(a, _Future) else a for a in args]
        return _Future(fn(*values))

    def close(self):
        pass


def test_dask_workers_receive_each_prepared_setup_once_not_per_task(tmp_path, monkeypatch):
    distributed = pytest.importorskip("distributed")
    from sdmnet.sim.engine import EngineSetup

    monkeypatch.setattr(distributed, "Client", _RecordingClient)
    monkeypatch.setattr(distributed, "as_completed", lambda futures: iter(futures))
    sc = _scenario()
    inline = _summary_bytes(sc, tmp_path / "inline")
    assert _summary_bytes(sc, tmp_path / "dask", scheduler="tcp://nowhere:1") == inline
    (client,) = _RecordingClient.made
    # One broadcast of every architecture's setup; tasks refer to it and carry only indices.
    ((setups, broadcast),) = client.scattered
    assert broadcast and sorted(setups) == ["ind", "joint"]
    assert all(isinstance(s, EngineSetup) for s in setups.values())
    assert len(client.submitted) == len(plan_tasks(sc))
    for args in client.submitted:
        assert not any(isinstance(a, EngineSetup) for a in args)
        assert sum(isinstance(a, _Future) for a in args) == 1


class _SignalInFinalizer:
    """Sends SIGINT from its finalizer and lets the handler run there, where Python drops the
    KeyboardInterrupt it raises ("Exception ignored in ...")."""

    def __del__(self) -> None:
        os.kill(os.getpid(), signal.SIGINT)
        for _ in range(10_000):  # the handler runs at one of these steps, inside the finalizer
            pass


@pytest.mark.filterwarnings("ignore::pytest.PytestUnraisableExceptionWarning")  # the dropped one, on purpose
def test_a_signal_whose_keyboardinterrupt_is_dropped_still_stops_the_sweep(tmp_path, sigint_raises):
    sc = _scenario()
    store = TaskStore(tmp_path / "tasks", scenario_fingerprint(sc))
    finished: list[str] = []

    def after_each(task, _record) -> None:
        finished.append(task.key)
        if len(finished) == 2:
            _SignalInFinalizer()  # collected at once: its finalizer runs here

    with pytest.raises(RunInterrupted):
        run_sweep(sc, store, on_record=after_each)
    assert len(finished) == 2  # stopped right after the task that saw the signal
    assert sorted(p.stem for p in store.folder.glob("*.json")) == sorted(finished)
    # The handlers in place before the sweep are back.
    assert signal.getsignal(signal.SIGINT) is signal.default_int_handler


def test_a_sweep_started_with_sigint_ignored_keeps_it_ignored(tmp_path):
    # A background job of a shell without job control starts with SIGINT ignored (POSIX); the
    # sweep must not make it interruptible by the terminal's Ctrl-C.
    sc = _scenario()
    before = signal.signal(signal.SIGINT, signal.SIG_IGN)
    try:
        finished: list[str] = []

        def after_each(task, _record) -> None:
            finished.append(task.key)
            if len(finished) == 2:
                os.kill(os.getpid(), signal.SIGINT)

        records = run_sweep(sc, None, on_record=after_each)
        assert len(records) == len(plan_tasks(sc)) == len(finished)
        assert signal.getsignal(signal.SIGINT) == signal.SIG_IGN
    finally:
        signal.signal(signal.SIGINT, before)
