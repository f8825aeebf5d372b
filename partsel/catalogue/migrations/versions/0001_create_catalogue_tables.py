"""Create the catalogue tables: part (one wide row per part) and maker.

Revision ID: 0001
Revises:
Create Date: 2024-12-01

The column list is written out here as it stood at this revision (a later change of
partsel.params.PARAMS or partsel.catalogue.columns needs a new revision, not an edit here).
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0001"
down_revision = None
branch_labels = None
depends_on = None

_SIDES = ("min", "typ", "max")
_PARAM_KEYS = (
    "supply_current", "cm_headroom_neg", "cm_headroom_pos", "offset_voltage", "bias_current",
    "noise_density", "gbw", "slew_rise", "slew_fall", "cap_load_limit", "dead_band",
    "stage_current", "source_limit", "sink_limit",
)  # fmt: skip
_SWING_POINTS = 6


def _columns() -> list[sa.Column]:
    cols = [
        sa.Column("id", sa.Integer(), primary_key=True, nullable=False),
        sa.Column("part_key", sa.String(), nullable=False),
        sa.Column("record_json", sa.Text(), nullable=False),
        sa.Column("content_hash", sa.String(), nullable=False),
        sa.Column("float_block", sa.LargeBinary(), nullable=False),
        sa.Column("version", sa.Integer(), nullable=False),
        sa.Column("updated_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("part_number", sa.String(), nullable=False),
        sa.Column("maker", sa.String(), nullable=False),
        sa.Column("family", sa.String(), nullable=True),
        sa.Column("description", sa.String(), nullable=True),
        sa.Column("channels", sa.Integer(), nullable=False),
        sa.Column("lifecycle", sa.String(), nullable=False),
        sa.Column("topology", sa.String(), nullable=False),
        sa.Column("packages", sa.String(), nullable=False),
        sa.Column("theta_ja_k_per_w", sa.Float(), nullable=True),
        sa.Column("temp_min_c", sa.Float(), nullable=False),
        sa.Column("temp_max_c", sa.Float(), nullable=False),
        sa.Column("junction_max_c", sa.Float(), nullable=False),
        sa.Column("price", sa.Float(), nullable=True),
        sa.Column("currency", sa.String(), nullable=True),
        sa.Column("supply_min_v", sa.Float(), nullable=False),
        sa.Column("supply_max_v", sa.Float(), nullable=False),
        sa.Column("rail_to_rail_input", sa.Boolean(), nullable=False),
        sa.Column("min_stable_gain", sa.Float(), nullable=True),
    ]
    cols += [sa.Column(f"{k}_{s}", sa.Float(), nullable=True) for k in _PARAM_KEYS for s in _SIDES]
    for rail in ("swing_pos", "swing_neg"):
        for k in range(_SWING_POINTS):
            cols.append(sa.Column(f"{rail}_i{k}", sa.Float(), nullable=True))
            cols += [sa.Column(f"{rail}_v{k}_{s}", sa.Float(), nullable=True) for s in _SIDES]
    return cols


def upgrade() -> None:
    op.create_table(
        "maker",
        sa.Column("id", sa.Integer(), primary_key=True, nullable=False),
        sa.Column("name", sa.String(), nullable=False),
        sa.Column("name_key", sa.String(), nullable=False),
        sa.Column("suffix_rules", sa.JSON(), nullable=False),
    )
    op.create_index("ix_maker_name_key", "maker", ["name_key"], unique=True)
    op.create_table("part", *_columns())
    op.create_index("ix_part_part_key", "part", ["part_key"], unique=True)


def downgrade() -> None:
    op.drop_index("ix_part_part_key", table_name="part")
    op.drop_table("part")
    op.drop_index("ix_maker_name_key", table_name="maker")
    op.drop_table("maker")
