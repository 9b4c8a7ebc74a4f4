"""Organisations (contracting firms) and their users."""

from __future__ import annotations

from datetime import datetime
from decimal import Decimal
from enum import StrEnum

from sqlalchemy import Boolean, ForeignKey, Numeric, String
from sqlalchemy.orm import Mapped, mapped_column

from server.db import Base, UtcDateTime, new_id, utcnow


class Role(StrEnum):
    SURVEYOR = "surveyor"
    ESTIMATOR = "estimator"
    SUPERVISOR = "supervisor"
    ADMIN = "admin"


# Each role may do what the roles before it may, and more.
ROLE_ORDER: tuple[Role, ...] = (Role.SURVEYOR, Role.ESTIMATOR, Role.SUPERVISOR, Role.ADMIN)


def role_at_least(role: Role, needed: Role) -> bool:
    return ROLE_ORDER.index(role) >= ROLE_ORDER.index(needed)


class PaperSize(StrEnum):
    A4 = "A4"
    LETTER = "Letter"


class Organisation(Base):
    __tablename__ = "organisations"

    id: Mapped[str] = mapped_column(String(36), primary_key=True, default=new_id)
    name: Mapped[str] = mapped_column(String(200), unique=True)
    address: Mapped[str] = mapped_column(String(500), default="")
    phone: Mapped[str] = mapped_column(String(50), default="")
    paper_size: Mapped[str] = mapped_column(String(10), default=PaperSize.A4.value)
    currency: Mapped[str] = mapped_column(String(3), default="USD")
    labour_rate: Mapped[Decimal] = mapped_column(Numeric(10, 2), default=Decimal("65.00"))
    created_at: Mapped[datetime] = mapped_column(UtcDateTime(), default=utcnow)


class User(Base):
    __tablename__ = "users"

    id: Mapped[str] = mapped_column(String(36), primary_key=True, default=new_id)
    org_id: Mapped[str] = mapped_column(
        String(36), ForeignKey("organisations.id", ondelete="CASCADE"), index=True
    )
    email: Mapped[str] = mapped_column(String(254), unique=True)
    name: Mapped[str] = mapped_column(String(200), default="")
    role: Mapped[str] = mapped_column(String(20))
    password_hash: Mapped[str] = mapped_column(String(200))
    active: Mapped[bool] = mapped_column(Boolean, default=True)
    created_at: Mapped[datetime] = mapped_column(UtcDateTime(), default=utcnow)

    @property
    def role_enum(self) -> Role:
        return Role(self.role)
