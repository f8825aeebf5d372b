"""Keep every change of a part: the part_history table, and who made a part's last change.

Revision ID: 0002
Revises: 0001
Create Date: 2024-12-08

Each row of ``part_history`` is one version of one part: who made it (OS user or ``--user``),
when, how (``added``, ``changed``, ``restored``; ``baseline`` for the state found when this
revision ran), the record before and after. ``(part_key, version)`` is unique, so two writers
can never both store the same version of a part. Parts stored before this revision get one
``baseline`` row holding their record as it then stood (earlier changes were not kept).
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0002"
down_revision = "0001"
branch_labels = None
depends_on = None


def upgrade() -> None:
    op.create_table(
        "part_history",
        sa.Column("id", sa.Integer(), primary_key=True, nullable=False),
        sa.Column("part_key", sa.String(), nullable=False),
        sa.Column("part_number", sa.String(), nullable=False),
        sa.Column("version", sa.Integer(), nullable=False),
        sa.Column("action", sa.String(), nullable=False),
        sa.Column("changed_by", sa.String(), nullable=False),
        sa.Column("changed_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("source", sa.String(), nullable=True),
        sa.Column("old_record_json", sa.Text(), nullable=True),
        sa.Column("new_record_json", sa.Text(), nullable=False),
        sa.UniqueConstraint("part_key", "version", name="uq_part_history_key_version"),
    )
    with op.batch_alter_table("part") as batch:
        batch.add_column(sa.Column("updated_by", sa.String(), nullable=True))
    op.execute(
        "INSERT INTO part_history (part_key, part_number, version, action, changed_by, "
        "changed_at, source, old_record_json, new_record_json) "
        "SELECT part_key, part_number, version, 'baseline', 'schema upgrade 0002', updated_at, "
        "'state when history keeping began', NULL, record_json FROM part"
    )


def downgrade() -> None:
    with op.batch_alter_table("part") as batch:
        batch.drop_column("updated_by")
    op.drop_table("part_history")
