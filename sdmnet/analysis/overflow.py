"""Overflow (peaked) traffic: its moments, and links offered a mix of Poisson and peaked calls.

Calls refused by a pair's first route reach the next one in bursts (exactly while the first is
full), so the overflow has a larger variance than a Poisson stream of the same mean and meets
full links more often than time congestion says.  Two published pieces handle that here:

* **Riordan's moments.**  Poisson traffic ``A`` offered to ``n`` servers overflows a stream whose
  calls in progress on an infinite group have mean ``M = A E(n, A)`` and variance
  ``V = M (1 - M + A / (n + 1 + M - A))`` (J. Riordan, in R. I. Wilkinson, "Theories for toll
  traffic engineering in the U.S.A.", Bell Syst. Tech. J. 35(2), 1956; exact for Poisson input).
  The peakedness is ``Z = V / M``.  A parcel taken at random from a stream (share ``p`` of its
  calls) has ``Z_p = 1 + p (Z - 1)`` (binomial thinning of the calls in progress; common
  practice, no source).
* **BPP links (Delbrouck's recursion).**  A peaked stream of mean ``A`` and peakedness ``Z > 1``
  is offered as Pascal traffic: arrival rate ``alpha + beta n`` with ``n`` its own calls in
  progress, ``alpha = A / Z`` and ``beta = 1 - 1 / Z`` (unit holding time), which has that mean
  and variance on an infinite group.  Classes of ``b_k`` units share ``C`` units with complete
  sharing; the stationary law is the product of the classes' negative binomial laws restricted
  to ``sum b_k n_k <= C`` (reversible), and the occupancy obeys
  ``j q(j) = sum_k b_k alpha_k sum_{i >= 1} beta_k^(i-1) q(j - i b_k)``
  (L. E. N. Delbrouck, IEEE Trans. Commun. 31(11), 1983; from memory; derived again in
  ``tests/test_overflow.py`` against an enumerated chain).  With ``beta = 0`` it is
  Kaufman-Roberts.  A Poisson class sees time congestion (PASTA); a Pascal class sees call
  congestion, which is the time congestion of the same link with the class's ``alpha`` raised by
  ``beta`` (the arrival-weighted negative binomial law is the negative binomial of one more
  source: the same argument as the Engset call congestion).
"""

from __future__ import annotations

import math

import numpy as np

from .analytic import _GROWTH_DECADES, _blocking_from_log

__all__ = ["riordan_moments", "overflow_peakedness", "thinned_peakedness", "bpp_occupancy_log",
           "bpp_link_blocking"]  # fmt: skip


def _erlang_b(servers: int, load: float) -> float:
    """Erlang B by the stable recursion (the one of :func:`sdmnet.analysis.analytic.erlang_b`)."""
    b = 1.0
    for k in range(1, servers + 1):
        b = load * b / (k + load * b)
    return b


def riordan_moments(load: float, servers: int) -> tuple[float, float]:
    """Mean and variance of the overflow of Poisson ``load`` (Erlang) from ``servers`` servers.

    Parameters
    ----------
    load : float
        Offered Poisson traffic A.
    servers : int
        Servers n of the primary group.

    Returns
    -------
    mean, variance : float
        ``M = A E(n, A)`` and ``V = M (1 - M + A / (n + 1 + M - A))`` (Riordan, exact).
    """
    mean = load * _erlang_b(servers, load)
    return mean, mean * (1.0 - mean + load / (servers + 1.0 + mean - load))


def overflow_peakedness(load: np.ndarray, servers: np.ndarray, blocking: np.ndarray) -> np.ndarray:
    """Riordan's peakedness ``Z = 1 - M + A / (n + 1 + M - A)`` of the overflow, ``M = A B``.

    ``blocking`` is the primary group's time congestion (Erlang B there: exact).  ``servers``
    may be fractional (a link of ``C`` units counted in calls of ``b`` units: ``C / b``).  The
    denominator is at least 1 for Erlang B (the carried traffic is at most ``n``); it is held
    there for approximate blockings.  Broadcasts.
    """
    a = np.asarray(load, dtype=float)
    m = a * np.asarray(blocking, dtype=float)
    return np.maximum(1.0, 1.0 - m + a / np.maximum(np.asarray(servers, dtype=float) + 1.0 + m - a, 1.0))


def thinned_peakedness(peakedness: np.ndarray, share: np.ndarray) -> np.ndarray:
    """Peakedness ``1 + p (Z - 1)`` of a random parcel of share ``p`` of a stream of ``Z``."""
    return 1.0 + np.clip(share, 0.0, 1.0) * (np.asarray(peakedness, dtype=float) - 1.0)


