"""Work orders issued from accepted quotes, with a task per fixture."""

from __future__ import annotations

from datetime import date, datetime
from typing import Any

from sqlalchemy import JSON, Boolean, Date, Float, ForeignKey, String, Text
from sqlalchemy.orm import Mapped, mapped_column, relationship

from server.common.models import OrgOwned
from server.db import Base, UtcDateTime


class WorkOrder(OrgOwned, Base):
    __tablename__ = "work_orders"

    quote_id: Mapped[str] = mapped_column(
        String(36), ForeignKey("quotes.id", ondelete="RESTRICT"), unique=True
    )
    building_id: Mapped[str] = mapped_column(
        String(36), ForeignKey("buildings.id", ondelete="CASCADE"), index=True
    )
    number: Mapped[str] = mapped_column(String(30))
    state: Mapped[str] = mapped_column(String(20), default="issued")
    crew: Mapped[str] = mapped_column(String(500), default="")
    scheduled_on: Mapped[date | None] = mapped_column(Date)
    issued_by: Mapped[str | None] = mapped_column(String(36), ForeignKey("users.id"))
    issued_at: Mapped[datetime | None] = mapped_column(UtcDateTime())
    signed_off_by: Mapped[str | None] = mapped_column(String(36), ForeignKey("users.id"))
    signed_off_at: Mapped[datetime | None] = mapped_column(UtcDateTime())
    # Added by migration 0003: notes for the crew, printed under the cautions.
    crew_notes: Mapped[str] = mapped_column(Text, default="", server_default="")

    tasks: Mapped[list[WorkOrderTask]] = relationship(back_populates="work_order", lazy="raise")


class WorkOrderTask(OrgOwned, Base):
    __tablename__ = "work_order_tasks"

    work_order_id: Mapped[str] = mapped_column(
        String(36), ForeignKey("work_orders.id", ondelete="CASCADE"), index=True
    )
    fixture_id: Mapped[str] = mapped_column(
        String(36), ForeignKey("fixtures.id", ondelete="CASCADE"), index=True
    )
    proposal_id: Mapped[str | None] = mapped_column(
        String(36), ForeignKey("proposals.id", ondelete="SET NULL")
    )
    wiring_notes: Mapped[list[str]] = mapped_column(JSON, default=list)
    status: Mapped[str] = mapped_column(String(20), default="open")  # open, done, problem
    charge_indicator_ok: Mapped[bool | None] = mapped_column(Boolean)
    function_test_ok: Mapped[bool | None] = mapped_column(Boolean)
    duration_test_min: Mapped[float | None] = mapped_column(Float)
    readings: Mapped[dict[str, Any]] = mapped_column(JSON, default=dict)
    problem: Mapped[str] = mapped_column(Text, default="")
    done_by: Mapped[str | None] = mapped_column(String(36), ForeignKey("users.id"))
    done_at: Mapped[datetime | None] = mapped_column(UtcDateTime())

    work_order: Mapped[WorkOrder] = relationship(back_populates="tasks", lazy="raise")
