"""How long each replication warms up: a fixed number of arrivals, or chosen by the run itself.

``[run] warmup = "auto"`` warms a replication up until the number of demands in flight has
settled, judged by the MSER-5 truncation rule: the marginal standard error rule (MSER) of
K. P. White Jr. (Simulation 69(6), 1997; title and volume from memory; the rule as described by
White, Cobb and Spratt, Winter Simulation Conference 2000, and by Hoad, Robinson and Davies,
J. Oper. Res. Soc. 2008, which found it the best automatable rule) applied to means of batches of
five observations (MSER-5, Spratt 1998).  For a series of batch means ``z_1 .. z_m`` it deletes
the first ``d`` where ``d`` minimises

    MSER(d) = sum_{j > d} (z_j - mean(z_{d+1..m}))^2 / (m - d)^2,

the squared half-width of a plain confidence interval on the mean of what is kept: deleting more
of a biased start narrows it, deleting steady-state data widens it.  ``d`` is sought in the first
half of the series only, and a minimum on the edge of that half means the series is still
moving (the run is too short to tell): the usual reading of the rule (from memory: Hoad et al.
apply it so).

Here the observations are the demands in flight, sampled every ``step`` arrivals (about twenty
samples per mean holding time, the time scale on which the count settles).  The warm-up runs in
stretches: after the first :data:`FIRST_LOOK` samples, and then whenever the series has grown
by half, MSER-5 is applied to everything seen so far; once its minimum lies inside the first
half, the warm-up ends there (so at least twice the deleted stretch has been simulated: what it
keeps is steady by the rule's own reading).  A replication that has not settled after
:data:`MAX_HOLDING_TIMES` mean holding times of arrivals ends its warm-up anyway and says so.
Each replication decides on its own random numbers, so the result for a given seed is fixed.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

__all__ = ["AUTO", "BATCH", "FIRST_LOOK", "MAX_HOLDING_TIMES", "mser_truncation", "AutoWarmUp"]

AUTO = "auto"
#: Observations per batch mean (MSER-5).
BATCH = 5
#: Samples of the demands in flight per mean holding time.
SAMPLES_PER_HOLDING = 20
#: Samples before the first look (20 batch means).
FIRST_LOOK = 100
#: Longest warm-up, in mean holding times of arrivals.
MAX_HOLDING_TIMES = 200


def mser_truncation(series: Sequence[float], batch: int = BATCH) -> tuple[int, bool]:
    """MSER-``batch`` on ``series``: observations to delete, and whether the series has settled.

    The series is cut into means of ``batch`` consecutive observations (a short tail is left
    out); of the first half, ``0 <= d <= m / 2``, the ``d`` minimising MSER(d) is deleted.  The
    series has settled when that minimum lies inside the half, not on its edge (where the
    statistic is still falling: the series is still moving).  Searching the first half only keeps
    the last few batch means, whose spread says little (they are close in time, so alike), from
    ever winning.

    Returns
    -------
    (int, bool)
        ``batch * d`` observations to delete, and whether ``d < m / 2``.
    """
    m = len(series) // batch
    if m < 4:
        return 0, False
    z = np.asarray(series[: m * batch], dtype=float).reshape(m, batch).mean(axis=1)
    # Sums over the kept tail z[d:], for every d at once.
    tail = np.cumsum(z[::-1])[::-1]
    tail_sq = np.cumsum((z * z)[::-1])[::-1]
    kept = np.arange(m, 0, -1, dtype=float)
    spread = np.maximum(tail_sq - tail * tail / kept, 0.0)
    half = m // 2
    mser = spread[: half + 1] / kept[: half + 1] ** 2
    d = int(np.argmin(mser))
    return batch * d, d < half


class AutoWarmUp:
    """The warm-up of one replication under ``warmup = "auto"`` (see the module text).

    Parameters
    ----------
    load_erlang : float
        Offered load: arrivals per mean holding time, which sets the sampling step.

    Attributes
    ----------
    step : int
        Arrivals between two samples of the demands in flight.
    arrivals : int
        Warm-up arrivals simulated so far (the warm-up used once :meth:`observe` says done).
    settled : bool
        The rule found the series settled (False when the cap ended the warm-up).
    """

    def __init__(self, load_erlang: float) -> None:
        self.step = max(1, math.ceil(load_erlang / SAMPLES_PER_HOLDING))
        self.cap = max(FIRST_LOOK * self.step, math.ceil(MAX_HOLDING_TIMES * load_erlang))
        self.samples: list[int] = []
        self.next_look = FIRST_LOOK
        self.arrivals = 0
        self.settled = False

    def observe(self, in_flight: int) -> bool:
        """Record the demands in flight after ``step`` more arrivals; True when the warm-up ends."""
        self.arrivals += self.step
        self.samples.append(in_flight)
        if len(self.samples) >= self.next_look:
            self.next_look = math.ceil(1.5 * len(self.samples))
            _deleted, self.settled = mser_truncation(self.samples)
            if self.settled:
                return True
        return self.arrivals >= self.cap
