"""Substitute vetting and side-by-side comparison of parts (numpy / pandas only).

A component engineer replacing an incumbent part asks three things of every candidate, in this
order (design notes section 1):

* **form**: does it fit the footprint: the same channel count and a package code with the same
  pinout code (two packages of one code with different pinouts do not fit one footprint);
* **fit**: does it cover the use: the supply range (the design's rails, or without a design the
  incumbent's rated range), the temperature range, the lifecycle;
* **function**: every electrical parameter of :data:`partsel.params.PARAMS` compared
  direction-aware (:attr:`~partsel.params.ParamDef.worse`) on guaranteed values (``worst-case``
  basis) or typicals, as better / equal / worse and by how much; plus the output swing headroom
  at the incumbent's curve points.

With a design, the incumbent and every candidate are judged by the ranking itself
(:mod:`partsel.solver.substitute.circuit`): the design's checks and limits, the same verdict,
fix resistor and THD estimate as ``partsel rank``, compared check by check.

Some differences change behaviour even when every number looks better; they are flagged for
review: another output-stage topology, a much higher gain-bandwidth with a capacitive load, an
input range that no longer reaches a rail the incumbent's reached, a part that is not unity-gain
stable.

Verdicts (partsel's own classes, best first, :data:`VERDICTS`):

``drop-in``
    form, fit and function all equal or better; no behaviour flag; with a design, feasible and
    no in-circuit check worse.
``fits-this-circuit``
    some value is worse than the incumbent's, but the design tolerates it (every check of the
    design still passes); only given with a design.
``review``
    a difference that needs an engineer's judgement: a behaviour flag, a worse value no design
    judges, a lifecycle of not-for-new-designs, a package the board may not use, a check the
    candidate fails like the incumbent, a fix resistor the board must add.
``unsuitable``
    wrong footprint or channel count, obsolete, or a check of the design fails that the
    incumbent passes.

Module layout: :mod:`.model` (results), :mod:`.values` (parameters on a basis),
:mod:`.circuit` (the design's checks), :mod:`.rules` (vetting), :mod:`.compare`.
"""

from partsel.solver.substitute.circuit import THD_NEGLIGIBLE, CircuitJudgement
from partsel.solver.substitute.compare import (
    SWING_COMPARE_CURRENTS_A,
    Comparison,
    ComparisonRow,
    compare_parts,
)
from partsel.solver.substitute.model import (
    CAUTION,
    SEVERITIES,
    SORT_ORDER,
    TOLERANCES,
    VERDICTS,
    Candidate,
    CircuitComparison,
    ParamComparison,
    PartSummary,
    Reason,
    Severity,
    Verdict,
    Vetting,
    find_part,
    fmt,
    parse_packages,
)
from partsel.solver.substitute.rules import vet_substitutes

__all__ = [
    "CAUTION",
    "SEVERITIES",
    "SORT_ORDER",
    "SWING_COMPARE_CURRENTS_A",
    "THD_NEGLIGIBLE",
    "TOLERANCES",
    "VERDICTS",
    "Candidate",
    "CircuitComparison",
    "CircuitJudgement",
    "Comparison",
    "ComparisonRow",
    "ParamComparison",
    "PartSummary",
    "Reason",
    "Severity",
    "Verdict",
    "Vetting",
    "compare_parts",
    "find_part",
    "fmt",
    "parse_packages",
    "vet_substitutes",
]
