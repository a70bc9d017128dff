"""Simulating candidate fiber counts of one prepared setup, with sequential replications.

Routes and physics are resolved once per architecture (and per cut) by
:func:`sdmnet.sim.engine.prepare`; a candidate only changes the fiber pairs per cable, which is
one field of the setup (:func:`with_fiber_pairs`), so no candidate prepares anything again.

Common random numbers: replication ``r`` of every candidate draws the same demands (the
scenario seed and ``r`` select the streams, :func:`sdmnet.sim.engine.replication_seed`), so two
candidates differ by their fibers, not by their demands, and a candidate given more replications
keeps the ones it had.
"""

from __future__ import annotations

import sys
from collections.abc import Callable, Sequence
from dataclasses import dataclass, replace

from ..errors import RunInterrupted
from ..inputs.model import RunSpec
from ..sim.engine import EngineSetup, ReplicationRecord, simulate_replication
from ..sim.stats import PointSummary, summarize_point
from .acceptance import FINAL, MET, Targets, Verdict, next_batch, verdict

__all__ = ["with_fiber_pairs", "run_replications", "Evaluation", "Evaluator", "DEFAULT_MAX_CANDIDATES",
           "REPLICATION_CAP_FACTOR"]

# Simulated candidates allowed per architecture (per year in a forecast): tens, not hundreds.
DEFAULT_MAX_CANDIDATES = 60
# Sequential replications stop at this many times the scenario's [run] replications.
REPLICATION_CAP_FACTOR = 4


def with_fiber_pairs(setup: EngineSetup, pairs: Sequence[int]) -> EngineSetup:
    """The prepared setup with other fiber pairs per cable (routes and physics unchanged)."""
    if len(pairs) != len(setup.cables):
        raise ValueError(f"{len(pairs)} fiber counts for {len(setup.cables)} cables")
    return replace(setup, fiber_pairs=tuple(int(x) for x in pairs))


def _one(args: tuple[EngineSetup, float, int, int, int, int]) -> ReplicationRecord:
    setup, load, seed, replication, requests, warmup = args
    return simulate_replication(setup, load, seed, replication, requests, warmup)


def run_replications(
    setup: EngineSetup, load_erlang: float, seed: int, replications: range, run: RunSpec, jobs: int = 1
) -> list[ReplicationRecord]:
    """Simulate the given replication indices of ``setup`` (in worker processes with ``jobs > 1``).

    Raises
    ------
    RunInterrupted
        On Ctrl-C; what the caller had finished before is its own to keep.
    """
    work = [(setup, load_erlang, seed, r, run.requests, run.warmup) for r in replications]
    try:
        if jobs <= 1 or len(work) <= 1:
            return [_one(w) for w in work]
        import multiprocessing as mp

        from ..sim.sweep import _ignore_sigint

        ctx = mp.get_context("fork" if sys.platform.startswith("linux") else "spawn")
        with ctx.Pool(processes=min(jobs, len(work)), initializer=_ignore_sigint) as pool:
            return pool.map(_one, work, chunksize=1)
    except KeyboardInterrupt:
        raise RunInterrupted("interrupted while simulating a candidate") from None


@dataclass(frozen=True)
class Evaluation:
    """One simulated candidate: fiber pairs per cable (topology order) and what they gave.

    ``verdict`` is ``met``, ``missed``, ``unlikely`` or ``undecided`` (:mod:`sdmnet.planning.acceptance`);
    ``point.replications`` says how many replications it took.
    """

    fiber_pairs: tuple[int, ...]
    point: PointSummary
    verdict: Verdict
    index: int
    phase: str

    @property
    def meets(self) -> bool:
        """The upper bound of every tested interval is at or below its target."""
        return self.verdict == MET

    @property
    def replications(self) -> int:
        """Replications simulated."""
        return self.point.replications


class Evaluator:
    """Simulates candidate fiber counts of one prepared setup at one load, with a cache.

    Parameters
    ----------
    setup : EngineSetup
        Prepared once (:func:`sdmnet.sim.engine.prepare`); candidates replace its fiber pairs.
    load_erlang : float
        The dimensioning load.
    seed : int
        The scenario seed (common random numbers across candidates).
    run : RunSpec
        Requests and warm-up per replication; ``replications`` is the first batch and the batch
        size of the sequential procedure.
    targets : Targets
        What a candidate must meet.
    confidence : float
        Level of the intervals.
    jobs : int
        Worker processes for the replications of one candidate.
    budget : int
        Most candidates simulated (cache hits are free).
    log : callable, optional
        Called with one line per simulated candidate.
    label : str
        Prefix of the log lines (the architecture, and the cut if any).
    """

    def __init__(
        self,
        setup: EngineSetup,
        load_erlang: float,
        seed: int,
        run: RunSpec,
        targets: Targets,
        *,
        confidence: float = 0.95,
        jobs: int = 1,
        budget: int = DEFAULT_MAX_CANDIDATES,
        log: Callable[[str], None] | None = None,
        label: str = "",
    ) -> None:
        self.setup = setup
        self.load_erlang = float(load_erlang)
        self.seed = seed
        self.run = run
        self.targets = targets
        self.confidence = confidence
        self.jobs = jobs
        self.budget = budget
        self.log = log
        self.label = label or setup.architecture.name
        self.first = max(2, run.replications)
        self.cap = REPLICATION_CAP_FACTOR * self.first
        self.history: list[Evaluation] = []
        self._cache: dict[tuple[int, ...], Evaluation] = {}
        self._phase = "start"

    @property
    def spent(self) -> int:
        """Candidates simulated so far."""
        return len(self.history)

    @property
    def exhausted(self) -> bool:
        """The candidate budget is used up."""
        return self.spent >= self.budget

    def set_phase(self, phase: str) -> None:
        """Label the candidates simulated from now on (``grow``, ``trim``...)."""
        self._phase = phase

    def known(self, pairs: Sequence[int]) -> Evaluation | None:
        """The evaluation of ``pairs`` if already simulated."""
        return self._cache.get(tuple(int(x) for x in pairs))

    def __call__(self, pairs: Sequence[int]) -> Evaluation:
        key = tuple(int(x) for x in pairs)
        hit = self._cache.get(key)
        if hit is not None:
            return hit
        setup = with_fiber_pairs(self.setup, key)
        records: list[ReplicationRecord] = []
        while True:
            more = next_batch(len(records), self.first, self.cap)
            if more == 0:
                break
            done = len(records)
            records += run_replications(setup, self.load_erlang, self.seed, range(done, done + more), self.run,
                                        self.jobs)  # fmt: skip
            point = summarize_point(records, self.confidence)
            said = verdict(point, self.targets)
            if said in FINAL:
                break
        ev = Evaluation(key, point, said, len(self.history) + 1, self._phase)
        self._cache[key] = ev
        self.history.append(ev)
        if self.log is not None:
            iv = point.blocking
            self.log(
                f"{self.label} #{ev.index} {ev.phase}: pairs {list(key)} blocking {iv.mean:.4g} "
                f"[{iv.low:.4g}, {iv.high:.4g}] after {point.replications} replications: {said} "
                f"(target {self.targets.blocking:g})"
            )
        return ev
