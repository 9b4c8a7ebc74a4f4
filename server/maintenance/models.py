"""Test records: the log book. Append-only; a correction points at what it corrects.

Calendar links: the secret address of a building's test calendar, revocable.

The log must outlive a mistaken delete: the database would cascade the
deletion of a fixture (or its area or building) to its test records, so a
flush that deletes one that has a log is refused with a conflict.
"""

from __future__ import annotations

from datetime import date, datetime
from typing import Any

from sqlalchemy import Boolean, Date, Float, ForeignKey, String, Text, event, false, func, select
from sqlalchemy.orm import Mapped, Session, mapped_column

from server.common.errors import Conflict
from server.db import Base, UtcDateTime, new_id, utcnow
from server.sites.models import Area, Building, Fixture


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
    result: Mapped[str] = mapped_column(String(10))  # pass, fail; void only in a correction
    observed_duration_min: Mapped[float | None] = mapped_column(Float)
    # Duration tests: True when the test ran until the lamp went out (a measured
    # capacity), False when it was stopped with the lamp still lit (a lower bound).
    ran_to_cutoff: Mapped[bool | None] = mapped_column(Boolean)
    open_circuit_v: Mapped[float | None] = mapped_column(Float)
    loaded_v: Mapped[float | None] = mapped_column(Float)
    load_a: Mapped[float | None] = mapped_column(Float)
    load_ohm: Mapped[float | None] = mapped_column(Float)
    # The pack was replaced on this visit: its age and capacity trend start again.
    pack_replaced: Mapped[bool] = mapped_column(Boolean, default=False, server_default=false())
    action_taken: Mapped[str] = mapped_column(Text, default="")
    notes: Mapped[str] = mapped_column(Text, default="")
    corrects_id: Mapped[str | None] = mapped_column(
        String(36), ForeignKey("test_records.id", ondelete="RESTRICT")
    )
    # One submission of a floor walk: a resent form finds its records by this id.
    batch_id: Mapped[str | None] = mapped_column(String(36), index=True)


class CalendarLink(Base):
    """The secret address of one building's calendar of coming tests.

    Only the SHA-256 of the token is stored: the address is shown once, when
    it is made. A revoked link answers 404; making a new one revokes the old.
    """

    __tablename__ = "calendar_links"

    id: Mapped[str] = mapped_column(String(36), primary_key=True, default=new_id)
    org_id: Mapped[str] = mapped_column(
        String(36), ForeignKey("organisations.id", ondelete="CASCADE"), index=True
    )
    building_id: Mapped[str] = mapped_column(
        String(36), ForeignKey("buildings.id", ondelete="CASCADE"), index=True
    )
    token_sha256: Mapped[str] = mapped_column(String(64), unique=True)
    created_at: Mapped[datetime] = mapped_column(UtcDateTime(), default=utcnow)
    created_by: Mapped[str | None] = mapped_column(String(36), ForeignKey("users.id"))
    revoked_at: Mapped[datetime | None] = mapped_column(UtcDateTime())
    revoked_by: Mapped[str | None] = mapped_column(String(36), ForeignKey("users.id"))


def _logged_tests_under(session: Session, target: Fixture | Area | Building) -> int:
    query = (
        select(func.count())
        .select_from(TestRecord)
        .join(Fixture, Fixture.id == TestRecord.fixture_id)
    )
    if isinstance(target, Fixture):
        query = query.where(Fixture.id == target.id)
    elif isinstance(target, Area):
        query = query.where(Fixture.area_id == target.id)
    else:
        query = query.join(Area, Area.id == Fixture.area_id).where(Area.building_id == target.id)
    with session.no_autoflush:
        return session.scalar(query) or 0


@event.listens_for(Session, "before_flush")
def _keep_the_log(session: Session, _context: Any, _instances: Any) -> None:
    """Refuse to delete a fixture, area or building whose luminaires have a test log."""
    for target in session.deleted:
        if not isinstance(target, Fixture | Area | Building):
            continue
        count = _logged_tests_under(session, target)
        if count:
            raise Conflict(
                f"This {type(target).__name__.lower()} has {count} test record(s) in the log "
                "book, which must be kept for the inspector: it was not deleted."
            )
