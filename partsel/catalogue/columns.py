"""The flat columns of the parts table: one list, used by the database, frames and CSV export.

One row per part. Identity and meta columns first, then every parameter of
:data:`partsel.params.PARAMS` as ``f"{key}_{side}"`` (SI floats, NaN when absent), then the
output swing headroom curves, ``swing_pos_i{k}`` (A) and ``swing_pos_v{k}_{side}`` (V) for
``k < MAX_SWING_POINTS`` (NaN-padded), likewise ``swing_neg_*``.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

from partsel.params import MAX_SWING_POINTS, PARAMS, SIDES, column
from partsel.units import UNIT_LABEL

ColumnKind = Literal["str", "int", "float", "bool"]

#: The two output rails and the current that loads each (headroom to V+ versus source current,
#: headroom to V- versus sink current).
SWING_RAILS: tuple[str, ...] = ("swing_pos", "swing_neg")


@dataclass(frozen=True)
class FlatColumn:
    """One column of the flat parts table.

    Attributes
    ----------
    name: column name (unit in the name where it has one).
    kind: storage kind; ``float`` columns hold SI values, NaN when unknown.
    unit: unit symbol for people ("" for text and flags).
    description: one line for people.
    """

    name: str
    kind: ColumnKind
    unit: str
    description: str


META_COLUMNS: tuple[FlatColumn, ...] = (
    FlatColumn("part_number", "str", "", "Part number as given (unique, case-insensitive)"),
    FlatColumn("maker", "str", "", "Maker name"),
    FlatColumn("family", "str", "", "Part family"),
    FlatColumn("description", "str", "", "Short description"),
    FlatColumn("channels", "int", "", "Amplifiers per package (1, 2 or 4)"),
    FlatColumn("lifecycle", "str", "", "Production status (partsel.params.Lifecycle)"),
    FlatColumn("topology", "str", "", "Output-stage topology (partsel.params.Topology)"),
    FlatColumn("packages", "str", "", "Packages as 'CODE:PINOUT' joined with ';'"),
    FlatColumn(
        "theta_ja_k_per_w",
        "float",
        "K/W",
        "Junction-to-ambient thermal resistance, largest over the packages (pessimistic)",
    ),
    FlatColumn("temp_min_c", "float", "degC", "Lowest rated ambient temperature"),
    FlatColumn("temp_max_c", "float", "degC", "Highest rated ambient temperature"),
    FlatColumn("junction_max_c", "float", "degC", "Largest junction temperature (default 150)"),
    FlatColumn("price", "float", "", "Unit price in `currency`"),
    FlatColumn("currency", "str", "", "ISO 4217 currency code of `price`"),
    FlatColumn("supply_min_v", "float", "V", "Lowest total supply voltage V+ - V-"),
    FlatColumn("supply_max_v", "float", "V", "Highest total supply voltage V+ - V-"),
    FlatColumn("rail_to_rail_input", "bool", "", "Input common-mode range includes both rails"),
    FlatColumn("min_stable_gain", "float", "V/V", "Lowest stable closed-loop gain (NaN: unknown)"),
)

PARAM_COLUMNS: tuple[FlatColumn, ...] = tuple(
    FlatColumn(column(p.key, side), "float", UNIT_LABEL[p.dimension], f"{p.description} ({side})")
    for p in PARAMS
    for side in SIDES
)


def swing_current_column(rail: str, k: int) -> str:
    """Column of the current of point ``k`` of ``rail`` (A)."""
    return f"{rail}_i{k}"


def swing_headroom_column(rail: str, k: int, side: str) -> str:
    """Column of the headroom of point ``k`` of ``rail`` on ``side`` (V)."""
    return f"{rail}_v{k}_{side}"


SWING_COLUMNS: tuple[FlatColumn, ...] = tuple(
    col
    for rail in SWING_RAILS
    for k in range(MAX_SWING_POINTS)
    for col in (
        FlatColumn(
            swing_current_column(rail, k), "float", "A", f"{rail}: output current of point {k}"
        ),
        *(
            FlatColumn(
                swing_headroom_column(rail, k, side),
                "float",
                "V",
                f"{rail}: headroom to the rail at point {k} ({side})",
            )
            for side in SIDES
        ),
    )
)

FLAT_COLUMNS: tuple[FlatColumn, ...] = META_COLUMNS + PARAM_COLUMNS + SWING_COLUMNS
FLAT_COLUMN_NAMES: tuple[str, ...] = tuple(c.name for c in FLAT_COLUMNS)
COLUMN_BY_NAME: dict[str, FlatColumn] = {c.name: c for c in FLAT_COLUMNS}

#: Columns of kind ``float``, in table order: the layout of the packed ``float_block``.
FLOAT_COLUMN_NAMES: tuple[str, ...] = tuple(c.name for c in FLAT_COLUMNS if c.kind == "float")
#: The other flat columns (text, integers, flags), in table order.
OTHER_COLUMN_NAMES: tuple[str, ...] = tuple(c.name for c in FLAT_COLUMNS if c.kind != "float")
#: numpy dtype of the packed block: little-endian float64, one value per float column.
FLOAT_BLOCK_DTYPE = "<f8"
