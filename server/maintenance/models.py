"""Test records: the log book. Append-only; a correction points at what it corrects."""

from __future__ import annotations

from datetime import date, datetime

from sqlalchemy import Date, Float, ForeignKey, String, Text
from sqlalchemy.orm import Mapped, mapped_column

from server.db import Base, UtcDateTime, new_id, utcnow


class TestRecord(Base):
    __tablename__ = "test_records"
    __test__ = False  # not a pytest test class

    id: Mapped[str] = mapped_column(String(36), primary_key=True, default=new_id)
    org_id: Mapped[str] = mapped_column(
        String(36), ForeignKey("organisations.id", ondelete="CASCADE"), index=True
    )
    fixture_id: Mapped[str] = mapped_column(
        String(36), ForeignKey("fixtures.id", ondelete="CASCADE"), index=True
    )
    kind: Mapped[str] = mapped_column(String(20))  # function (monthly), duration (annual)
    tested_on: Mapped[date] = mapped_column(Date)
    tested_by: Mapped[str] = mapped_column(String(200))
    recorded_by: Mapped[str | None] = mapped_column(String(36), ForeignKey("users.id"))
    recorded_at: Mapped[datetime] = mapped_column(UtcDateTime(), default=utcnow)
    result: Mapped[str] = mapped_column(String(10))  # pass, fail
    observed_duration_min: Mapped[float | None] = mapped_column(Float)
    open_circuit_v: Mapped[float | None] = mapped_column(Float)
    loaded_v: Mapped[float | None] = mapped_column(Float)
    action_taken: Mapped[str] = mapped_column(Text, default="")
    notes: Mapped[str] = mapped_column(Text, default="")
    corrects_id: Mapped[str | None] = mapped_column(
        String(36), ForeignKey("test_records.id", ondelete="RESTRICT")
    )
