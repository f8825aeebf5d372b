"""SQLModel tables of the catalogue: ``part`` (one wide row per part), ``maker`` and
``part_history`` (every version of every part).

The ``part`` table holds the flat columns of :mod:`partsel.catalogue.columns` (queryable in
SQL), the same float columns packed into one binary ``float_block`` (little-endian float64 in
the order of ``FLOAT_COLUMN_NAMES``; a frame of 100k parts reads it in one query far faster than
a hundred separate columns), the record as given (``record_json``, so a dump gives it back), a
hash of its canonical form (to tell changed from unchanged on load), a version counter, the
time of the last change and who made it. ``part_history`` keeps one row per version of a part:
who, when, how, and the record before and after (see migration 0002).
The schema itself is created and migrated by Alembic (``partsel/catalogue/migrations``); a test
checks that the migrations and these classes agree.
"""

from __future__ import annotations

import types
from datetime import datetime
from typing import Any

import sqlalchemy as sa
from sqlmodel import JSON, Field, SQLModel

from partsel.catalogue.columns import FLAT_COLUMNS, ColumnKind

#: Flat columns that every valid record fills (the rest may be NULL).
REQUIRED_FLAT: frozenset[str] = frozenset({
    "part_number", "maker", "channels", "lifecycle", "topology", "packages", "temp_min_c",
    "temp_max_c", "junction_max_c", "supply_min_v", "supply_max_v", "rail_to_rail_input",
})  # fmt: skip

_SA_TYPE: dict[ColumnKind, type[sa.types.TypeEngine[Any]]] = {
    "str": sa.String,
    "int": sa.Integer,
    "float": sa.Float,
    "bool": sa.Boolean,
}
_PY_TYPE: dict[ColumnKind, type] = {"str": str, "int": int, "float": float, "bool": bool}


class Maker(SQLModel, table=True):
    """A maker and the suffix rules used to match BOM part numbers to its parts."""

    __tablename__ = "maker"

    id: int | None = Field(default=None, primary_key=True)
    name: str = Field(sa_type=sa.String, nullable=False)
    name_key: str = Field(
        sa_type=sa.String, nullable=False, unique=True, index=True, description="casefolded name"
    )
    suffix_rules: list[str] = Field(default_factory=list, sa_type=JSON, nullable=False)


def _part_body(ns: dict[str, Any]) -> None:
    ann: dict[str, Any] = {
        "id": int | None,
        "part_key": str,
        "record_json": str,
        "content_hash": str,
        "float_block": bytes,
        "version": int,
        "updated_at": datetime,
        "updated_by": str | None,
    }
    ns["__tablename__"] = "part"
    ns["__doc__"] = "One part: flat columns, the record as given, version and update time."
    ns["id"] = Field(default=None, primary_key=True)
    ns["part_key"] = Field(
        sa_type=sa.String,
        nullable=False,
        unique=True,
        index=True,
        description="casefolded part number",
    )
    ns["record_json"] = Field(sa_type=sa.Text, nullable=False)
    ns["content_hash"] = Field(sa_type=sa.String, nullable=False)
    ns["float_block"] = Field(
        sa_type=sa.LargeBinary,
        nullable=False,
        description="every float column packed (columns.FLOAT_COLUMN_NAMES)",
    )
    ns["version"] = Field(default=1, nullable=False)
    ns["updated_at"] = Field(sa_type=sa.DateTime(timezone=True), nullable=False)
    ns["updated_by"] = Field(
        default=None, sa_type=sa.String, nullable=True, description="who made the last change"
    )
    for col in FLAT_COLUMNS:
        required = col.name in REQUIRED_FLAT
        py = _PY_TYPE[col.kind]
        ann[col.name] = py if required else py | None
        ns[col.name] = Field(
            default=None,
            nullable=not required,
            sa_type=_SA_TYPE[col.kind],
            description=col.description,
        )
    ns["__annotations__"] = ann


class PartHistory(SQLModel, table=True):
    """One version of one part: who stored it, when, how, and the record before and after."""

    __tablename__ = "part_history"
    __table_args__ = (
        sa.UniqueConstraint("part_key", "version", name="uq_part_history_key_version"),
    )

    id: int | None = Field(default=None, primary_key=True)
    part_key: str = Field(sa_type=sa.String, nullable=False, description="casefolded part number")
    part_number: str = Field(sa_type=sa.String, nullable=False)
    version: int = Field(nullable=False, description="the part's version after this change")
    action: str = Field(
        sa_type=sa.String, nullable=False, description="added | changed | restored | baseline"
    )
    changed_by: str = Field(sa_type=sa.String, nullable=False)
    changed_at: datetime = Field(sa_type=sa.DateTime(timezone=True), nullable=False)
    source: str | None = Field(
        default=None, sa_type=sa.String, nullable=True, description="what made the change"
    )
    old_record_json: str | None = Field(default=None, sa_type=sa.Text, nullable=True)
    new_record_json: str = Field(sa_type=sa.Text, nullable=False)


#: The part table's model class, built from the flat column list.
Part: type[SQLModel] = types.new_class("Part", (SQLModel,), {"table": True}, _part_body)

#: Core table objects (bulk work goes through SQLAlchemy Core for speed).
part_table: sa.Table = Part.__table__  # type: ignore[attr-defined]
maker_table: sa.Table = Maker.__table__  # type: ignore[attr-defined]
history_table: sa.Table = PartHistory.__table__  # type: ignore[attr-defined]
metadata: sa.MetaData = SQLModel.metadata
