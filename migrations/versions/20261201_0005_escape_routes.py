"""escape routes: one centre line with its width and maintenance factor per area

Revision ID: 0005
Revises: 0004
Create Date: 2026-12-01 21:00:00.000000
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0005"
down_revision: str | None = "0004"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    op.create_table(
        "escape_routes",
        sa.Column("area_id", sa.String(length=36), nullable=False),
        sa.Column("points_m", sa.JSON(), nullable=False),
        sa.Column("width_m", sa.Float(), nullable=False),
        sa.Column("maintenance_factor", sa.Float(), nullable=False),
        sa.Column("id", sa.String(length=36), nullable=False),
        sa.Column("version", sa.Integer(), nullable=False),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("updated_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("org_id", sa.String(length=36), nullable=False),
        sa.ForeignKeyConstraint(
            ["area_id"],
            ["areas.id"],
            name=op.f("fk_escape_routes_area_id_areas"),
            ondelete="CASCADE",
        ),
        sa.ForeignKeyConstraint(
            ["org_id"],
            ["organisations.id"],
            name=op.f("fk_escape_routes_org_id_organisations"),
            ondelete="CASCADE",
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_escape_routes")),
        sa.UniqueConstraint("area_id", name=op.f("uq_escape_routes_area_id")),
    )
    with op.batch_alter_table("escape_routes", schema=None) as batch_op:
        batch_op.create_index(batch_op.f("ix_escape_routes_org_id"), ["org_id"], unique=False)


def downgrade() -> None:
    with op.batch_alter_table("escape_routes", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_escape_routes_org_id"))
    op.drop_table("escape_routes")
