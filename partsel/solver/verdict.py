"""The verdict of every part under a conduction mode: feasible as designed, or with the fix
resistor fitted (one rule, used by the ranking and by its relaxation hints)."""

from __future__ import annotations

import numpy as np

from partsel.solver.requirements import Conduction


def verdict_flags(
    mode: Conduction,
    other_fail: np.ndarray,
    cond_fail: np.ndarray,
    in_fix: np.ndarray,
    fix_pass: np.ndarray,
) -> tuple[np.ndarray, np.ndarray]:
    """Feasible and fix-applied flags under a conduction mode.

    ``other_fail``: fails a check other than conduction as designed; ``cond_fail``: the
    conduction check fails as designed; ``in_fix``: the fix variant was evaluated; ``fix_pass``:
    the part passes every check with the fix (False outside ``in_fix``).
    """
    designed = ~other_fail & ((mode == "allowed") | ~cond_fail)
    if mode == "no-change":
        return designed, np.zeros_like(designed)
    use_fix = in_fix & fix_pass & ~designed
    if mode == "fix-allowed":
        use_fix = in_fix  # conduction fails as designed: judged with the fix
    return designed | (in_fix & fix_pass), use_fix
