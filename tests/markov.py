"""Exact stationary laws of small continuous-time Markov chains, for tests (no files involved)."""

from __future__ import annotations

import numpy as np
from scipy import sparse
from scipy.sparse.linalg import spsolve


def stationary(states: list, moves) -> np.ndarray:
    """Stationary distribution of the chain on ``states``; ``moves(s)`` yields (next, rate).

    Solves pi Q = 0 with one balance equation replaced by sum pi = 1 (every state enumerated).
    """
    index = {s: i for i, s in enumerate(states)}
    rows, cols, rates = [], [], []
    for s in states:
        for t, rate in moves(s):
            rows.append(index[s])
            cols.append(index[t])
            rates.append(rate)
    n = len(states)
    q = sparse.coo_matrix((rates, (rows, cols)), shape=(n, n)).tocsr()
    q = q - sparse.diags(np.asarray(q.sum(axis=1)).ravel())
    a = q.T.tolil()
    a[n - 1, :] = np.ones(n)
    rhs = np.zeros(n)
    rhs[-1] = 1.0
    # Minimum degree on A^T + A: the chains here are nearly structurally symmetric (every birth
    # has its death), and on the larger lattices this ordering makes the LU far cheaper than the
    # default column ordering (a 6-dimensional chain of 22,764 states: 11.3 s -> 4.0 s).
    return spsolve(a.tocsc(), rhs, permc_spec="MMD_AT_PLUS_A")
