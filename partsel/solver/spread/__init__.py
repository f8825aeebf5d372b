"""Spread: what the ranges of the catalogue and the tolerances of a design do to a design's
checks, by corners and by Monte Carlo yield (numpy only; no database, command-line or UI code).

* :mod:`.model` — what varies and how (the distributions, stated there), reproducible draws;
* :mod:`.evaluate` — boards as rows of the ranking's own closed form and checks (chunked);
* :mod:`.corners` — the worst combination per check, without enumerating every vertex;
* :mod:`.yields` — Monte Carlo yield per part, its confidence interval, percentiles,
  correlations, and the fix resistor's yield and largest value reaching a target;
* :mod:`.stats` — normal and beta quantiles, Wilson and Clopper-Pearson intervals.

Typical use (the API's :meth:`partsel.api.Session.corners` and :meth:`~partsel.api.Session.
spread_yield` do this from a ranking, so that every door judges the same boards)::

    b = board(table, rows, design, requirements, fix_of(ranking.fix, rows, requirements))
    analysis = analyse(b, n=10_000, seed=13, target=0.999)
    worst = corners(b, 0)
"""

from partsel.solver.spread.corners import Corner, CornerAnalysis, corners
from partsel.solver.spread.evaluate import Board, board, fix_of, yields_of
from partsel.solver.spread.model import DISTRIBUTION, FixSpread, Spread
from partsel.solver.spread.stats import (
    INTERVALS,
    YieldInterval,
    clopper_pearson,
    interval,
    wilson,
)
from partsel.solver.spread.yields import (
    DEFAULT_SAMPLES,
    DEFAULT_SEED,
    FixYield,
    PartYield,
    YieldAnalysis,
    analyse,
    part_yields,
)

__all__ = [
    "DEFAULT_SAMPLES",
    "DEFAULT_SEED",
    "DISTRIBUTION",
    "INTERVALS",
    "Board",
    "Corner",
    "CornerAnalysis",
    "FixSpread",
    "FixYield",
    "PartYield",
    "Spread",
    "YieldAnalysis",
    "YieldInterval",
    "analyse",
    "board",
    "clopper_pearson",
    "corners",
    "fix_of",
    "interval",
    "part_yields",
    "wilson",
    "yields_of",
]
