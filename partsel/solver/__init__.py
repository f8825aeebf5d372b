"""The requirements solver (numpy / pandas only): rank a catalogue for a design.

Typical use::

    from partsel.catalogue import open_catalogue, parts_frame
    from partsel.design import load_design
    from partsel.solver import PartTable, rank

    table = PartTable(parts_frame(open_catalogue()))     # load once
    result = rank(table, load_design("sample-catalog/designs/line-driver-5v.toml"))
    for i in result.order[:10]:
        print(result.table.part_number[i], result.feasible[i], result.score[i])

No database, command-line or UI imports are allowed here.
"""

from partsel.solver.checks import CHECK_NAMES, CHECKS, STATUS_NAMES, CheckDef
from partsel.solver.pareto import dominates, pareto_mask
from partsel.solver.relax import Hint, HintStep
from partsel.solver.requirements import (
    CHOICES,
    LIMITS,
    OBJECTIVES,
    Requirements,
)
from partsel.solver.solve import FixInfo, Prediction, Ranking, rank
from partsel.solver.table import PartTable

__all__ = [
    "CHECKS",
    "CHECK_NAMES",
    "CHOICES",
    "LIMITS",
    "OBJECTIVES",
    "STATUS_NAMES",
    "CheckDef",
    "FixInfo",
    "Hint",
    "HintStep",
    "PartTable",
    "Prediction",
    "Ranking",
    "Requirements",
    "dominates",
    "pareto_mask",
    "rank",
]
