"""The score of feasible parts and the costs used for the Pareto set.

Score formula (documented in the README)::

    t_k(part) = log10(clip(x_k, floor_k, cap_k))      x_k: the part's metric of objective k
    t_k      -> -t_k  for objectives to maximise       (so that smaller t is always better)
    u_k      = (t_k - min t_k) / (max t_k - min t_k)   over the feasible parts (0 best, 1 worst;
                                                       0 for all when every part has the same t_k)
    score    = 100 * (1 - sum_k w_k u_k / sum_k w_k)   (0..100, higher is better)

A missing metric (NaN) counts as the worst (``u_k = 1``). The log scale makes equal ratios count
equally (half the supply current is worth the same at 10 uA as at 1 mA); ``floor_k`` is the value
below which a difference no longer matters for the choice and ``cap_k`` the value above which a
margin adds nothing (both in :data:`partsel.solver.requirements.OBJECTIVES`, partsel's choices).
The Pareto set is computed on the same ``t_k``. Scores compare parts within one ranking only:
they are relative to the feasible set.
"""

from __future__ import annotations

import numpy as np

from partsel.solver.requirements import OBJECTIVE_BY_NAME


def transformed(name: str, metric: np.ndarray) -> np.ndarray:
    """``t_k`` of objective ``name`` (NaN where the metric is missing), to be minimised."""
    d = OBJECTIVE_BY_NAME[name]
    with np.errstate(invalid="ignore", divide="ignore"):
        t = np.log10(np.clip(np.asarray(metric, dtype=float), d.floor, d.cap))
    return -t if d.direction == "max" else t


def scores(
    metrics: dict[str, np.ndarray],
    weights: tuple[tuple[str, float], ...],
    feasible: np.ndarray,
) -> tuple[np.ndarray, dict[str, np.ndarray]]:
    """Scores of the feasible parts (NaN elsewhere) and each objective's ``u_k`` (NaN where
    infeasible)."""
    n = feasible.shape[0]
    total_w = sum(w for _, w in weights if w > 0)
    acc = np.zeros(n)
    parts: dict[str, np.ndarray] = {}
    for name, w in weights:
        t = transformed(name, metrics[name])
        ok = feasible & np.isfinite(t)
        u = np.ones(n)
        if ok.any():
            lo, hi = float(t[ok].min()), float(t[ok].max())
            if hi > lo:
                u[ok] = (t[ok] - lo) / (hi - lo)
            else:
                u[ok] = 0.0
        u[~feasible] = np.nan
        parts[name] = u
        if w > 0:
            acc += w * np.nan_to_num(u, nan=1.0)
    score = np.where(feasible, 100.0 * (1.0 - acc / total_w) if total_w > 0 else 100.0, np.nan)
    return score, parts