def bpp_occupancy_log(capacities: np.ndarray, sizes: np.ndarray, alpha: np.ndarray, beta: np.ndarray) -> np.ndarray:
    """Log of the unnormalised occupancy q(j), j = 0..max capacity, of a link offered Pascal classes.

    Parameters
    ----------
    capacities : ndarray of int, shape (R,)
    sizes : ndarray of int, shape (K,)
        Units per call of each class.
    alpha, beta : ndarray of float, shape (R, K)
        Arrival rate ``alpha + beta n`` per class (``beta`` in [0, 1); 0 for Poisson).

    Returns
    -------
    ndarray, shape (max capacity + 1, R)
        log q(j) (``-inf`` where q(j) = 0), rescaled as it runs like
        :func:`sdmnet.analysis.analytic._occupancy_log`.

    Notes
    -----
    ``j q(j) = sum_k b_k alpha_k S_k(j)`` with ``S_k(j) = q(j - b_k) + beta_k S_k(j - b_k)``.
    """
    n_rows = capacities.size
    top = int(capacities.max()) if n_rows else 0
    width = int(sizes.max()) if sizes.size else 1
    coef = (alpha * sizes[None, :]).T.copy()  # (K, R)
    geo = beta.T.copy()  # (K, R)
    q = np.zeros((width + top + 1, n_rows))
    s = np.zeros((sizes.size, width + top + 1, n_rows))
    q[width] = 1.0
    log_scale = np.zeros(n_rows)
    scale_at = np.zeros((top + 1, n_rows))
    growth = float((coef / np.maximum(1.0 - geo, 1e-12)).sum(axis=0).max()) if n_rows and sizes.size else 0.0
    every = max(1, int(_GROWTH_DECADES / math.log10(max(growth, 10.0))))
    last_filled = -1
    kk = np.arange(sizes.size)
    back = sizes.astype(np.int64)
    for j in range(1, top + 1):
        here = width + j
        s[:, here] = q[here - back] + geo * s[kk, here - back]
        q[here] = (coef * s[:, here]).sum(axis=0) / j
        if j % every == 0 or j == top:
            scale_at[last_filled + 1 : j + 1] = log_scale
            last_filled = j
            lo = here - width + 1
            peak = q[lo : here + 1].max(axis=0)
            factor = np.where(peak > 0, peak, 1.0)
            q[lo : here + 1] /= factor
            s[:, lo : here + 1] /= factor
            log_scale = log_scale + np.log(factor)
            scale_at[max(0, j - width + 1) : j + 1] = log_scale
    with np.errstate(divide="ignore"):
        return np.log(q[width:]) + scale_at


def bpp_link_blocking(capacities: np.ndarray, sizes: np.ndarray, poisson: np.ndarray, peaked: np.ndarray,
                      peakedness: np.ndarray, call_guess: np.ndarray | None = None
                      ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:  # fmt: skip
    """Time and call congestion of links offered, per size, Poisson calls and a peaked stream.

    Parameters
    ----------
    capacities : ndarray of int, shape (R,)
    sizes : ndarray of int, shape (K,)
    poisson : ndarray, shape (R, K)
        Poisson load (Erlang) of each size.
    peaked, peakedness : ndarray, shape (R, K)
        Mean load and peakedness (>= 1) of the peaked stream of each size (Pascal traffic).
    call_guess : ndarray, shape (R, K), optional
        The peaked streams' call congestion B, if known (from a previous iteration).  A Pascal
        stream on a loss link arrives at ``alpha / (1 - beta (1 - B))`` (its carried calls
        ``Y = lambda (1 - B)`` feed its rate ``alpha + beta Y``), not at its mean on an infinite
        group; ``alpha = M (1 - beta (1 - B))`` makes it arrive at the overflow's rate ``M``.
        Default 0: ``alpha = M / Z``, the infinite-group moments.

    Returns
    -------
    time, peaked_call, log_q
        Time congestion per size (R, K), what a Poisson call sees; the call congestion of the
        peaked stream of each size (R, K); and the occupancy log (max capacity + 1, R).
    """
    n_rows, n_sizes = poisson.shape
    z = np.maximum(np.asarray(peakedness, dtype=float), 1.0)
    beta_p = 1.0 - 1.0 / z
    guess = np.zeros_like(beta_p) if call_guess is None else np.clip(call_guess, 0.0, 1.0)
    both_sizes = np.concatenate([sizes, sizes])
    alpha = np.concatenate([poisson, peaked * (1.0 - beta_p * (1.0 - guess))], axis=1)  # (R, 2K)
    beta = np.concatenate([np.zeros_like(poisson), beta_p], axis=1)
    # Row block 0: the link; block 1 + k: the link seen by an arriving peaked call of size k.
    alphas, betas = [alpha], [beta]
    for k in range(n_sizes):
        shifted = alpha.copy()
        shifted[:, n_sizes + k] += beta_p[:, k]
        alphas.append(shifted)
        betas.append(beta)
    caps = np.tile(capacities, n_sizes + 1)
    log_q = bpp_occupancy_log(caps, both_sizes, np.concatenate(alphas), np.concatenate(betas))
    blocking = _blocking_from_log(log_q, caps, sizes)  # ((K + 1) R, K)
    time = blocking[:n_rows]
    call = np.stack([blocking[(k + 1) * n_rows : (k + 2) * n_rows, k] for k in range(n_sizes)], axis=1)
    return time, np.maximum(call, time), log_q[:, :n_rows]
