"""Buildings, their areas, and the fixtures surveyed in them."""

from __future__ import annotations

from datetime import date, datetime

from sqlalchemy import (
    Boolean,
    Date,
    Float,
    ForeignKey,
    Integer,
    LargeBinary,
    String,
    Text,
)
from sqlalchemy.orm import Mapped, mapped_column, relationship

from server.common.models import OrgOwned
from server.db import Base, UtcDateTime, new_id, utcnow


class Building(OrgOwned, Base):
    __tablename__ = "buildings"

    name: Mapped[str] = mapped_column(String(200))
    address: Mapped[str] = mapped_column(String(500), default="")
    client_name: Mapped[str] = mapped_column(String(200), default="")
    client_contact: Mapped[str] = mapped_column(String(200), default="")
    notes: Mapped[str] = mapped_column(Text, default="")

    areas: Mapped[list[Area]] = relationship(back_populates="building", lazy="raise")


class Area(OrgOwned, Base):
    __tablename__ = "areas"

    building_id: Mapped[str] = mapped_column(
        String(36), ForeignKey("buildings.id", ondelete="CASCADE"), index=True
    )
    name: Mapped[str] = mapped_column(String(200))
    floor: Mapped[str] = mapped_column(String(50), default="")
    kind: Mapped[str] = mapped_column(String(20))
    length_m: Mapped[float | None] = mapped_column(Float)
    width_m: Mapped[float | None] = mapped_column(Float)
    mounting_height_m: Mapped[float | None] = mapped_column(Float)
    required_duration_min: Mapped[float] = mapped_column(Float, default=90.0)
    profile_id: Mapped[str] = mapped_column(String(64), default="us-egress")
    survey_complete: Mapped[bool] = mapped_column(Boolean, default=False)
    notes: Mapped[str] = mapped_column(Text, default="")

    building: Mapped[Building] = relationship(back_populates="areas", lazy="raise")
    fixtures: Mapped[list[Fixture]] = relationship(back_populates="area", lazy="raise")


class Fixture(OrgOwned, Base):
    __tablename__ = "fixtures"

    area_id: Mapped[str] = mapped_column(
        String(36), ForeignKey("areas.id", ondelete="CASCADE"), index=True
    )
    tag: Mapped[str] = mapped_column(String(50))
    location: Mapped[str] = mapped_column(String(200), default="")
    position_m: Mapped[float | None] = mapped_column(Float)
    x_m: Mapped[float | None] = mapped_column(Float)
    y_m: Mapped[float | None] = mapped_column(Float)
    mounting_height_m: Mapped[float | None] = mapped_column(Float)
    lamp_type: Mapped[str] = mapped_column(String(20))
    lamp_w: Mapped[float] = mapped_column(Float)
    lamp_length_mm: Mapped[float | None] = mapped_column(Float)
    lamp_count: Mapped[int] = mapped_column(Integer, default=1)
    lamps_to_back_up: Mapped[int] = mapped_column(Integer, default=1)
    ballast: Mapped[str] = mapped_column(String(40))
    wiring: Mapped[str] = mapped_column(String(20), default="single")
    unswitched_supply: Mapped[bool] = mapped_column(Boolean, default=False)
    ambient_c: Mapped[float] = mapped_column(Float, default=25.0)
    accessible: Mapped[bool] = mapped_column(Boolean, default=True)
    # An emergency kit already fitted, and what was read off its pack.
    existing_kit: Mapped[bool] = mapped_column(Boolean, default=False)
    pack_chemistry: Mapped[str | None] = mapped_column(String(10))
    pack_cells: Mapped[int | None] = mapped_column(Integer)
    pack_capacity_ah: Mapped[float | None] = mapped_column(Float)
    pack_date_code: Mapped[str | None] = mapped_column(String(8))
    pack_date_format: Mapped[str | None] = mapped_column(String(4))
    open_circuit_v: Mapped[float | None] = mapped_column(Float)
    loaded_v: Mapped[float | None] = mapped_column(Float)
    load_a: Mapped[float | None] = mapped_column(Float)
    load_ohm: Mapped[float | None] = mapped_column(Float)
    commissioned_on: Mapped[date | None] = mapped_column(Date)
    notes: Mapped[str] = mapped_column(Text, default="")

    area: Mapped[Area] = relationship(back_populates="fixtures", lazy="raise")


class FixturePhoto(Base):
    """A photo of a fixture or of its pack's label, kept in the database."""

    __tablename__ = "fixture_photos"

    id: Mapped[str] = mapped_column(String(36), primary_key=True, default=new_id)
    org_id: Mapped[str] = mapped_column(
        String(36), ForeignKey("organisations.id", ondelete="CASCADE"), index=True
    )
    fixture_id: Mapped[str] = mapped_column(
        String(36), ForeignKey("fixtures.id", ondelete="CASCADE"), index=True
    )
    content_type: Mapped[str] = mapped_column(String(50))
    caption: Mapped[str] = mapped_column(String(200), default="")
    data: Mapped[bytes] = mapped_column(LargeBinary)
    created_at: Mapped[datetime] = mapped_column(UtcDateTime(), default=utcnow)
