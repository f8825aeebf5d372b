"""Design files: the circuit in which parts are judged (format ``partsel.design/1``).

A design file is TOML, YAML or JSON (chosen by the extension ``.toml``, ``.yaml``/``.yml`` or
``.json``) holding the sections ``supply``, ``signal``, ``amplifier``, ``load``, ``environment``
and ``requirements``; its JSON Schema is built by :func:`design_schema` and committed as
``data-schema/design.schema.json``. Values are SI numbers or quantity strings (``"3.3 V"``,
``"10 kohm"``, ``"-40 degC"``), converted with :func:`partsel.units.parse_quantity`. A circuit
quantity may carry a tolerance or be a range (``"2 kohm ±10 %"``, ``"10 uF -20/+80 %"``,
``"1.8 kohm .. 2.2 kohm"``, :func:`partsel.units.parse_toleranced`): the design holds its
nominal value, and the tolerance in ``Design.tolerances`` (the spread analysis reads it).

Reading (:mod:`.read`) runs three stages, each collecting every problem it finds before raising
one :class:`~partsel.errors.InputError` (file, record = design name or file stem, JSON pointer):

1. the JSON Schema (unknown or missing fields, wrong types);
2. quantity parsing (unreadable strings, wrong units);
3. physical sense (positive frequency, rails in order, the ideal output inside the rails, ...).

Omitted optional values mean: negative rail 0 V (single supply), unity gain non-inverting, the
gain network returning to the signal bias, no feedback-network load, no resistive load (when
``load.resistance`` or the whole ``load`` table is absent), DC coupling, no load capacitance,
25 degC ambient and one channel used.

Writing (:mod:`.write`) keeps what the design does not hold (the ``description``, comments,
unknown fields) and the text of every value that did not change. The field table and the
schema are in :mod:`.schema`.
"""

from partsel.design.read import design_from_mapping, load_design, parse_structured
from partsel.design.schema import (
    EXTENSIONS,
    FORMAT,
    QUANTITY_FIELDS,
    design_schema,
    design_schema_json,
)
from partsel.design.write import (
    PERCENT_LIMITS,
    design_to_mapping,
    format_percent,
    format_quantity,
    format_toleranced,
    save_design,
)

__all__ = [
    "EXTENSIONS",
    "FORMAT",
    "PERCENT_LIMITS",
    "QUANTITY_FIELDS",
    "design_from_mapping",
    "design_schema",
    "design_schema_json",
    "design_to_mapping",
    "format_percent",
    "format_quantity",
    "format_toleranced",
    "load_design",
    "parse_structured",
    "save_design",
]
