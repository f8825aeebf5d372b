"""Shared checks of the spread tests."""

from __future__ import annotations

import numpy as np
import pytest

from partsel.solver import checks as C
from partsel.solver.spread import corners, part_yields
from partsel.solver.spread.corners import CornerAnalysis
from partsel.solver.spread.evaluate import Board


def assert_corners_match(result: CornerAnalysis, margins: np.ndarray) -> int:
    """Every corner of ``result`` against the brute-force ``margins`` (rows: the points tried,
    columns: the checks): a corner found at a vertex has the worst margin of them all (to
    1e-9 relative), a sampled one a margin at least as low. Returns how many were sampled."""
    sampled = 0
    for c in result.corners:
        j = C.IDX[c.check]
        worst = float(np.nanmin(margins[:, j]))
        tol = 1e-9 * max(1.0, abs(worst))
        if c.method == "vertex":
            assert c.margin == pytest.approx(worst, rel=1e-9, abs=tol), c.check
        else:
            sampled += 1
            assert c.margin <= worst + tol, c.check
    return sampled


def near_a_limit(result: CornerAnalysis, rel: float = 1e-4) -> bool:
    """Whether some check's worst corner lies within ``rel`` (relative) of its limit, where a
    narrowed spread may still straddle it (a margin of exactly 0 is a limit met exactly, e.g.
    a rated ambient, and does not count)."""
    return any(
        0 < abs(c.margin) <= rel * max(abs(c.value), abs(c.limit), 1e-30) for c in result.corners
    )


def assert_yield_is_corner_verdict(b: Board, parts: range, n: int, seed: int) -> int:
    """Monte Carlo over ``n`` boards of each part of ``parts`` (indices into ``b``) yields 100 %
    where its worst corner passes and 0 % where it fails, leaving out parts with a corner
    :func:`near_a_limit`. Returns how many parts were decided."""
    passed, _ = part_yields(b, n, seed=seed, detail=False)
    decided = 0
    for p in parts:
        ca = corners(b, p)
        if near_a_limit(ca):
            continue
        decided += 1
        assert passed[p] == (n if ca.passes else 0), b.part_numbers[p]
    return decided
