"""quote client block, labour allowances and state history; work-order crew notes

Revision ID: 0003
Revises: 0001
Create Date: 2026-12-01 19:21:42.329890
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0003"
down_revision: str | None = "0001"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    with op.batch_alter_table("quote_lines", schema=None) as batch_op:
        batch_op.add_column(
            sa.Column("hand_edited", sa.Boolean(), server_default=sa.false(), nullable=False)
        )

    with op.batch_alter_table("quotes", schema=None) as batch_op:
        for name, length in (
            ("client_name", 200),
            ("client_address", 500),
            ("client_contact", 200),
        ):
            batch_op.add_column(
                sa.Column(name, sa.String(length=length), server_default="", nullable=False)
            )
        for name, precision, default in (
            ("series_link_h", 6, "0.25"),
            ("supply_run_h", 6, "1.50"),
            ("commissioning_h", 6, "0.50"),
            ("sundries_per_fixture", 10, "6.00"),
            ("supply_run_materials", 10, "18.00"),
        ):
            batch_op.add_column(
                sa.Column(
                    name,
                    sa.Numeric(precision=precision, scale=2),
                    server_default=sa.text(default),
                    nullable=False,
                )
            )
        batch_op.add_column(
            sa.Column("history", sa.JSON(), server_default=sa.text("'[]'"), nullable=False)
        )

    with op.batch_alter_table("work_orders", schema=None) as batch_op:
        batch_op.add_column(sa.Column("crew_notes", sa.Text(), server_default="", nullable=False))


def downgrade() -> None:
    with op.batch_alter_table("work_orders", schema=None) as batch_op:
        batch_op.drop_column("crew_notes")

    with op.batch_alter_table("quotes", schema=None) as batch_op:
        for name in (
            "history",
            "supply_run_materials",
            "sundries_per_fixture",
            "commissioning_h",
            "supply_run_h",
            "series_link_h",
            "client_contact",
            "client_address",
            "client_name",
        ):
            batch_op.drop_column(name)

    with op.batch_alter_table("quote_lines", schema=None) as batch_op:
        batch_op.drop_column("hand_edited")
