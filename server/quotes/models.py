"""Quotes for a building's conversions, and their lines. Money is Decimal."""

from __future__ import annotations

from datetime import date, datetime
from decimal import Decimal
from typing import Any

from sqlalchemy import (
    JSON,
    Boolean,
    Date,
    ForeignKey,
    Integer,
    Numeric,
    String,
    Text,
    false,
    text,
)
from sqlalchemy.orm import Mapped, mapped_column, relationship

from server.common.models import OrgOwned
from server.db import Base, UtcDateTime, new_id


class QuoteState:
    DRAFT = "draft"
    SENT = "sent"
    ACCEPTED = "accepted"
    DECLINED = "declined"
    ISSUED = "issued"
    COMPLETED = "completed"


class Quote(OrgOwned, Base):
    __tablename__ = "quotes"

    building_id: Mapped[str] = mapped_column(
        String(36), ForeignKey("buildings.id", ondelete="CASCADE"), index=True
    )
    number: Mapped[str] = mapped_column(String(30))
    state: Mapped[str] = mapped_column(String(20), default=QuoteState.DRAFT)
    labour_rate: Mapped[Decimal] = mapped_column(Numeric(10, 2))
    markup_pct: Mapped[Decimal] = mapped_column(Numeric(6, 2), default=Decimal("0"))
    discount_pct: Mapped[Decimal] = mapped_column(Numeric(6, 2), default=Decimal("0"))
    tax_pct: Mapped[Decimal] = mapped_column(Numeric(6, 2), default=Decimal("0"))
    valid_until: Mapped[date | None] = mapped_column(Date)
    scope: Mapped[str] = mapped_column(Text, default="")
    assumptions: Mapped[str] = mapped_column(Text, default="")
    created_by: Mapped[str | None] = mapped_column(String(36), ForeignKey("users.id"))
    state_changed_by: Mapped[str | None] = mapped_column(String(36), ForeignKey("users.id"))
    state_changed_at: Mapped[datetime | None] = mapped_column(UtcDateTime())
    # Added by migration 0003: the client block, the labour allowances the
    # generated lines are built from, and who moved the quote to each state when.
    client_name: Mapped[str] = mapped_column(String(200), default="", server_default="")
    client_address: Mapped[str] = mapped_column(String(500), default="", server_default="")
    client_contact: Mapped[str] = mapped_column(String(200), default="", server_default="")
    series_link_h: Mapped[Decimal] = mapped_column(
        Numeric(6, 2), default=Decimal("0.25"), server_default=text("0.25")
    )
    supply_run_h: Mapped[Decimal] = mapped_column(
        Numeric(6, 2), default=Decimal("1.50"), server_default=text("1.50")
    )
    commissioning_h: Mapped[Decimal] = mapped_column(
        Numeric(6, 2), default=Decimal("0.50"), server_default=text("0.50")
    )
    sundries_per_fixture: Mapped[Decimal] = mapped_column(
        Numeric(10, 2), default=Decimal("6.00"), server_default=text("6.00")
    )
    supply_run_materials: Mapped[Decimal] = mapped_column(
        Numeric(10, 2), default=Decimal("18.00"), server_default=text("18.00")
    )
    history: Mapped[list[dict[str, Any]]] = mapped_column(
        JSON, default=list, server_default=text("'[]'")
    )

    lines: Mapped[list[QuoteLine]] = relationship(
        back_populates="quote", lazy="raise", order_by="QuoteLine.position"
    )


class QuoteLine(Base):
    __tablename__ = "quote_lines"

    id: Mapped[str] = mapped_column(String(36), primary_key=True, default=new_id)
    quote_id: Mapped[str] = mapped_column(
        String(36), ForeignKey("quotes.id", ondelete="CASCADE"), index=True
    )
    position: Mapped[int] = mapped_column(Integer, default=0)
    kind: Mapped[str] = mapped_column(String(20))  # material, labour, supply, sundry, manual
    description: Mapped[str] = mapped_column(String(500))
    quantity: Mapped[Decimal] = mapped_column(Numeric(12, 3))
    unit: Mapped[str] = mapped_column(String(20), default="ea")
    unit_price: Mapped[Decimal] = mapped_column(Numeric(12, 2))
    fixture_id: Mapped[str | None] = mapped_column(
        String(36), ForeignKey("fixtures.id", ondelete="SET NULL")
    )
    item_ref: Mapped[str | None] = mapped_column(String(36))
    override_reason: Mapped[str] = mapped_column(Text, default="")
    # Added by migration 0003: a generated line changed by hand survives a rebuild.
    hand_edited: Mapped[bool] = mapped_column(Boolean, default=False, server_default=false())

    quote: Mapped[Quote] = relationship(back_populates="lines", lazy="raise")
