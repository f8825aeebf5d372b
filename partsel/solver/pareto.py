"""Pareto-optimal set of points to be minimised (vectorised, exact).

A point ``a`` *dominates* ``b`` when ``a <= b`` in every objective and ``a < b`` in at least one.
The Pareto set holds the points no other point dominates; equal points do not dominate each other,
so duplicates of a Pareto point are all in the set.

Algorithm: repeatedly take the lexicographically smallest remaining point (no remaining point can
dominate it, and every removed point was dominated by a kept one, so by transitivity nothing
dominates it), keep it and drop every remaining point it dominates. One vectorised pass per kept
point: O(n * size of the set).
"""

from __future__ import annotations

import numpy as np


def dominates(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Whether rows of ``a`` dominate rows of ``b`` (broadcasting over leading axes)."""
    return np.all(a <= b, axis=-1) & np.any(a < b, axis=-1)


def pareto_mask(costs: np.ndarray) -> np.ndarray:
    """Boolean mask of the Pareto set of ``costs`` (shape (n, k), to be minimised).

    NaN counts as the worst value of its objective (``+inf``). Equal rows are merged first (they
    share their verdict), so many duplicates cost nothing.
    """
    c = np.where(np.isnan(costs), np.inf, np.asarray(costs, dtype=float))
    n = c.shape[0]
    if n == 0:
        return np.zeros(0, dtype=bool)
    uniq, inverse = np.unique(c, axis=0, return_inverse=True)
    keep = np.zeros(uniq.shape[0], dtype=bool)
    alive = np.lexsort(uniq.T[::-1])  # first objective is the primary key
    while alive.size:
        i = alive[0]
        keep[i] = True
        rest = alive[1:]
        if rest.size == 0:
            break
        alive = rest[~dominates(uniq[i][None, :], uniq[rest])]
    return keep[inverse.reshape(-1)]


def dominators(costs: np.ndarray, k: int, among: np.ndarray | None = None) -> np.ndarray:
    """Indices of the points that dominate point ``k`` (restricted to ``among`` if given)."""
    c = np.where(np.isnan(costs), np.inf, np.asarray(costs, dtype=float))
    idx = np.arange(c.shape[0]) if among is None else np.asarray(among)
    return idx[dominates(c[idx], c[k][None, :])]
