"""maintenance log: duration-test and load-test fields, walk batches, calendar links

Revision ID: 0004
Revises: 0003
Create Date: 2026-12-01 20:00:00.000000
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0004"
down_revision: str | None = "0003"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    with op.batch_alter_table("test_records", schema=None) as batch_op:
        batch_op.add_column(sa.Column("ran_to_cutoff", sa.Boolean(), nullable=True))
        batch_op.add_column(sa.Column("load_a", sa.Float(), nullable=True))
        batch_op.add_column(sa.Column("load_ohm", sa.Float(), nullable=True))
        batch_op.add_column(
            sa.Column("pack_replaced", sa.Boolean(), server_default=sa.false(), nullable=False)
        )
        batch_op.add_column(sa.Column("batch_id", sa.String(length=36), nullable=True))
        batch_op.create_index(batch_op.f("ix_test_records_batch_id"), ["batch_id"], unique=False)

    op.create_table(
        "calendar_links",
        sa.Column("id", sa.String(length=36), nullable=False),
        sa.Column("org_id", sa.String(length=36), nullable=False),
        sa.Column("building_id", sa.String(length=36), nullable=False),
        sa.Column("token_sha256", sa.String(length=64), nullable=False),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("created_by", sa.String(length=36), nullable=True),
        sa.Column("revoked_at", sa.DateTime(timezone=True), nullable=True),
        sa.Column("revoked_by", sa.String(length=36), nullable=True),
        sa.ForeignKeyConstraint(
            ["building_id"],
            ["buildings.id"],
            name=op.f("fk_calendar_links_building_id_buildings"),
            ondelete="CASCADE",
        ),
        sa.ForeignKeyConstraint(
            ["created_by"], ["users.id"], name=op.f("fk_calendar_links_created_by_users")
        ),
        sa.ForeignKeyConstraint(
            ["org_id"],
            ["organisations.id"],
            name=op.f("fk_calendar_links_org_id_organisations"),
            ondelete="CASCADE",
        ),
        sa.ForeignKeyConstraint(
            ["revoked_by"], ["users.id"], name=op.f("fk_calendar_links_revoked_by_users")
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_calendar_links")),
        sa.UniqueConstraint("token_sha256", name=op.f("uq_calendar_links_token_sha256")),
    )
    with op.batch_alter_table("calendar_links", schema=None) as batch_op:
        batch_op.create_index(
            batch_op.f("ix_calendar_links_building_id"), ["building_id"], unique=False
        )
        batch_op.create_index(batch_op.f("ix_calendar_links_org_id"), ["org_id"], unique=False)


def downgrade() -> None:
    with op.batch_alter_table("calendar_links", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_calendar_links_org_id"))
        batch_op.drop_index(batch_op.f("ix_calendar_links_building_id"))
    op.drop_table("calendar_links")

    with op.batch_alter_table("test_records", schema=None) as batch_op:
        batch_op.drop_index(batch_op.f("ix_test_records_batch_id"))
        for name in ("batch_id", "pack_replaced", "load_ohm", "load_a", "ran_to_cutoff"):
            batch_op.drop_column(name)
