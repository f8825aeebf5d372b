"""BOM check: match every line of a bill of materials to the catalogue and report on it.

The BOM is read by :mod:`partsel.io.bom` (a CSV file or a pandas frame; columns found by name).
Matching, in order (:class:`PartMatcher`):

1. **exact**: the part number as written (surrounding whitespace ignored);
2. **normalised**: case, spaces and dashes ignored (``"brq 622a"`` and ``"BRQ622A"`` match
   ``BRQ-622A``);
3. **suffix**: a package or packing suffix removed by one of the maker's ``suffix_rules``
   (kept in the catalogue per maker), up to :data:`MAX_SUFFIX_STRIPS` times, then 1 and 2 among
   that maker's parts.

Per line the check reports (:class:`~partsel.io.bom.Finding`): an unknown or ambiguous part, a
lifecycle risk (obsolete; not for new designs), out of spec for the design given for the BOM or
for the line (the ranking's own checks and limits, each finding naming its check), a fix
resistor the part needs, malformed cells (quantity, designators, encoding, short rows) and
suggested substitutes (:func:`partsel.solver.substitute.vet_substitutes`).

Output: :meth:`BomReport.to_frame` (the BOM's own columns unchanged plus ``partsel_*`` columns,
so that a BOM tool can merge it back by line or designators), :meth:`BomReport.to_dict` (the
JSON form of ``data-schema/bom-check.schema.json``) and :attr:`BomReport.exit_code`
(0 all clear, 1 findings).

Layout: :mod:`.matching` (part numbers), :mod:`.report` (results), :mod:`.check` (the check).
"""

from partsel.io.bom import (
    ALIASES,
    DELIMITERS,
    ROLES,
    BomColumns,
    BomTable,
    Finding,
    parse_designators,
    parse_quantity,
    read_bom,
)
from partsel.solver.bom.check import check_bom
from partsel.solver.bom.matching import (
    MATCH_RULES,
    MAX_SUFFIX_STRIPS,
    Match,
    PartMatcher,
    normalise,
)
from partsel.solver.bom.report import (
    FINDING_CODES,
    FORMAT,
    OUT_PREFIX,
    BomLine,
    BomReport,
    SubstituteHint,
)

__all__ = [
    "ALIASES",
    "DELIMITERS",
    "FINDING_CODES",
    "FORMAT",
    "MATCH_RULES",
    "MAX_SUFFIX_STRIPS",
    "OUT_PREFIX",
    "ROLES",
    "BomColumns",
    "BomLine",
    "BomReport",
    "BomTable",
    "Finding",
    "Match",
    "PartMatcher",
    "SubstituteHint",
    "check_bom",
    "normalise",
    "parse_designators",
    "parse_quantity",
    "read_bom",
]
