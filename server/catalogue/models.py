"""The organisation's catalogue: ballast types, emergency modules, battery packs,
and requirement profiles of its own."""

from __future__ import annotations

from decimal import Decimal

from sqlalchemy import JSON, Boolean, Float, Integer, Numeric, String, Text
from sqlalchemy.orm import Mapped, mapped_column

from server.common.models import OrgOwned
from server.db import Base


class BallastType(OrgOwned, Base):
    __tablename__ = "ballast_types"

    name: Mapped[str] = mapped_column(String(200))
    technology: Mapped[str] = mapped_column(String(40))
    lamp_type: Mapped[str] = mapped_column(String(20))
    lamp_count: Mapped[int] = mapped_column(Integer, default=1)
    notes: Mapped[str] = mapped_column(Text, default="")


class EmergencyModule(OrgOwned, Base):
    __tablename__ = "emergency_modules"

    name: Mapped[str] = mapped_column(String(200))
    battery_w: Mapped[float | None] = mapped_column(Float)
    battery_a: Mapped[float | None] = mapped_column(Float)
    output_w: Mapped[float | None] = mapped_column(Float)
    declared_eblf: Mapped[float | None] = mapped_column(Float)
    chemistry: Mapped[str] = mapped_column(String(10))
    cells: Mapped[int] = mapped_column(Integer)
    cutoff_v: Mapped[float | None] = mapped_column(Float)
    charge_a: Mapped[float] = mapped_column(Float)
    rated_min: Mapped[float] = mapped_column(Float, default=90.0)
    lamp_types: Mapped[list[str]] = mapped_column(JSON, default=list)
    lamp_w_min: Mapped[float] = mapped_column(Float)
    lamp_w_max: Mapped[float] = mapped_column(Float)
    ballasts: Mapped[list[str]] = mapped_column(JSON, default=list)
    changeover: Mapped[str] = mapped_column(String(20), default="both-ends")
    max_lamps: Mapped[int] = mapped_column(Integer, default=1)
    waveform: Mapped[str] = mapped_column(String(20), default="ac")
    self_test: Mapped[bool] = mapped_column(Boolean, default=False)
    price: Mapped[Decimal] = mapped_column(Numeric(10, 2), default=Decimal("0"))
    labour_h: Mapped[float] = mapped_column(Float, default=1.0)
    notes: Mapped[str] = mapped_column(Text, default="")


class BatteryPack(OrgOwned, Base):
    __tablename__ = "battery_packs"

    name: Mapped[str] = mapped_column(String(200))
    chemistry: Mapped[str] = mapped_column(String(10))
    cells: Mapped[int] = mapped_column(Integer)
    nominal_v: Mapped[float | None] = mapped_column(Float)
    capacity_ah: Mapped[float] = mapped_column(Float)
    rated_hours: Mapped[float | None] = mapped_column(Float)
    peukert_k: Mapped[float | None] = mapped_column(Float)
    max_c: Mapped[float] = mapped_column(Float, default=50.0)  # highest ambient, °C
    design_life_years: Mapped[float | None] = mapped_column(Float)
    new_internal_ohm: Mapped[float | None] = mapped_column(Float)
    price: Mapped[Decimal] = mapped_column(Numeric(10, 2), default=Decimal("0"))
    notes: Mapped[str] = mapped_column(Text, default="")


class RequirementProfile(OrgOwned, Base):
    """A profile an organisation defines for itself (beside the built-in ones)."""

    __tablename__ = "requirement_profiles"

    name: Mapped[str] = mapped_column(String(200))
    area_kind: Mapped[str] = mapped_column(String(20), default="escape-route")
    evaluation: Mapped[str] = mapped_column(String(20), default="centre-line")
    duration_min: Mapped[float] = mapped_column(Float)
    min_lux: Mapped[float] = mapped_column(Float)
    avg_lux: Mapped[float | None] = mapped_column(Float)
    end_min_lux: Mapped[float | None] = mapped_column(Float)
    end_avg_lux: Mapped[float | None] = mapped_column(Float)
    max_min_ratio: Mapped[float] = mapped_column(Float, default=40.0)
    monthly_test_days: Mapped[int] = mapped_column(Integer, default=30)
    annual_test_days: Mapped[int] = mapped_column(Integer, default=365)
    source: Mapped[str] = mapped_column(String(500), default="defined by the organisation")
