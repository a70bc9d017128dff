"""Output analysis: from replication records to point estimates with confidence intervals.

Intervals come from independent replications (Student t on the per-replication means), not
from a binomial on the blocked count: blocked requests cluster in time, so a binomial interval
is too narrow (Law, *Simulation Modeling and Analysis*, output-analysis chapter; Srikant &
Whitt, ACM TOMACS 6(1), 1996).  The warm-up is removed inside the engine (the first
``warmup`` arrivals of each replication are not measured).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from .engine import ReplicationRecord

__all__ = [
    "Interval",
    "t_quantile",
    "t_interval",
    "ratio_interval",
    "SteadyStateCheck",
    "steady_state_check",
    "PointSummary",
    "summarize_point",
]


@dataclass(frozen=True)
class Interval:
    """A point estimate and its two-sided confidence interval (NaN bounds with one sample)."""

    mean: float
    low: float
    high: float


def _t_central(theta: float, df: int) -> float:
    """P(|T| <= sqrt(df) tan(theta)) for Student's t with ``df`` degrees of freedom.

    The closed forms for whole ``df`` of Abramowitz & Stegun, *Handbook of Mathematical
    Functions* (1964), 26.7.3 (odd) and 26.7.4 (even), written in theta = arctan(t / sqrt(df)).
    """
    sin, cos2 = math.sin(theta), math.cos(theta) ** 2
    if df % 2:  # odd: (2/pi) (theta + sin cos (1 + 2/3 cos^2 + 2*4/(3*5) cos^4 + ...)), df - 2 powers
        term = total = math.cos(theta) if df > 1 else 0.0
        for j in range(1, (df - 1) // 2):
            term *= cos2 * (2 * j) / (2 * j + 1)
            total += term
        return 2 / math.pi * (theta + sin * total)
    term = total = 1.0  # even: sin (1 + 1/2 cos^2 + 1*3/(2*4) cos^4 + ...), up to cos^(df - 2)
    for j in range(1, df // 2):
        term *= cos2 * (2 * j - 1) / (2 * j)
        total += term
    return sin * total


@lru_cache(maxsize=256)
def t_quantile(probability: float, df: int) -> float:
    """The ``probability`` quantile (0.5 <= probability < 1) of Student's t with whole ``df`` >= 1.

    Exact to rounding: the closed-form distribution (:func:`_t_central`) inverted by bisection
    on theta in [0, pi/2), which it increases with.  Its cost grows with ``df`` (a sum of df/2
    terms per step), nothing for the replication counts used here; no scipy import needed.
    """
    if not 0.5 <= probability < 1 or df < 1:
        raise ValueError(f"t_quantile needs 0.5 <= probability < 1 and df >= 1, got {probability}, {df}")
    central = 2 * probability - 1
    low, high = 0.0, math.pi / 2
    while True:
        mid = (low + high) / 2
        if mid in (low, high):  # the interval cannot shrink further in floating point
            return math.sqrt(df) * math.tan(mid)
        if _t_central(mid, df) < central:
            low = mid
        else:
            high = mid


def t_interval(values: Sequence[float], confidence: float = 0.95) -> Interval:
    """Student-t interval for the mean of independent, identically distributed ``values``.

    Bounds are NaN with fewer than two values (no spread to estimate).
    """
    x = np.asarray(values, dtype=float)
    if x.size == 0:
        return Interval(math.nan, math.nan, math.nan)
    mean = float(x.mean())
    if x.size < 2:
        return Interval(mean, math.nan, math.nan)
    half = t_quantile(0.5 + confidence / 2, x.size - 1) * float(x.std(ddof=1)) / math.sqrt(x.size)
    return Interval(mean, mean - half, mean + half)


def ratio_interval(numerators: Sequence[float], denominators: Sequence[float], confidence: float = 0.95) -> Interval:
    """Interval for a ratio estimated per replication (e.g. blocked / offered).

    Replications with a zero denominator are left out. Bounds are clipped to [0, 1] since every
    ratio used here is a probability.
    """
    pairs = [(n / d) for n, d in zip(numerators, denominators) if d > 0]
    iv = t_interval(pairs, confidence)
    if math.isnan(iv.low):
        return iv
    return Interval(iv.mean, max(0.0, iv.low), min(1.0, iv.high))


@dataclass(frozen=True)
class SteadyStateCheck:
    """Whether the replications of one point agree with their own within-run spread.

    Attributes
    ----------
    steady : bool
        False when some figure's replications disagree far more than their batches allow.
    p_value : float
        Smallest p-value of the tests (before the Bonferroni correction), 1 with no test.
    worst : str
        ``"network"`` or ``"pair N"``: the figure with that p-value ("" with no test).
    """

    steady: bool
    p_value: float
    worst: str


def _beta_fraction(a: float, b: float, x: float) -> float:
    """The continued fraction of the incomplete beta function, by the modified Lentz method
    (Press et al., *Numerical Recipes*, 3rd ed., 2007, section 6.4, betacf); converges fast for
    x < (a + 1) / (a + b + 2)."""
    tiny, eps = 1e-300, 1e-16
    c, d = 1.0, 1.0 - (a + b) * x / (a + 1)
    d = 1.0 / (d if abs(d) > tiny else tiny)
    h = d
    for m in range(1, 100_000):
        for numerator in (
            m * (b - m) * x / ((a + 2 * m - 1) * (a + 2 * m)),
            -(a + m) * (a + b + m) * x / ((a + 2 * m) * (a + 2 * m + 1)),
        ):
            d = 1.0 + numerator * d
            d = 1.0 / (d if abs(d) > tiny else tiny)
            c = 1.0 + numerator / c
            c = c if abs(c) > tiny else tiny
            h *= d * c
        if abs(d * c - 1.0) < eps:
            break
    return h


def _regularized_beta(a: float, b: float, x: float) -> float:
    """I_x(a, b), the regularized incomplete beta function (Numerical Recipes, section 6.4)."""
    if x <= 0.0:
        return 0.0
    if x >= 1.0:
        return 1.0
    log_front = math.lgamma(a + b) - math.lgamma(a) - math.lgamma(b) + a * math.log(x) + b * math.log1p(-x)
    if x < (a + 1) / (a + b + 2):
        return math.exp(log_front) * _beta_fraction(a, b, x) / a
    return 1.0 - math.exp(log_front) * _beta_fraction(b, a, 1.0 - x) / b


def f_survival(dfn: float, dfd: float, f: float) -> float:
    """P(F > f) for Fisher's F with (``dfn``, ``dfd``) degrees of freedom: I_x(dfd/2, dfn/2) at
    x = dfd / (dfd + dfn f) (Abramowitz & Stegun, 26.6.2).  Written here so that a simulation
    need not import scipy.special (a tenth of a second of every run's start)."""
    if f <= 0:
        return 1.0
    return _regularized_beta(dfd / 2, dfn / 2, dfd / (dfd + dfn * f))


# Family-wise level of the steady-state tests of one point: a flag means a disagreement that
# chance explains once in ten thousand points.
STEADY_STATE_ALPHA = 1e-4


def _between_within_p(blocked: np.ndarray, offered: np.ndarray) -> float:
    """One-way analysis of variance of batch blocking across replications (rows): the p-value of
    F = (between-replication mean square) / (within-replication mean square), or 1 when the
    batches give no spread to compare with."""
    ok = offered > 0
    if ok.shape[0] < 2 or ok.sum(axis=1).min() < 2:
        return 1.0
    x = np.where(ok, blocked / np.where(ok, offered, 1), np.nan)
    n_rep = x.shape[0]
    counts = ok.sum(axis=1)
    means = np.nanmean(x, axis=1)
    grand = np.nansum(x) / counts.sum()
    between = float(np.sum(counts * (means - grand) ** 2)) / (n_rep - 1)
    within_df = int(counts.sum() - n_rep)
    within = float(np.nansum((x - means[:, None]) ** 2)) / within_df
    if between == 0:
        return 1.0
    if within == 0:
        return 0.0
    return f_survival(n_rep - 1, within_df, between / within)


def steady_state_check(records: Sequence[ReplicationRecord], alpha: float = STEADY_STATE_ALPHA) -> SteadyStateCheck:
    """Test whether the replications of one point disagree more than chance allows.

    Each replication's measured arrivals are split into equal batches (the engine counts offered
    and blocked requests per pair and batch).  If every replication samples the same steady
    state, the spread of the replication means is what the spread of the batches within each
    replication predicts; a run whose state is frozen by its start (a pair blocked near 0 in
    some replications and near 1 in others) shows a between-replication spread far above it.
    The network blocking and each pair's are tested by one-way analysis of variance (F test,
    Fisher; any statistics text, e.g. Montgomery, *Design and Analysis of Experiments*, ch. 3),
    at level ``alpha`` over all tests together (Bonferroni).  Batch means inside one run are
    slightly positively correlated, which makes the test a little quick to flag; the small
    level keeps that from mattering.
    """
    recs = [r for r in records if r.pair_batch_offered]
    if len(recs) < 2:
        return SteadyStateCheck(True, 1.0, "")
    offered = np.array([r.pair_batch_offered for r in recs], dtype=float)  # (R, pairs, batches)
    blocked = np.array([r.pair_batch_blocked for r in recs], dtype=float)
    tests = [("network", _between_within_p(blocked.sum(axis=1), offered.sum(axis=1)))]
    tests += [(f"pair {i}", _between_within_p(blocked[:, i], offered[:, i])) for i in range(offered.shape[1])]
    worst, p = min(tests, key=lambda t: t[1])
    return SteadyStateCheck(p >= alpha / len(tests), p, worst)


@dataclass(frozen=True)
class PointSummary:
    """One (architecture, load) point aggregated over its replications.

    ``site_*_histogram`` pool the replications' per-site histograms (count in use -> arrivals
    that saw it); :mod:`sdmnet.equipment.installed` turns them into installed counts.
    """

    architecture: str
    load_erlang: float
    replications: int
    requests: int
    blocked: int
    blocking: Interval
    bandwidth_blocking: Interval
    class_blocking: tuple[Interval, ...]
    class_offered: tuple[int, ...]
    class_blocked: tuple[int, ...]
    pair_blocking: tuple[Interval, ...]
    pair_offered: tuple[int, ...]
    pair_blocked: tuple[int, ...]
    transceivers_peak: int
    transceivers_mean: float
    lanes_peak: int
    lanes_mean: float
    site_transceivers_peak: tuple[int, ...]
    site_transceivers_mean: tuple[float, ...]
    site_lanes_mean: tuple[float, ...]
    site_transceivers_histogram: tuple[dict[int, int], ...]
    site_lanes_histogram: tuple[dict[int, int], ...]
    site_mimo_lanes_histogram: tuple[dict[int, int], ...]
    cable_utilisation: tuple[float, ...]
    steady_state: SteadyStateCheck = SteadyStateCheck(True, 1.0, "")
    # Warm-up arrivals per replication (mean), and whether every warm-up the runs chose
    # themselves found the demands in flight settled (None for a fixed warm-up).
    warmup: float = 0.0
    warmup_settled: bool | None = None


def summarize_point(records: Sequence[ReplicationRecord], confidence: float = 0.95) -> PointSummary:
    """Aggregate the replications of one (architecture, load) point.

    Peaks are the maximum over replications (a planner sizes for the worst one seen); means
    are averaged over replications; per-site histograms are pooled (every replication samples
    the same distribution).
    """
    if not records:
        raise ValueError("no replications to summarize")
    recs = sorted(records, key=lambda r: r.replication)
    first = recs[0]
    nclass, npair = len(first.class_offered), len(first.pair_offered)

    def per(attr_off: str, attr_blk: str, i: int) -> Interval:
        return ratio_interval(
            [getattr(r, attr_blk)[i] for r in recs], [getattr(r, attr_off)[i] for r in recs], confidence
        )

    return PointSummary(
        architecture=first.architecture,
        load_erlang=first.load_erlang,
        replications=len(recs),
        requests=sum(r.requests for r in recs),
        blocked=sum(r.blocked for r in recs),
        blocking=ratio_interval([r.blocked for r in recs], [r.requests for r in recs], confidence),
        bandwidth_blocking=ratio_interval([r.blocked_gbps for r in recs], [r.offered_gbps for r in recs], confidence),
        class_blocking=tuple(per("class_offered", "class_blocked", i) for i in range(nclass)),
        class_offered=tuple(sum(r.class_offered[i] for r in recs) for i in range(nclass)),
        class_blocked=tuple(sum(r.class_blocked[i] for r in recs) for i in range(nclass)),
        pair_blocking=tuple(per("pair_offered", "pair_blocked", i) for i in range(npair)),
        pair_offered=tuple(sum(r.pair_offered[i] for r in recs) for i in range(npair)),
        pair_blocked=tuple(sum(r.pair_blocked[i] for r in recs) for i in range(npair)),
        transceivers_peak=max(r.transceivers_peak for r in recs),
        transceivers_mean=float(np.mean([r.transceivers_mean for r in recs])),
        lanes_peak=max(r.lanes_peak for r in recs),
        lanes_mean=float(np.mean([r.lanes_mean for r in recs])),
        site_transceivers_peak=tuple(int(x) for x in np.max([r.site_transceivers_peak for r in recs], axis=0)),
        site_transceivers_mean=tuple(float(x) for x in np.mean([r.site_transceivers_mean for r in recs], axis=0)),
        site_lanes_mean=tuple(float(x) for x in np.mean([r.site_lanes_mean for r in recs], axis=0)),
        site_transceivers_histogram=_pooled([r.site_transceivers_histogram for r in recs]),
        site_lanes_histogram=_pooled([r.site_lanes_histogram for r in recs]),
        site_mimo_lanes_histogram=_pooled([r.site_mimo_lanes_histogram for r in recs]),
        cable_utilisation=tuple(float(x) for x in np.mean([r.cable_utilisation for r in recs], axis=0)),
        steady_state=steady_state_check(recs),
        warmup=float(np.mean([r.warmup for r in recs])),
        warmup_settled=None if any(r.warmup_settled is None for r in recs) else all(r.warmup_settled for r in recs),
    )


def _pooled(per_replication: Sequence[Sequence[Sequence[Sequence[int]]]]) -> tuple[dict[int, int], ...]:
    """Per site, the sum of the replications' sparse ``[[count, arrivals], ...]`` histograms."""
    pooled: list[dict[int, int]] = [{} for _ in per_replication[0]]
    for histograms in per_replication:
        for site, histogram in zip(pooled, histograms):
            for value, n in histogram:
                site[int(value)] = site.get(int(value), 0) + int(n)
    return tuple(dict(sorted(site.items())) for site in pooled)
